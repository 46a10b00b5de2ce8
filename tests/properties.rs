//! Property tests: invariants of the model over random valid scenarios, and no panic on any input.
//!
//! Each property is a consequence of the model's formulas (SCENARIO.md) stated as a relation
//! between two evaluations; none compares against a hard-coded figure.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use engine::report::{NoiseParts, Report};
use proptest::prelude::*;
use serde_json::{json, Value};

/// Relative agreement expected between two evaluations that must be equal in exact
/// arithmetic: a few dozen double-precision roundings (ε ≈ 2.2e-16) through sqrt and a
/// quadratic root stay far below 1e-9.
const ROUNDING: f64 = 1e-9;

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= ROUNDING * a.abs().max(b.abs()).max(1e-300)
}

fn eval(v: &Value) -> Report {
    engine::evaluate_json(&v.to_string()).unwrap_or_else(|e| panic!("refused:\n{e}\n{v}"))
}

/// Random light of one of the version-1 kinds, or of this implementation's spectral kinds.
fn light() -> BoxedStrategy<Value> {
    prop_oneof![
        (0.0..1e7f64).prop_map(|f| json!({"photon_flux_per_um2_s": f})),
        (0.0..100.0f64, 200.0..1200.0f64)
            .prop_map(|(e, l)| json!({"irradiance_w_per_m2": e, "wavelength_nm": l})),
        (0.0..1e6f64).prop_map(|p| json!({"photons_per_pixel": p})),
        (0.0..1e5f64, visible_spectrum())
            .prop_map(|(e, s)| json!({"illuminance_lux": e, "spectrum": s})),
        (0.0..100.0f64, visible_spectrum())
            .prop_map(|(e, s)| json!({"irradiance_w_per_m2": e, "spectrum": s})),
        (
            0.0..1e5f64,
            0.0..=1.0f64,
            visible_spectrum(),
            0.5..22.0f64,
            0.05..=1.0f64,
            0.0..2.0f64,
            0.0..60.0f64
        )
            .prop_map(
                |(e, rho, s, n, tr, m, th)| json!({"scene_illuminance_lux": e, "reflectance": rho,
                "spectrum": s, "f_number": n, "lens_transmission": tr, "magnification": m,
                "field_angle_deg": th})
            ),
        (0.0..1e4f64, visible_spectrum(), 0.5..22.0f64, 0.05..=1.0f64).prop_map(
            |(l, s, n, tr)| json!({"scene_luminance_cd_per_m2": l, "spectrum": s,
                "f_number": n, "lens_transmission": tr})
        ),
    ]
    .boxed()
}

/// Spectra with visible light inside 400–750 nm (valid with lux and any band used here).
fn visible_spectrum() -> BoxedStrategy<Value> {
    prop_oneof![
        Just(json!({"kind": "cie_a"})),
        Just(json!({"kind": "cie_d65"})),
        Just(json!({"kind": "equal_energy"})),
        (1000.0..20000.0f64).prop_map(|t| json!({"kind": "blackbody", "temperature_k": t})),
        (420.0..700.0f64).prop_map(|l| json!({"kind": "monochromatic", "wavelength_nm": l})),
        (450.0..700.0f64, 5.0..100.0f64)
            .prop_map(|(c, w)| json!({"kind": "gaussian", "centre_nm": c, "fwhm_nm": w})),
        prop::collection::vec(0.1..10.0f64, 2..20).prop_map(|v| {
            let step = 300.0 / (v.len() as f64 - 1.0);
            let points: Vec<Value> = v
                .iter()
                .enumerate()
                .map(|(i, y)| json!([400.0 + step * i as f64, y]))
                .collect();
            json!({"kind": "table", "points": points})
        }),
    ]
    .boxed()
}

/// A QE curve spanning part of 380–780 nm that is non-zero over 400–700 nm.
fn qe_curve() -> impl Strategy<Value = Value> {
    prop::collection::vec(0.05..=1.0f64, 3..30).prop_map(|v| {
        let step = 400.0 / (v.len() as f64 - 1.0);
        let points: Vec<Value> = v
            .iter()
            .enumerate()
            .map(|(i, y)| json!([380.0 + step * i as f64, y]))
            .collect();
        Value::Array(points)
    })
}

