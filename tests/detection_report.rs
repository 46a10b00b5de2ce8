//! Detection through the whole pipeline (issue 13, item 4): scenario JSON with a `detection`
//! object → the report's `detection` figures and warnings. REFERENCES.md §8 through the
//! report, frame averaging and binning against the module called on the summed inputs, bad
//! `detection` keys named, and a property test that every figure is finite or null.
//!
//! The module's own numerics are tested in `detection_reference.rs`; this file checks the
//! wiring: which charges and variances of the model reach the module, and how they come back.
//! Every expected number names its source beside it; tolerances are named constants.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use engine::detection::{evaluate, DetectionInputs};
use engine::report::WarningCode;
use proptest::prelude::*;
use serde_json::{json, Value};

/// A value quoted to 4 decimal places (REFERENCES.md §8's table): half a unit in the 4th
/// decimal. The scenario's quantization variance 1/(12K²) = 8.3e-8 e⁻² at K = 1000 DN/e⁻
/// moves τ and s by less than 1e-7 e⁻ (∂τ/∂σ² < 1), far inside it.
const FOUR_DECIMALS: f64 = 5e-5;
/// The report's figures against the module called directly on the same numbers: the same
/// arithmetic up to the order of a few products and one division by N, so a few ulps; 1e-12
/// relative still catches any wrong input (a factor N or b² is off by far more).
const SAME_ARITHMETIC: f64 = 1e-12;

/// REFERENCES.md §8's case: σ_r = 1.0 e⁻, no reset noise (CDS, no capacitance given), K = 1000
/// DN/e⁻ (quantization 8.3e-8 e⁻², negligible), dark 1 e⁻/s × 0.01 s = 0.01 e⁻ at the reference
/// temperature, p_fa 1e-3; signal η·μ_p = 0.5 × 6.52 = 3.26 e⁻ (invented, near s50).
fn reference_8() -> Value {
    json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.5, "full_well_e": 10000,
            "read_noise_e": 1.0, "dark_current_e_per_s": 1, "adc_bits": 32,
            "system_gain_dn_per_e": 1000},
        "light": {"photons_per_pixel": 6.52},
        "exposure": {"time_s": 0.01},
        "detection": {"false_alarm_probability": 1e-3, "pixels": 1_000_000}
    })
}

fn report_of(v: &Value) -> Value {
    let report = engine::evaluate_json(&v.to_string()).unwrap_or_else(|e| panic!("{e}"));
    serde_json::to_value(report).unwrap()
}

fn figure(r: &Value, name: &str) -> f64 {
    r["detection"][name]
        .as_f64()
        .unwrap_or_else(|| panic!("detection.{name} is {}", r["detection"][name]))
}

fn assert_close(got: f64, want: f64, tol: f64, what: &str) {
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got}, want {want} (±{tol})"
    );
}

fn assert_rel(got: f64, want: f64, rel: f64, what: &str) {
    assert!(
        (got - want).abs() <= rel * want.abs().max(f64::MIN_POSITIVE),
        "{what}: got {got}, want {want} (relative ±{rel})"
    );
}

