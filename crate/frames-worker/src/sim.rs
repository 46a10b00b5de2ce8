//! The page's simulations, run in the frame worker: the test-scene frame of a scenario (its
//! display grey levels as RGBA for a canvas, and its patches' figures as JSON), and the photon
//! transfer series of its sensor (the files and manifest `noise-budget simulate --series`
//! writes, as one zip for a download or as files for Measure a camera).
//!
//! Pure and native-testable: the engine simulates, measures and maps to grey levels
//! (`engine::simulate`), the same code as the command; here the page's frame size is chosen
//! and the answers are packed. Nothing here may panic on a scenario.

use engine::simulate::{self, FrameSize, SceneFrame};
use serde_json::json;

use crate::zip;

/// The largest frame the page simulates: 640 × 480 output pixels, the command's default
/// (`noise-budget simulate --frame`), which gives each patch thousands of pixels.
pub const MAX_SIZE: (u32, u32) = (640, 480);
/// The smallest frame: each of the twelve patches still has a few dozen measured pixels.
pub const MIN_SIZE: (u32, u32) = (64, 48);
/// Pixel reads (output pixels × b² × frames averaged) the page spends on one frame at most:
/// about 0.2 s in the worker's wasm (a 12 MP frame took 1.4 s there, issue 14's benchmark).
/// More binning or averaging gives a smaller frame. Common practice, no source.
pub const MAX_PAGE_READS: u64 = 1_500_000;
/// The series' frame size: the command's default (`DEFAULT_SERIES_SIZE` in
/// crate/cli/src/simulate.rs), so that the page's series with a seed is the command's.
pub const SERIES_SIZE: (u32, u32) = (256, 256);

/// The frame size for a scenario binned `binning` × `binning` and averaged over `frames`:
/// 4 : 3, as large as [`MAX_PAGE_READS`] allows, between [`MIN_SIZE`] and [`MAX_SIZE`]
/// (at the smallest the engine may still refuse the work, and says why).
#[must_use]
pub fn size_for(binning: u32, frames: u32) -> Option<FrameSize> {
    let per_pixel = u64::from(binning.max(1)).pow(2) * u64::from(frames.max(1));
    let pixels = (MAX_PAGE_READS / per_pixel).min(u64::from(MAX_SIZE.0 * MAX_SIZE.1));
    // Width of a 4 : 3 frame of that many pixels, a multiple of 4 (an even Bayer tile).
    #[allow(clippy::cast_precision_loss)] // pixels ≤ 307 200
    let width = (pixels as f64 * 4.0 / 3.0).sqrt();
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)] // 0 ≤ width ≤ 640
    let width = (width as u32 / 4 * 4).clamp(MIN_SIZE.0, MAX_SIZE.0);
    FrameSize::new(width, width * 3 / 4).ok()
}

/// The frame's display grey levels (the engine's stated mapping) as RGBA bytes, row by row.
#[must_use]
pub fn rgba(frame: &SceneFrame) -> Vec<u8> {
    frame
        .display_8_bit()
        .iter()
        .flat_map(|&g| [g, g, g, 255])
        .collect()
}

/// A simulated frame for the page: its RGBA pixels (empty on a problem) and the JSON text
/// `{"frame": {width, height, seed, display, patches, cautions, …}}` (the engine's
/// `SceneFrame`) or `{"problem": "…"}`.
#[derive(Debug, Clone, PartialEq)]
pub struct FrameAnswer {
    /// RGBA bytes, `4 · width · height` of them, or none.
    pub rgba: Vec<u8>,
    /// The JSON text.
    pub json: String,
}

/// The answer's message, written straight to text (not through a `serde_json::Value`).
#[derive(serde::Serialize)]
struct Message<'a> {
    frame: &'a SceneFrame,
}

fn problem(message: &str) -> String {
    json!({ "problem": message }).to_string()
}

/// Simulate the test-scene frame of the scenario given as JSON text, with `seed`.
#[must_use]
pub fn frame(scenario_json: &str, seed: u64) -> FrameAnswer {
    let made = engine::validate::scenario_from_json(scenario_json)
        .map_err(|e| e.to_string())
        .and_then(|sc| {
            let size = size_for(sc.exposure().binning, sc.exposure().frames_averaged)
                .ok_or_else(|| "no frame size for this binning and averaging".to_string())?;
            simulate::frame(&sc, seed, size).map_err(|e| e.to_string())
        });
    match made {
        Ok(f) => match serde_json::to_string(&Message { frame: &f }) {
            Ok(text) => FrameAnswer {
                rgba: rgba(&f),
                json: text,
            },
            Err(e) => FrameAnswer {
                rgba: Vec::new(),
                json: problem(&format!("the frame could not be written as JSON: {e}")),
            },
        },
        Err(message) => FrameAnswer {
            rgba: Vec::new(),
            json: problem(&message),
        },
    }
}

