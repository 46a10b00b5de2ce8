//! Photon transfer analysis recovers a simulated camera: frames drawn from the Poisson–Gaussian
//! pixel model with a chosen truth, decoded and reduced as real files would be.
//!
//! Every "truth" number here is the test's own invented camera (marked so); every tolerance is a
//! named constant whose reason comes from the sampling statistics of the frames. This file does
//! not check published values (see `ptc_reference.rs`) or malformed files (`frames_malformed.rs`).

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use engine::frames::Frame;
use engine::ptc::{analyse, Characterization, FrameKind, StackAccumulator, StackSpec, StackStats};
use rand::rngs::StdRng;
use rand::SeedableRng;
use rand_distr::{Distribution, Normal, Poisson};

/// Frame size: 256 × 256 = 65 536 pixels. With n pixels a pair-difference variance has a
/// relative standard uncertainty of √(2/n) = 0.55 % (Var(σ̂²) = 2σ⁴/n for Gaussian noise).
const WIDTH: u32 = 256;
const HEIGHT: u32 = 256;

/// K, σ_d, QE and the non-uniformities depend on the gain fit, whose points each carry 0.55 %
/// (above); the slope from five or more such points is known to about 0.5 %, and the engine's
/// own reported uncertainty is checked separately. 2.5 % is about 5 standard uncertainties: a
/// sound seed-independent bound, with the seed fixed anyway.
const GAIN_REL_TOL: f64 = 0.025;
/// σ_d = √(σ²_dark − 1/12)/K: the dark variance from 2 pairs carries √(2/(2n)) = 0.39 %
/// (0.2 % on σ_d), added to K's 0.5 %; 3 % is about 5 standard uncertainties.
const READ_NOISE_REL_TOL: f64 = 0.03;
/// DSNU = s_dark/K and PRNU: the realised fixed pattern's sample variance differs from the
/// chosen population value by √(2/n) = 0.55 % (0.28 % on s), the temporal correction adds about
/// as much, and K adds 0.5 %; 4 % is about 5 combined standard uncertainties.
const NONUNIFORMITY_REL_TOL: f64 = 0.04;
/// Dark current from the slope of the dark mean over 0.01–1 s: each stack mean is known to
/// σ/√(nL) ≈ 0.01 DN against a 25 DN rise, so K's 0.5 % dominates; 3 % ≈ 5 σ.
const DARK_CURRENT_REL_TOL: f64 = 0.03;
/// QE = R/K: R from means (known to 0.01 DN in hundreds) is exact to < 0.1 %, so K dominates.
const QE_REL_TOL: f64 = 0.03;
/// The saturation is located only to the spacing of the levels near it (5 % of full well
/// here): the variance peaks at the last level before pixels start clipping, i.e. between
/// 90 % and 100 % of the true capacity; plus K's 0.5 %.
const FULL_WELL_BELOW_TOL: f64 = 0.11;
const FULL_WELL_ABOVE_TOL: f64 = 0.02;
/// The simulated camera is exactly linear below clipping; the means are known to ~0.01 DN at
/// hundreds to thousands of DN (< 0.01 %), so any linearity error above 0.2 % is a defect.
const LINEARITY_MAX_PERCENT: f64 = 0.2;
/// The black level is the dark mean at zero exposure, known to ~0.01 DN (above); 0.1 DN.
const BLACK_LEVEL_ABS_TOL_DN: f64 = 0.1;

/// An invented camera: the test's chosen truth.
#[derive(Clone, Copy)]
struct Truth {
    gain_dn_per_e: f64,
    read_noise_e: f64,
    offset_dn: f64,
    full_well_e: f64,
    dark_current_e_per_s: f64,
    dsnu_e: f64,
    prnu_percent: f64,
    quantum_efficiency: f64,
    adc_max_dn: u16,
}

/// A simulated sensor: its fixed patterns, drawn once, and a seeded generator.
struct Camera {
    truth: Truth,
    prnu_gain: Vec<f64>,
    dsnu_offset_e: Vec<f64>,
    rng: StdRng,
}