#[test]
fn references_8_row_through_the_report() {
    let r = report_of(&reference_8());
    assert_close(r["dark_e"].as_f64().unwrap(), 0.01, 1e-15, "dark 0.01 e⁻"); // arithmetic
                                                                              // REFERENCES.md §8, check values, σ_r = 1.0: τ 3.1409, s50 3.2600, τ Gauss 3.1156,
                                                                              // s50 Gauss 3.1056.
    assert_close(figure(&r, "threshold_e"), 3.1409, FOUR_DECIMALS, "τ exact");
    assert_close(figure(&r, "signal_e"), 3.2600, FOUR_DECIMALS, "s50 exact");
    assert_close(
        figure(&r, "threshold_e_gaussian"),
        3.1156,
        FOUR_DECIMALS,
        "τ Gauss",
    );
    assert_close(
        figure(&r, "signal_e_gaussian"),
        3.1056,
        FOUR_DECIMALS,
        "s50 Gauss",
    );
    // The achieved false alarm is the one asked for (σ > 0: the solver's 1e-12 relative).
    assert_rel(
        figure(&r, "false_alarm_probability_achieved"),
        1e-3,
        1e-9,
        "p_fa achieved",
    );
    // The scenario's signal 3.26 e⁻ is s50 to 2e-5 e⁻, and ∂P_D/∂s ≈ 0.2 per e⁻ there, so its
    // exact P_D is 0.5 to 1e-5 (REFERENCES.md §8: s50 = 3.2600).
    assert_close(figure(&r, "detection_probability"), 0.5, 1e-4, "P_D at s50");
    // The Gaussian read noise: σ_r² + 1/(12K²) (REFERENCES.md §3 for the quantization term).
    assert_rel(
        figure(&r, "read_noise_e"),
        (1.0 + 1.0 / (12.0 * 1000.0 * 1000.0_f64)).sqrt(),
        1e-15,
        "σ",
    );
    assert_eq!(r["detection"]["contrast"], json!(0.1)); // the catalogue's default
    assert_eq!(r["detection"]["contrast_interval"], json!(0.5)); // the catalogue's default
                                                                 // REFERENCES.md §8: at σ_r = 1 the exact and Gaussian s50 differ by 4.7 %, below the 10 %
                                                                 // of a `detection_gaussian_misleads` warning, and σ ≥ 0.5: no detection warning with
                                                                 // M = 1e6 pixels except the frame's false alarms (1 − (1 − 1e-3)^1e6 ≈ 1).
    let codes: Vec<&str> = r["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w["code"].as_str().unwrap())
        .collect();
    assert_eq!(codes, vec!["detection_frame_false_alarm_likely"]);
}

#[test]
fn references_8_s90_with_detection_probability_0_9() {
    let mut v = reference_8();
    v["detection"]["detection_probability"] = json!(0.9);
    let r = report_of(&v);
    // REFERENCES.md §8, σ_r = 1.0: s for P_D = 90 % 6.5564, Gauss 6.6533.
    assert_close(figure(&r, "signal_e"), 6.5564, FOUR_DECIMALS, "s90 exact");
    assert_close(
        figure(&r, "signal_e_gaussian"),
        6.6533,
        FOUR_DECIMALS,
        "s90 Gauss",
    );
    // The threshold does not depend on p_d (REFERENCES.md §8: τ 3.1409).
    assert_close(figure(&r, "threshold_e"), 3.1409, FOUR_DECIMALS, "τ exact");
}

#[test]
fn the_frame_false_alarm_is_one_minus_the_product_over_pixels() {
    let mut v = reference_8();
    v["detection"]["pixels"] = json!(1000);
    let r = report_of(&v);
    // 1 − (1 − 1e-3)^1000 = 0.6323045752290363 (numpy: 1 - (1 - 1e-3)**1000).
    assert_rel(
        figure(&r, "frame_false_alarm_probability"),
        0.632_304_575_229_036_3,
        1e-12,
        "frame p_fa",
    );
    // 1 − (1 − 1e-3)^(1/1000) = 1.0004998330832417e-06 (numpy: -np.expm1(np.log1p(-1e-3)/1000)).
    assert_rel(
        figure(&r, "pixel_false_alarm_for_frame"),
        1.000_499_833_083_241_7e-6,
        1e-9,
        "pixel p_fa for the frame",
    );
    assert!(r["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["code"] == "detection_frame_false_alarm_likely"
            && w["concerns"][0] == "detection.frame_false_alarm_probability"));
    // One pixel searched: the frame's probability is the pixel's, no warning.
    v["detection"]["pixels"] = json!(1);
    let r = report_of(&v);
    assert_rel(
        figure(&r, "frame_false_alarm_probability"),
        1e-3,
        1e-12,
        "M = 1",
    );
    assert!(
        r["warnings"].as_array().unwrap().is_empty(),
        "{}",
        r["warnings"]
    );
}

/// The report's figures against `detection::evaluate` on the sum of N frames, charges ÷ N.
fn check_against_module(r: &Value, module: &engine::detection::DetectionFigures, frames: f64) {
    let charges = [
        ("threshold_e", module.threshold_e),
        ("signal_e", module.signal_e),
        ("signal_e_gaussian", module.signal_e_gaussian),
        ("threshold_e_gaussian", module.threshold_e_gaussian),
        ("read_noise_e", module.read_noise_e),
    ];
    for (name, want) in charges {
        assert_rel(
            figure(r, name),
            want.unwrap() / frames,
            SAME_ARITHMETIC,
            name,
        );
    }
    let probabilities = [
        (
            "false_alarm_probability_achieved",
            module.false_alarm_probability_achieved,
        ),
        ("detection_probability", module.detection_probability),
        (
            "detection_probability_gaussian",
            module.detection_probability_gaussian,
        ),
        (
            "frame_false_alarm_probability",
            module.frame_false_alarm_probability,
        ),
    ];
    for (name, want) in probabilities {
        assert_rel(figure(r, name), want.unwrap(), SAME_ARITHMETIC, name);
    }
}

#[test]
fn frame_averaging_detects_on_the_sum_of_the_frames() {
    let mut v = reference_8();
    v["exposure"]["frames_averaged"] = json!(4);
    let r = report_of(&v);
    // Summed inputs (docs/scenario-format.md, "Detection"): N·s, N·d, N·σ², σ² = σ_r² + 1/(12K²).
    let n = 4.0;
    let sigma2 = 1.0 + 1.0 / (12.0 * 1000.0 * 1000.0);
    let signal = r["signal_e"].as_f64().unwrap();
    let module = evaluate(&DetectionInputs {
        signal_e: n * signal,
        dark_e: n * 0.01,
        read_variance_e2: n * sigma2,
        false_alarm_probability: 1e-3,
        detection_probability: 0.5,
        pixels: 1_000_000,
    });
    check_against_module(&r, &module, n);
    // Averaging helps: the per-frame signal for 50 % is below one frame's 3.2600 (§8).
    assert!(
        figure(&r, "signal_e") < 3.2600 - 0.5,
        "{}",
        figure(&r, "signal_e")
    );
    // Counting is one frame's read: σ of a single frame (REFERENCES.md §8 formula
    // 2Q(0.5/σ); at σ = 1: 2Q(0.5) = 0.6170750774519738, scipy 2*norm.sf(0.5)).
    assert_rel(
        r["detection"]["counting"]["miscount_interior"]
            .as_f64()
            .unwrap(),
        0.617_075_077_451_973_8,
        1e-6,
        "interior miscount of one frame",
    );
}

#[test]
fn binning_sums_charge_before_one_read_or_b2_reads() {
    // 2×2 binning: charge binning reads once (σ² = σ_r² + σ_q²), digital sums four reads
    // (4·(σ_r² + σ_q²)); the charges are b² = 4 times a pixel's (REFERENCES.md §9).
    for (mode, reads) in [("charge", 1.0), ("digital", 4.0)] {
        let mut v = reference_8();
        v["exposure"]["binning"] = json!(2);
        v["exposure"]["binning_mode"] = json!(mode);
        let r = report_of(&v);
        let sigma2 = 1.0 + 1.0 / (12.0 * 1000.0 * 1000.0);
        let signal = r["signal_e"].as_f64().unwrap();
        assert_rel(signal, 4.0 * 3.26, 1e-12, "binned signal"); // 4 × 0.5 × 6.52
        let module = evaluate(&DetectionInputs {
            signal_e: signal,
            dark_e: 4.0 * 0.01,
            read_variance_e2: reads * sigma2,
            false_alarm_probability: 1e-3,
            detection_probability: 0.5,
            pixels: 1_000_000,
        });
        check_against_module(&r, &module, 1.0);
    }
}

#[test]
fn sub_electron_read_noise_warns_where_the_gaussian_picture_misleads() {
    // σ_r = 0.3 e⁻ (REFERENCES.md §8: "at σ_r ≤ 0.3 the Gaussian approximation is wrong").
    let mut v = reference_8();
    v["sensor"]["read_noise_e"] = json!(0.3);
    v["detection"]["pixels"] = json!(1);
    let r = report_of(&v);
    let warnings = r["warnings"].as_array().unwrap();
    let find = |code: &str| warnings.iter().find(|w| w["code"] == code);
    let whole = find("detection_whole_electrons").expect("whole-electron warning");
    assert!(whole["message"].as_str().unwrap().contains("0.3 e⁻ rms"));
    assert_eq!(whole["concerns"][0], "detection.threshold_e");
    let gauss = find("detection_gaussian_misleads").expect("Gaussian-misleads warning");
    assert!(gauss["concerns"]
        .as_array()
        .unwrap()
        .contains(&json!("detection.signal_e_gaussian")));
    // The exact threshold sits between 1 and 2 electrons (REFERENCES.md §8).
    let tau = figure(&r, "threshold_e");
    assert!((1.0..2.0).contains(&tau), "τ = {tau}");
    assert_eq!(r["detection"]["counting"]["verdict"], "deep_sub_electron"); // §8: 0.3 ≤ σ < 0.5
                                                                            // Every warning code is a stable string of the report's list.
    assert_eq!(
        WarningCode::DetectionWholeElectrons.as_str(),
        "detection_whole_electrons"
    );
}

fn problems(v: &Value) -> Vec<String> {
    match engine::validate::scenario_from_value(v) {
        Ok(_) => vec![],
        Err(e) => e.problems().iter().map(ToString::to_string).collect(),
    }
}

#[test]
fn bad_detection_keys_are_named_with_their_rule() {
    let cases: &[(&str, Value, &str)] = &[
        ("false_alarm_probability", json!(0), "must be > 0, got 0"),
        ("false_alarm_probability", json!(1), "must be < 1, got 1"),
        (
            "false_alarm_probability",
            json!(1.5),
            "must be < 1, got 1.5",
        ),
        (
            "false_alarm_probability",
            json!(-0.1),
            "must be > 0, got -0.1",
        ),
        ("detection_probability", json!(0), "must be > 0, got 0"),
        ("detection_probability", json!(1), "must be < 1, got 1"),
        ("detection_probability", json!(1.5), "must be < 1, got 1.5"),
        (
            "detection_probability",
            json!(-0.1),
            "must be > 0, got -0.1",
        ),
        (
            "pixels",
            json!(0),
            "must be a whole number from 1 to 4000000000, got 0",
        ),
        ("pixels", json!(2.5), "must be a whole number, got 2.5"),
        (
            "pixels",
            json!(-3),
            "must be a whole number from 1 to 4000000000, got -3",
        ),
        (
            "contrast",
            json!(0),
            "must not be 0: two patches of the same signal have no contrast to detect",
        ),
        ("contrast", json!(-1), "must be > -1, got -1"),
        ("contrast", json!(101), "must be ≤ 100, got 101"),
        ("contrast_interval", json!(0), "must be > 0, got 0"),
        ("contrast_interval", json!(1.5), "must be ≤ 1, got 1.5"),
    ];
    for (key, value, message) in cases {
        let mut v = reference_8();
        v["detection"][key] = value.clone();
        assert_eq!(
            problems(&v),
            vec![format!("detection.{key}: {message}")],
            "detection.{key} = {value}"
        );
    }
    // Every problem at once, each named; an unknown key with a hint.
    let mut v = reference_8();
    // The names of an earlier version (required_probability, pixels_per_frame) are unknown
    // keys now, named with the one meant.
    v["detection"] = json!({"false_alarm_probability": 0, "pixels": 0.5,
        "contrast": 0, "pixels_per_frame": 3});
    let got = problems(&v);
    assert_eq!(got.len(), 4, "{got:?}");
    assert!(
        got[3].starts_with("detection.pixels_per_frame: unknown key"),
        "{got:?}"
    );
    v["detection"] = json!(3);
    assert_eq!(
        problems(&v),
        vec!["detection: must be an object, got 3".to_string()]
    );
}

#[test]
fn a_scenario_without_detection_takes_every_default() {
    let mut v = reference_8();
    v.as_object_mut().unwrap().remove("detection");
    let without = report_of(&v);
    // (reference_8 searches a million pixels; the default is one.)
    v["detection"] = json!({"false_alarm_probability": 1e-3, "detection_probability": 0.5,
        "pixels": 1, "contrast": 0.1, "contrast_interval": 0.5});
    // The defaults of docs/scenario-format.md (common practice, no source; REFERENCES §8's
    // check value for p_fa; ε from Geese et al. 2018, from memory).
    assert_eq!(without, report_of(&v));
}

#[test]
fn no_light_leaves_the_signal_figures_null_not_nan() {
    let mut v = reference_8();
    v["light"] = json!({"photons_per_pixel": 0});
    let r = report_of(&v);
    // No signal: P_D at s = 0 is the false-alarm probability (REFERENCES.md §8's definitions),
    // and the contrast of two empty patches does not exist.
    assert_rel(
        figure(&r, "detection_probability"),
        1e-3,
        1e-9,
        "P_D(0) = p_fa",
    );
    assert_eq!(
        r["detection"]["contrast_detection_probability"],
        Value::Null
    );
    assert!(r["detection"]["signal_e"].is_f64());
}

/// A random valid scenario (invented ranges wide enough to reach sub-electron read noise,
/// charge binning and many frames) with random detection probabilities in [0, 1].
fn scenario_strategy() -> impl Strategy<Value = Value> {
    (
        (0.0f64..20.0, -2.0f64..6.0, -3.0f64..3.0, 0.0f64..2.0),
        (1u32..5, prop::bool::ANY, 1u32..20, 0.0f64..5.0),
        (
            0.0f64..=1.0,
            0.0f64..=1.0,
            1u32..100_000_000,
            -0.99f64..100.0,
        ),
        (0.001f64..=1.0, -1.0f64..1.0),
    )
        .prop_map(
            |(
                (read, log_photons, log_dark, prnu),
                (b, charge, frames, dsnu),
                (pfa, pd, m, c),
                (eps, log_k),
            )| {
                json!({
                    "version": 1,
                    "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.7,
                        "full_well_e": 30000, "read_noise_e": read,
                        "dark_current_e_per_s": 10f64.powf(log_dark), "adc_bits": 16,
                        "system_gain_dn_per_e": 10f64.powf(log_k), "prnu_percent": prnu,
                        "dsnu_e": dsnu},
                    "light": {"photons_per_pixel": 10f64.powf(log_photons)},
                    "exposure": {"time_s": 0.1, "binning": b, "frames_averaged": frames,
                        "binning_mode": if charge { "charge" } else { "digital" }},
                    "detection": {"false_alarm_probability": pfa, "detection_probability": pd,
                        "pixels": m, "contrast": if c == 0.0 { 0.1 } else { c },
                        "contrast_interval": eps}
                })
            },
        )
}

