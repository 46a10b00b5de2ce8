//! Reference checks: the engine's formulas and whole-model figures against published values.
//!
//! Every expected number names its source beside it (REFERENCES.md section, and the
//! publication or library it cites there). This file checks physics; the format's own
//! arithmetic is checked by `conformance.rs`.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use engine::report::{LimitedBy, Report};
use engine::{dark, photon, quantization, sense_node};
use serde_json::{json, Value};

/// Values quoted to 4 significant digits: the rounding alone allows a relative error of up to
/// 0.5 in the 4th digit, i.e. 5e-4 for a leading digit of 1 (the worst case).
const FOUR_DIGITS: f64 = 5e-4;
/// Values quoted to 6 or 7 significant digits: half a unit in the 6th digit, worst case.
const SIX_DIGITS: f64 = 5e-6;
/// A system gain so high that quantization noise (1/(12 K²) = 8.3e-14 e⁻²) is far below any
/// tolerance here; used where a published example has no quantization term.
const NO_QUANTIZATION_GAIN: f64 = 1e6;

fn assert_rel(got: f64, want: f64, tol: f64, what: &str) {
    let rel = ((got - want) / want).abs();
    assert!(
        rel <= tol,
        "{what}: got {got}, want {want} (relative error {rel:.2e} > {tol:.0e})"
    );
}

/// Evaluate a scenario given as a JSON value; panics with the problems if it is refused.
fn eval(v: &Value) -> Report {
    engine::evaluate_json(&v.to_string()).unwrap_or_else(|e| panic!("refused:\n{e}\n{v}"))
}

/// A sensor with the EMVA 1288 worked example's figures (REFERENCES.md §4): η = 0.6,
/// K = 0.25 DN/e⁻, σ_d = 2.5 e⁻, μ_e.sat = 10 000 e⁻, 3.45 µm; no dark current.
fn emva_example(photons_per_pixel: f64, dsnu_e: f64, prnu_percent: f64) -> Value {
    json!({
        "version": 1,
        "sensor": {
            "pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
            "read_noise_e": 2.5, "dark_current_e_per_s": 0, "adc_bits": 16,
            "system_gain_dn_per_e": 0.25, "dsnu_e": dsnu_e, "prnu_percent": prnu_percent
        },
        "light": { "photons_per_pixel": photons_per_pixel },
        "exposure": { "time_s": 0.01 }
    })
}

// ---- §2 reset (kTC) noise and conversion gain ------------------------------------------------

/// Source: REFERENCES.md §2 check-value table (√(kTC)/q, √(2kTC)/q, q/C), computed there with
/// scipy.constants (CODATA 2018); kT/C after El Gamal, Stanford EE 392B notes 6.
const KTC_TABLE: &[(f64, f64, f64, f64, f64)] = &[
    // (C fF, T K, CG µV/e⁻, √(kTC)/q e⁻, √(2kTC)/q e⁻)
    (1.0, 300.0, 160.2, 12.70, 17.96),
    (2.0, 300.0, 80.11, 17.96, 25.41),
    (5.0, 300.0, 32.04, 28.40, 40.17),
    (10.0, 300.0, 16.02, 40.17, 56.81),
    (1.0, 273.15, 160.2, 12.12, 17.14),
    (2.0, 273.15, 80.11, 17.14, 24.24),
    (5.0, 273.15, 32.04, 27.10, 38.33),
    (10.0, 273.15, 16.02, 38.33, 54.21),
];

#[test]
fn reset_noise_and_conversion_gain_match_the_ktc_table() {
    for &(c, t, cg, single, dds) in KTC_TABLE {
        assert_rel(
            sense_node::conversion_gain_uv_per_e(c),
            cg,
            FOUR_DIGITS,
            "q/C",
        );
        let v = sense_node::reset_variance_e2(c, t);
        assert_rel(v.sqrt(), single, FOUR_DIGITS, "√(kTC)/q");
        assert_rel((2.0 * v).sqrt(), dds, FOUR_DIGITS, "√(2kTC)/q");
    }
}