impl Camera {
    fn new(truth: Truth, seed: u64) -> Self {
        let mut rng = StdRng::seed_from_u64(seed);
        let n = (WIDTH * HEIGHT) as usize;
        let unit = Normal::new(0.0, 1.0).unwrap();
        let prnu_gain = (0..n)
            .map(|_| 1.0 + truth.prnu_percent / 100.0 * unit.sample(&mut rng))
            .collect();
        let dsnu_offset_e = (0..n)
            .map(|_| truth.dsnu_e * unit.sample(&mut rng))
            .collect();
        Camera {
            truth,
            prnu_gain,
            dsnu_offset_e,
            rng,
        }
    }

    /// One frame: photo-electrons Poisson(η μ_p (1 + PRNU)), dark electrons Poisson(I t), the
    /// charge clipped at full well, plus the pixel's DSNU offset and Gaussian read noise, times
    /// K, plus the offset, rounded and clipped to the ADC range (REFERENCES.md §8
    /// Poisson–Gaussian model; EMVA 1288 linear model §4 items 2–3).
    fn frame(&mut self, photons_per_pixel: f64, exposure_time_s: f64) -> Frame {
        let t = self.truth;
        let read = Normal::new(0.0, t.read_noise_e).unwrap();
        let dark_mean = t.dark_current_e_per_s * exposure_time_s;
        let dark = (dark_mean > 0.0).then(|| Poisson::new(dark_mean).unwrap());
        let mut px = Vec::with_capacity(self.prnu_gain.len());
        for (g, o) in self.prnu_gain.iter().zip(&self.dsnu_offset_e) {
            let lambda = t.quantum_efficiency * photons_per_pixel * g;
            let photo: f64 = if lambda > 0.0 {
                Poisson::new(lambda).unwrap().sample(&mut self.rng)
            } else {
                0.0
            };
            let d: f64 = dark.as_ref().map_or(0.0, |p| p.sample(&mut self.rng));
            let charge = (photo + d).min(t.full_well_e);
            let e = charge + o + read.sample(&mut self.rng);
            let y = (t.offset_dn + t.gain_dn_per_e * e).round();
            px.push(y.clamp(0.0, f64::from(t.adc_max_dn)) as u16);
        }
        Frame::new(WIDTH, HEIGHT, 16, px).unwrap()
    }

    /// A stack of `frames` frames, reduced as the command reduces files: one at a time.
    fn stack(
        &mut self,
        kind: FrameKind,
        exposure_time_s: f64,
        photons_per_pixel: Option<f64>,
        level: Option<&str>,
        frames: u32,
    ) -> StackStats {
        let spec = StackSpec {
            kind,
            exposure_time_s,
            level: level.map(String::from),
            photons_per_pixel,
            frames,
        };
        let mut acc = StackAccumulator::new(spec, None).unwrap();
        for _ in 0..frames {
            let f = self.frame(photons_per_pixel.unwrap_or(0.0), exposure_time_s);
            acc.push(f).unwrap();
        }
        acc.finish().unwrap()
    }
}

fn rel(got: f64, want: f64) -> f64 {
    ((got - want) / want).abs()
}

fn check_rel(what: &str, got: Option<f64>, want: f64, tol: f64) {
    let got = got.unwrap_or_else(|| panic!("{what}: not measured"));
    assert!(
        rel(got, want) <= tol,
        "{what}: got {got}, truth {want} (relative error {:.3} % > {:.1} %)",
        rel(got, want) * 100.0,
        tol * 100.0
    );
}

fn codes(c: &Characterization) -> Vec<&'static str> {
    c.fit.diagnostics.iter().map(|d| d.code).collect()
}

/// The test's chosen truth: a 16-bit camera with a large offset (30 000 DN), so precision
/// lost to the offset would show.
const CAMERA_A: Truth = Truth {
    gain_dn_per_e: 0.5,
    read_noise_e: 3.0,
    offset_dn: 30_000.0,
    full_well_e: 20_000.0,
    dark_current_e_per_s: 50.0,
    dsnu_e: 2.0,
    prnu_percent: 1.0,
    quantum_efficiency: 0.6,
    adc_max_dn: u16::MAX,
};