fn every_number_finite(v: &Value, path: &str) {
    match v {
        Value::Number(n) => assert!(n.as_f64().is_some_and(f64::is_finite), "{path}: {n}"),
        Value::Object(m) => m
            .iter()
            .for_each(|(k, x)| every_number_finite(x, &format!("{path}.{k}"))),
        Value::Array(a) => a
            .iter()
            .enumerate()
            .for_each(|(i, x)| every_number_finite(x, &format!("{path}[{i}]"))),
        _ => {}
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    /// Detection figures are finite or null for any valid scenario; probabilities of 0 or 1
    /// (or within 1e-15 of them) are refused, naming the key.
    #[test]
    fn detection_figures_are_finite_or_null(v in scenario_strategy()) {
        let pfa = v["detection"]["false_alarm_probability"].as_f64().unwrap();
        let pd = v["detection"]["detection_probability"].as_f64().unwrap();
        let usable = |p: f64| (1e-15..=1.0 - 1e-15).contains(&p);
        match engine::validate::scenario_from_value(&v) {
            Ok(sc) => {
                prop_assert!(usable(pfa) && usable(pd), "accepted p_fa {pfa}, p_d {pd}");
                let r = serde_json::to_value(engine::evaluate(&sc)).unwrap();
                every_number_finite(&r["detection"], "detection");
                for name in ["detection_probability", "frame_false_alarm_probability",
                    "contrast_detection_probability"] {
                    if let Some(p) = r["detection"][name].as_f64() {
                        prop_assert!((0.0..=1.0).contains(&p), "{name} = {p}");
                    }
                }
            }
            Err(e) => {
                prop_assert!(!(usable(pfa) && usable(pd)), "refused: {e}");
                for p in e.problems() {
                    prop_assert!(p.to_string().starts_with("detection."), "{p}");
                }
            }
        }
    }
}