#[test]
fn whole_model_reset_noise_follows_the_readout() {
    // Source: REFERENCES.md §2 table (2 fF, 300 K = 26.85 °C): single 17.96 e⁻, DDS 25.41 e⁻;
    // CDS cancels reset noise (Fossum & Hondongwa 2014, from memory).
    for (readout, want) in [("single", Some(17.96)), ("dds", Some(25.41)), ("cds", None)] {
        let r = eval(&json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 0.5, "full_well_e": 10000,
                "read_noise_e": 2, "sense_node_capacitance_ff": 2.0, "readout": readout,
                "dark_current_e_per_s": 0, "adc_bits": 12, "system_gain_dn_per_e": 0.3},
            "light": {"photons_per_pixel": 100}, "exposure": {"time_s": 0.01},
            "temperature_c": 26.85
        }));
        match want {
            Some(w) => assert_rel(r.noise_e.reset, w, FOUR_DIGITS, readout),
            None => assert_eq!(r.noise_e.reset, 0.0, "cds leaves no reset noise"),
        }
        // The derived conversion gain is q/C: 80.11 µV/e⁻ at 2 fF (REFERENCES.md §2).
        assert_rel(
            r.conversion_gain_uv_per_e.unwrap_or(0.0),
            80.11,
            FOUR_DIGITS,
            "derived q/C",
        );
    }
}

// ---- §3 quantization --------------------------------------------------------------------------

#[test]
fn quantization_noise_matches_the_table() {
    // Source: REFERENCES.md §3 table, σ_q = 1/(√12·K) (Bennett 1948; EMVA 1288, from memory).
    for (k, want) in [
        (0.05, 5.774),
        (0.1, 2.887),
        (0.25, 1.155),
        (0.5, 0.5774),
        (1.0, 0.2887),
        (2.0, 0.1443),
    ] {
        assert_rel(
            quantization::quantization_variance_e2(k).sqrt(),
            want,
            FOUR_DIGITS,
            "σ_q",
        );
    }
}

// ---- §5 photon flux ---------------------------------------------------------------------------

#[test]
fn photon_energy_and_flux_match_the_monochromatic_values() {
    // Source: REFERENCES.md §5 "Monochromatic check values" (E_ph = hc/λ with CODATA 2018).
    assert_rel(
        photon::photon_energy_j(550.0),
        3.611720e-19,
        SIX_DIGITS,
        "E_ph(550 nm)",
    );
    assert_rel(
        photon::photon_energy_j(555.0),
        3.579182e-19,
        SIX_DIGITS,
        "E_ph(555 nm)",
    );
    assert_rel(
        photon::photon_energy_j(850.0),
        2.336995e-19,
        SIX_DIGITS,
        "E_ph(850 nm)",
    );
    assert_rel(
        photon::photon_flux_per_um2_s(1.0, 550.0),
        2.769e6,
        FOUR_DIGITS,
        "Φ(550)",
    );
    assert_rel(
        photon::photon_flux_per_um2_s(1.0, 555.0),
        2.794e6,
        FOUR_DIGITS,
        "Φ(555)",
    );
    assert_rel(
        photon::photon_flux_per_um2_s(1.0, 850.0),
        4.279e6,
        FOUR_DIGITS,
        "Φ(850)",
    );
    // 1 lx at 555 nm is 1/683 W/m² (V = 1, K_m = 683 lm/W): 4090.7 photons s⁻¹ µm⁻².
    assert_rel(
        photon::photon_flux_per_um2_s(1.0 / 683.0, 555.0),
        4090.7,
        FOUR_DIGITS,
        "1 lx",
    );
}

#[test]
fn whole_model_counts_photons_from_irradiance() {
    // Source: REFERENCES.md §5: 1 W/m² at 850 nm = 4.279e6 photons s⁻¹ µm⁻²; EMVA 1288 eq. for
    // μ_p = A·E·t·λ/(hc) (from memory). A (2 µm)² pixel for 1 ms holds 4 × 4.279e3 photons.
    let r = eval(&json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 2, "quantum_efficiency": 0.5, "full_well_e": 100000,
            "read_noise_e": 2, "dark_current_e_per_s": 0, "adc_bits": 16, "system_gain_dn_per_e": 0.5},
        "light": {"irradiance_w_per_m2": 1.0, "wavelength_nm": 850}, "exposure": {"time_s": 0.001}
    }));
    assert_rel(r.photons_per_pixel, 4.0 * 4.279e3, FOUR_DIGITS, "μ_p");
    assert_rel(r.signal_e, 0.5 * 4.0 * 4.279e3, FOUR_DIGITS, "μ_e = η μ_p");
}

// ---- §4 EMVA 1288 worked example ---------------------------------------------------------------

/// Source: REFERENCES.md §4 worked example, "SNR at selected exposures" table (EMVA 1288
/// Release 4.0 Linear eqs. for SNR and SNR_tot, from memory; values computed there with numpy).
const EMVA_SNR_TABLE: &[(f64, f64, f64, f64)] = &[
    // (μ_p, SNR temporal, SNR dB, SNR_tot with DSNU 1 e⁻ and PRNU 1 %)
    (5.0, 0.9222, -0.7038, 0.8814),
    (10.0, 1.628, 4.233, 1.571),
    (100.0, 7.298, 17.26, 7.226),
    (1000.0, 24.34, 27.73, 23.63),
    (10000.0, 77.41, 37.78, 61.21),
    (16667.0, 99.96, 40.00, 70.70),
];