#[test]
fn recovers_a_simulated_camera_from_a_light_series() {
    let t = CAMERA_A;
    let mut cam = Camera::new(t, 20_261_201);
    let exposure = 0.01;
    let mut stacks = vec![
        cam.stack(FrameKind::Dark, exposure, None, None, 4),
        cam.stack(FrameKind::Dark, 0.5, None, None, 4),
        cam.stack(FrameKind::Dark, 1.0, None, None, 4),
    ];
    // Light levels as fractions of full well, 5 % apart near saturation (chosen).
    let fractions = [
        0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.85, 0.9, 0.95, 1.0, 1.05, 1.1, 1.2,
    ];
    for (i, f) in fractions.iter().enumerate() {
        let photons = f * t.full_well_e / t.quantum_efficiency;
        let label = format!("L{i:02}");
        stacks.push(cam.stack(FrameKind::Flat, exposure, Some(photons), Some(&label), 2));
    }
    let c = analyse(&stacks).unwrap();
    let s = &c.sensor;
    check_rel(
        "K",
        Some(s.system_gain_dn_per_e),
        t.gain_dn_per_e,
        GAIN_REL_TOL,
    );
    // The engine's own uncertainty must cover its error (4 standard uncertainties).
    let u = c.fit.system_gain.standard_uncertainty_dn_per_e.unwrap();
    assert!(
        (s.system_gain_dn_per_e - t.gain_dn_per_e).abs() <= 4.0 * u,
        "K {} ± {u} vs truth {}",
        s.system_gain_dn_per_e,
        t.gain_dn_per_e
    );
    assert!(
        u / t.gain_dn_per_e < 0.02,
        "uncertainty {u} implausibly large"
    );
    check_rel(
        "read noise",
        s.read_noise_e,
        t.read_noise_e,
        READ_NOISE_REL_TOL,
    );
    assert!(!c.fit.read_noise.upper_bound_only);
    check_rel(
        "dark current",
        s.dark_current_e_per_s,
        t.dark_current_e_per_s,
        DARK_CURRENT_REL_TOL,
    );
    check_rel("DSNU", s.dsnu_e, t.dsnu_e, NONUNIFORMITY_REL_TOL);
    check_rel(
        "PRNU",
        s.prnu_percent,
        t.prnu_percent,
        NONUNIFORMITY_REL_TOL,
    );
    check_rel("QE", s.quantum_efficiency, t.quantum_efficiency, QE_REL_TOL);
    let fw = s.full_well_e.expect("saturation found");
    assert!(
        fw >= t.full_well_e * (1.0 - FULL_WELL_BELOW_TOL)
            && fw <= t.full_well_e * (1.0 + FULL_WELL_ABOVE_TOL),
        "full well {fw} vs truth {}",
        t.full_well_e
    );
    assert!(c.fit.saturation.found);
    let le = c.fit.linearity.as_ref().expect("linearity measured");
    assert_eq!(le.abscissa, "photons_per_pixel");
    assert!(
        le.error_percent < LINEARITY_MAX_PERCENT,
        "LE {}",
        le.error_percent
    );
    let black = s.black_level_dn.unwrap();
    assert!(
        (black - t.offset_dn).abs() < BLACK_LEVEL_ABS_TOL_DN,
        "black level {black}"
    );
    // Only levels below 70 % of the saturation mean enter the gain fit.
    let sat = c.fit.saturation.mean_above_dark_dn;
    for p in c.fit.points.iter().filter(|p| p.used_in_gain_fit) {
        assert!(p.mean_above_dark_dn.unwrap() <= 0.7 * sat);
    }
    assert!(c.fit.points.iter().filter(|p| p.used_in_gain_fit).count() >= 5);
    // Odd samples and clipped pixels at 65 535: 16-bit data, as the samples show (the camera's
    // ADC range, adc_max_dn, is 2^16 − 1 here).
    assert_eq!(s.adc_bits, Some(16), "the samples use all 16 bits");
    assert!(
        !codes(&c).contains(&"saturation_not_reached"),
        "{:?}",
        codes(&c)
    );
}