prop_compose! {
    /// A random valid scenario over plausible (and some implausible but legal) ranges.
    fn scenario()(
        pitch in 0.5..20.0f64, qe in 0.01..=1.0f64, fw in 100.0..1e6f64, rn in 0.0..50.0f64,
        cap in prop::option::of(0.3..50.0f64), cg in prop::option::of(5.0..300.0f64),
        readout in prop::sample::select(vec!["cds", "dds", "single"]),
        dark in 0.0..1e4f64, dref in -40.0..60.0f64, dbl in 3.0..12.0f64,
        dsnu in 0.0..20.0f64, prnu in 0.0..5.0f64, bits in 1u32..=32, gain in 0.01..20.0f64,
        black_frac in 0.0..0.5f64,
        light in light(), background in prop::option::of(light()),
        curve in prop::option::of(qe_curve()),
        t in 1e-6..10.0f64, frames in 1u32..64, binning in 1u32..8,
        mode in prop::sample::select(vec!["charge", "digital"]),
        temp in -60.0..80.0f64, k in 0.1..20.0f64,
    ) -> Value {
        // Readouts that need C get one when neither C nor the conversion gain was drawn.
        let cap = if readout != "cds" && cap.is_none() && cg.is_none() { Some(2.0) } else { cap };
        let full_scale = f64::from(bits).exp2() - 1.0;
        let mut sensor = json!({
            "pixel_pitch_um": pitch, "quantum_efficiency": qe, "full_well_e": fw,
            "read_noise_e": rn, "readout": readout, "dark_current_e_per_s": dark,
            "dark_current_reference_c": dref, "dark_current_doubling_c": dbl,
            "dsnu_e": dsnu, "prnu_percent": prnu, "adc_bits": bits,
            "system_gain_dn_per_e": gain, "black_level_dn": (black_frac * full_scale).floor()
        });
        if let Some(c) = cap { sensor["sense_node_capacitance_ff"] = json!(c); }
        // A curve over 380–780 nm sees no monochromatic light outside it: keep the curve only
        // where every line the lights have falls inside it.
        let lines_inside = [&light, background.as_ref().unwrap_or(&Value::Null)]
            .iter()
            .filter_map(|l| l.get("wavelength_nm").and_then(Value::as_f64))
            .all(|nm| (400.0..=760.0).contains(&nm));
        if let Some(c) = curve.filter(|_| lines_inside) { sensor["quantum_efficiency_curve"] = c; }
        if let Some(g) = cg { sensor["conversion_gain_uv_per_e"] = json!(g); }
        let mut v = json!({
            "version": 1, "sensor": sensor, "light": light,
            "exposure": {"time_s": t, "frames_averaged": frames, "binning": binning,
                         "binning_mode": mode},
            "temperature_c": temp, "snr_threshold": k
        });
        if let Some(b) = background { v["background_light"] = b; }
        v
    }
}

fn parts(n: &NoiseParts) -> Vec<f64> {
    n.entries().iter().map(|(_, v)| *v).collect()
}