#[test]
fn emva_worked_example_snr_table() {
    for &(mu_p, snr, snr_db, snr_tot) in EMVA_SNR_TABLE {
        let r = eval(&emva_example(mu_p, 1.0, 1.0));
        assert_rel(r.snr.temporal, snr, FOUR_DIGITS, "SNR");
        // dB values are quoted to 2 decimals: half a unit in the last place.
        let db = r.snr.temporal_db.unwrap_or(f64::NAN);
        assert!(
            (db - snr_db).abs() <= 0.005,
            "SNR dB at μp={mu_p}: got {db}, want {snr_db}"
        );
        assert_rel(r.snr.total, snr_tot, FOUR_DIGITS, "SNR_tot");
    }
}

#[test]
fn emva_worked_example_threshold_range_and_maximum() {
    // Source: REFERENCES.md §4 worked example: μ_e.min (exact root) = 3.29881 e⁻,
    // μ_p.min = 5.49802 photons, DR = 3031 (69.63 dB, 11.57 bits), SNR at saturation 99.96.
    let r = eval(&emva_example(1000.0, 0.0, 0.0));
    assert_rel(r.min_detectable.signal_e, 3.29881, SIX_DIGITS, "μ_e.min");
    assert_rel(
        r.min_detectable.photons_per_pixel,
        5.49802,
        SIX_DIGITS,
        "μ_p.min",
    );
    let dr = r.dynamic_range;
    assert_rel(dr.ratio.unwrap_or(0.0), 3031.0, FOUR_DIGITS, "DR");
    assert!(
        (dr.db.unwrap_or(0.0) - 69.63).abs() <= 0.005,
        "DR dB {:?}",
        dr.db
    );
    assert!(
        (dr.stops.unwrap_or(0.0) - 11.57).abs() <= 0.005,
        "DR bits {:?}",
        dr.stops
    );
    assert_rel(
        r.max_snr.unwrap_or(0.0),
        99.96,
        FOUR_DIGITS,
        "SNR at μe.sat",
    );
    // The same example's σ_y.dark² = K²σ_d² + 1/12 = 0.473958 DN²: the model's read and
    // quantization noise in DN add up to it.
    let dark_dn2 = r.noise_dn.read.powi(2) + r.noise_dn.quantization.powi(2);
    assert_rel(dark_dn2, 0.473958, SIX_DIGITS, "σ²_y.dark");
}

// ---- §8 detection threshold -------------------------------------------------------------------

#[test]
fn threshold_signal_matches_the_rose_and_snr_one_values() {
    // Source: REFERENCES.md §8 check values, σ_r = 1 e⁻, d = 0.01 e⁻: SNR = 1 needs
    // 1/2 + √(1/4 + σ_r² + d) = 1.6225 e⁻; the Rose criterion k = 5 (Rose 1948) needs 25.97 e⁻.
    for (k, want) in [(1.0, 1.6225), (5.0, 25.97)] {
        let r = eval(&json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 0.5, "full_well_e": 10000,
                "read_noise_e": 1.0, "dark_current_e_per_s": 1.0, "adc_bits": 32,
                "system_gain_dn_per_e": NO_QUANTIZATION_GAIN},
            "light": {"photons_per_pixel": 0}, "exposure": {"time_s": 0.01},
            "snr_threshold": k
        }));
        assert_rel(
            r.min_detectable.signal_e,
            want,
            FOUR_DIGITS,
            "threshold signal",
        );
    }
}

// ---- §9 binning and frame averaging ------------------------------------------------------------

fn binning_case(binning: u32, mode: &str) -> Report {
    // S = 10 e⁻ per pixel (η = 1), σ_r = 3 e⁻, no dark, negligible quantization.
    eval(&json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 1.0, "full_well_e": 10000,
            "read_noise_e": 3.0, "dark_current_e_per_s": 0, "adc_bits": 32,
            "system_gain_dn_per_e": NO_QUANTIZATION_GAIN},
        "light": {"photons_per_pixel": 10}, "exposure": {"time_s": 0.01, "binning": binning,
            "binning_mode": mode}
    }))
}

