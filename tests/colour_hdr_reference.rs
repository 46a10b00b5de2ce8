//! Colour, HDR and the dark-current additions through the whole model, against REFERENCES.md
//! §7 and §11 (each value with its source), and their invariants as property tests.
//!
//! The arithmetic modules have their own doc-tests (`colour`, `hdr`, `dark`); these check that
//! the model feeds them the right figures. No page, no CLI.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use engine::report::Report;
use proptest::prelude::*;
use serde_json::{json, Value};

/// Values quoted to 4 or 5 significant digits (REFERENCES.md §11 gives dB to 3 decimals).
const THREE_DECIMALS_DB: f64 = 5e-4;
/// A system gain so high that quantization (1/(12 K²) = 8.3e-8 e⁻²) is negligible (§11's
/// examples have none), yet low enough that a 32-bit ADC holds 4.3e6 e⁻, above every well here.
const NO_QUANTIZATION_GAIN: f64 = 1e3;

fn eval(v: &Value) -> Report {
    engine::evaluate_json(&v.to_string()).unwrap_or_else(|e| panic!("refused:\n{e}\n{v}"))
}

fn problems(v: &Value) -> Vec<String> {
    match engine::validate::scenario_from_value(v) {
        Ok(_) => vec![],
        Err(e) => e.problems().iter().map(ToString::to_string).collect(),
    }
}

/// A pixel with η = 1, no dark, no fixed pattern, negligible quantization: §11's examples.
fn plain(full_well_e: f64, read_noise_e: f64, photons: f64) -> Value {
    json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 1.0, "full_well_e": full_well_e,
            "read_noise_e": read_noise_e, "dark_current_e_per_s": 0, "adc_bits": 32,
            "system_gain_dn_per_e": NO_QUANTIZATION_GAIN},
        "light": {"photons_per_pixel": photons}, "exposure": {"time_s": 0.01}
    })
}

#[test]
fn multi_exposure_dip_through_the_model() {
    // Source: REFERENCES.md §11 (derived from the moment model): long exposure saturating at
    // 10 000 e⁻, R = 16, read noise 2 e⁻: 39.998 dB below, 27.931 dB above, dip 12.067 dB.
    let mut v = plain(10_000.0, 2.0, 1000.0);
    v["hdr"] = json!({"kind": "exposures", "switch_fraction": 1, "exposures": [{"ratio": 16}]});
    let h = eval(&v).hdr.unwrap();
    let t = &h.transitions[0];
    assert!((t.snr_below_db.unwrap() - 39.998).abs() < THREE_DECIMALS_DB);
    assert!((t.snr_above_db.unwrap() - 27.931).abs() < THREE_DECIMALS_DB);
    assert!((t.dip_db - 12.067).abs() < THREE_DECIMALS_DB);
    assert_eq!(t.level_e, 10_000.0);
    // The shot-limited dip is 10·log10(R) = 12.041 dB (REFERENCES.md §11): the read noise
    // deepens it a little.
    assert!(t.dip_db > 12.041);
    // Combined range: 16 × 10 000 e⁻ over the long exposure's threshold (SCENARIO.md's root
    // with k = 1: 1/2 + √(1/4 + σ²) = 2.5616 e⁻; REFERENCES.md §8's SNR = 1 formula).
    // The model's threshold also holds the (negligible, 8.3e-8 e⁻²) quantization variance:
    // 1e-6 relative covers it.
    let threshold = 0.5 + (0.25f64 + 4.0).sqrt();
    assert!((h.dynamic_range.ratio.unwrap() / (160_000.0 / threshold) - 1.0).abs() < 1e-6);
}

#[test]
fn dual_gain_dip_through_the_model() {
    // Source: REFERENCES.md §11 (derived): high gain read noise 1.5 e⁻ saturating at 6000 e⁻,
    // low gain 10 e⁻; switching at 6000 e⁻: 37.780 dB below, 37.710 above, dip 0.070 dB.
    let mut v = plain(6000.0, 1.5, 1000.0);
    v["hdr"] = json!({"kind": "dual_gain", "switch_fraction": 1, "low_gain": {
        "system_gain_dn_per_e": NO_QUANTIZATION_GAIN / 10.0, "read_noise_e": 10,
        "full_well_e": 60000}});
    let h = eval(&v).hdr.unwrap();
    let t = &h.transitions[0];
    assert!((t.snr_below_db.unwrap() - 37.780).abs() < THREE_DECIMALS_DB);
    assert!((t.snr_above_db.unwrap() - 37.710).abs() < THREE_DECIMALS_DB);
    assert!((t.dip_db - 0.070).abs() < THREE_DECIMALS_DB);
    assert_eq!(h.readouts[1].scale, 1.0, "the same charge: no rescaling");
}

