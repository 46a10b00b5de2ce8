//! The simulated frame's words: each patch's label (its light, the SNR measured on the
//! simulated frame with its sampling uncertainty, and the model's) and the display mapping,
//! from the frame worker's JSON of the engine's `SceneFrame` (`crate/frames-worker/src/sim.rs`).
//!
//! Pure, natively tested; no figure computed here, only read and worded. `frame_ui.rs` puts
//! them on the page.

use serde_json::Value;

use crate::display::{Numbers, Style};

/// One patch's label.
#[derive(Debug, Clone, PartialEq)]
pub struct PatchLabel {
    /// "× 0.1" of the scenario's light.
    pub light: String,
    /// "12.3 ± 0.4", or "—" (the dark patch, or a clipped one).
    pub measured: String,
    /// "12.5", or "—".
    pub model: String,
    /// The measured SNR as the engine gave it (for `data-value`).
    pub measured_value: Option<f64>,
    /// The model's total SNR as the engine gave it.
    pub model_value: Option<f64>,
}

fn number(v: &Value, pointer: &str) -> Option<f64> {
    v.pointer(pointer)
        .and_then(Value::as_f64)
        .filter(|x| x.is_finite())
}

/// An uncertainty rounded to two significant digits, as uncertainties are quoted (GUM, JCGM
/// 100:2008 §7.2.6: usually at most two significant digits; from memory).
fn two_digits(u: f64) -> f64 {
    if !(u.is_finite() && u > 0.0) {
        return u;
    }
    let step = 10f64.powf(u.log10().floor() - 1.0);
    (u / step).round() * step
}

/// The frame's patches (`frame` is the JSON's `frame` object), none if it has no list.
fn patches(frame: &Value) -> &[Value] {
    frame
        .get("patches")
        .and_then(Value::as_array)
        .map_or(&[], Vec::as_slice)
}

/// Each patch's label, in the engine's patch order (`frame` is the JSON's `frame` object).
#[must_use]
pub fn patch_labels(frame: &Value, numbers: &dyn Numbers) -> Vec<PatchLabel> {
    let n = |x: f64| numbers.rounded(x, Style::Number);
    patches(frame)
        .iter()
        .map(|p| {
            let measured = number(p, "/measured/snr").zip(number(p, "/measured/snr_uncertainty"));
            let model = number(p, "/model/snr_total");
            PatchLabel {
                measured_value: measured.map(|m| m.0),
                model_value: model,
                light: number(p, "/light_factor")
                    .map_or_else(|| "—".into(), |f| format!("× {}", n(f))),
                measured: measured.map_or_else(
                    || "—".into(),
                    |(s, u)| format!("{} ± {}", n(s), n(two_digits(u))),
                ),
                model: model.map_or_else(|| "—".into(), n),
            }
        })
        .collect()
}

/// Where each patch's number is written on the picture: its cell's top-left corner, in
/// output pixels, with the number the patch table gives it (from 1, in the engine's order).
#[must_use]
pub fn patch_marks(frame: &Value) -> Vec<(f64, f64, String)> {
    patches(frame)
        .iter()
        .enumerate()
        .filter_map(|(i, p)| {
            let x = number(p, "/cell/x")?;
            let y = number(p, "/cell/y")?;
            Some((x, y, (i + 1).to_string()))
        })
        .collect()
}

/// The display mapping in words, with the engine's numbers.
#[must_use]
pub fn mapping_words(frame: &Value, numbers: &dyn Numbers) -> String {
    let n = |p: &str| {
        number(frame, p).map_or_else(|| "—".into(), |x| numbers.rounded(x, Style::Number))
    };
    let whole = |p: &str| {
        frame
            .pointer(p)
            .and_then(Value::as_u64)
            .map_or_else(|| "—".into(), |x| x.to_string())
    };
    format!(
        "{} × {} output pixels, seed {}. Shown linear in light from black at {} DN (black level, dark and background) to white at {} DN (saturation), then with a display gamma of {}.",
        whole("/width"),
        whole("/height"),
        whole("/seed"),
        n("/display/dark_dn"),
        n("/display/white_dn"),
        n("/display/gamma"),
    )
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::{mapping_words, patch_labels};
    use crate::display::Plain;

    /// The engine's own 96 × 72 frame of the first demo (seed 7), and the JSON the worker sends
    /// of it.
    fn engine_frame() -> (engine::simulate::SceneFrame, serde_json::Value) {
        let sc = engine::validate::scenario_from_json(engine::demos::DEMOS[0].json).unwrap();
        let f = engine::simulate::frame(&sc, 7, engine::simulate::FrameSize::new(96, 72).unwrap())
            .unwrap();
        let v = serde_json::to_value(&f).unwrap();
        (f, v)
    }

    #[test]
    fn labels_and_mapping_are_the_engine_frames_numbers() {
        // The engine's own frame, through the JSON the worker sends.
        let (f, v) = engine_frame();
        let labels = patch_labels(&v, &Plain);
        assert_eq!(labels.len(), f.patches.len());
        for (l, p) in labels.iter().zip(&f.patches) {
            assert_eq!(l.light, format!("× {:.3}", p.light_factor));
            match (
                &p.model,
                &p.measured
                    .as_ref()
                    .and_then(|m| m.snr.zip(m.snr_uncertainty)),
            ) {
                (Some(m), _) => assert_eq!(l.model, format!("{:.3}", m.snr_total)),
                (None, _) => assert_eq!(l.model, "—"),
            }
        }
        assert!(labels.iter().any(|l| l.measured.contains(" ± ")));
        assert!(
            labels.iter().any(|l| l.measured == "—"),
            "the dark patch has no SNR"
        );
        let words = mapping_words(&v, &Plain);
        assert!(
            words.starts_with("96 × 72 output pixels, seed 7."),
            "{words}"
        );
        assert!(
            words.contains(&format!("white at {:.3} DN", f.display.white_dn)),
            "{words}"
        );
    }

    #[test]
    fn uncertainties_are_quoted_to_two_significant_digits() {
        // GUM (JCGM 100:2008) §7.2.6, from memory; the values by arithmetic.
        for (u, want) in [
            (0.01717, 0.017),
            (0.3482, 0.35),
            (1.0, 1.0),
            (12.34, 12.0),
            (0.0, 0.0),
        ] {
            let got = super::two_digits(u);
            assert!((got - want).abs() <= 1e-12 * want.max(1.0), "{u}: {got}");
        }
        assert!(super::two_digits(f64::NAN).is_nan());
    }

    #[test]
    fn each_patch_is_numbered_at_its_cells_corner() {
        let (f, v) = engine_frame();
        let marks = super::patch_marks(&v);
        assert_eq!(marks.len(), f.patches.len());
        for (i, ((x, y, n), p)) in marks.iter().zip(&f.patches).enumerate() {
            assert_eq!((*x, *y), (f64::from(p.cell.x), f64::from(p.cell.y)));
            assert_eq!(n, &(i + 1).to_string());
        }
    }

    #[test]
    fn a_frame_missing_its_figures_gets_dashes_not_a_panic() {
        let v = serde_json::json!({"patches": [{"light_factor": "x"}, {}]});
        let labels = patch_labels(&v, &Plain);
        assert_eq!(labels.len(), 2);
        assert!(labels
            .iter()
            .all(|l| l.light == "—" && l.model == "—" && l.measured == "—"));
        assert!(mapping_words(&serde_json::Value::Null, &Plain).starts_with("— × —"));
    }
}
