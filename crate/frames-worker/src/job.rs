//! One analysis job as text in, text out: the manifest the page wrote, a `read` function for
//! the files, and the answer as JSON (the characterization and its plot series, or problems
//! each naming its file).
//!
//! Pure and native-testable; the wasm bindings only adapt JavaScript functions to the two
//! closures. No statistic or rule lives here (they are the engine's).

use engine::frames::FrameFile;
use engine::ptc::{self, Characterization, CurveSeries, Problem};
use serde::Serialize;
use serde_json::Value;

/// Samples of the model curve on the photon transfer plot.
pub const MODEL_SAMPLES: usize = 64;

/// Most points of one spatial series sent to the page (profiles of a 4000-column frame are
/// thinned to every k-th point): a plot 1000 units wide shows no more (common practice, no
/// source). The command's CSV has every point.
pub const MAX_PLOT_POINTS: usize = 1000;

/// The answer of a job that succeeded: what `noise-budget characterize` prints (the whole
/// characterization), plus the plot series.
#[derive(Debug, Serialize)]
pub struct Answer<'a> {
    /// The characterization, as the command prints it.
    #[serde(flatten)]
    pub characterization: &'a Characterization,
    /// Plot-ready series of the photon transfer curve and the variance fit.
    pub series: &'a CurveSeries,
    /// The same for each colour channel (empty for mono).
    pub channel_series: Vec<CurveSeries>,
    /// Profiles, spectrograms and histograms, at most [`MAX_PLOT_POINTS`] points each.
    pub spatial: Vec<ptc::SpatialSeries>,
}

/// Every k-th point, so that at most `max` remain (the last point kept).
fn thinned(points: &[(f64, f64)], max: usize) -> Vec<(f64, f64)> {
    let step = points.len().div_ceil(max.max(1)).max(1);
    let mut out: Vec<(f64, f64)> = points.iter().step_by(step).copied().collect();
    if let (Some(last), Some(kept)) = (points.last(), out.last()) {
        if last != kept {
            out.push(*last);
        }
    }
    out
}

/// What one frame turned out to be, for the page's file table: `W × H, B-bit`, or `None` when
/// the file could not be read or decoded (the problems say why).
#[must_use]
pub fn frame_text(frame: Option<&FrameFile>) -> Option<String> {
    // From the file's header: its samples are not widened for this (a 12 MP frame's widening
    // to a `Frame` cost a pass and 24 MB per file, measured).
    frame.map(|f| format!("{} × {}, {}-bit", f.width(), f.height(), f.sample_bits()))
}

/// Puts a file's bytes into the analysis's buffer (replacing what it holds).
pub type Fill<'a> = dyn Fn(&mut Vec<u8>) + 'a;

/// One analysis, given its files one at a time ([`engine::ptc::Measurement`] with text in and
/// out), so that the worker can read the next files while one is analysed.
#[derive(Debug)]
pub struct Job(Stage);

#[derive(Debug)]
enum Stage {
    /// The manifest was read: its files are being given.
    Measuring(Box<ptc::Measurement>),
    /// The manifest could not be read: the answer, its problems.
    Refused(String),
}

impl Job {
    /// Start a job on the manifest the page wrote (JSON text). A manifest with problems makes
    /// a job that wants no file and answers with them.
    #[must_use]
    pub fn start(manifest_json: &str) -> Job {
        Job(match ptc::parse_manifest(manifest_json) {
            Ok(m) => Stage::Measuring(Box::new(ptc::Measurement::new(m))),
            Err(problems) => Stage::Refused(problems_json(&named(manifest_json, &problems))),
        })
    }

    fn measurement(&self) -> Option<&ptc::Measurement> {
        match &self.0 {
            Stage::Measuring(m) => Some(m),
            Stage::Refused(_) => None,
        }
    }

    /// The manifest index of the file to give next; `None` once the answer is ready.
    #[must_use]
    pub fn wanted(&self) -> Option<usize> {
        Some(self.measurement()?.wanted()?.index)
    }

    /// The manifest indices of the next `n` files wanted, [`Job::wanted`] first (see
    /// [`engine::ptc::Measurement::upcoming`]), for reading ahead.
    #[must_use]
    pub fn upcoming(&self, n: usize) -> Vec<usize> {
        self.measurement().map_or_else(Vec::new, |m| {
            m.upcoming(n).iter().map(|f| f.index).collect()
        })
    }

    /// Give file `index`: its bytes, or why the browser could not read it. Returns what the
    /// page's file table should say of it, `Some(`[`frame_text`]`)`, or `None` when the file
    /// is being read a second time (the table already says). A file that is not the one
    /// wanted is taken as the wanted one being unreadable, with a message saying so.
    pub fn give(
        &mut self,
        index: usize,
        bytes: Result<&Fill<'_>, String>,
    ) -> Option<Option<String>> {
        let Stage::Measuring(m) = &mut self.0 else {
            return None;
        };
        let wanted = m.wanted()?.index;
        let second = m.rereading();
        let mut told = None;
        m.give(
            &mut |_, buffer| match &bytes {
                Ok(fill) if index == wanted => {
                    fill(buffer);
                    Ok(())
                }
                Ok(_) => Err(format!(
                    "the page sent frames[{index}] where this file was expected"
                )),
                Err(e) => Err(e.clone()),
            },
            &mut |_, file| told = Some(frame_text(file)),
        );
        if second {
            None
        } else {
            Some(told.flatten())
        }
    }

    /// The answer: JSON text, `{"result": …}` or `{"problems": […]}` (see [`run`]).
    #[must_use]
    pub fn answer(self) -> String {
        match self.0 {
            Stage::Refused(problems) => problems,
            Stage::Measuring(m) => match m.finish() {
                Ok(c) => answer_json(&c),
                Err(failure) => problems_json(&failure.messages),
            },
        }
    }
}

