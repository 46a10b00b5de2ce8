//! `noise-budget characterize MANIFEST`: measure a camera from dark and flat frames on disk.
//!
//! Reads the manifest file and hands it to the engine (`engine::ptc::parse_manifest`, every
//! problem at once, each with its key path), reads each
//! frame file once, stack by stack, into one reused buffer, hands the bytes to the engine's
//! decoders and stack accumulators, and prints the engine's characterization as JSON or a
//! table. It computes no statistic itself and never holds more than the stack being read.

use std::fmt::Write as _;
use std::io::{self, Read, Write};
use std::path::Path;
use std::process::ExitCode;

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
    // Paths are relative to the manifest's folder. Every file is read into the same buffer.
    let mut read = |f: &ptc::FrameEntry, buffer: &mut Vec<u8>| {
        let resolved = base.join(&f.path);
        buffer.clear();
        std::fs::File::open(&resolved)
            .and_then(|mut file| file.read_to_end(buffer))
            .map(|_| ())
            .map_err(|e| format!("cannot read {}: {e}", resolved.display()))
    };
    let result = match ptc::measure_buffered(&manifest, &mut read, &mut |_, _| {}) {
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
}