#[test]
fn binning_check_values() {
    // Source: REFERENCES.md §9 (Janesick, Scientific CCDs 2001, from memory): S = 10 e⁻,
    // σ_r = 3 e⁻, 2×2: single pixel 2.294, charge-binned 5.714, digital sum 4.588;
    // read noise 3 e⁻ charge-binned, 6 e⁻ digital sum.
    assert_rel(
        binning_case(1, "digital").snr.temporal,
        2.294,
        FOUR_DIGITS,
        "single",
    );
    let charge = binning_case(2, "charge");
    let digital = binning_case(2, "digital");
    assert_rel(charge.snr.temporal, 5.714, FOUR_DIGITS, "charge 2×2");
    assert_rel(digital.snr.temporal, 4.588, FOUR_DIGITS, "digital 2×2");
    assert_rel(charge.noise_e.read, 3.0, SIX_DIGITS, "charge read noise");
    assert_rel(digital.noise_e.read, 6.0, SIX_DIGITS, "digital read noise");
}

#[test]
fn charge_binning_saturates_where_the_sum_is_digitised() {
    // Source: SCENARIO.md, revision of 2026-12-02: for `charge` binning
    // L = min(full_well_e, L_adc/b², summing_well_e/b²), L_adc = (2^bits − 1 − black)/K.
    // 12 bits, K = 1 DN/e⁻, no black level: L_adc = 4095 e⁻; b = 3 gives 4095/9 = 455 e⁻ per
    // pixel, where the first text of the format gave 4095 e⁻ (dynamic range 9×, 19.08 dB, too high).
    let case = |mode: &str, summing_well: Option<f64>| {
        let mut v = json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 1.0, "full_well_e": 100000,
                "read_noise_e": 3.0, "dark_current_e_per_s": 0, "adc_bits": 12,
                "system_gain_dn_per_e": 1.0},
            "light": {"photons_per_pixel": 10}, "exposure": {"time_s": 0.01, "binning": 3,
                "binning_mode": mode}
        });
        if let Some(w) = summing_well {
            v["sensor"]["summing_well_e"] = json!(w);
        }
        eval(&v)
    };
    let charge = case("charge", None);
    assert_rel(
        charge.saturation.level_e,
        455.0,
        SIX_DIGITS,
        "charge 3×3, ADC",
    );
    assert_eq!(charge.saturation.limited_by, LimitedBy::Adc);
    let digital = case("digital", None);
    assert_rel(
        digital.saturation.level_e,
        4095.0,
        SIX_DIGITS,
        "digital 3×3, ADC",
    );
    // A summing well of 2700 e⁻ holds 300 e⁻ per pixel, below the ADC's 455 e⁻.
    let well = case("charge", Some(2700.0));
    assert_rel(
        well.saturation.level_e,
        300.0,
        SIX_DIGITS,
        "charge 3×3, summing well",
    );
    assert_eq!(well.saturation.limited_by, LimitedBy::SummingWell);
    // The summing well does not apply to digital binning.
    let digital_well = case("digital", Some(2700.0));
    assert_eq!(digital_well.saturation.limited_by, LimitedBy::Adc);
}

#[test]
fn frame_averaging_check_values() {
    // Source: REFERENCES.md §9: temporal 5 e⁻ and fixed pattern 2 e⁻ per frame, N = 16:
    // temporal 1.250 e⁻, FPN 2.000 e⁻, total 2.358 e⁻ (single frame 5.385 e⁻).
    let case = |n: u32| {
        eval(&json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 0.5, "full_well_e": 10000,
                "read_noise_e": 5.0, "dark_current_e_per_s": 0, "dsnu_e": 2.0, "adc_bits": 32,
                "system_gain_dn_per_e": NO_QUANTIZATION_GAIN},
            "light": {"photons_per_pixel": 0}, "exposure": {"time_s": 0.01, "frames_averaged": n}
        }))
    };
    let one = case(1);
    let sixteen = case(16);
    assert_rel(one.noise_e.total, 5.385, FOUR_DIGITS, "single-frame total");
    assert_rel(
        sixteen.noise_e.temporal,
        1.250,
        FOUR_DIGITS,
        "averaged temporal",
    );
    assert_rel(sixteen.noise_e.dsnu, 2.000, FOUR_DIGITS, "averaged FPN");
    assert_rel(sixteen.noise_e.total, 2.358, FOUR_DIGITS, "averaged total");
}

// ---- §7 dark current and temperature -----------------------------------------------------------

/// Source: REFERENCES.md §7 doubling-rule table, I/I_ref with I_ref at 20 °C (common practice
/// 5–8 °C doubling; EMVA 1288 optional temperature dependence, from memory).
const DOUBLING_TABLE: &[(f64, [f64; 4])] = &[
    // T_d, then I/I_ref at 40, 0, −20, −40 °C
    (5.0, [16.00, 0.06250, 0.003906, 0.0002441]),
    (6.0, [10.08, 0.09921, 0.009843, 0.0009766]),
    (7.0, [7.246, 0.1380, 0.01905, 0.002629]),
    (8.0, [5.657, 0.1768, 0.03125, 0.005524]),
];