/// Run a job. `read` gets a frame entry's index (its position in the manifest's `frames`) and
/// returns the bytes or why they cannot be read; `seen` is told each entry's [`frame_text`]
/// after its file was read (once, though a file may be read twice).
///
/// Returns JSON text: `{"result": {"sensor": …, "fit": …, "series": …}}`, or
/// `{"problems": ["name: what is wrong", …]}`, every problem at once.
pub fn run(
    manifest_json: &str,
    read: &mut dyn FnMut(usize) -> Result<Vec<u8>, String>,
    seen: &mut dyn FnMut(usize, Option<String>),
) -> String {
    let mut job = Job::start(manifest_json);
    while let Some(index) = job.wanted() {
        let told = match read(index) {
            Ok(bytes) => job.give(index, Ok(&|buffer: &mut Vec<u8>| buffer.clone_from(&bytes))),
            Err(e) => job.give(index, Err(e)),
        };
        if let Some(text) = told {
            seen(index, text);
        }
    }
    job.answer()
}

/// The answer of a characterization as JSON text.
#[must_use]
pub fn answer_json(c: &Characterization) -> String {
    let series = ptc::curve_series(c, MODEL_SAMPLES);
    let mut spatial = ptc::spatial_series(c);
    for s in &mut spatial {
        s.points = thinned(&s.points, MAX_PLOT_POINTS);
    }
    let answer = Answer {
        characterization: c,
        series: &series,
        channel_series: c
            .channels
            .iter()
            .map(|ch| ptc::curve_series_of_fit(&ch.fit, MODEL_SAMPLES))
            .collect(),
        spatial,
    };
    // Written straight to text: `json!` would first copy the whole answer into a
    // `serde_json::Value` (a second serializer of every answer type in the wasm).
    #[derive(Serialize)]
    struct Message<'a> {
        result: Answer<'a>,
    }
    match serde_json::to_string(&Message { result: answer }) {
        Ok(s) => s,
        Err(e) => problems_json(&[format!("the result could not be written as JSON: {e}")]),
    }
}

fn problems_json(lines: &[String]) -> String {
    serde_json::json!({ "problems": lines }).to_string()
}

/// Manifest problems with the file's name in front: `frames[2].kind: …` becomes
/// `f3.pgm (frames[2].kind): …`, so that the person sees which row of the table is meant.
fn named(manifest_json: &str, problems: &[Problem]) -> Vec<String> {
    let doc: Value = serde_json::from_str(manifest_json).unwrap_or(Value::Null);
    problems
        .iter()
        .map(|p| {
            let name = p
                .path
                .strip_prefix("frames[")
                .and_then(|rest| rest.split(']').next())
                .and_then(|i| i.parse::<usize>().ok())
                .and_then(|i| doc.get("frames")?.get(i)?.get("path")?.as_str());
            match name {
                Some(n) if !n.is_empty() => format!("{n} ({}): {}", p.path, p.message),
                _ => p.to_string(),
            }
        })
        .collect()
}

/// Two synthetic 16-bit frames of `pixels` samples: a flat field near 30 000 DN with noise
/// (invented data; xorshift with a fixed seed, as `crate/engine/benches/frame_stats.rs`), for
/// timing the frame-pair statistics in wasm and natively on the same values.
#[must_use]
pub fn synthetic_pair(pixels: usize) -> (Vec<u16>, Vec<u16>) {
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    let mut frame = || -> Vec<u16> {
        (0..pixels)
            .map(|_| {
                let r = next();
                // Sum of four 8-bit uniforms: roughly Gaussian, σ ≈ 148 DN; below 30 521.
                let noise: u64 = (0..4).map(|k| (r >> (16 * k)) & 0xff).sum();
                u16::try_from(29_500 + noise).unwrap_or(u16::MAX)
            })
            .collect()
    };
    let a = frame();
    let b = frame();
    (a, b)
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code

    use super::*;

    fn pgm(v: u8) -> Vec<u8> {
        let mut b = b"P5 2 1 255\n".to_vec();
        b.extend([v, v]);
        b
    }

    #[test]
    fn problems_name_the_file() {
        let out = run(
            r#"{"version": 1, "frames": [
                {"path": "a.pgm", "kind": "dark", "exposure_time_s": "fast"},
                {"path": "b.pgm", "kind": "dark", "exposure_time_s": 1}]}"#,
            &mut |_| Ok(pgm(1)),
            &mut |_, _| {},
        );
        let v: Value = serde_json::from_str(&out).unwrap();
        let lines = v["problems"].as_array().unwrap();
        assert!(
            lines.iter().any(|l| l
                .as_str()
                .unwrap()
                .starts_with("a.pgm (frames[0].exposure_time_s): must be a number")),
            "{out}"
        );
    }

    #[test]
    fn a_bad_file_is_named_and_every_file_is_seen() {
        let mut seen = Vec::new();
        let out = run(
            r#"{"version": 1, "frames": [
                {"path": "d1.pgm", "kind": "dark", "exposure_time_s": 1},
                {"path": "d2.pgm", "kind": "dark", "exposure_time_s": 1}]}"#,
            &mut |index| {
                if index == 1 {
                    Ok(b"P5 2 1 255\n".to_vec())
                } else {
                    Ok(pgm(3))
                }
            },
            &mut |index, text| seen.push((index, text)),
        );
        assert_eq!(seen, [(0, Some("2 × 1, 8-bit".to_string())), (1, None)]);
        let v: Value = serde_json::from_str(&out).unwrap();
        assert!(v["problems"][0]
            .as_str()
            .unwrap()
            .starts_with("frames[1] (d2.pgm): truncated"));
    }
}
