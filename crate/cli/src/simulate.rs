//! `noise-budget simulate SCENARIO --frame OUT --series DIR`: write the engine's simulated
//! test-scene frame (16-bit PNG or PGM) and photon transfer series (PGM files and
//! `manifest.json`), and print what was written with the patches' SNR, as JSON or a table.
//!
//! Simulates nothing itself: frames, samples, the manifest and every figure come from
//! `engine::simulate`; this file parses the size, encodes the PNG container, writes files and
//! formats numbers for people.

use crate::human::quantity;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use engine::simulate::{self, FrameSize, SceneFrame, SeriesPlan};
use serde_json::json;

/// The frame size when `--size` is not given, for `--frame`: big enough for every patch to
/// hold thousands of pixels (a 1.5 % sampling error on its SNR).
pub const DEFAULT_FRAME_SIZE: (u32, u32) = (640, 480);
/// The series' frame size when `--size` is not given: 65 536 pixels give each variance a
/// 0.55 % sampling error, and the 126 frames about 16 MB.
pub const DEFAULT_SERIES_SIZE: (u32, u32) = (256, 256);

/// What to do, from the command line.
pub struct Request<'a> {
    pub scenario: &'a PathBuf,
    pub frame: Option<&'a PathBuf>,
    pub series: Option<&'a PathBuf>,
    pub seed: u64,
    pub size: Option<(u32, u32)>,
    pub table: bool,
}

/// Parse `WIDTHxHEIGHT` (also `×` or `X`), both whole numbers ≥ 1.
///
/// # Errors
/// A message naming the expected form.
pub fn parse_size(text: &str) -> Result<(u32, u32), String> {
    let bad = || format!("expected WIDTHxHEIGHT in pixels, such as 640x480, got {text:?}");
    let (w, h) = text.split_once(['x', 'X', '×']).ok_or_else(bad)?;
    let number = |s: &str| -> Result<u32, String> {
        let v: u32 = s.trim().parse().map_err(|_| bad())?;
        if v == 0 {
            return Err(format!(
                "width and height must be at least 1 pixel, got {text:?}"
            ));
        }
        Ok(v)
    };
    Ok((number(w)?, number(h)?))
}

/// The frame file's container, from OUT's extension.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Container {
    Png,
    Pgm,
}

fn container(path: &Path) -> Option<Container> {
    let ext = path.extension()?.to_str()?.to_ascii_lowercase();
    match ext.as_str() {
        "png" => Some(Container::Png),
        "pgm" => Some(Container::Pgm),
        _ => None,
    }
}

