//! `noise-budget characterize MANIFEST`: measure a camera from dark and flat frames on disk.
//!
//! Reads the manifest file and hands it to the engine (`engine::ptc::parse_manifest`, every
//! problem at once, each with its key path), gives the engine's measurement
//! (`engine::ptc::Measurement`) each frame file it wants, read on a second thread four files
//! ahead (`ptc::FRAMES_SUMMED_AT_ONCE`, as the page's worker does), and prints the engine's characterization as JSON or a
//! table. It computes no statistic itself; the files go round a few reused buffers, so it
//! holds a few frames whatever the length of the stacks.

use std::collections::VecDeque;
use std::fmt::Write as _;
use std::io::{self, Read, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::mpsc;
use std::thread;

use engine::ptc::{self, Characterization};

/// Run the command; the exit status is 0 on success, 2 for an invalid manifest, an
/// undecodable frame or frames that cannot be analysed, 1 when a file cannot be read.
pub fn run(manifest_path: &Path, as_table: bool, spatial_csv: Option<&Path>) -> ExitCode {
    let shown = manifest_path.display();
    let text = match std::fs::read(manifest_path) {
        Ok(b) => match String::from_utf8(b) {
            Ok(t) => t,
            Err(_) => {
                eprintln!("manifest: {shown} is not UTF-8 text");
                return ExitCode::from(2);
            }
        },
        Err(e) => {
            eprintln!("noise-budget: cannot read {shown}: {e}");
            return ExitCode::from(1);
        }
    };
    let base = manifest_path.parent().unwrap_or(Path::new(""));
    let manifest = match ptc::parse_manifest(&text) {
        Ok(m) => m,
        Err(problems) => {
            for p in problems {
                eprintln!("{p}");
            }
            return ExitCode::from(2);
        }
    };
    let result = match measure_reading_ahead(&manifest, base) {
        Ok(c) => c,
        Err(failure) => {
            for m in &failure.messages {
                eprintln!("{m}");
            }
            return ExitCode::from(if failure.io { 1 } else { 2 });
        }
    };
    if let Some(path) = spatial_csv {
        if let Err(e) = std::fs::write(path, ptc::spatial_csv(&result)) {
            eprintln!("noise-budget: cannot write {}: {e}", path.display());
            return ExitCode::from(1);
        }
    }
    let out = if as_table {
        render_table(&result)
    } else {
        match serde_json::to_string_pretty(&result) {
            Ok(s) => s + "\n",
            Err(e) => {
                eprintln!("noise-budget: cannot write the result as JSON: {e}");
                return ExitCode::from(1);
            }
        }
    };
    let mut stdout = io::stdout().lock();
    match stdout
        .write_all(out.as_bytes())
        .and_then(|()| stdout.flush())
    {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("noise-budget: cannot write to standard output: {e}");
            ExitCode::from(1)
        }
    }
}

// ---- table ----------------------------------------------------------------------------------

/// A number to 4 significant digits, never E-notation (`crate::human`).
fn sig(x: f64) -> String {
    crate::human::plain(x)
}

fn figure_value(f: &ptc::Figure) -> String {
    match (f.value, f.uncertainty) {
        (None, _) => "not measured".into(),
        (Some(v), _) if f.upper_bound => format!("< {} {} (upper bound)", sig(v), f.unit),
        (Some(v), Some(u)) => format!("{} ± {} {}", sig(v), sig(u), f.unit),
        (Some(v), None) if f.unit == "pixels" || f.unit == "bits" => format!("{v} {}", f.unit),
        (Some(v), None) => format!("{} {}", sig(v), f.unit),
    }
}

fn figure_rows(o: &mut String, figures: &[ptc::Figure]) {
    for f in figures {
        let _ = writeln!(o, "  {:<26} {}", f.name, figure_value(f).trim_end());
    }
}

fn points_table(o: &mut String, f: &ptc::FitReport) {
    let _ = writeln!(o, "photon transfer points");
    let _ = writeln!(
        o,
        "  {:<5} {:>10} {:<10} {:>6} {:>12} {:>12} {:>12} {:>12}  fit",
        "kind", "exposure", "level", "frames", "mean [DN]", "above dark", "σ² [DN²]", "s² [DN²]"
    );
    for p in &f.points {
        let _ = writeln!(
            o,
            "  {:<5} {:>10} {:<10} {:>6} {:>12} {:>12} {:>12} {:>12}  {}",
            p.kind.as_str(),
            crate::human::seconds(p.exposure_time_s),
            p.level.as_deref().unwrap_or("-"),
            p.frames,
            sig(p.mean_dn),
            p.mean_above_dark_dn.map_or_else(|| "-".into(), sig),
            sig(p.temporal_variance_dn2),
            sig(p.spatial_variance_dn2),
            if p.used_in_gain_fit { "yes" } else { "" }
        );
    }
}