#[test]
fn temperature_doubling_law() {
    for &(td, ratios) in DOUBLING_TABLE {
        for (t, want) in [40.0, 0.0, -20.0, -40.0].into_iter().zip(ratios) {
            assert_rel(
                dark::temperature_factor(t, 20.0, td),
                want,
                FOUR_DIGITS,
                "I/I_ref",
            );
            // The same through the whole model: 1 e⁻/s at 20 °C.
            let r = eval(&json!({
                "version": 1,
                "sensor": {"pixel_pitch_um": 3, "quantum_efficiency": 0.5, "full_well_e": 10000,
                    "read_noise_e": 2, "dark_current_e_per_s": 1.0, "dark_current_reference_c": 20,
                    "dark_current_doubling_c": td, "adc_bits": 12, "system_gain_dn_per_e": 0.3},
                "light": {"photons_per_pixel": 100}, "exposure": {"time_s": 1.0},
                "temperature_c": t
            }));
            assert_rel(
                r.dark_current_at_temperature_e_per_s,
                want,
                FOUR_DIGITS,
                "model dark rate",
            );
            assert_rel(r.dark_e, want, FOUR_DIGITS, "dark charge in 1 s");
        }
    }
}

/// Source: REFERENCES.md §7, silicon band gap E_g [eV] by Varshni's form (Varshni, Physica 34,
/// 149, 1967) for parameter sets (a), (b), (c), computed there with numpy; quoted to 6 digits.
const BAND_GAP_TABLE: &[(f64, [f64; 3])] = &[
    (173.15, [1.13927, 1.15247, 1.15126]),
    (233.15, [1.12724, 1.14042, 1.13901]),
    (253.15, [1.12264, 1.13591, 1.13442]),
    (273.15, [1.11777, 1.13118, 1.12961]),
    (293.15, [1.11264, 1.12625, 1.12459]),
    (300.00, [1.11082, 1.12452, 1.12282]),
    (323.15, [1.10447, 1.11850, 1.11669]),
];

#[test]
fn silicon_band_gap_by_varshni() {
    let sets = [dark::VARSHNI_1967, dark::THURMOND_1975, dark::SZE_NG_2007];
    for &(t, gaps) in BAND_GAP_TABLE {
        for (set, want) in sets.iter().zip(gaps) {
            assert_rel(set.band_gap_ev(t), want, SIX_DIGITS, "E_g(T)");
        }
    }
}

/// Source: REFERENCES.md §7, Janesick's dark-current figure of merit
/// D_R ∝ T^1.5·exp(−E_g/2kT) with set (a) (Janesick, *Scientific CCDs*, 2001, from memory):
/// D_R/D_R(300 K), 4 significant digits.
const BANDGAP_RATIO_TABLE: &[(f64, f64)] = &[
    (173.15, 2.468e-8),
    (233.15, 9.616e-4),
    (253.15, 0.01109),
    (273.15, 0.09071),
    (293.15, 0.5640),
    (300.00, 1.0),
    (323.15, 5.839),
];

/// Source: REFERENCES.md §7, "doubling interval implied by the physics", depletion model,
/// set (a) and set (b) (derived there with numpy), 4 significant digits.
const BANDGAP_DOUBLING_TABLE: &[(f64, f64, f64)] = &[
    (233.15, 5.239, 5.187),
    (253.15, 6.134, 6.077),
    (273.15, 7.092, 7.031),
    (293.15, 8.112, 8.047),
    (300.00, 8.475, 8.410),
    (313.15, 9.192, 9.126),
];

#[test]
fn dark_current_by_the_bandgap_law() {
    let celsius = |k: f64| k - 273.15;
    for &(t, want) in BANDGAP_RATIO_TABLE {
        assert_rel(
            dark::bandgap_factor(celsius(t), celsius(300.0), &dark::VARSHNI_1967),
            want,
            FOUR_DIGITS,
            "D_R/D_R(300 K)",
        );
    }
    for &(t, set_a, set_b) in BANDGAP_DOUBLING_TABLE {
        assert_rel(
            dark::bandgap_doubling_k(celsius(t), &dark::VARSHNI_1967),
            set_a,
            FOUR_DIGITS,
            "doubling, set (a)",
        );
        assert_rel(
            dark::bandgap_doubling_k(celsius(t), &dark::THURMOND_1975),
            set_b,
            FOUR_DIGITS,
            "doubling, set (b)",
        );
    }
}

// ---- §5 photometry and spectra ---------------------------------------------------------------

use engine::spectrum::{self, Spectrum};

