//! Photon transfer analysis against the worked values of REFERENCES.md §4 (EMVA 1288).
//!
//! Each expected number names its source beside it. Frames here are tiny and hand-written, or
//! stacks are given as statistics directly; the simulated-camera checks are in
//! `ptc_synthetic.rs` and the file-format checks in `frames_malformed.rs`.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use engine::frames::{self, RawGeometry};
use engine::ptc::{
    analyse, fit_line, pair_sums, spatial_variance_corrected_dn2, FrameKind, SampleInfo,
    StackAccumulator, StackSpec, StackStats,
};

/// Values derived exactly in REFERENCES.md and quoted to 6 decimals: half a unit in the 6th
/// decimal place.
const SIX_DECIMALS: f64 = 5e-7;
/// Values quoted to 4 significant digits: half a unit in the 4th digit, relative.
const FOUR_DIGITS: f64 = 5e-4;
/// Sums of a few exactly representable numbers: only rounding of the last bit.
const EXACT: f64 = 1e-12;

fn stats(
    kind: FrameKind,
    level: &str,
    mean_dn: f64,
    temporal_variance_dn2: f64,
    spatial_variance_dn2: f64,
) -> StackStats {
    StackStats {
        spec: StackSpec {
            kind,
            exposure_time_s: 0.01,
            level: (kind == FrameKind::Flat).then(|| level.to_string()),
            photons_per_pixel: None,
            frames: 2,
        },
        frame_size: (1000, 1000),
        pixels: 1_000_000,
        pairs: 1,
        mean_dn,
        temporal_variance_dn2,
        spatial_variance_raw_dn2: spatial_variance_dn2 + temporal_variance_dn2 / 2.0,
        spatial_variance_dn2,
        significant_bits: None,
        samples: SampleInfo::default(),
        groups: Vec::new(),
        spatial: None,
        phase_spatial: Vec::new(),
    }
}

#[test]
fn two_frame_toy_example_through_the_decoder() {
    // Source: REFERENCES.md §4 "Two-frame toy example" (derived from EMVA 1288 Release 4.0
    // Linear item 10): μ_A = 100.25, μ_B = 100.75, μ_y = 100.5, σ_y² = 1.125000 DN² with the
    // 1/(2NM) form; the 1/(2(NM − 1)) form would give 1.5.
    let a = frames::decode(b"P5 2 2 255\n\x64\x66\x62\x65", None).unwrap();
    let b = frames::decode(b"P5 2 2 255\n\x65\x64\x63\x67", None).unwrap();
    let s = pair_sums(a.pixels(), b.pixels());
    assert!((s.sum_a as f64 / 4.0 - 100.25).abs() < EXACT);
    assert!((s.sum_b as f64 / 4.0 - 100.75).abs() < EXACT);
    assert!((s.mean_dn().unwrap() - 100.5).abs() < EXACT);
    assert!((s.temporal_variance_dn2().unwrap() - 1.125).abs() < EXACT);

    // The same pair as raw little-endian 16-bit frames, lifted by 60 000 DN: identical.
    let raw =
        |v: [u16; 4]| -> Vec<u8> { v.iter().flat_map(|x| (x + 60_000).to_le_bytes()).collect() };
    let g = Some(RawGeometry {
        width: 2,
        height: 2,
        bits: 16,
    });
    let a = frames::decode(&raw([100, 102, 98, 101]), g).unwrap();
    let b = frames::decode(&raw([101, 100, 99, 103]), g).unwrap();
    let mut acc = StackAccumulator::new(
        StackSpec {
            kind: FrameKind::Flat,
            exposure_time_s: 1.0,
            level: None,
            photons_per_pixel: None,
            frames: 2,
        },
        None,
    )
    .unwrap();
    acc.push(a).unwrap();
    acc.push(b).unwrap();
    let st = acc.finish().unwrap();
    assert_eq!(st.temporal_variance_dn2, 1.125);
    assert!((st.mean_dn - 60_100.5).abs() < EXACT);
}