/// Every number of a report, `None` entries included as their `Some` values only.
fn every_number(r: &Report) -> Vec<(&'static str, f64)> {
    let mut v: Vec<(&'static str, f64)> = vec![
        ("photons_per_pixel", r.photons_per_pixel),
        ("signal_e", r.signal_e),
        ("dark_e", r.dark_e),
        ("background_e", r.background_e),
        (
            "light.effective_quantum_efficiency",
            r.light.effective_quantum_efficiency,
        ),
        (
            "variance_share.background_shot",
            r.variance_share.background_shot,
        ),
        ("signal_dn", r.signal_dn),
        (
            "dark_current_at_temperature_e_per_s",
            r.dark_current_at_temperature_e_per_s,
        ),
        ("snr.temporal", r.snr.temporal),
        ("snr.total", r.snr.total),
        ("saturation.level_e", r.saturation.level_e),
        ("saturation.capacity_e", r.saturation.capacity_e),
        ("saturation.fill_fraction", r.saturation.fill_fraction),
        ("min_detectable.signal_e", r.min_detectable.signal_e),
        (
            "min_detectable.photons_per_pixel",
            r.min_detectable.photons_per_pixel,
        ),
        ("variance_share.photon_shot", r.variance_share.photon_shot),
        ("variance_share.dark_shot", r.variance_share.dark_shot),
        ("variance_share.read", r.variance_share.read),
        ("variance_share.reset", r.variance_share.reset),
        ("variance_share.quantization", r.variance_share.quantization),
        ("variance_share.dsnu", r.variance_share.dsnu),
        ("variance_share.prnu", r.variance_share.prnu),
    ];
    let opts = [
        ("conversion_gain_uv_per_e", r.conversion_gain_uv_per_e),
        ("sense_node_capacitance_ff", r.sense_node_capacitance_ff),
        ("snr.temporal_db", r.snr.temporal_db),
        ("snr.total_db", r.snr.total_db),
        (
            "min_detectable.signal_e_total",
            r.min_detectable.signal_e_total,
        ),
        (
            "min_detectable.photon_flux_per_um2_s",
            r.min_detectable.photon_flux_per_um2_s,
        ),
        ("dynamic_range.ratio", r.dynamic_range.ratio),
        ("dynamic_range.db", r.dynamic_range.db),
        ("dynamic_range.stops", r.dynamic_range.stops),
        ("max_snr", r.max_snr),
        ("exposure_for_threshold_s", r.exposure_for_threshold_s),
    ];
    v.extend(opts.iter().filter_map(|(k, o)| o.map(|x| (*k, x))));
    let l = &r.light;
    for (k, o) in [
        ("light.photon_flux_per_um2_s", l.photon_flux_per_um2_s),
        ("light.sensor_illuminance_lux", l.sensor_illuminance_lux),
        (
            "light.sensor_irradiance_w_per_m2",
            l.sensor_irradiance_w_per_m2,
        ),
        (
            "light.sensor_per_scene_luminance",
            l.sensor_per_scene_luminance,
        ),
    ] {
        if let Some(x) = o {
            v.push((k, x));
        }
    }
    v.extend(
        r.min_detectable
            .light_units
            .values()
            .map(|x| ("min_detectable.light_units", x)),
    );
    v.extend(
        r.saturation
            .light_units
            .values()
            .map(|x| ("saturation.light_units", x)),
    );
    for (name, n) in [
        ("noise_e", Some(r.noise_e)),
        ("noise_dn", Some(r.noise_dn)),
        ("noise_uv", r.noise_uv),
    ] {
        if let Some(n) = n {
            v.extend(n.entries().iter().map(|(_, x)| (name, *x)));
        }
    }
    v
}

fn with(mut v: Value, path: &[&str], x: Value) -> Value {
    let mut cur = &mut v;
    for (i, key) in path.iter().enumerate() {
        if i + 1 == path.len() {
            cur[*key] = x.clone();
        } else {
            cur = &mut cur[*key];
        }
    }
    v
}