/// A simulated photon transfer series for the page: the files (name, PGM bytes) and the
/// manifest's text, or the problem.
///
/// # Errors
/// The scenario's problems, or the simulator's refusal, in words.
pub fn series(scenario_json: &str, seed: u64) -> Result<simulate::Series, String> {
    let sc = engine::validate::scenario_from_json(scenario_json).map_err(|e| e.to_string())?;
    let size = FrameSize::new(SERIES_SIZE.0, SERIES_SIZE.1).map_err(|e| e.to_string())?;
    simulate::series(&sc, seed, size).map_err(|e| e.to_string())
}

/// The series as one zip (stored, not compressed: PGM noise hardly compresses) holding a
/// folder `noise-budget-series-seed-N/` with `manifest.json` and the frames, as
/// `noise-budget simulate --series DIR` writes them.
///
/// # Errors
/// As [`series`].
pub fn series_zip(scenario_json: &str, seed: u64) -> Result<Vec<u8>, String> {
    let s = series(scenario_json, seed)?;
    let folder = format!("noise-budget-series-seed-{seed}");
    let mut entries: Vec<(String, &[u8])> = vec![(
        format!("{folder}/manifest.json"),
        s.manifest_json.as_bytes(),
    )];
    for (name, bytes) in &s.files {
        entries.push((format!("{folder}/{name}"), bytes));
    }
    zip::stored(&entries)
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code

    use super::*;

    #[test]
    fn the_frame_shrinks_with_binning_and_averaging_and_keeps_its_shape() {
        // Unbinned, one frame: 1.5 M reads allow 1 414 × 1 061, so the 640 × 480 limit holds.
        let full = size_for(1, 1).unwrap();
        assert_eq!((full.width, full.height), MAX_SIZE);
        for (b, n) in [(1, 1), (2, 1), (3, 4), (1, 16), (4, 16)] {
            let s = size_for(b, n).unwrap();
            let reads = u64::from(s.width) * u64::from(s.height) * u64::from(b * b * n);
            assert!(
                reads <= MAX_PAGE_READS || s.width == MIN_SIZE.0,
                "{b} {n}: {reads}"
            );
            assert_eq!(s.width % 4, 0);
            assert_eq!(s.height, s.width * 3 / 4);
        }
        assert_eq!(size_for(8, 1000).unwrap().width, MIN_SIZE.0);
        // 3 × 3 binning and 4 frames: 36 reads a pixel, 41 666 pixels, √(41 666·4/3) = 235.7,
        // so 232 × 174 (a multiple of 4; arithmetic).
        let s = size_for(3, 4).unwrap();
        assert_eq!((s.width, s.height), (232, 174));
    }

    #[test]
    fn the_frame_is_the_engines_and_the_same_seed_gives_the_same_picture() {
        let json_text = engine::demos::DEMOS[0].json;
        let a = frame(json_text, 7);
        let b = frame(json_text, 7);
        let c = frame(json_text, 8);
        assert_eq!(a, b, "deterministic for a seed");
        assert_ne!(a.rgba, c.rgba);
        let v: serde_json::Value = serde_json::from_str(&a.json).unwrap();
        let (w, h) = (
            v["frame"]["width"].as_u64().unwrap(),
            v["frame"]["height"].as_u64().unwrap(),
        );
        assert_eq!(a.rgba.len() as u64, 4 * w * h);
        // The pixels are the engine's display mapping of its own frame.
        let sc = engine::validate::scenario_from_json(json_text).unwrap();
        let size = size_for(sc.exposure().binning, sc.exposure().frames_averaged).unwrap();
        let f = simulate::frame(&sc, 7, size).unwrap();
        let grey = f.display_8_bit();
        assert_eq!(a.rgba[400..404], [grey[100], grey[100], grey[100], 255]);
        assert_eq!(
            v["frame"]["patches"].as_array().unwrap().len(),
            f.patches.len()
        );
        assert!(v["frame"]["display"]["gamma"].as_f64().unwrap() > 1.0);
    }

    #[test]
    fn a_bad_scenario_is_a_named_problem_not_a_panic() {
        let a = frame(r#"{"version": 1, "sensor": {"full_well_e": -3}}"#, 1);
        assert!(a.rgba.is_empty());
        let v: serde_json::Value = serde_json::from_str(&a.json).unwrap();
        assert!(
            v["problem"].as_str().unwrap().contains("sensor"),
            "{}",
            a.json
        );
        assert!(frame("not json", 1).json.contains("problem"));
        assert!(series_zip("{}", 1).is_err());
    }

    #[test]
    fn the_series_zip_holds_the_manifest_and_every_frame_of_the_engines_series() {
        let json_text = engine::demos::DEMOS[0].json;
        let s = series(json_text, 3).unwrap();
        let z = series_zip(json_text, 3).unwrap();
        let names = zip::tests::names(&z);
        assert_eq!(names.len(), s.files.len() + 1);
        assert_eq!(names[0], "noise-budget-series-seed-3/manifest.json");
        assert_eq!(
            names[1],
            format!("noise-budget-series-seed-3/{}", s.files[0].0)
        );
        // The manifest reads back as a frame manifest listing every file.
        let m = engine::ptc::parse_manifest(&s.manifest_json).unwrap();
        assert_eq!(m.stacks.iter().map(Vec::len).sum::<usize>(), s.files.len());
    }
}