/// REFERENCES.md §5 quotes photons per lux to 5 significant digits: half a unit in the 5th.
const FIVE_DIGITS: f64 = 5e-5;
/// The band REFERENCES.md §5 uses for both integrals of its photons-per-lux table.
const VISIBLE: (f64, f64) = (380.0, 780.0);

#[test]
fn photons_per_lux_for_the_cie_illuminants() {
    // Source: REFERENCES.md §5 "Photons s⁻¹ µm⁻² per lux", 1 nm trapezoid over 380–780 nm for
    // both integrals, K_m = 683 lm/W (computed there with numpy from the colour-science tables).
    for (s, want) in [
        (Spectrum::CieA, 21005.0),
        (Spectrum::CieD65, 13887.0),
        (Spectrum::EqualEnergy, 16003.0),
    ] {
        let got = spectrum::photons_per_lux(&s, VISIBLE, VISIBLE).unwrap();
        assert_rel(got, want, FIVE_DIGITS, s.kind());
    }
    // "A as Planck 2856 K, c2 = 1.4388e-2": 21001 (T scaled so that c₂/(λT) matches).
    let c2 = engine::constants::PLANCK_J_S * engine::constants::SPEED_OF_LIGHT_M_PER_S
        / engine::constants::BOLTZMANN_J_PER_K;
    let planck = Spectrum::Blackbody {
        temperature_k: 2856.0 * c2 / 1.4388e-2,
    };
    assert_rel(
        spectrum::photons_per_lux(&planck, VISIBLE, VISIBLE).unwrap(),
        21001.0,
        FIVE_DIGITS,
        "Planck",
    );
}

#[test]
fn luminous_efficacy_over_the_visible_band() {
    // Source: REFERENCES.md §5 table, "Luminous efficacy over 380–780 [lm/W]": A 156.20,
    // D65 205.15, E 182.46 (quoted to 5 digits).
    for (s, want) in [
        (Spectrum::CieA, 156.20),
        (Spectrum::CieD65, 205.15),
        (Spectrum::EqualEnergy, 182.46),
    ] {
        let lm = 683.0 * s.integrate(VISIBLE, spectrum::v_lambda);
        let w = s.integrate(VISIBLE, |_| 1.0);
        assert_rel(lm / w, want, FIVE_DIGITS, s.kind());
    }
}

#[test]
fn v_lambda_table_and_its_integral() {
    // Source: REFERENCES.md §5 V(λ) table (CIE 1924, colour-science 0.4.7 / CVRL) and
    // "∫V dλ over 360–830 nm (1 nm trapezoid) = 106.8569 nm".
    for (nm, v) in [
        (380.0, 0.000039),
        (470.0, 0.09098),
        (555.0, 1.0),
        (550.0, 0.9949501),
        (650.0, 0.107),
        (740.0, 0.0002492),
        (780.0, 0.00001499),
    ] {
        assert_rel(spectrum::v_lambda(nm), v, 1e-12, "V(λ)");
    }
    let integral =
        Spectrum::EqualEnergy.integrate(spectrum::PHOTOMETRIC_BAND_NM, spectrum::v_lambda);
    assert_rel(integral, 106.8569, 5e-7, "∫V dλ"); // 7 digits quoted
}

#[test]
fn one_lux_at_555_nm() {
    // Source: REFERENCES.md §5: 1 lx at 555 nm (V = 1, K_m = 683) is 4090.7 photons s⁻¹ µm⁻².
    let line = Spectrum::Monochromatic {
        wavelength_nm: 555.0,
    };
    let got = spectrum::photons_per_lux(&line, VISIBLE, spectrum::PHOTOMETRIC_BAND_NM).unwrap();
    assert_rel(got, 4090.7, 2e-5, "1 lx at 555 nm"); // 5 digits quoted
                                                     // No visible light: a line at 850 nm has no lux.
    let nir = Spectrum::Monochromatic {
        wavelength_nm: 850.0,
    };
    assert_eq!(
        spectrum::photons_per_lux(&nir, (300.0, 1100.0), spectrum::PHOTOMETRIC_BAND_NM),
        None
    );
}

#[test]
fn d65_table_matches_the_published_values() {
    // Source: REFERENCES.md §5 D65 10 nm table (colour-science 0.4.7 for 300–780 nm, luxpy for
    // 790–830 nm); the values are tabulated, so they must agree exactly.
    for (nm, v) in [
        (300.0, 0.0341),
        (450.0, 117.008),
        (560.0, 100.0),
        (780.0, 63.3828),
        (790.0, 64.3040),
        (830.0, 60.3125),
    ] {
        assert_eq!(spectrum::d65(nm), Some(v), "D65 at {nm} nm");
    }
    assert_eq!(spectrum::d65(835.0), None);
    assert_eq!(spectrum::d65(295.0), None);
    // The 5 nm rows are means of the 10 nm rows (checked at 305 nm in REFERENCES.md §5).
    let mean = (0.0341 + 3.2945) / 2.0;
    assert_rel(spectrum::d65(305.0).unwrap(), mean, 1e-12, "D65 at 305 nm");
}