fn is_photons_per_pixel(v: &Value) -> bool {
    v["light"].get("photons_per_pixel").is_some()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn no_nan_or_infinity_anywhere(s in scenario()) {
        let r = eval(&s);
        for (k, x) in every_number(&r) {
            prop_assert!(x.is_finite(), "{k} = {x} for {s}");
        }
        // Shares of the variance sum to one (they partition the total variance).
        let vs = r.variance_share;
        let sum = vs.photon_shot + vs.dark_shot + vs.background_shot + vs.read + vs.reset + vs.quantization + vs.dsnu + vs.prnu;
        prop_assert!(close(sum, 1.0) || (sum - 1.0).abs() < 1e-12, "shares sum {sum}");
    }

    #[test]
    fn temporal_snr_rises_with_exposure_until_saturation(s in scenario(), f in 1.01..10.0f64) {
        // Light given per pixel does not grow with time: restate it as the same flux.
        let t0 = s["exposure"]["time_s"].as_f64().unwrap_or(1.0);
        let s = if is_photons_per_pixel(&s) {
            let pitch = s["sensor"]["pixel_pitch_um"].as_f64().unwrap_or(1.0);
            let per_pixel = s["light"]["photons_per_pixel"].as_f64().unwrap_or(0.0);
            with(s, &["light"], json!({"photon_flux_per_um2_s": per_pixel / (pitch * pitch * t0)}))
        } else {
            s
        };
        // Walk up a ladder of exposure times; SNR must rise at every step before saturation.
        let mut previous = eval(&s);
        let mut t = t0;
        for _ in 0..6 {
            t = (t * f).min(1e6);
            let next = eval(&with(s.clone(), &["exposure", "time_s"], json!(t)));
            if next.saturation.saturated || previous.signal_e == 0.0 || t >= 1e6 {
                break;
            }
            prop_assert!(next.snr.temporal > previous.snr.temporal,
                "{} then {} at t = {t}", previous.snr.temporal, next.snr.temporal);
            previous = next;
        }
    }

    #[test]
    fn averaging_n_frames_without_fixed_pattern_multiplies_snr_by_root_n(s in scenario(), n in 1u32..100) {
        let s = with(with(s, &["sensor", "dsnu_e"], json!(0)), &["sensor", "prnu_percent"], json!(0));
        let one = eval(&with(s.clone(), &["exposure", "frames_averaged"], json!(1)));
        let many = eval(&with(s, &["exposure", "frames_averaged"], json!(n)));
        let want = one.snr.temporal * f64::from(n).sqrt();
        prop_assert!(close(many.snr.temporal, want), "{} vs {}", many.snr.temporal, want);
        prop_assert!(close(many.snr.total, many.snr.temporal));
    }

    #[test]
    fn charge_binning_never_gives_lower_snr_than_digital(s in scenario()) {
        let charge = eval(&with(s.clone(), &["exposure", "binning_mode"], json!("charge")));
        let digital = eval(&with(s, &["exposure", "binning_mode"], json!("digital")));
        prop_assert!(charge.snr.temporal >= digital.snr.temporal * (1.0 - ROUNDING));
        prop_assert!(charge.snr.total >= digital.snr.total * (1.0 - ROUNDING));
    }

    #[test]
    fn the_minimum_detectable_signal_reaches_the_threshold(s in scenario()) {
        // Light given back per pixel uses the single QE; a curve would weight it differently.
        prop_assume!(s["sensor"].get("quantum_efficiency_curve").is_none());
        let r = eval(&s);
        let k = s["snr_threshold"].as_f64().unwrap_or(1.0);
        let b = s["exposure"]["binning"].as_f64().unwrap_or(1.0);
        let qe = s["sensor"]["quantum_efficiency"].as_f64().unwrap_or(1.0);
        // Feed the signal back as photons per physical pixel: S / (b² η).
        let back = |signal_e: f64| {
            eval(&with(s.clone(), &["light"], json!({"photons_per_pixel": signal_e / (b * b * qe)})))
        };
        let t = back(r.min_detectable.signal_e);
        prop_assert!(close(t.snr.temporal, k), "temporal SNR {} at the minimum, threshold {k}", t.snr.temporal);
        if let Some(total) = r.min_detectable.signal_e_total {
            let t = back(total);
            prop_assert!(close(t.snr.total, k), "total SNR {} at the minimum, threshold {k}", t.snr.total);
        }
    }

    #[test]
    fn the_exposure_for_the_threshold_reaches_it(s in scenario()) {
        let r = eval(&s);
        let k = s["snr_threshold"].as_f64().unwrap_or(1.0);
        if let Some(t) = r.exposure_for_threshold_s {
            prop_assume!((1e-12..=1e6).contains(&t));
            let at = eval(&with(s, &["exposure", "time_s"], json!(t)));
            prop_assert!(close(at.snr.temporal, k), "SNR {} at t = {t}, threshold {k}", at.snr.temporal);
        } else {
            // Only these have no exposure for the threshold: light given per pixel, or none.
            prop_assert!(is_photons_per_pixel(&s) || r.signal_e == 0.0);
        }
    }

    #[test]
    fn single_readout_never_beats_cds(s in scenario(), c in 0.3..50.0f64) {
        let s = with(s, &["sensor", "sense_node_capacitance_ff"], json!(c));
        let cds = eval(&with(s.clone(), &["sensor", "readout"], json!("cds")));
        let single = eval(&with(s.clone(), &["sensor", "readout"], json!("single")));
        let dds = eval(&with(s, &["sensor", "readout"], json!("dds")));
        prop_assert!(single.snr.temporal <= cds.snr.temporal);
        prop_assert!(single.snr.total <= cds.snr.total);
        prop_assert!(dds.snr.temporal <= single.snr.temporal);
    }

    #[test]
    fn report_serializes_with_every_format_key(s in scenario()) {
        let v = serde_json::to_value(eval(&s)).unwrap_or(Value::Null);
        for key in ["photons_per_pixel", "signal_e", "dark_e", "signal_dn", "conversion_gain_uv_per_e",
                    "noise_e", "snr", "saturation", "min_detectable", "dynamic_range", "max_snr",
                    "exposure_for_threshold_s", "warnings"] {
            prop_assert!(v.get(key).is_some(), "missing {key}");
        }
        prop_assert_eq!(parts(&eval(&s).noise_e).len(), 10);
    }

    #[test]
    fn extreme_corners_of_the_accepted_ranges_stay_finite(s in extreme_scenario()) {
        // Every numeric key at one end of the range validation accepts (format rule and this
        // calculator's limits): the limits exist so that these stay finite.
        if let Ok(r) = engine::evaluate_json(&s.to_string()) {
            for (k, x) in every_number(&r) {
                prop_assert!(x.is_finite(), "{k} = {x} for {s}");
            }
        }
    }

    // ---- no panic on any input ----

    #[test]
    fn random_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        let text = String::from_utf8_lossy(&bytes);
        let _ = engine::evaluate_json(&text);
    }

    #[test]
    fn random_json_never_panics(v in any_json()) {
        match engine::evaluate_json(&v.to_string()) {
            Ok(r) => for (k, x) in every_number(&r) { prop_assert!(x.is_finite(), "{k}"); },
            Err(e) => prop_assert!(!e.problems().is_empty()),
        }
    }

    #[test]
    fn mutated_scenarios_never_panic_and_name_keys(s in scenario(), path in mutation_path(), x in any_json_leaf()) {
        let m = with(s, &path, x);
        match engine::evaluate_json(&m.to_string()) {
            Ok(r) => for (k, x) in every_number(&r) { prop_assert!(x.is_finite(), "{k} in {m}"); },
            Err(e) => for p in e.problems() {
                prop_assert!(!p.path.is_empty() && !p.message.is_empty());
            },
        }
    }
}

