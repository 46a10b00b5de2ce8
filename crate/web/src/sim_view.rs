//! The simulated frame's pure part: the frame size the page asks the engine for, the frame's
//! grey levels as RGBA for a canvas, and each patch's label (the SNR measured on the simulated
//! frame beside the model's).
//!
//! No DOM and no figure computed here: the engine simulates, measures and maps to display
//! grey levels (`engine::simulate`); this only sizes, repacks and words. `frame_ui.rs` puts it
//! on the page.

use engine::simulate::{FrameSize, SceneFrame};

use crate::display::{Numbers, Style};

/// The largest frame the page simulates: 640 × 480 output pixels, the command's default
/// (`noise-budget simulate --frame`), which gives each patch thousands of pixels.
pub const MAX_SIZE: (u32, u32) = (640, 480);
/// The smallest frame: each of the twelve patches still has a few dozen measured pixels.
pub const MIN_SIZE: (u32, u32) = (64, 48);
/// Pixel reads (output pixels × b² × frames averaged) the page spends on one frame at most:
/// about 40 ms in the page's wasm (a 12 MP frame took 1.4 s there, issue 14's benchmark).
/// More binning or averaging gives a smaller frame. Common practice, no source.
pub const MAX_PAGE_READS: u64 = 1_500_000;

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

/// One patch's label: its light (a multiple of the scenario's), the SNR measured on the
/// simulated frame with its sampling uncertainty, and the model's total SNR.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PatchLabel {
    /// "× 0.1" of the scenario's light.
    pub light: String,
    /// "12.3 ± 0.4", or "—" (the dark patch, or a clipped one).
    pub measured: String,
    /// "12.5", or "—".
    pub model: String,
}

/// Each patch's label, in the engine's patch order.
#[must_use]
pub fn patch_labels(frame: &SceneFrame, numbers: &dyn Numbers) -> Vec<PatchLabel> {
    let n = |x: f64| numbers.rounded(x, Style::Number);
    frame
        .patches
        .iter()
        .map(|p| {
            let measured = p
                .measured
                .as_ref()
                .and_then(|m| m.snr.zip(m.snr_uncertainty));
            PatchLabel {
                light: format!("× {}", n(p.light_factor)),
                measured: measured
                    .map_or_else(|| "—".into(), |(s, u)| format!("{} ± {}", n(s), n(u))),
                model: p
                    .model
                    .as_ref()
                    .map_or_else(|| "—".into(), |m| n(m.snr_total)),
            }
        })
        .collect()
}

/// The display mapping in words, with the engine's numbers.
#[must_use]
pub fn mapping_words(frame: &SceneFrame, numbers: &dyn Numbers) -> String {
    let m = frame.display;
    format!(
        "{} × {} output pixels, seed {}. Shown linear in light from black at {} DN (black level, dark and background) to white at {} DN (saturation), then with a display gamma of {}.",
        frame.width,
        frame.height,
        frame.seed,
        numbers.rounded(m.dark_dn, Style::Number),
        numbers.rounded(m.white_dn, Style::Number),
        numbers.rounded(m.gamma, Style::Number),
    )
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::{patch_labels, rgba, size_for, MAX_PAGE_READS, MAX_SIZE, MIN_SIZE};
    use crate::display::{Numbers, Style};

    struct Plain;
    impl Numbers for Plain {
        fn rounded(&self, x: f64, _: Style) -> String {
            format!("{x:.2}")
        }
        fn full(&self, x: f64) -> String {
            format!("{x}")
        }
    }

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
        // 3 × 3 binning and 4 frames: 36 reads a pixel, 41 666 pixels, 232 × 174 (a multiple of 4).
        let s = size_for(3, 4).unwrap();
        assert_eq!((s.width, s.height), (232, 174));
    }

    #[test]
    fn pixels_and_labels_come_from_the_engine_frame() {
        let sc = engine::validate::scenario_from_json(engine::demos::DEMOS[0].json).unwrap();
        let size = engine::simulate::FrameSize::new(96, 72).unwrap();
        let f = engine::simulate::frame(&sc, 7, size).unwrap();
        let px = rgba(&f);
        assert_eq!(px.len(), 96 * 72 * 4);
        let grey = f.display_8_bit();
        assert_eq!(px[4 * 100..4 * 101], [grey[100], grey[100], grey[100], 255]);
        let labels = patch_labels(&f, &Plain);
        assert_eq!(labels.len(), f.patches.len());
        for (l, p) in labels.iter().zip(&f.patches) {
            assert_eq!(l.light, format!("× {:.2}", p.light_factor));
            if let Some(m) = p.model.as_ref() {
                assert_eq!(l.model, format!("{:.2}", m.snr_total));
            }
        }
        assert!(labels.iter().any(|l| l.measured.contains(" ± ")));
    }
}
