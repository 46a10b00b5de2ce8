//! The simulator closes the loop with the model and the measurement: `characterize`'s analysis
//! of a simulated series recovers the scenario's sensor, the test scene's patches show the
//! model's SNR, and the simulation is deterministic, shares its fixed pattern, refuses what it
//! cannot do and never panics.
//!
//! Every "truth" number is the scenario's own input (demo data, invented) or follows from it by
//! a formula of SCENARIO.md computed here; every tolerance is computed from the sampling
//! statistics of the frames, with the reasoning beside it. The distributions of the individual
//! noise sources are checked against numpy in `tests/python/test_simulate.py`.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use std::collections::HashMap;

use engine::ptc::{self, Characterization, FrameKind};
use engine::simulate::{self, FrameSize, SimulateError};
use engine::Scenario;
use proptest::prelude::*;

fn scenario(json: &str) -> Scenario {
    engine::validate::scenario_from_json(json).unwrap()
}

fn demo(name: &str) -> Scenario {
    let d = engine::demos::DEMOS
        .iter()
        .find(|d| d.name == name)
        .unwrap();
    scenario(d.json)
}

fn with(name: &str, edit: impl FnOnce(&mut serde_json::Value)) -> Scenario {
    let d = engine::demos::DEMOS
        .iter()
        .find(|d| d.name == name)
        .unwrap();
    let mut v: serde_json::Value = serde_json::from_str(d.json).unwrap();
    edit(&mut v);
    scenario(&v.to_string())
}

/// Simulate a series in memory and analyse it as `characterize` does.
fn characterize(sc: &Scenario, seed: u64, size: FrameSize) -> (simulate::Series, Characterization) {
    let s = simulate::series(sc, seed, size).unwrap();
    let m = ptc::parse_manifest(&s.manifest_json).unwrap();
    let files: HashMap<&str, &Vec<u8>> = s.files.iter().map(|(n, b)| (n.as_str(), b)).collect();
    let c = ptc::measure(
        &m,
        &mut |f| Ok(files[f.path.as_str()].clone()),
        &mut |_, _| {},
    )
    .unwrap();
    (s, c)
}

fn within(what: &str, got: f64, want: f64, tol_rel: f64) {
    let rel = (got - want).abs() / want.abs();
    assert!(
        rel <= tol_rel,
        "{what}: got {got}, truth {want}: relative error {:.3} % > tolerance {:.3} %",
        rel * 100.0,
        tol_rel * 100.0
    );
}

/// Sampling statistics of one dark-and-flat series of n pixels per frame, in the standard
/// error forms of EMVA 1288's method (REFERENCES.md §4): a variance estimated from n
/// independent samples has relative standard error √(2/n) (Var(σ̂²) = 2σ⁴/n for normal data;
/// the Poisson's excess kurtosis 1/λ adds a negligible 1/(λn)); a mean, σ/√n.
struct Sampling {
    n: f64,
}

impl Sampling {
    fn var_rel(&self) -> f64 {
        (2.0 / self.n).sqrt()
    }
}

/// The number of standard errors each tolerance allows: with the seed fixed the test is
/// deterministic, and 4σ keeps a correct simulator and analysis far inside it for any seed
/// (a two-sided normal tail of 6·10⁻⁵ per figure).
const SIGMAS: f64 = 4.0;