fn any_json_leaf() -> impl Strategy<Value = Value> {
    prop_oneof![
        Just(Value::Null),
        any::<bool>().prop_map(Value::from),
        any::<f64>()
            .prop_map(|f| serde_json::Number::from_f64(f).map_or(Value::Null, Value::Number)),
        prop::sample::select(vec![
            0.0,
            -1.0,
            1e308,
            -1e308,
            5e-324,
            1e-300,
            4294967296.0,
            0.5
        ])
        .prop_map(Value::from),
        any::<i64>().prop_map(Value::from),
        ".{0,12}".prop_map(Value::from),
    ]
}

fn any_json() -> impl Strategy<Value = Value> {
    any_json_leaf().prop_recursive(4, 64, 8, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 0..8).prop_map(Value::Array),
            prop::collection::btree_map(
                prop_oneof![
                    prop::sample::select(vec![
                        "version",
                        "sensor",
                        "light",
                        "exposure",
                        "temperature_c",
                        "snr_threshold",
                        "pixel_pitch_um",
                        "time_s",
                        "x_note"
                    ])
                    .prop_map(String::from),
                    "[a-z_]{1,10}",
                ],
                inner,
                0..8
            )
            .prop_map(|m| Value::Object(m.into_iter().collect())),
        ]
    })
}