/// The characterization for people: the engine's list of measured figures with their
/// uncertainties (per channel for a colour sensor), the points, the diagnostics, and where each
/// figure's definition comes from.
#[must_use]
pub fn render_table(c: &Characterization) -> String {
    let f = &c.fit;
    let d = &c.sample_depth;
    let mut o = String::new();
    let _ = writeln!(
        o,
        "measured sensor ({} pixels per frame, {}, DN of {} samples{})",
        f.pixels_per_frame,
        c.cfa.as_str(),
        d.native_bits
            .map_or_else(|| "unknown-bit".to_string(), |b| format!("{b}-bit")),
        if d.step_dn > 1 {
            format!(
                ", 1 DN = {} DN of the {}-bit files",
                d.step_dn, d.container_bits
            )
        } else {
            String::new()
        }
    );
    if c.channels.is_empty() {
        figure_rows(&mut o, &c.figures);
    } else {
        let _ = writeln!(
            o,
            "  green pixels (Gr and Gb pooled; the top-level sensor):"
        );
        figure_rows(&mut o, &c.figures);
        for ch in &c.channels {
            let _ = writeln!(o);
            let _ = writeln!(o, "channel {}", ch.name);
            figure_rows(&mut o, &ch.figures);
        }
    }
    let _ = writeln!(o);
    points_table(&mut o, f);
    if !f.diagnostics.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "diagnostics");
        for d in &f.diagnostics {
            let _ = writeln!(o, "  {}: {}", d.code, d.message);
        }
    }
    for ch in &c.channels {
        if !ch.fit.diagnostics.is_empty() {
            let _ = writeln!(o);
            let _ = writeln!(o, "diagnostics, channel {}", ch.name);
            for d in &ch.fit.diagnostics {
                let _ = writeln!(o, "  {}: {}", d.code, d.message);
            }
        }
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "definitions");
    for fig in &c.figures {
        let _ = writeln!(o, "  {:<26} {}", fig.name, fig.clause);
    }
    o
}

/// How many files the reading thread reads ahead of the one being analysed: the frames a stack
/// accumulator sums at once, so that the next ones are read while those are summed (one file
/// ahead overlapped almost nothing, since the summing comes in bursts at every fourth frame).
/// The files then go round this many buffers more than the accumulator's own.
const READ_AHEAD: usize = ptc::FRAMES_SUMMED_AT_ONCE;

/// A file's bytes as the reading thread read them (the buffer it was given), or why not.
type FileRead = Result<Vec<u8>, String>;

/// Read `path` into `buffer` (cleared first); the error says which file and why.
fn read_file(path: &Path, mut buffer: Vec<u8>) -> FileRead {
    buffer.clear();
    std::fs::File::open(path)
        .and_then(|mut file| file.read_to_end(&mut buffer))
        .map(|_| buffer)
        .map_err(|e| format!("cannot read {}: {e}", path.display()))
}