/// Check every figure `characterize` recovers from a simulated series of `sc`, against the
/// scenario's own keys. `dark_rate` is the dark current at the scenario's temperature and
/// `read_e` one read's read-and-reset noise, both computed by the caller from SCENARIO.md.
fn check_series(sc: &Scenario, seed: u64, size: FrameSize, dark_rate: f64, read_e: f64) {
    let (series, c) = characterize(sc, seed, size);
    let sensor = sc.sensor();
    let k = sensor.system_gain_dn_per_e;
    let p = sensor.prnu_percent / 100.0;
    let full_scale = f64::from(sensor.adc_bits).exp2() - 1.0;
    // SCENARIO.md: L = min(full_well_e, (2^bits − 1 − black)/K) for one unbinned pixel.
    let level = sensor
        .full_well_e
        .min((full_scale - sensor.black_level_dn) / k);
    let s = Sampling {
        n: f64::from(size.width) * f64::from(size.height),
    };
    let m = &c.sensor;

    // The plan states the same truth.
    let e = &series.plan.expected;
    assert_eq!(e.system_gain_dn_per_e, k);
    assert!((e.read_noise_e - read_e).abs() <= 1e-12 * read_e);
    assert!((e.full_well_e - level).abs() <= 1e-9 * level);
    assert!((e.dark_current_e_per_s - dark_rate).abs() <= 1e-12 * dark_rate);

    // K: the slope of variance against mean over ~15 log-spaced levels, each variance known to
    // √(2/n). The low levels pin the intercept near zero, so the slope is known to better
    // than one level's √(2/n) (over 8 seeds at n = 65 536 the spread was 0.24 % against
    // √(2/n) = 0.55 %); SIGMAS × √(2/n) bounds it.
    let k_rel = s.var_rel();
    within("system gain K", m.system_gain_dn_per_e, k, SIGMAS * k_rel);

    // Read noise: σ_d = √(v − 1/12)/K from one dark pair's variance v (relative SE √(2/n));
    // the square root halves it, the 1/12 DN² removed magnifies it by v/(v − 1/12); K adds
    // its own.
    let v = (k * read_e).powi(2) + 1.0 / 12.0;
    let read_rel = (0.5 * s.var_rel() * v / (v - 1.0 / 12.0)).hypot(k_rel);
    within(
        "read noise",
        m.read_noise_e.unwrap(),
        read_e,
        SIGMAS * read_rel,
    );

    // DSNU: the spatial variance of a dark pair's average (raw = K²σ²_DSNU + σ²_t/2) less the
    // temporal part σ²_t/2, with σ²_t = K²(σ_d² + dark) + 1/12; raw carries raw·√(2/(n − 1)),
    // the correction (σ²_t/2)·√(2/n). DSNU is the square root over K.
    let dark_t = c.fit.nonuniformity.dark_exposure_time_s;
    let temporal_dark = k * k * (read_e * read_e + dark_rate * dark_t) + 1.0 / 12.0;
    let dsnu_var = (k * sensor.dsnu_e).powi(2);
    let raw = dsnu_var + temporal_dark / 2.0;
    let se_dsnu_var = (raw * (2.0 / (s.n - 1.0)).sqrt()).hypot(temporal_dark / 2.0 * s.var_rel());
    let dsnu_rel = (0.5 * se_dsnu_var / dsnu_var).hypot(k_rel);
    within("DSNU", m.dsnu_e.unwrap(), sensor.dsnu_e, SIGMAS * dsnu_rel);

    // PRNU at the flat near half saturation (photo-charge c): its spatial variance less the
    // dark's, K²p²c², each corrected as above; K cancels (PRNU = √excess / mean above dark).
    let x = c.fit.nonuniformity.flat_mean_above_dark_dn.unwrap();
    let charge = x / k;
    let temporal_flat = temporal_dark + k * k * charge;
    let excess = (k * p * charge).powi(2);
    let raw_flat = excess + dsnu_var + temporal_flat / 2.0;
    let se_flat = (raw_flat * (2.0 / (s.n - 1.0)).sqrt()).hypot(temporal_flat / 2.0 * s.var_rel());
    let prnu_rel = 0.5 * se_flat.hypot(se_dsnu_var) / excess;
    within(
        "PRNU",
        m.prnu_percent.unwrap(),
        sensor.prnu_percent,
        SIGMAS * prnu_rel,
    );

    // Dark current: the slope of the dark stacks' means against exposure time. Each mean is
    // known to σ_t/√(2n) (two frames; the DSNU pattern is the same in every stack and cancels
    // in the slope), so the unweighted slope is known to σ_mean/√Σ(t − t̄)²; over K, plus K's
    // own.
    let times: Vec<f64> = series
        .plan
        .frames
        .iter()
        .filter(|f| f.kind == FrameKind::Dark)
        .step_by(2)
        .map(|f| f.exposure_time_s)
        .collect();
    let t_mean = times.iter().sum::<f64>() / times.len() as f64;
    let sxx: f64 = times.iter().map(|t| (t - t_mean).powi(2)).sum();
    let t_max = times.iter().copied().fold(0.0, f64::max);
    let sigma_mean =
        (k * k * (read_e * read_e + dark_rate * t_max) + 1.0 / 12.0).sqrt() / (2.0 * s.n).sqrt();
    let dark_se = sigma_mean / sxx.sqrt() / k;
    let dark_rel = (dark_se / dark_rate).hypot(k_rel);
    within(
        "dark current",
        m.dark_current_e_per_s.unwrap(),
        dark_rate,
        SIGMAS * dark_rel,
    );

    // QE = R/K, R the slope of the mean against photons per pixel: the means are known to a
    // fraction of a DN at hundreds of DN, so K's uncertainty is all that matters.
    within(
        "quantum efficiency",
        m.quantum_efficiency.unwrap(),
        sensor.quantum_efficiency.unwrap(),
        SIGMAS * k_rel,
    );

    // Full well: the standard's saturation capacity is the mean at the variance peak, which
    // lies below L: the variance falls once the upper tail of the pixels' charge (spread
    // σ_c = √(L + (pL)² + σ_d² + σ²_DSNU): shot, PRNU, read, DSNU) starts to clip, about 2σ_c
    // below L, and the levels there are 2 % of L apart. Below: 2 % + 4σ_c/L; above: only K's
    // uncertainty.
    let sigma_c = (level + (p * level).powi(2) + read_e * read_e + sensor.dsnu_e.powi(2)).sqrt();
    let fw = m.full_well_e.unwrap();
    let low = level * (1.0 - 0.02 - 4.0 * sigma_c / level) * (1.0 - SIGMAS * k_rel);
    let high = level * (1.0 + SIGMAS * k_rel);
    assert!(
        (low..=high).contains(&fw),
        "full well: got {fw}, expected within {low} ..= {high} (L = {level})"
    );

    // Black level: the dark line's intercept, from means of 2n values per stack: known to
    // about one stack's σ_mean (the fit over many stacks does better), plus the DSNU pattern's
    // own mean over n pixels, K·σ_DSNU/√n, which every stack shares.
    let black_se = sigma_mean.hypot(k * sensor.dsnu_e / s.n.sqrt());
    let black = m.black_level_dn.unwrap();
    assert!(
        (black - sensor.black_level_dn).abs() <= SIGMAS * black_se,
        "black level: got {black}, truth {}",
        sensor.black_level_dn
    );
    assert_eq!(m.adc_bits, Some(u8::try_from(sensor.adc_bits).unwrap()));
    assert!(
        c.fit.saturation.found,
        "saturation not found: {:?}",
        c.fit.diagnostics
    );
}