fn mutation_path() -> impl Strategy<Value = Vec<&'static str>> {
    prop::sample::select(vec![
        vec!["version"],
        vec!["sensor"],
        vec!["sensor", "pixel_pitch_um"],
        vec!["sensor", "quantum_efficiency"],
        vec!["sensor", "full_well_e"],
        vec!["sensor", "read_noise_e"],
        vec!["sensor", "sense_node_capacitance_ff"],
        vec!["sensor", "conversion_gain_uv_per_e"],
        vec!["sensor", "readout"],
        vec!["sensor", "dark_current_e_per_s"],
        vec!["sensor", "dark_current_doubling_c"],
        vec!["sensor", "dark_current_reference_c"],
        vec!["sensor", "adc_bits"],
        vec!["sensor", "system_gain_dn_per_e"],
        vec!["sensor", "black_level_dn"],
        vec!["sensor", "prnu_percent"],
        vec!["light"],
        vec!["light", "photon_flux_per_um2_s"],
        vec!["light", "wavelength_nm"],
        vec!["exposure", "time_s"],
        vec!["exposure", "frames_averaged"],
        vec!["exposure", "binning"],
        vec!["exposure", "binning_mode"],
        vec!["temperature_c"],
        vec!["snr_threshold"],
        vec!["x_anything"],
        vec!["typo_key"],
    ])
}

/// Scenarios whose every number sits at an end of its accepted range.
fn extreme_scenario() -> impl Strategy<Value = Value> {
    let ends = |lo: f64, hi: f64| prop::sample::select(vec![lo, hi]);
    (
        (
            ends(1e-3, 1e4),
            ends(1e-6, 1.0),
            ends(1.0, 1e12),
            ends(0.0, 1e6),
            ends(1e-6, 1e9),
            ends(1e-6, 1e9),
            prop::sample::select(vec!["cds", "dds", "single"]),
            ends(0.0, 1e12),
        ),
        (
            ends(-273.0, 1000.0),
            ends(1e-6, 1e6),
            ends(0.0, 1e9),
            ends(0.0, 100.0),
            ends(1.0, 32.0),
            ends(1e-9, 1e9),
            ends(0.0, 0.999_999),
        ),
        (
            prop::sample::select(vec![0u8, 1, 2]),
            ends(0.0, 1e20),
            ends(1e-9, 1e6),
        ),
        (
            ends(1e-12, 1e6),
            ends(1.0, 1e6),
            ends(1.0, 1000.0),
            prop::sample::select(vec!["charge", "digital"]),
            ends(-273.0, 1000.0),
            ends(1e-3, 1e6),
        ),
    )
        .prop_map(
            |(
                (pitch, qe, fw, rn, c, cg, readout, dark),
                (dref, dbl, dsnu, prnu, bits, k_gain, black_frac),
                (kind, amount, wavelength),
                (t, frames, binning, mode, temp, k),
            )| {
                let light = match kind {
                    0 => json!({"photon_flux_per_um2_s": amount}),
                    1 => {
                        json!({"irradiance_w_per_m2": amount.min(1e9), "wavelength_nm": wavelength})
                    }
                    _ => json!({"photons_per_pixel": amount}),
                };
                let black = (black_frac * (bits.exp2() - 1.0)).floor();
                json!({
                    "version": 1,
                    "sensor": {"pixel_pitch_um": pitch, "quantum_efficiency": qe, "full_well_e": fw,
                        "read_noise_e": rn, "sense_node_capacitance_ff": c,
                        "conversion_gain_uv_per_e": cg, "readout": readout,
                        "dark_current_e_per_s": dark, "dark_current_reference_c": dref,
                        "dark_current_doubling_c": dbl, "dsnu_e": dsnu, "prnu_percent": prnu,
                        "adc_bits": bits, "system_gain_dn_per_e": k_gain, "black_level_dn": black},
                    "light": light,
                    "exposure": {"time_s": t, "frames_averaged": frames, "binning": binning,
                        "binning_mode": mode},
                    "temperature_c": temp, "snr_threshold": k
                })
            },
        )
}