#[test]
fn colour_matrix_noise_gain_through_the_model() {
    // Source: REFERENCES.md §11: σ_i = √(Σ_j m_ij² σ_j²) for independent channels. With equal
    // raw channels and G the mean of a Bayer quad's two greens (σ_G² = σ²/2, this model's
    // stated quad), the row (1.6, −0.4, −0.2) gives √(1.6² + 0.4²/2 + 0.2²) = 1.63707 (derived),
    // and a neutral grey keeps its signal (1.6 − 0.4 − 0.2 = 1).
    let mut v = plain(100_000.0, 3.0, 1000.0);
    v["sensor"]
        .as_object_mut()
        .unwrap()
        .remove("quantum_efficiency");
    v["sensor"]["cfa"] = json!("RGGB");
    let qe = json!({"quantum_efficiency": 0.5});
    v["sensor"]["channels"] = json!({"R": qe, "G": qe, "B": qe});
    v["processing"] = json!({"colour_matrix": [[1.6, -0.4, -0.2], [0, 1, 0], [0, 0, 1]]});
    let r = eval(&v);
    let ch = r.channels.as_ref().unwrap();
    let c = r.colour.as_ref().unwrap();
    assert_eq!(ch[0].signal_e, 500.0, "η·μp = 0.5 × 1000");
    let sigma = ch[0].noise_e.temporal;
    let want = (1.6f64 * 1.6 + 0.4 * 0.4 / 2.0 + 0.2 * 0.2).sqrt();
    assert!((c.outputs[0].noise_e / sigma - want).abs() < 1e-12);
    assert!((c.outputs[0].signal_e - 500.0).abs() < 1e-9);
    assert!((c.outputs[0].noise_gain.unwrap() - want).abs() < 1e-12);
    // The top-level figures are the green channel's.
    assert_eq!(r.signal_e, ch[1].signal_e);
    // Luminance (ITU-R BT.709 weights, from memory): Y of a neutral grey is the grey.
    assert!((c.luminance.signal_e - 500.0).abs() < 1e-9);
}

#[test]
fn dark_current_nonuniformity_grows_with_the_dark_charge() {
    // Source: the definition (derived): DSNU² = dsnu_e² + (p_d·d)² per pixel.
    // d = 100 e⁻/s × 1 s at the reference temperature, p_d = 10 %, dsnu_e = 3 e⁻: √(9 + 100) e⁻.
    let mut v = plain(100_000.0, 2.0, 100.0);
    v["exposure"]["time_s"] = json!(1.0);
    v["sensor"]["dark_current_e_per_s"] = json!(100.0);
    v["sensor"]["dsnu_e"] = json!(3.0);
    v["sensor"]["dark_current_nonuniformity_percent"] = json!(10.0);
    let r = eval(&v);
    assert!((r.noise_e.dsnu - 109f64.sqrt()).abs() < 1e-12);
    // Twice the exposure: twice the dark spread, √(9 + 400).
    v["exposure"]["time_s"] = json!(2.0);
    assert!((eval(&v).noise_e.dsnu - 409f64.sqrt()).abs() < 1e-12);
}

#[test]
fn the_bandgap_law_through_the_model() {
    // Source: REFERENCES.md §7, D_R(273.15 K)/D_R(300 K) = 0.09071 with set (a).
    let mut v = plain(100_000.0, 2.0, 100.0);
    v["sensor"]["dark_current_e_per_s"] = json!(1.0);
    v["sensor"]["dark_current_reference_c"] = json!(26.85);
    v["sensor"]["dark_current_law"] = json!("bandgap");
    v["temperature_c"] = json!(0.0);
    let r = eval(&v);
    assert!((r.dark_current_at_temperature_e_per_s / 0.09071 - 1.0).abs() < 5e-4);
    assert_eq!(r.dark_current_law, "bandgap");
}