/// Dark current at temperature by SCENARIO.md's doubling law.
fn dark_at(rate: f64, temperature_c: f64, reference_c: f64, doubling_c: f64) -> f64 {
    rate * ((temperature_c - reference_c) / doubling_c).exp2()
}

/// kT/C in electrons² (SCENARIO.md; CODATA 2018 exact k and q, REFERENCES.md §1 and §2).
fn ktc_e2(capacitance_ff: f64, temperature_c: f64) -> f64 {
    let k = 1.380_649e-23;
    let q = 1.602_176_634e-19;
    k * (temperature_c + 273.15) * capacitance_ff * 1e-15 / (q * q)
}

#[test]
fn characterize_recovers_a_cds_sensor_from_its_simulated_series() {
    // 3.45 µm global-shutter demo: 12-bit, K = 0.38, σ_r = 2.3 e⁻ (CDS: no reset noise),
    // 3 e⁻/s at 25 °C doubling every 6.5 °C, simulated at 40 °C.
    let sc = demo("global-shutter-machine-vision");
    let dark = dark_at(3.0, 40.0, 25.0, 6.5);
    check_series(
        &sc,
        20_261_202,
        FrameSize::new(192, 192).unwrap(),
        dark,
        2.3,
    );
}

#[test]
fn characterize_recovers_a_dds_sensor_with_its_reset_noise() {
    // 3T demo: DDS leaves 2kT/C (C = 4.5 fF, 50 °C) beside σ_r = 6 e⁻; dark frames cannot tell
    // them apart, so the read noise characterize finds is √(σ_r² + 2kT/C) ≈ 40 e⁻.
    let sc = demo("three-transistor-no-cds");
    let read = (36.0 + 2.0 * ktc_e2(4.5, 50.0)).sqrt();
    let dark = dark_at(40.0, 50.0, 25.0, 7.0);
    check_series(&sc, 7, FrameSize::new(160, 160).unwrap(), dark, read);
}

#[test]
fn a_series_warns_where_characterize_will_not_recover_everything() {
    // 1 µm demo: K·σ_r = 0.29 DN, below half a DN.
    let codes = |sc: &Scenario| -> Vec<&'static str> {
        simulate::series_plan(sc, 1, FrameSize::new(8, 8).unwrap())
            .unwrap()
            .cautions
            .iter()
            .map(|c| c.code)
            .collect()
    };
    assert!(codes(&demo("small-pixel-rolling-shutter")).contains(&"dark_noise_below_half_dn"));
    let low_black = with("global-shutter-machine-vision", |v| {
        v["sensor"]["black_level_dn"] = serde_json::json!(1);
    });
    assert!(codes(&low_black).contains(&"darks_clip_at_zero"));
    // Dark current filling more than a tenth of the pixel at the scenario's exposure.
    let hot = with("global-shutter-machine-vision", |v| {
        v["sensor"]["dark_current_e_per_s"] = serde_json::json!(1e6);
    });
    let plan = simulate::series_plan(&hot, 1, FrameSize::new(8, 8).unwrap()).unwrap();
    assert!(plan.cautions.iter().any(|c| c.code == "exposure_shortened"));
    assert!(plan.longest_flat_exposure_s < hot.exposure().time_s);
    let none = with("global-shutter-machine-vision", |v| {
        v["sensor"]["dark_current_e_per_s"] = serde_json::json!(0);
    });
    assert!(codes(&none).contains(&"no_dark_current"));
    assert!(codes(&demo("global-shutter-machine-vision")).is_empty());
}