/// The page reads the worker's curve and spatial series back from JSON by hand
/// (`curve_series_from_json`, `spatial_series_from_json`, to keep serde's derived deserializers
/// out of the wasm): they give what serde's derived `Deserialize` gives, value for value.
#[test]
fn series_read_back_from_json_by_hand_equal_serde() {
    let t = CAMERA_A;
    let mut cam = Camera::new(t, 20_261_204);
    let mut stacks = vec![cam.stack(FrameKind::Dark, 0.01, None, None, 2)];
    for (i, f) in [0.1, 0.3, 0.5, 0.7, 0.9, 1.1].iter().enumerate() {
        let photons = f * t.full_well_e / t.quantum_efficiency;
        let label = format!("L{i}");
        stacks.push(cam.stack(FrameKind::Flat, 0.01, Some(photons), Some(&label), 2));
    }
    let c = analyse(&stacks).unwrap();
    let curve = engine::ptc::curve_series(&c, 40);
    let json = serde_json::to_value(&curve).unwrap();
    let by_serde: engine::ptc::CurveSeries = serde_json::from_value(json.clone()).unwrap();
    let by_hand = engine::ptc::curve_series_from_json(&json).unwrap();
    assert_eq!(by_hand, by_serde);
    assert!(by_hand.points.iter().any(|p| p.residual_dn2.is_some()));
    assert!(by_hand.points.len() >= 5 && !by_hand.model.is_empty());
    let spatial = engine::ptc::spatial_series(&c);
    let json = serde_json::to_value(&spatial).unwrap();
    let by_serde: Vec<engine::ptc::SpatialSeries> = serde_json::from_value(json.clone()).unwrap();
    assert_eq!(
        engine::ptc::spatial_series_from_json(&json).unwrap(),
        by_serde
    );
    assert!(!by_serde.is_empty());
    // A field of the wrong type or missing is refused, not defaulted.
    let mut bad = serde_json::to_value(&curve).unwrap();
    bad["points"][0]["used_in_fit"] = serde_json::json!(1.0);
    assert!(engine::ptc::curve_series_from_json(&bad).is_none());
    let mut bad = serde_json::to_value(&spatial).unwrap();
    bad[0].as_object_mut().unwrap().remove("points");
    assert!(engine::ptc::spatial_series_from_json(&bad).is_none());
}

#[test]
fn recovers_a_camera_from_an_exposure_series_clipped_by_its_adc() {
    // The test's chosen truth: a 12-bit camera whose ADC clips (at 4095 DN) before the full
    // well: (4095 − 100)/0.2 = 19 975 e⁻ < 30 000 e⁻.
    let t = Truth {
        gain_dn_per_e: 0.2,
        read_noise_e: 6.0,
        offset_dn: 100.0,
        full_well_e: 30_000.0,
        dark_current_e_per_s: 200.0,
        dsnu_e: 5.0,
        prnu_percent: 0.5,
        quantum_efficiency: 0.5,
        adc_max_dn: 4095,
    };
    let adc_capacity_e = (4095.0 - t.offset_dn) / t.gain_dn_per_e;
    let mut cam = Camera::new(t, 7);
    let photon_rate = 2.0 * adc_capacity_e / t.quantum_efficiency; // photons per second (chosen)
    let mut stacks = Vec::new();
    for f in [
        0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 1.0, 1.1,
    ] {
        let time = f / 2.0;
        stacks.push(cam.stack(FrameKind::Dark, time, None, None, 2));
        stacks.push(cam.stack(FrameKind::Flat, time, Some(photon_rate * time), None, 2));
    }
    // Without photons the linearity runs against exposure time.
    for s in &mut stacks {
        s.spec.photons_per_pixel = None;
    }
    let c = analyse(&stacks).unwrap();
    let s = &c.sensor;
    check_rel(
        "K",
        Some(s.system_gain_dn_per_e),
        t.gain_dn_per_e,
        GAIN_REL_TOL,
    );
    check_rel(
        "read noise",
        s.read_noise_e,
        t.read_noise_e,
        READ_NOISE_REL_TOL,
    );
    // Darks with L = 2 only, spread over 13 exposure times from 0.025 to 0.55 s: the slope of
    // 13 means each known to ~0.03 DN over a 22 DN rise; K dominates as before.
    check_rel(
        "dark current",
        s.dark_current_e_per_s,
        t.dark_current_e_per_s,
        DARK_CURRENT_REL_TOL,
    );
    let fw = s.full_well_e.expect("saturation found");
    // The ADC capacity is reached at the level where the dark current and light together fill
    // it; the levels are 5–10 % apart there (tolerances as above).
    assert!(
        fw >= adc_capacity_e * (1.0 - FULL_WELL_BELOW_TOL)
            && fw <= adc_capacity_e * (1.0 + FULL_WELL_ABOVE_TOL),
        "full well {fw} vs the ADC's {adc_capacity_e}"
    );
    let le = c.fit.linearity.as_ref().expect("linearity measured");
    assert_eq!(le.abscissa, "exposure_time_s");
    assert!(
        le.error_percent < LINEARITY_MAX_PERCENT,
        "LE {}",
        le.error_percent
    );
    assert!(s.quantum_efficiency.is_none());
}