/// Run the command: 0 on success, 2 for an invalid scenario, bad arguments or a simulation
/// the engine refuses, 1 when a file cannot be read or written.
pub fn run(r: &Request<'_>) -> ExitCode {
    if r.frame.is_none() && r.series.is_none() {
        eprintln!(
            "noise-budget simulate: nothing to write: give --frame OUT.png (or .pgm), --series \
             DIR, or both"
        );
        return ExitCode::from(2);
    }
    let out_container = match r.frame.map(|p| (p, container(p))) {
        Some((p, None)) => {
            eprintln!(
                "--frame: the file name must end in .png or .pgm, got {}",
                p.display()
            );
            return ExitCode::from(2);
        }
        Some((_, c)) => c,
        None => None,
    };
    let text = match super::read_text(r.scenario) {
        Ok(t) => t,
        Err(code) => return code,
    };
    let scenario = match engine::validate::scenario_from_json(&text) {
        Ok(s) => s,
        Err(e) => {
            for p in e.problems() {
                eprintln!("{p}");
            }
            return ExitCode::from(2);
        }
    };
    let size_of = |default: (u32, u32)| {
        let (w, h) = r.size.unwrap_or(default);
        FrameSize::new(w, h)
    };
    let mut summary = json!({ "seed": r.seed });

    // Check everything the engine may refuse before writing anything.
    let frame_job = match (r.frame, out_container) {
        (Some(path), Some(c)) => {
            let made = size_of(DEFAULT_FRAME_SIZE)
                .and_then(|size| simulate::frame(&scenario, r.seed, size));
            match made {
                Ok(f) => Some((path, c, f)),
                Err(e) => {
                    eprintln!("{e}");
                    return ExitCode::from(2);
                }
            }
        }
        _ => None,
    };
    let series_job = match r.series {
        Some(dir) => {
            let plan = size_of(DEFAULT_SERIES_SIZE)
                .and_then(|size| simulate::series_plan(&scenario, r.seed, size));
            match plan {
                Ok(p) => Some((dir, p)),
                Err(e) => {
                    eprintln!("{e}");
                    return ExitCode::from(2);
                }
            }
        }
        None => None,
    };

    if let Some((path, c, frame)) = &frame_job {
        let samples = frame.to_16_bit();
        let title = scenario.title().unwrap_or("untitled scenario");
        let description = format!(
            "Simulated test-scene frame (noise-budget simulate, seed {}): {} × {} output pixels; \
             sample = DN × {} (output black level {} DN, full scale {} DN)",
            r.seed,
            frame.width,
            frame.height,
            samples.scale,
            frame.output_black_dn,
            frame.output_full_scale_dn
        );
        let bytes = match c {
            Container::Png => crate::png_write::grey16(
                frame.width,
                frame.height,
                &samples.samples,
                &[
                    ("Title", title),
                    ("Description", &description),
                    ("Software", "noise-budget simulate"),
                ],
            ),
            Container::Pgm => pgm_16(frame, &samples.samples, samples.scale, r.seed),
        };
        if !samples.exact {
            eprintln!(
                "caution: {}: 16 bits cannot hold every output value exactly (range {} DN, \
                 steps of 1/{} DN from averaging): the file's samples are rounded; the summary's \
                 patch figures are from the exact values",
                path.display(),
                frame.output_full_scale_dn,
                scenario.exposure().frames_averaged
            );
        }
        if let Err(e) = std::fs::write(path, bytes) {
            eprintln!("noise-budget: cannot write {}: {e}", path.display());
            return ExitCode::from(1);
        }
        let mut v = serde_json::to_value(frame).unwrap_or_default();
        if let Some(m) = v.as_object_mut() {
            m.insert("path".into(), json!(path.display().to_string()));
            m.insert(
                "format".into(),
                json!(if *c == Container::Png { "png" } else { "pgm" }),
            );
            m.insert("sample_scale".into(), json!(samples.scale));
            m.insert("samples_exact".into(), json!(samples.exact));
        }
        summary["frame"] = v;
    }

    if let Some((dir, plan)) = &series_job {
        if let Err(code) = write_series(dir, plan) {
            return code;
        }
        let mut v = serde_json::to_value(plan).unwrap_or_default();
        if let Some(m) = v.as_object_mut() {
            m.insert("dir".into(), json!(dir.display().to_string()));
            m.insert(
                "manifest".into(),
                json!(dir.join("manifest.json").display().to_string()),
            );
        }
        summary["series"] = v;
    }

    let out = if r.table {
        render_table(
            r.seed,
            frame_job.as_ref().map(|(p, _, f)| (p.as_path(), f)),
            series_job.as_ref().map(|(d, p)| (d.as_path(), p)),
        )
    } else {
        match serde_json::to_string_pretty(&summary) {
            Ok(s) => s + "\n",
            Err(e) => {
                eprintln!("noise-budget: cannot write the summary as JSON: {e}");
                return ExitCode::from(1);
            }
        }
    };
    super::write_stdout(&out)
}

/// Write each frame of the series as it is rendered (one frame in memory at a time), then the
/// manifest, into `dir` (created when missing).
fn write_series(dir: &Path, plan: &SeriesPlan) -> Result<(), ExitCode> {
    let fail = |what: &Path, e: std::io::Error| {
        eprintln!("noise-budget: cannot write {}: {e}", what.display());
        ExitCode::from(1)
    };
    std::fs::create_dir_all(dir).map_err(|e| fail(dir, e))?;
    for (i, f) in plan.frames.iter().enumerate() {
        let path = dir.join(&f.path);
        let bytes = plan.render_pgm(i).unwrap_or_default();
        std::fs::write(&path, bytes).map_err(|e| fail(&path, e))?;
    }
    let manifest = dir.join("manifest.json");
    std::fs::write(&manifest, plan.manifest_json()).map_err(|e| fail(&manifest, e))
}

/// A binary PGM, maxval 65 535, with the sample mapping in a header comment.
fn pgm_16(frame: &SceneFrame, samples: &[u16], scale: f64, seed: u64) -> Vec<u8> {
    let mut out = format!(
        "P5\n# noise-budget simulate, seed {seed}: sample = DN x {scale}\n{} {}\n65535\n",
        frame.width, frame.height
    )
    .into_bytes();
    out.reserve(samples.len() * 2);
    for s in samples {
        out.extend_from_slice(&s.to_be_bytes());
    }
    out
}

// ---- table ----------------------------------------------------------------------------------

/// A light factor: whole stops below 1 as 1/2ⁿ.
fn factor(f: f64) -> String {
    if f > 0.0 && f < 1.0 && (1.0 / f).fract() == 0.0 {
        format!("×1/{}", 1.0 / f)
    } else {
        format!("×{f}")
    }
}