#[test]
fn the_series_plan_spans_a_few_electrons_to_past_saturation() {
    let sc = demo("global-shutter-machine-vision");
    let plan = simulate::series_plan(&sc, 1, FrameSize::new(8, 8).unwrap()).unwrap();
    let flats: Vec<&simulate::SeriesFrame> = plan
        .frames
        .iter()
        .filter(|f| f.kind == FrameKind::Flat)
        .collect();
    let level = 10_500.0;
    let lowest = flats
        .iter()
        .map(|f| f.signal_e)
        .fold(f64::INFINITY, f64::min);
    let highest = flats
        .iter()
        .map(|f| f.signal_e + f.dark_e)
        .fold(0.0, f64::max);
    // L/2000 = 5.25 e⁻ (SCENARIO.md's L; the plan's rule in series.rs).
    assert!((lowest - 5.25).abs() < 1e-9, "{lowest}");
    assert!((highest - 1.2 * level).abs() < 1e-6 * level, "{highest}");
    // Every flat exposure has its dark pair; three long dark pairs follow.
    for f in &flats {
        let darks = plan
            .frames
            .iter()
            .filter(|d| d.kind == FrameKind::Dark && d.exposure_time_s == f.exposure_time_s)
            .count();
        assert_eq!(darks, 2);
    }
    let longest = plan
        .frames
        .iter()
        .map(|f| f.exposure_time_s)
        .fold(0.0, f64::max);
    assert!((longest - 64.0 * sc.exposure().time_s).abs() < 1e-15);
    assert_eq!(plan.frames.len(), 2 * 2 * 30 + 2 * 3);
    // Photons per pixel are the flats' electrons over the QE (0.64).
    for f in flats {
        assert!((f.photons_per_pixel.unwrap() * 0.64 - f.signal_e).abs() < 1e-9 * f.signal_e);
    }
}

#[test]
fn an_8_bit_series_is_written_one_byte_a_sample() {
    let sc = with("global-shutter-machine-vision", |v| {
        v["sensor"]["adc_bits"] = serde_json::json!(8);
        v["sensor"]["black_level_dn"] = serde_json::json!(10);
    });
    let s = simulate::series(&sc, 3, FrameSize::new(5, 4).unwrap()).unwrap();
    let (_, bytes) = &s.files[0];
    assert!(bytes.starts_with(b"P5\n5 4\n255\n"));
    assert_eq!(bytes.len(), b"P5\n5 4\n255\n".len() + 20);
    let f = engine::frames::decode(bytes, None).unwrap();
    assert_eq!(f.significant_bits(), Some(8));
}

/// Each unsaturated patch of the test scene: the SNR measured on one frame (mean above the
/// dark patch over the spatial standard deviation) against the model's total SNR at the
/// patch's light. Sampling error of Ŝ/σ̂ from n pixels: σ̂ carries 1/√(2(n − 1)) relative
/// (normal data), the two means σ/√n and σ₀/√n₀ against a signal S; the model's own
/// figures give σ, σ₀ and S, so the tolerance does not use the frame's own statistics.
fn check_patches(sc: &Scenario, seed: u64, size: FrameSize) -> usize {
    let f = simulate::frame(sc, seed, size).unwrap();
    let report = engine::evaluate(sc);
    let k = sc.sensor().system_gain_dn_per_e;
    let b2 = f64::from(sc.exposure().binning).powi(2);
    let capacity_out = b2 * report.saturation.level_e;
    let dark = f.patches[0].model.clone().unwrap();
    let dark_n = f.patches[0].measured.as_ref().unwrap().pixels as f64;
    let mut checked = 0;
    for p in &f.patches[1..] {
        let model = p.model.as_ref().unwrap();
        let measured = p.measured.as_ref().unwrap();
        let total_e = model.noise_total_e;
        // Far from clipping: the mean charge plus 5 σ below the output's capacity.
        let charge = model.signal_e + report.dark_e + report.background_e;
        if charge + 5.0 * total_e > capacity_out {
            continue;
        }
        // Quantization noise follows 1/(12K²) only above about half a DN (EMVA 1288).
        if k * total_e < 0.5 {
            continue;
        }
        let n = measured.pixels as f64;
        let s_dn = k * model.signal_e;
        let sd = k * total_e;
        let sd0 = k * dark.noise_total_e;
        let rel =
            (1.0 / (2.0 * (n - 1.0)) + (sd * sd / n + sd0 * sd0 / dark_n) / (s_dn * s_dn)).sqrt();
        let got = measured.snr.unwrap();
        let want = model.snr_total;
        assert!(
            (got - want).abs() <= SIGMAS * rel * want,
            "patch ×{}: measured SNR {got}, model {want} (tolerance {:.2} %)",
            p.light_factor,
            SIGMAS * rel * 100.0
        );
        // The engine's own stated uncertainty is of the same size.
        let u = measured.snr_uncertainty.unwrap();
        assert!(
            (u / (rel * want) - 1.0).abs() < 0.2,
            "{u} against {}",
            rel * want
        );
        // And the mean sits where the model puts it: σ/√n.
        assert!((measured.mean_dn - model.mean_dn).abs() <= SIGMAS * sd / n.sqrt() + 0.01);
        checked += 1;
    }
    checked
}