#[test]
fn bad_colour_and_hdr_input_is_named() {
    let colour = |f: &dyn Fn(&mut Value)| {
        let mut v = plain(10_000.0, 2.0, 100.0);
        v["sensor"]
            .as_object_mut()
            .unwrap()
            .remove("quantum_efficiency");
        v["sensor"]["cfa"] = json!("GRBG");
        v["sensor"]["channels"] = json!({"R": {"quantum_efficiency": 0.4},
            "G": {"quantum_efficiency": 0.6}, "B": {"quantum_efficiency": 0.5}});
        f(&mut v);
        problems(&v)
    };
    assert_eq!(
        colour(&|v| v["processing"] = json!({"colour_matrix": [[1, 0, 0], [0, 1, 0]]})),
        ["processing.colour_matrix: must be a list of 3 rows, each a list of 3 numbers: 2 rows given"]
    );
    assert_eq!(
        colour(&|v| v["processing"] = json!({"colour_matrix": [[1, 0], [0, 1, 0], [0, 0, 1]]})),
        ["processing.colour_matrix[0]: must be a list of 3 numbers (a row), got 2"]
    );
    assert_eq!(
        colour(&|v| {
            v["sensor"]["channels"]["B"] = json!({});
        }),
        ["sensor.channels.B.quantum_efficiency: required, missing: give it, or sensor.channels.B.quantum_efficiency_curve"]
    );
    assert_eq!(
        colour(&|v| {
            v["sensor"]["channels"].as_object_mut().unwrap().remove("G");
        }),
        ["sensor.channels.G: required, missing"]
    );
    assert_eq!(
        colour(&|v| v["processing"] = json!({"white_balance": [1, 0, 2]})),
        ["processing.white_balance[1]: must be > 0, got 0"]
    );
    let hdr = |h: Value| {
        let mut v = plain(10_000.0, 2.0, 100.0);
        v["hdr"] = h;
        problems(&v)
    };
    assert_eq!(
        hdr(json!({"kind": "exposures", "exposures": [{"ratio": 0.5}]})),
        ["hdr.exposures[0].ratio: must be ≥ 1, got 0.5"]
    );
    assert_eq!(
        hdr(json!({"kind": "exposures", "switch_fraction": 0, "exposures": [{"ratio": 4}]})),
        ["hdr.switch_fraction: must be > 0, got 0"]
    );
    assert_eq!(
        hdr(json!({"kind": "exposures", "switch_fraction": 1.2, "exposures": [{"ratio": 4}]})),
        ["hdr.switch_fraction: must be ≤ 1, got 1.2"]
    );
    assert_eq!(
        hdr(
            json!({"kind": "exposures", "exposures": [{"ratio": 2}, {"ratio": 2}, {"ratio": 2}, {"ratio": 2}]})
        ),
        ["hdr.exposures: must list from 1 to 3, got 4"]
    );
    assert_eq!(
        hdr(json!({"kind": "dual_gain", "low_gain": {"system_gain_dn_per_e": 2000,
            "read_noise_e": 5, "full_well_e": 50000}})),
        ["hdr.low_gain.system_gain_dn_per_e: must be below the high gain's sensor.system_gain_dn_per_e (1000), got 2000"]
    );
    let mono = |f: &dyn Fn(&mut Value)| {
        let mut v = plain(10_000.0, 2.0, 100.0);
        f(&mut v);
        problems(&v)
    };
    assert_eq!(
        mono(&|v| v["processing"] = json!({"channel_correlation": 0.1})),
        ["processing: only with a Bayer pattern (sensor.cfa): a monochrome sensor has no colours to balance or mix"]
    );
    assert_eq!(
        mono(&|v| {
            v["sensor"]["dark_current_law"] = json!("bandgap");
            v["sensor"]["dark_current_doubling_c"] = json!(7);
        }),
        ["sensor.dark_current_doubling_c: not used with the band-gap law: leave it out, or set sensor.dark_current_law to \"doubling\""]
    );
}

// ---- invariants ------------------------------------------------------------------------------