#[test]
fn quiet_dark_frames_give_only_an_upper_bound() {
    // The test's chosen truth: K = 0.1 DN/e⁻ and σ_d = 1.5 e⁻ give σ²_y.dark = 0.0225 + 1/12
    // ≈ 0.11 DN², below the EMVA 1288 limit of 0.24 DN² (REFERENCES.md §3, from memory).
    let t = Truth {
        gain_dn_per_e: 0.1,
        read_noise_e: 1.5,
        offset_dn: 10.0,
        full_well_e: 5_000.0,
        dark_current_e_per_s: 0.0,
        dsnu_e: 0.0,
        prnu_percent: 0.0,
        quantum_efficiency: 1.0,
        adc_max_dn: 255,
    };
    let mut cam = Camera::new(t, 3);
    let mut stacks = vec![cam.stack(FrameKind::Dark, 0.01, None, None, 2)];
    for (i, p) in [500.0, 1000.0, 2000.0].into_iter().enumerate() {
        stacks.push(cam.stack(FrameKind::Flat, 0.01, Some(p), Some(&format!("{i}")), 2));
    }
    let c = analyse(&stacks).unwrap();
    assert!(c.fit.read_noise.upper_bound_only);
    // The bound is √(0.24 − 1/12)/K (REFERENCES.md §3: 0.3958/K).
    let k = c.sensor.system_gain_dn_per_e;
    assert!((c.sensor.read_noise_e.unwrap() - 0.3958 / k).abs() < 1e-3 / k);
    let codes = codes(&c);
    for want in [
        "read_noise_upper_bound",
        "saturation_not_reached",
        "dark_current_not_measured",
        "dsnu_not_resolved",
        "prnu_not_resolved", // the truth has no PRNU
    ] {
        assert!(codes.contains(&want), "{want} missing from {codes:?}");
    }
    assert!(c.sensor.full_well_e.is_none());
    assert!(c.sensor.dark_current_e_per_s.is_none());
}

#[test]
fn analysis_refuses_what_it_cannot_measure() {
    let mut cam = Camera::new(CAMERA_A, 11);
    let dark = cam.stack(FrameKind::Dark, 0.01, None, None, 2);
    let flat1 = cam.stack(FrameKind::Flat, 0.01, Some(5000.0), Some("a"), 2);
    let flat2 = cam.stack(FrameKind::Flat, 0.01, Some(10000.0), Some("b"), 2);
    let msg = |s: &[StackStats]| analyse(s).err().map(|e| e.to_string()).unwrap_or_default();
    assert!(msg(&[flat1.clone(), flat2.clone()]).starts_with("no dark stack"));
    assert!(msg(&[dark.clone(), flat1.clone()]).starts_with("1 flat stack(s)"));
    // Flats and darks swapped: the "gain" comes out negative.
    let mut swapped = vec![flat2.clone(), dark.clone(), flat1.clone()];
    swapped[0].spec.kind = FrameKind::Dark;
    swapped[1].spec.kind = FrameKind::Flat;
    swapped[2].spec.kind = FrameKind::Flat;
    assert!(msg(&swapped).starts_with("only 0 flat stack(s) are brighter than the dark"));
    assert!(analyse(&[dark, flat1, flat2]).is_ok());
}