#[test]
fn the_test_scene_patches_show_the_models_snr() {
    let size = FrameSize::new(480, 320).unwrap();
    // Unbinned, 12-bit, CDS.
    assert!(check_patches(&demo("global-shutter-machine-vision"), 11, size) >= 8);
    // Reset noise (DDS), large DSNU and PRNU.
    assert!(check_patches(&demo("three-transistor-no-cds"), 12, size) >= 6);
    // Charge binning 2 × 2 with a summing well and 4 frames averaged, 16-bit.
    let small = FrameSize::new(240, 160).unwrap();
    assert!(check_patches(&demo("cooled-scientific"), 13, small) >= 6);
    // Digital binning 2 × 2 with PRNU large enough to dominate at the top.
    let digital = with("small-pixel-rolling-shutter", |v| {
        v["sensor"]["prnu_percent"] = serde_json::json!(3.0);
        v["sensor"]["system_gain_dn_per_e"] = serde_json::json!(0.9);
        v["sensor"]["adc_bits"] = serde_json::json!(12);
    });
    assert!(check_patches(&digital, 14, size) >= 6);
    // Background light (daylight beside an 850 nm illuminator).
    assert!(check_patches(&demo("nir-illuminator-daylight"), 15, size) >= 6);
}

#[test]
fn saturated_patches_clip_where_the_model_says() {
    let sc = with("global-shutter-machine-vision", |v| {
        v["light"] = serde_json::json!({"photons_per_pixel": 9000});
    });
    let f = simulate::frame(&sc, 2, FrameSize::new(120, 80).unwrap()).unwrap();
    // 9000 photons × 0.64 = 5760 e⁻: ×2 (11 520 e⁻) and ×4 exceed the full well of 10 500 e⁻.
    for p in &f.patches {
        let m = p.model.as_ref().unwrap();
        let measured = p.measured.as_ref().unwrap();
        if p.light_factor >= 2.0 {
            assert!(m.saturated);
            // Every pixel at the full well: 60 + 0.38 × 10 500 (plus DSNU and read noise)
            // → 4050 DN ± a few.
            assert!(
                (measured.mean_dn - 4050.0).abs() < 3.0,
                "{}",
                measured.mean_dn
            );
        } else {
            assert!(!m.saturated);
        }
    }
}

#[test]
fn a_frame_cautions_where_the_model_approximates() {
    let codes = |sc: &Scenario| -> Vec<&'static str> {
        let f = simulate::frame(sc, 1, FrameSize::new(12, 8).unwrap()).unwrap();
        f.cautions.iter().map(|c| c.code).collect()
    };
    assert!(codes(&demo("global-shutter-machine-vision")).is_empty());
    // 1 µm demo: K·σ = 0.22 × 1.3 = 0.29 DN per read.
    assert_eq!(
        codes(&demo("small-pixel-rolling-shutter")),
        ["quantization_regime"]
    );
    let photon_counting = with("global-shutter-machine-vision", |v| {
        v["sensor"]["read_noise_e"] = serde_json::json!(0.3);
        v["sensor"]["system_gain_dn_per_e"] = serde_json::json!(5.0);
        v["sensor"]["prnu_percent"] = serde_json::json!(25.0);
        v["sensor"]["adc_bits"] = serde_json::json!(16);
    });
    assert_eq!(
        codes(&photon_counting),
        ["prnu_gain_clipped", "sub_electron_read_noise"]
    );
}

#[test]
fn no_light_scales_the_scene_to_the_detection_limit() {
    let sc = with("global-shutter-machine-vision", |v| {
        v["light"] = serde_json::json!({"photons_per_pixel": 0});
    });
    let f = simulate::frame(&sc, 2, FrameSize::new(60, 40).unwrap()).unwrap();
    assert_eq!(f.reference, simulate::ReferenceLevel::MinimumDetectable);
    let report = engine::evaluate(&sc);
    assert!((f.reference_signal_e - report.min_detectable.signal_e).abs() < 1e-12);
    assert!(f
        .cautions
        .iter()
        .any(|c| c.code == "reference_is_detection_limit"));
    // The reference patch's model SNR is then the threshold (5): the definition of the
    // minimum detectable signal.
    let reference = f.patches.iter().find(|p| p.light_factor == 1.0).unwrap();
    let snr = reference.model.as_ref().unwrap().snr_temporal;
    assert!((snr - 5.0).abs() < 1e-9, "{snr}");
}

