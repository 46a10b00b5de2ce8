//! Benchmark of the detection figures (issue 13) beside one model evaluation, in one run.
//!
//! Reports times only; nothing here asserts a speed. Compare the medians as ratios to the
//! baseline (`evaluate a checked scenario`, the demo scenario's whole noise budget).

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use engine::detection::contrast::{contrast_detection_probability, Patch};
use engine::detection::{counting, evaluate, DetectionInputs};
use std::time::Duration;

const DEMO: &str = include_str!("../../../www/demos/global-shutter-machine-vision.json");

fn inputs(signal_e: f64, dark_e: f64, sigma_e: f64) -> DetectionInputs {
    DetectionInputs {
        signal_e,
        dark_e,
        read_variance_e2: sigma_e * sigma_e,
        false_alarm_probability: 1e-3,
        detection_probability: 0.9,
        pixels: 1_000_000,
    }
}

fn bench(c: &mut Criterion) {
    let scenario = match engine::validate::scenario_from_json(DEMO) {
        Ok(s) => s,
        Err(e) => panic!("the demo scenario is invalid:\n{e}"),
    };
    let mut g = c.benchmark_group("detection");
    g.measurement_time(Duration::from_secs(3));
    g.warm_up_time(Duration::from_millis(500));
    g.bench_function("baseline: evaluate the demo scenario", |b| {
        b.iter(|| engine::evaluate(black_box(&scenario)))
    });
    // (name, signal, dark, σ): the corners of the range the module promises.
    let cases: &[(&str, f64, f64, f64)] = &[
        ("REFERENCES §8 row: d 0.01, σ 1", 3.26, 0.01, 1.0),
        ("photon counting: d 0.01, σ 0.3", 2.0, 0.01, 0.3),
        ("no Gaussian noise: d 1e6, σ 0", 5e3, 1e6, 0.0),
        ("huge dark, tiny σ: d 1e7, σ 0.05", 2e4, 1e7, 0.05),
        ("huge dark, σ 1: d 1e7, σ 1", 2e4, 1e7, 1.0),
        ("huge dark, σ 30: d 1e7, σ 30", 2e4, 1e7, 30.0),
        ("huge dark and σ: d 1e7, σ 3000", 2e4, 1e7, 3000.0),
        ("huge σ: d 0.01, σ 1e6", 1e6, 0.01, 1e6),
        ("bright: s 1e5, d 100, σ 5", 1e5, 100.0, 5.0),
    ];
    for &(name, s, d, sigma) in cases {
        let inp = inputs(s, d, sigma);
        g.bench_function(format!("evaluate: {name}"), |b| {
            b.iter(|| evaluate(black_box(&inp)))
        });
    }
    let t = Patch {
        mean_e: 110.0,
        variance_e2: 125.0,
    };
    let r = Patch {
        mean_e: 100.0,
        variance_e2: 115.0,
    };
    g.bench_function("contrast detection probability, one pixel pair", |b| {
        b.iter(|| contrast_detection_probability(black_box(t), black_box(r), 0.5))
    });
    let dim_t = Patch {
        mean_e: 3.0,
        variance_e2: 7.0,
    };
    let dim_r = Patch {
        mean_e: 2.0,
        variance_e2: 6.0,
    };
    g.bench_function(
        "contrast detection probability, dim pair (bivariate term)",
        |b| b.iter(|| contrast_detection_probability(black_box(dim_t), black_box(dim_r), 0.5)),
    );
    g.bench_function("charge distribution for a plot, σ 0.2, 400+ points", |b| {
        b.iter(|| counting::charge_distribution(0.01, black_box(3.0), 0.2, 400))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