prop_compose! {
    /// An HDR scenario: 2 to 4 exposures or a dual gain, random stitch, random light.
    fn hdr_scenario()(
        photons in 0.0f64..1e7,
        read in 0.0f64..20.0,
        full_well in 1000.0f64..100_000.0,
        prnu in 0.0f64..3.0,
        dark in 0.0f64..1000.0,
        ratios in prop::collection::vec(1.0f64..64.0, 1..=3),
        dual in any::<bool>(),
        switch in 0.05f64..=1.0,
        blend in prop_oneof![Just(0.0f64), 0.01f64..0.9],
    ) -> Value {
        let mut v = json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 0.7, "full_well_e": full_well,
                "read_noise_e": read, "dark_current_e_per_s": dark, "prnu_percent": prnu,
                "adc_bits": 16, "system_gain_dn_per_e": 0.5},
            "light": {"photon_flux_per_um2_s": photons}, "exposure": {"time_s": 0.01}
        });
        v["hdr"] = if dual {
            json!({"kind": "dual_gain", "switch_fraction": switch, "blend_fraction": blend,
                "low_gain": {"system_gain_dn_per_e": 0.05, "read_noise_e": read * 4.0 + 1.0,
                    "full_well_e": full_well * 8.0}})
        } else {
            let list: Vec<Value> = ratios.iter().map(|r| json!({"ratio": r})).collect();
            json!({"kind": "exposures", "switch_fraction": switch, "blend_fraction": blend,
                "exposures": list})
        };
        v
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn hdr_figures_are_finite(v in hdr_scenario()) {
        let r = eval(&v);
        let h = r.hdr.as_ref().unwrap();
        prop_assert!(h.snr.temporal.is_finite() && h.snr.temporal >= 0.0);
        prop_assert!(h.snr.total.is_finite() && h.snr.total <= h.snr.temporal + 1e-9);
        for t in &h.transitions {
            prop_assert!(t.dip_db.is_finite() && t.level_e.is_finite());
        }
        prop_assert!(serde_json::to_string(&r.hdr).is_ok());
    }

    #[test]
    fn one_identical_extra_exposure_changes_nothing(
        photons in 0.0f64..1e6, read in 0.0f64..20.0, prnu in 0.0f64..3.0, switch in 0.05f64..=1.0,
    ) {
        // A second exposure of ratio 1 with the same read noise and well is the same pixel:
        // the combined output is the plain one (the issue's "single-exposure HDR equals the
        // plain one"), and the figures of the report do not move.
        let mut v = plain(20_000.0, read, 0.0);
        v["light"] = json!({"photon_flux_per_um2_s": photons});
        v["sensor"]["prnu_percent"] = json!(prnu);
        let base = eval(&v);
        v["hdr"] = json!({"kind": "exposures", "switch_fraction": switch, "exposures": [{"ratio": 1}]});
        let r = eval(&v);
        let h = r.hdr.as_ref().unwrap();
        prop_assert!((h.snr.temporal - base.snr.temporal).abs() <= 1e-12 * base.snr.temporal.max(1.0));
        prop_assert!((h.snr.total - base.snr.total).abs() <= 1e-12 * base.snr.total.max(1.0));
        prop_assert!(h.transitions.iter().all(|t| t.dip_db.abs() < 1e-9));
        prop_assert_eq!(r.snr, base.snr);
        prop_assert_eq!(r.noise_e, base.noise_e);
    }

    #[test]
    fn combined_snr_is_continuous_between_transitions(v in hdr_scenario()) {
        // Between (and away from) the stated transition levels, the combined SNR moves by
        // little when the level moves by little: no jump except at a stated switch.
        let sc = engine::validate::scenario_from_value(&v).unwrap();
        let r = engine::evaluate(&sc);
        let h = r.hdr.as_ref().unwrap();
        let top = h.top_level_e.unwrap_or(1e6);
        let switches: Vec<f64> = h.transitions.iter().map(|t| t.level_e).collect();
        let mut level = top / 1e4;
        // Blends are at least 1 % wide, so over a step of 1e-9 of the level the SNR moves by at
        // most about 1e-7 of itself (its slope is at most ~1/(β·x) relative); away from a stated
        // switch or blend start, 1e-5 relative is a jump.
        let edges: Vec<f64> = h
            .transitions
            .iter()
            .flat_map(|t| [t.level_e, t.blend_start_e])
            .chain(switches.iter().copied())
            .collect();
        while level < top {
            let next = level * (1.0 + 1e-9);
            if !edges.iter().any(|s| *s >= level * (1.0 - 1e-12) && *s <= next * (1.0 + 1e-12)) {
                let a = amount_snr(&v, &r, level);
                let b = amount_snr(&v, &r, next);
                prop_assert!((b - a).abs() <= 1e-5 * a.max(b) + 1e-9, "{} → {}: {} → {}", level, next, a, b);
            }
            level *= 1.37;
        }
        // And at each hard switch the SNR does jump by the stated dip.
        for t in h.transitions.iter().filter(|t| t.blend_start_e == t.level_e && t.dip_db > 0.01) {
            let below = amount_snr(&v, &r, t.level_e * (1.0 - 1e-9));
            let above = amount_snr(&v, &r, t.level_e * (1.0 + 1e-9));
            let dip = 20.0 * (below / above).log10();
            prop_assert!((dip - t.dip_db).abs() < 1e-3, "dip {} against {}", dip, t.dip_db);
        }
    }
}

/// The combined temporal SNR at a scene level (e⁻ of the first readout), by setting the light
/// so that the first readout's signal is that level.
fn amount_snr(v: &Value, base: &Report, level_e: f64) -> f64 {
    let mut w = v.clone();
    let per_photon = base.signal_e
        / v["light"]["photon_flux_per_um2_s"]
            .as_f64()
            .unwrap()
            .max(1e-300);
    let flux = if base.signal_e > 0.0 {
        level_e / per_photon
    } else {
        level_e / (0.7 * 9.0 * 0.01)
    };
    w["light"] = json!({"photon_flux_per_um2_s": flux});
    eval(&w).hdr.unwrap().snr.temporal
}