#[test]
fn a_seed_fixes_the_frame_and_the_fixed_pattern_is_shared() {
    let sc = demo("global-shutter-machine-vision");
    let size = FrameSize::new(64, 48).unwrap();
    let a = simulate::frame(&sc, 9, size).unwrap();
    assert_eq!(
        a.values_dn,
        simulate::frame(&sc, 9, size).unwrap().values_dn
    );
    assert_ne!(
        a.values_dn,
        simulate::frame(&sc, 10, size).unwrap().values_dn
    );

    // A series frame's rows do not depend on the frame's width (streams per row, drawn left
    // to right): a narrow series is the left part of a wide one.
    let narrow = simulate::series_plan(&sc, 9, FrameSize::new(16, 4).unwrap()).unwrap();
    let wide = simulate::series_plan(&sc, 9, FrameSize::new(40, 4).unwrap()).unwrap();
    let (n, w) = (
        narrow.render_samples(33).unwrap(),
        wide.render_samples(33).unwrap(),
    );
    for y in 0..4 {
        assert_eq!(n[y * 16..y * 16 + 16], w[y * 40..y * 40 + 16]);
    }

    // The frames of a series share one PRNU map: at two bright levels the pixels' deviations
    // from their frame's mean correlate (PRNU 0.6 % of 6000 e⁻ = 36 e⁻ against shot noise of
    // 77 e⁻ in one frame: correlation about 36²/(36² + 77²) ≈ 0.18 between single frames),
    // while two dark frames' temporal noise does not.
    let plan = simulate::series_plan(&sc, 9, FrameSize::new(128, 128).unwrap()).unwrap();
    let bright: Vec<usize> = plan
        .frames
        .iter()
        .enumerate()
        .filter(|(_, f)| f.kind == FrameKind::Flat && (0.5..0.8).contains(&(f.signal_e / 10_500.0)))
        .map(|(i, _)| i)
        .collect();
    let corr = |i: usize, j: usize| -> f64 {
        let a: Vec<f64> = plan
            .render_samples(i)
            .unwrap()
            .iter()
            .map(|v| f64::from(*v))
            .collect();
        let b: Vec<f64> = plan
            .render_samples(j)
            .unwrap()
            .iter()
            .map(|v| f64::from(*v))
            .collect();
        let (ma, mb) = (
            a.iter().sum::<f64>() / a.len() as f64,
            b.iter().sum::<f64>() / b.len() as f64,
        );
        let cov: f64 = a.iter().zip(&b).map(|(x, y)| (x - ma) * (y - mb)).sum();
        let va: f64 = a.iter().map(|x| (x - ma).powi(2)).sum();
        let vb: f64 = b.iter().map(|y| (y - mb).powi(2)).sum();
        cov / (va * vb).sqrt()
    };
    let r = corr(bright[0], *bright.last().unwrap());
    // n = 16 384 pixels: a correlation's standard error is about 1/√n = 0.008.
    assert!(r > 0.1, "bright frames' correlation {r}");
    // Frames 0 and 1 are the first dark pair: DSNU 0.9 e⁻ against 2.3 e⁻ read noise
    // correlates them by 0.81/(0.81 + 5.29 + 1/(12·0.38²)) ≈ 0.12; with DSNU off, by nothing.
    let no_dsnu = with("global-shutter-machine-vision", |v| {
        v["sensor"]["dsnu_e"] = serde_json::json!(0);
    });
    let plan = simulate::series_plan(&no_dsnu, 9, FrameSize::new(128, 128).unwrap()).unwrap();
    let a: Vec<f64> = plan
        .render_samples(0)
        .unwrap()
        .iter()
        .map(|v| f64::from(*v))
        .collect();
    let b: Vec<f64> = plan
        .render_samples(1)
        .unwrap()
        .iter()
        .map(|v| f64::from(*v))
        .collect();
    let (ma, mb) = (
        a.iter().sum::<f64>() / a.len() as f64,
        b.iter().sum::<f64>() / b.len() as f64,
    );
    let cov: f64 = a.iter().zip(&b).map(|(x, y)| (x - ma) * (y - mb)).sum();
    let va: f64 = a.iter().map(|x| (x - ma).powi(2)).sum();
    let vb: f64 = b.iter().map(|y| (y - mb).powi(2)).sum();
    assert!(
        (cov / (va * vb).sqrt()).abs() < 0.04,
        "dark frames correlate"
    );
}