#[test]
fn exact_synthetic_photon_transfer_line() {
    // Source: REFERENCES.md §4 "Exact synthetic photon-transfer line" (derived there from
    // EMVA 1288 items 3 and 10): K = 0.25, σ_d = 2.5 e⁻, offset 100 DN.
    let line: [(f64, f64); 8] = [
        (100.0, 0.473958),
        (350.0, 62.973958),
        (600.0, 125.473958),
        (850.0, 187.973958),
        (1100.0, 250.473958),
        (1350.0, 312.973958),
        (1600.0, 375.473958),
        (1850.0, 437.973958),
    ];
    // The fit of σ_y² against μ_y − μ_y.dark: slope 0.250000, intercept 0.473958.
    let x: Vec<f64> = line.iter().map(|(m, _)| m - 100.0).collect();
    let y: Vec<f64> = line.iter().map(|(_, v)| *v).collect();
    let f = fit_line(&x, &y, &[]).unwrap();
    assert!((f.slope - 0.25).abs() < SIX_DECIMALS);
    assert!((f.intercept - 0.473958).abs() < SIX_DECIMALS);

    // The whole analysis on the same points as stacks: K = 0.25, σ_d = 2.500000 e⁻.
    let mut stacks = vec![stats(FrameKind::Dark, "", 100.0, 0.473958, 0.0)];
    for (i, (m, v)) in line.iter().enumerate().skip(1) {
        stacks.push(stats(FrameKind::Flat, &format!("{i}"), *m, *v, 0.0));
    }
    let c = analyse(&stacks).unwrap();
    assert!((c.sensor.system_gain_dn_per_e - 0.25).abs() < SIX_DECIMALS);
    assert!((c.sensor.read_noise_e.unwrap() - 2.5).abs() < 1e-5); // √ of a 6-decimal value
    assert!((c.fit.system_gain.line.intercept).abs() < SIX_DECIMALS);
    // The line never turns down, so saturation is not reported (EMVA item 7: the variance
    // maximum marks saturation).
    assert!(c.sensor.full_well_e.is_none());
    assert!(c
        .fit
        .diagnostics
        .iter()
        .any(|d| d.code == "saturation_not_reached"));
}

#[test]
fn dsnu_prnu_toy_example() {
    // Source: REFERENCES.md §4 "DSNU/PRNU toy example" (EMVA 1288 item 11, derived there):
    // s_y.dark = 0.5 DN, s_y.50 = 12 DN, μ_y.50 − μ_y.dark = 1000 DN, K = 0.25 →
    // DSNU = 2.000 e⁻, PRNU = 1.199 %.
    // The flats lie on the exact line σ² = 0.473958 + 0.25·(μ − 100) of the same section, at
    // 500, 1000 and 2000 DN above dark, so the 50 % level (of the brightest, as saturation is not
    // reached) is the one at 1000 DN.
    let var = |x: f64| 0.473958 + 0.25 * x;
    let stacks = vec![
        stats(FrameKind::Dark, "", 100.0, var(0.0), 0.25),
        stats(FrameKind::Flat, "a", 600.0, var(500.0), 40.0),
        stats(FrameKind::Flat, "b", 1100.0, var(1000.0), 144.0),
        stats(FrameKind::Flat, "c", 2100.0, var(2000.0), 500.0),
    ];
    let c = analyse(&stacks).unwrap();
    let dsnu = c.sensor.dsnu_e.unwrap();
    let prnu = c.sensor.prnu_percent.unwrap();
    assert!(((dsnu - 2.0) / 2.0).abs() < FOUR_DIGITS, "DSNU {dsnu}");
    assert!(((prnu - 1.199) / 1.199).abs() < FOUR_DIGITS, "PRNU {prnu}");
    assert_eq!(c.fit.nonuniformity.flat_mean_above_dark_dn, Some(1000.0));
}

#[test]
fn temporal_correction_example() {
    // Source: REFERENCES.md §4: s_meas² = 1.0, σ_y² = 4.0, L = 16 → s_y² = 0.75 DN²
    // (EMVA 1288 item 11).
    assert!((spatial_variance_corrected_dn2(1.0, 4.0, 16) - 0.75).abs() < EXACT);
}

#[test]
fn averaging_sixteen_frames_removes_sigma_squared_over_l() {
    // A stack of L = 16 hand-made 1×2 frames, alternately [a, b] and [a+2, b] (chosen): the
    // per-pixel path of the accumulator. The average frame is [a+1, b], so with b − a − 1 = 9
    // its spatial variance is 9²/2 = 40.5 DN² (1/(n − 1) with n = 2); each pair difference is
    // [−2, 0], variance (2·4 − 4)/(2·4) = 0.5 DN² (the 1/(2NM) form). EMVA 1288 item 11
    // (REFERENCES.md §4) then gives s_y² = 40.5 − 0.5/16.
    let frame = |v: [u16; 2]| frames::Frame::new(2, 1, 16, v.to_vec()).unwrap();
    let mut acc = StackAccumulator::new(
        StackSpec {
            kind: FrameKind::Flat,
            exposure_time_s: 1.0,
            level: None,
            photons_per_pixel: None,
            frames: 16,
        },
        None,
    )
    .unwrap();
    for i in 0..16 {
        acc.push(frame(if i % 2 == 0 {
            [1000, 1010]
        } else {
            [1002, 1010]
        }))
        .unwrap();
    }
    let s = acc.finish().unwrap();
    assert_eq!(s.pairs, 8);
    assert!((s.temporal_variance_dn2 - 0.5).abs() < EXACT);
    assert!((s.spatial_variance_raw_dn2 - 40.5).abs() < EXACT);
    assert!((s.spatial_variance_dn2 - (40.5 - 0.5 / 16.0)).abs() < EXACT);
}