#[test]
fn illuminant_a_formula() {
    // Source: REFERENCES.md §5 "Formula vs Planck" table (colour-science's
    // sd_CIE_standard_illuminant_A, CIE 15:2004).
    for (nm, want) in [
        (380.0, 9.79510),
        (450.0, 33.08589),
        (560.0, 100.0),
        (650.0, 165.02751),
        (780.0, 241.67539),
    ] {
        assert_rel(spectrum::cie_a(nm), want, 1e-6, "S_A");
    }
}

#[test]
fn embedded_tables_equal_their_data_files() {
    // The data files are compared with colour-science by tests/python/test_cie_tables.py;
    // here the embedded functions must return every row exactly.
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("data");
    for (file, f) in [
        (
            "cie_1924_photopic_v.csv",
            (|nm| Some(spectrum::v_lambda(nm))) as fn(f64) -> Option<f64>,
        ),
        ("cie_d65.csv", spectrum::d65),
    ] {
        let text = std::fs::read_to_string(dir.join(file)).unwrap();
        let mut n = 0;
        for line in text.lines().skip(1) {
            let mut cells = line.split(',');
            let nm: f64 = cells.next().unwrap().parse().unwrap();
            let v: f64 = cells.next().unwrap().parse().unwrap();
            assert_eq!(f(nm), Some(v), "{file} at {nm} nm");
            n += 1;
        }
        assert!(n > 90, "{file}: only {n} rows");
    }
}

// ---- §6 the camera equation, and lux through the whole model ------------------------------------

use engine::light::Lens;

fn lens(f_number: f64, magnification: f64, field_angle_deg: f64) -> Lens {
    Lens {
        f_number,
        transmission: 0.9,
        magnification,
        field_angle_deg,
    }
}

#[test]
fn camera_equation_worked_values() {
    // Source: REFERENCES.md §6 worked check values, aplanatic 4N² form (from memory: Ray,
    // Applied Photographic Optics): scene 1000 lx, ρ = 0.18, T = 0.9; L = 0.18·1000/π.
    let luminance = 0.18 * 1000.0 / std::f64::consts::PI;
    assert_rel(luminance, 57.2958, FIVE_DIGITS, "L = ρE/π");
    for (l, want, what) in [
        (lens(2.8, 0.0, 0.0), 5.1658, "f/2.8"),
        (lens(2.0 * 2f64.sqrt(), 0.0, 0.0), 5.0625, "f/2√2"),
        (lens(2.8, 0.1, 0.0), 4.2693, "f/2.8, m = 0.1"),
        (lens(2.8, 0.0, 20.0), 4.0279, "f/2.8, 20° off axis"),
    ] {
        assert_rel(
            luminance * l.sensor_per_luminance(),
            want,
            FIVE_DIGITS,
            what,
        );
    }
}

fn lux_scenario(light: serde_json::Value) -> serde_json::Value {
    json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 2.0, "quantum_efficiency": 0.5, "full_well_e": 1e6,
            "read_noise_e": 2, "dark_current_e_per_s": 0, "adc_bits": 32, "system_gain_dn_per_e": 1},
        "light": light, "exposure": {"time_s": 0.01}
    })
}

#[test]
fn lux_at_the_sensor_becomes_photons_as_published() {
    // Source: REFERENCES.md §5: D65 gives 13887 photons s⁻¹ µm⁻² per lux with both integrals
    // over 380–780 nm. The model's lux integral runs over V(λ)'s whole table (360–830 nm), which
    // adds V's tails: computed here with the same function and a 380–780 photometric band
    // (checked against the reference above), the model's value must match that exactly.
    let r = eval(&lux_scenario(
        json!({"illuminance_lux": 100.0, "spectrum": {"kind": "cie_d65"}}),
    ));
    let per_lux =
        spectrum::photons_per_lux(&Spectrum::CieD65, VISIBLE, spectrum::PHOTOMETRIC_BAND_NM)
            .unwrap();
    let flux = r.light.photon_flux_per_um2_s.unwrap();
    assert_rel(flux, 100.0 * per_lux, 1e-12, "flux from 100 lx");
    // V(λ) outside 380–780 nm is below 4e-5 (REFERENCES.md §5 table): a 1e-4 effect at most.
    assert_rel(flux, 100.0 * 13887.0, 2e-4, "flux from 100 lx, D65");
    assert_rel(r.photons_per_pixel, flux * 4.0 * 0.01, 1e-12, "μp = Φ·A·t");
    assert_rel(
        r.light.sensor_illuminance_lux.unwrap(),
        100.0,
        1e-12,
        "lux round trip",
    );
}