#[test]
fn what_cannot_be_simulated_is_refused_by_name() {
    assert!(matches!(
        FrameSize::new(0, 5),
        Err(SimulateError::NoPixels { .. })
    ));
    assert!(matches!(
        FrameSize::new(65_536, 65_536),
        Err(SimulateError::TooManyPixels { .. })
    ));
    let averaged = with("global-shutter-machine-vision", |v| {
        v["exposure"]["frames_averaged"] = serde_json::json!(1000);
    });
    let e = simulate::frame(&averaged, 1, FrameSize::new(1000, 1000).unwrap()).unwrap_err();
    assert!(matches!(
        e,
        SimulateError::TooMuchWork {
            reads: 1_000_000_000,
            ..
        }
    ));
    assert!(e
        .to_string()
        .starts_with("size: 1000000 output pixels × binning 1² × 1000 frames"));
    let wide = with("global-shutter-machine-vision", |v| {
        v["sensor"]["adc_bits"] = serde_json::json!(20);
    });
    let e = simulate::series_plan(&wide, 1, FrameSize::new(8, 8).unwrap()).unwrap_err();
    assert_eq!(
        e.to_string(),
        "sensor.adc_bits: a series is written as 16-bit PGM, which holds at most 16 bits, got 20"
    );
    // The frame itself has no such limit: a 20-bit output is scaled down into 16 bits.
    let f = simulate::frame(&wide, 1, FrameSize::new(8, 8).unwrap()).unwrap();
    let s = f.to_16_bit();
    assert_eq!(s.scale_log2, -5);
    assert!(
        !s.exact,
        "a 20-bit output cannot be held exactly in 16 bits"
    );
    // Nor can 4 averaged frames of a 16-bit ADC (quarter-DN steps at scale 1).
    let averaged = with("cooled-scientific", |_| {});
    let f = simulate::frame(&averaged, 1, FrameSize::new(24, 16).unwrap()).unwrap();
    assert!(!f.to_16_bit().exact);
}

#[test]
fn sixteen_bit_samples_and_the_display_follow_their_stated_rules() {
    let sc = demo("global-shutter-machine-vision");
    let f = simulate::frame(&sc, 4, FrameSize::new(48, 32).unwrap()).unwrap();
    let s = f.to_16_bit();
    // 12-bit: full scale 4095 × 16 = 65 520 ≤ 65 535, × 32 would not fit.
    assert_eq!((s.scale, s.scale_log2, s.exact), (16.0, 4, true));
    for (v, q) in f.values_dn.iter().zip(&s.samples) {
        assert_eq!(f64::from(*q), v * 16.0);
    }
    let d = f.display_8_bit();
    let m = f.display;
    for (v, byte) in f.values_dn.iter().zip(&d) {
        let lin = ((v - m.dark_dn) / (m.white_dn - m.dark_dn)).clamp(0.0, 1.0);
        assert_eq!(f64::from(*byte), (255.0 * lin.powf(1.0 / 2.2)).round());
    }
    // Dark: black level 60 DN plus 0.38 × the model's dark charge; white: 60 + 0.38 × 10 500.
    let report = engine::evaluate(&sc);
    assert!((m.dark_dn - (60.0 + 0.38 * report.dark_e)).abs() < 1e-9);
    assert!((m.white_dn - (60.0 + 0.38 * 10_500.0)).abs() < 1e-9);
}

/// A valid scenario from a random corner of the format's ranges, as JSON.
fn any_scenario() -> impl Strategy<Value = String> {
    (
        (
            prop_oneof![Just(1.0), 1e-3..1e12f64],
            0.0..1e3f64,
            prop_oneof![Just("cds"), Just("dds"), Just("single")],
            prop_oneof![Just(0.0), 0.0..1e9f64],
            0.0..100.0f64,
            0.0..1e3f64,
        ),
        (
            1u32..=32,
            prop_oneof![1e-9..1e-3f64, 1e-3..10.0f64, 10.0..1e9f64],
            0.0..1.0f64,
            prop_oneof![Just(0.0), 0.0..1e15f64],
            1u32..=4,
            prop_oneof![Just("charge"), Just("digital")],
            1u32..=3,
            prop_oneof![Just(None), (1.0..1e15f64).prop_map(Some)],
        ),
    )
        .prop_map(
            |(
                (full_well, read, readout, dark, prnu, dsnu),
                (bits, gain, black_share, photons, binning, mode, frames, summing),
            )| {
                let full_scale = f64::from(bits).exp2() - 1.0;
                let mut s = serde_json::json!({
                    "version": 1,
                    "sensor": {
                        "pixel_pitch_um": 3.0, "quantum_efficiency": 0.5,
                        "full_well_e": full_well, "read_noise_e": read, "readout": readout,
                        "sense_node_capacitance_ff": 2.0,
                        "dark_current_e_per_s": dark, "dsnu_e": dsnu, "prnu_percent": prnu,
                        "adc_bits": bits, "system_gain_dn_per_e": gain,
                        "black_level_dn": (black_share * full_scale).floor()
                    },
                    "light": {"photons_per_pixel": photons},
                    "exposure": {"time_s": 0.01, "frames_averaged": frames, "binning": binning,
                                 "binning_mode": mode}
                });
                if let Some(w) = summing {
                    s["sensor"]["summing_well_e"] = serde_json::json!(w);
                }
                s.to_string()
            },
        )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    /// For any valid scenario: a frame and a series are made without panicking, every value
    /// is a finite DN within the output's range, and every figure is finite or absent.
    #[test]
    fn any_valid_scenario_simulates_without_panic(json in any_scenario(), seed in any::<u64>()) {
        let sc = match engine::validate::scenario_from_json(&json) {
            Ok(sc) => sc,
            Err(_) => return Ok(()), // a corner the validator refuses (e.g. dark over limits)
        };
        let f = simulate::frame(&sc, seed, FrameSize::new(13, 7).unwrap()).unwrap();
        prop_assert!(f.values_dn.iter().all(|v| v.is_finite() && *v >= 0.0 && *v <= f.output_full_scale_dn));
        let s = f.to_16_bit();
        prop_assert_eq!(s.samples.len(), 13 * 7);
        prop_assert_eq!(f.display_8_bit().len(), 13 * 7);
        for p in &f.patches {
            if let Some(m) = &p.measured {
                prop_assert!(m.mean_dn.is_finite() && m.noise_dn.is_finite());
                prop_assert!(m.snr.is_none_or(f64::is_finite));
            }
        }
        prop_assert!(serde_json::to_string(&f).is_ok());
        if sc.sensor().adc_bits <= 16 {
            let plan = simulate::series_plan(&sc, seed, FrameSize::new(3, 2).unwrap()).unwrap();
            prop_assert!(plan.frames.iter().all(|f| f.exposure_time_s.is_finite() && f.exposure_time_s > 0.0));
            let m = ptc::parse_manifest(&plan.manifest_json());
            prop_assert!(m.is_ok(), "{:?}", m.err());
            let pgm = plan.render_pgm(plan.frames.len() - 1).unwrap();
            prop_assert!(engine::frames::decode(&pgm, None).is_ok());
        } else {
            prop_assert!(simulate::series_plan(&sc, seed, FrameSize::new(3, 2).unwrap()).is_err());
        }
    }
}