/// The measurement, its files read on a second thread while the engine analyses the file
/// before (paths relative to the manifest's folder, `base`). The thread reads what
/// [`ptc::Measurement::upcoming`] lists, in that order, into buffers handed back after use; a
/// file read ahead that the measurement does not want after all is dropped, and one it wants
/// that was not read ahead (or a thread that could not start) is read here. The result is the
/// one `ptc::measure_buffered` gives: the same files in the same order, read once each per pass.
fn measure_reading_ahead(
    manifest: &ptc::Manifest,
    base: &Path,
) -> Result<Characterization, ptc::Failure> {
    let (ask, asked) = mpsc::channel::<(PathBuf, Vec<u8>)>();
    let (answer, answers) = mpsc::channel::<FileRead>();
    thread::scope(|scope| {
        let reader = thread::Builder::new()
            .name("frame reader".into())
            .spawn_scoped(scope, move || {
                for (path, buffer) in asked {
                    if answer.send(read_file(&path, buffer)).is_err() {
                        break;
                    }
                }
            });
        // Without the thread every file is read here, as it is wanted.
        let mut ask = reader.is_ok().then_some(ask);
        let mut m = ptc::Measurement::new(manifest.clone());
        // Manifest indices asked for and not yet answered, in the order asked.
        let mut in_flight: VecDeque<usize> = VecDeque::new();
        let mut spares: Vec<Vec<u8>> = Vec::new();
        while m.wanted().is_some() {
            if let Some(tx) = &ask {
                for f in m.upcoming(READ_AHEAD + 1) {
                    if in_flight.contains(&f.index) {
                        continue;
                    }
                    let buffer = spares.pop().unwrap_or_default();
                    if tx.send((base.join(&f.path), buffer)).is_err() {
                        ask = None;
                        break;
                    }
                    in_flight.push_back(f.index);
                }
            }
            let mut read = |f: &ptc::FrameEntry, buffer: &mut Vec<u8>| {
                while let Some(index) = in_flight.pop_front() {
                    let Ok(got) = answers.recv() else { break };
                    if index != f.index {
                        spares.extend(got.ok());
                        continue;
                    }
                    // The measurement's old buffer goes back to the reading thread.
                    let bytes = got?;
                    spares.push(std::mem::replace(buffer, bytes));
                    return Ok(());
                }
                in_flight.clear();
                *buffer = read_file(&base.join(&f.path), std::mem::take(buffer))?;
                Ok(())
            };
            m.give(&mut read, &mut |_, _| {});
        }
        // Ending the requests ends the thread; the scope waits for it.
        drop(ask);
        m.finish()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(sig(0.25), "0.25");
        assert_eq!(sig(2.5), "2.5");
        assert_eq!(sig(10000.0), "10000");
        assert_eq!(sig(1.5e7), "1.5 × 10⁷");
    }

    /// A simulated series (the first demo sensor) on disk, its first stack made six frames
    /// long (copies of its two files under new names), so that the measurement summarises it
    /// as it reads and reads the short stacks twice; `drop` names a file left out.
    fn series_on_disk(name: &str, drop: Option<usize>) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("nb-read-ahead-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("{e}"));
        let sc = engine::validate::scenario_from_json(engine::demos::DEMOS[0].json)
            .unwrap_or_else(|e| panic!("{e:?}"));
        let size = engine::simulate::FrameSize::new(40, 30).unwrap_or_else(|e| panic!("{e:?}"));
        let s = engine::simulate::series(&sc, 7, size).unwrap_or_else(|e| panic!("{e:?}"));
        let mut m: serde_json::Value =
            serde_json::from_str(&s.manifest_json).unwrap_or_else(|e| panic!("{e}"));
        let frames = m["frames"]
            .as_array_mut()
            .unwrap_or_else(|| panic!("no frames"));
        for copy in 0..4 {
            let mut f = frames[copy % 2].clone();
            f["path"] = format!("copy{copy}.pgm").into();
            frames.insert(2, f);
        }
        let mut files = s.files.clone();
        for copy in 0..4 {
            files.push((format!("copy{copy}.pgm"), s.files[copy % 2].1.clone()));
        }
        for (i, (file, bytes)) in files.iter().enumerate() {
            if drop != Some(i) {
                std::fs::write(dir.join(file), bytes).unwrap_or_else(|e| panic!("{e}"));
            }
        }
        std::fs::write(dir.join("manifest.json"), m.to_string()).unwrap_or_else(|e| panic!("{e}"));
        dir
    }

    /// The measurement with each file read when it is wanted, on this thread.
    fn read_in_turn(
        manifest: &ptc::Manifest,
        dir: &Path,
    ) -> Result<Characterization, ptc::Failure> {
        let mut read = |f: &ptc::FrameEntry, buffer: &mut Vec<u8>| {
            *buffer = read_file(&dir.join(&f.path), std::mem::take(buffer))?;
            Ok(())
        };
        ptc::measure_buffered(manifest, &mut read, &mut |_, _| {})
    }

    // Derived: reading ahead on a second thread changes when a file is read, not which bytes
    // the measurement is given or in what order, so the characterization (or the failure,
    // messages and all) is identical to reading each file when it is wanted.
    #[test]
    fn reading_ahead_gives_the_same_result_as_reading_in_turn() {
        for (name, drop) in [
            ("whole", None),
            ("missing", Some(5)),
            ("missing-copy", Some(9)),
        ] {
            let dir = series_on_disk(name, drop);
            let text = std::fs::read_to_string(dir.join("manifest.json"))
                .unwrap_or_else(|e| panic!("{e}"));
            let manifest = ptc::parse_manifest(&text).unwrap_or_else(|e| panic!("{e:?}"));
            assert!(
                manifest.stacks.first().is_some_and(|s| s.len() == 6),
                "{name}"
            );
            let ahead = measure_reading_ahead(&manifest, &dir);
            let in_turn = read_in_turn(&manifest, &dir);
            assert_eq!(ahead, in_turn, "{name}");
            assert_eq!(ahead.is_ok(), drop.is_none(), "{name}: {ahead:?}");
            if let Err(f) = &ahead {
                assert!(
                    f.io && f.messages.iter().any(|m| m.contains("cannot read")),
                    "{f:?}"
                );
            }
            let _ = std::fs::remove_dir_all(&dir);
        }
    }
}