#[test]
fn round_trips_from_lux_to_photons_and_back() {
    // Common practice, no source: the minimum detectable signal and the saturation level
    // expressed back in lux must be the lux that produce exactly those photons.
    for spectrum in ["cie_a", "cie_d65", "equal_energy"] {
        let light = json!({"illuminance_lux": 50.0, "spectrum": {"kind": spectrum}});
        let r = eval(&lux_scenario(light));
        let min_lux = r.min_detectable.light_units["illuminance_lux"];
        let again = eval(&lux_scenario(
            json!({"illuminance_lux": min_lux, "spectrum": {"kind": spectrum}}),
        ));
        assert_rel(again.signal_e, r.min_detectable.signal_e, 1e-12, spectrum);
        assert_rel(again.snr.temporal, 1.0, 1e-9, spectrum);
        let sat_lux = r.saturation.light_units["illuminance_lux"];
        let full = eval(&lux_scenario(
            json!({"illuminance_lux": sat_lux, "spectrum": {"kind": spectrum}}),
        ));
        assert_rel(full.saturation.fill_fraction, 1.0, 1e-12, spectrum);
    }
}

#[test]
fn scene_lux_through_the_lens_to_the_sensor() {
    // Source: REFERENCES.md §6: 1000 lx on a ρ = 0.18 scene through f/2.8, T = 0.9 gives
    // 5.1658 lx on the sensor; the model must report that sensor illuminance and count the
    // same photons as 5.1658 lx given at the sensor.
    let scene = eval(&lux_scenario(
        json!({"scene_illuminance_lux": 1000.0, "reflectance": 0.18,
        "spectrum": {"kind": "cie_a"}, "f_number": 2.8, "lens_transmission": 0.9}),
    ));
    let lux = scene.light.sensor_illuminance_lux.unwrap();
    assert_rel(lux, 5.1658, FIVE_DIGITS, "sensor illuminance");
    let direct = eval(&lux_scenario(
        json!({"illuminance_lux": lux, "spectrum": {"kind": "cie_a"}}),
    ));
    assert_rel(scene.signal_e, direct.signal_e, 1e-12, "same photons");
    // The faintest detectable scene, in scene lux, scales back by the camera equation.
    let scene_min = scene.min_detectable.light_units["scene_illuminance_lux"];
    let sensor_min = scene.min_detectable.light_units["illuminance_lux"];
    assert_rel(
        sensor_min / scene_min,
        5.1658 / 1000.0,
        FIVE_DIGITS,
        "scene ↔ sensor",
    );
}

#[test]
fn spectral_qe_weights_the_photons() {
    // Common practice, no source: with a flat QE curve the effective QE is that value. With a
    // curve that is 1 up to 550 nm and falls to 0 at 551 nm, an equal-energy spectrum over
    // 380–780 nm gives the photon-weighted (∝ λ) share of the band below the edge. The 1 nm
    // trapezoid is exact for the linear λ on 380–550 nm, (550² − 380²)/2 = 79 050, and gives
    // (550·1 + 551·0)/2 = 275 on the edge step; the whole band is (780² − 380²)/2 = 232 000
    // (REFERENCES.md §5 quotes the same 232 000 nm²). numpy's trapezoid on the same grid with
    // np.interp for the curve gives the same 79 325 / 232 000 = 0.3419181.
    let flat = json!([[300.0, 0.42], [1100.0, 0.42]]);
    let mut v =
        lux_scenario(json!({"irradiance_w_per_m2": 1.0, "spectrum": {"kind": "equal_energy"}}));
    v["sensor"]["quantum_efficiency_curve"] = flat;
    v["sensor"]["response_from_nm"] = json!(380);
    v["sensor"]["response_to_nm"] = json!(780);
    assert_rel(
        eval(&v).light.effective_quantum_efficiency,
        0.42,
        1e-12,
        "flat curve",
    );
    v["sensor"]["quantum_efficiency_curve"] =
        json!([[380.0, 1.0], [550.0, 1.0], [551.0, 0.0], [780.0, 0.0]]);
    let want = (79_050.0 + 275.0) / 232_000.0;
    assert_rel(
        eval(&v).light.effective_quantum_efficiency,
        want,
        1e-12,
        "step curve",
    );
}