fn render_table(
    seed: u64,
    frame: Option<(&Path, &SceneFrame)>,
    series: Option<(&Path, &SeriesPlan)>,
) -> String {
    let mut o = String::new();
    if let Some((path, f)) = frame {
        let _ = writeln!(
            o,
            "test-scene frame {} ({} × {} output pixels, seed {seed})",
            path.display(),
            f.width,
            f.height
        );
        let _ = writeln!(
            o,
            "  reference level (light ×1): {} per pixel ({})",
            quantity(f.reference_signal_e, "e⁻", false),
            match f.reference {
                simulate::ReferenceLevel::ScenarioSignal => "the scenario's signal",
                simulate::ReferenceLevel::MinimumDetectable => "the minimum detectable signal",
            }
        );
        let _ = writeln!(
            o,
            "  {:>8} {:>14} {:>12} {:>20}  ",
            "light", "signal/pixel", "model SNR", "measured SNR"
        );
        for p in &f.patches {
            let model = p
                .model
                .as_ref()
                .map_or_else(|| "—".into(), |m| quantity(m.snr_total, "", false));
            let measured = p.measured.as_ref().and_then(|m| {
                m.snr.map(|s| match m.snr_uncertainty {
                    Some(u) => format!("{} ± {}", quantity(s, "", false), quantity(u, "", false)),
                    None => quantity(s, "", false),
                })
            });
            let note = if p.model.as_ref().is_some_and(|m| m.saturated) {
                "saturated"
            } else if p.light_factor == 0.0 {
                "dark"
            } else {
                ""
            };
            let _ = writeln!(
                o,
                "  {:>8} {:>14} {:>12} {:>20}  {note}",
                factor(p.light_factor),
                quantity(p.signal_e_per_pixel, "e⁻", false),
                model,
                measured.unwrap_or_else(|| "—".into()),
            );
        }
        let _ = writeln!(
            o,
            "  measured SNR: mean above the dark patch over one frame's spatial spread (temporal \
             and fixed-pattern noise), beside the model's total SNR at the patch's light"
        );
        for c in &f.cautions {
            let _ = writeln!(o, "  caution: {}: {}", c.code, c.message);
        }
    }
    if let Some((dir, plan)) = series {
        if !o.is_empty() {
            let _ = writeln!(o);
        }
        let _ = writeln!(
            o,
            "photon transfer series {} ({} frames of {} × {} pixels, seed {seed}, manifest.json)",
            dir.display(),
            plan.frames.len(),
            plan.width,
            plan.height
        );
        let e = &plan.expected;
        let rows = [
            (
                "system gain K",
                quantity(e.system_gain_dn_per_e, "DN/e⁻", false),
            ),
            ("read noise", quantity(e.read_noise_e, "e⁻", false)),
            ("full well (L)", quantity(e.full_well_e, "e⁻", false)),
            (
                "dark current",
                quantity(e.dark_current_e_per_s, "e⁻/s", false),
            ),
            ("DSNU", quantity(e.dsnu_e, "e⁻", false)),
            ("PRNU", quantity(e.prnu_percent, "%", false)),
            (
                "quantum efficiency",
                quantity(e.quantum_efficiency, "", false),
            ),
            ("black level", quantity(e.black_level_dn, "DN", false)),
            (
                "longest flat",
                quantity(plan.longest_flat_exposure_s, "s", true),
            ),
        ];
        let _ = writeln!(o, "  what characterize should find:");
        for (label, value) in rows {
            let _ = writeln!(o, "    {label:<20} {value}");
        }
        for c in &plan.cautions {
            let _ = writeln!(o, "  caution: {}: {}", c.code, c.message);
        }
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sizes_parse_and_bad_ones_are_named() {
        assert_eq!(parse_size("640x480"), Ok((640, 480)));
        assert_eq!(parse_size("64×48"), Ok((64, 48)));
        assert_eq!(parse_size(" 3X2"), Ok((3, 2)));
        assert!(parse_size("640").unwrap_err().contains("WIDTHxHEIGHT"));
        assert!(parse_size("0x5").unwrap_err().contains("at least 1"));
        assert!(parse_size("-1x5").unwrap_err().contains("WIDTHxHEIGHT"));
        assert!(parse_size("axb").is_err());
    }

    #[test]
    fn numbers_for_people() {
        assert_eq!(factor(1.0 / 256.0), "×1/256");
        assert_eq!(factor(4.0), "×4");
        assert_eq!(factor(0.0), "×0");
    }
}