/// Every stack accumulated with its spatial summaries, then analysed: the one-pass reference
/// for `ptc::measure`, which summarises short stacks only when the analysis uses them.
fn characterize_in_one_pass(s: &simulate::Series) -> Characterization {
    let m = ptc::parse_manifest(&s.manifest_json).unwrap();
    let files: HashMap<&str, &Vec<u8>> = s.files.iter().map(|(n, b)| (n.as_str(), b)).collect();
    let stats: Vec<ptc::StackStats> = m
        .stacks
        .iter()
        .map(|stack| {
            let first = &stack[0];
            let spec = ptc::StackSpec {
                kind: first.kind,
                exposure_time_s: first.exposure_time_s,
                level: first.level.clone(),
                photons_per_pixel: first.photons_per_pixel,
                frames: stack.len() as u32,
            };
            let mut acc = ptc::StackAccumulator::with_cfa(spec, m.roi, m.cfa).unwrap();
            for f in stack {
                let mut file = engine::frames::FrameFile::default();
                *file.bytes_mut() = files[f.path.as_str()].clone();
                file.decode(f.raw).unwrap();
                acc.push_file(&mut file).unwrap();
            }
            acc.finish().unwrap()
        })
        .collect();
    let options = ptc::AnalysisOptions {
        cfa: m.cfa,
        significant_bits: m.significant_bits,
    };
    ptc::analyse_with(&stats, options).unwrap()
}

#[test]
fn summarising_only_the_stacks_used_changes_no_figure_and_reads_few_files_twice() {
    // The simulated series is darks and flat pairs (short stacks). `ptc::measure` leaves their
    // spatial summaries out, then reads again only the dark and the PRNU flat stack the spatial
    // report uses: every figure, the spatial report included, must equal the one-pass analysis
    // that summarises every stack (an identity, not a tolerance), for a mono and a colour
    // sensor.
    for sc in [
        demo("global-shutter-machine-vision"),
        demo("colour-machine-vision"),
    ] {
        let s = simulate::series(&sc, 11, FrameSize::new(64, 48).unwrap()).unwrap();
        let m = ptc::parse_manifest(&s.manifest_json).unwrap();
        let files: HashMap<&str, &Vec<u8>> = s.files.iter().map(|(n, b)| (n.as_str(), b)).collect();
        let mut reads = 0usize;
        let c = ptc::measure(
            &m,
            &mut |f| {
                reads += 1;
                Ok(files[f.path.as_str()].clone())
            },
            &mut |_, _| {},
        )
        .unwrap();
        let reference = characterize_in_one_pass(&s);
        assert_eq!(c, reference, "{}", sc.title().unwrap_or_default());
        assert!(c.fit.spatial.is_some() || !c.channels.is_empty());
        let longest_short = m
            .stacks
            .iter()
            .map(Vec::len)
            .filter(|l| *l < 4)
            .max()
            .unwrap_or(0);
        let extra = reads - s.files.len();
        assert!(
            extra > 0,
            "the series has short stacks whose summaries are read again"
        );
        assert!(
            extra <= 2 * 4 * longest_short,
            "{extra} files read again of {}",
            s.files.len()
        );
        assert!(extra < s.files.len() / 4, "{extra} of {}", s.files.len());
    }
}
