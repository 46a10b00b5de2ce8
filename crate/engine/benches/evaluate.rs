//! Benchmark of one evaluation, beside a trivial baseline measured in the same run.
//!
//! Reports times only; nothing here asserts a speed. Compare the medians as ratios.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use criterion::{black_box, criterion_group, criterion_main, Criterion};

const DEMO: &str = include_str!("../../../www/demos/global-shutter-machine-vision.json");
const SCENE: &str = include_str!("../../../www/demos/conveyor-lux-and-lens.json");

fn bench(c: &mut Criterion) {
    let scenario = match engine::validate::scenario_from_json(DEMO) {
        Ok(s) => s,
        Err(e) => panic!("the demo scenario is invalid:\n{e}"),
    };
    let mut g = c.benchmark_group("evaluate");
    // Baseline: one square root and a division on a black-boxed number, the cheapest
    // "computation" the machine can time; it calibrates the timer overhead of this run.
    g.bench_function("baseline: sqrt", |b| {
        b.iter(|| black_box(black_box(2.0f64).sqrt() / 3.0))
    });
    g.bench_function("evaluate a checked scenario", |b| {
        b.iter(|| engine::evaluate(black_box(&scenario)))
    });
    g.bench_function("parse + validate + evaluate JSON", |b| {
        b.iter(|| engine::evaluate_json(black_box(DEMO)))
    });
    g.bench_function("parse + validate + evaluate + serialize report", |b| {
        b.iter(|| engine::evaluate_json(black_box(DEMO)).map(|r| serde_json::to_string(&r)))
    });
    let scene: serde_json::Value = serde_json::from_str(SCENE).unwrap_or_default();
    let scene_checked = match engine::validate::scenario_from_value(&scene) {
        Ok(s) => s,
        Err(e) => panic!("the scene demo is invalid:\n{e}"),
    };
    g.bench_function("evaluate a spectral scene (lux through a lens)", |b| {
        b.iter(|| engine::evaluate(black_box(&scene_checked)))
    });
    g.finish();

    let mut g = c.benchmark_group("sweep");
    g.sample_size(20);
    for (key, from, to) in [
        ("exposure.time_s", 1e-4, 1.0),
        ("light.scene_illuminance_lux", 1.0, 1e5),
    ] {
        let request = engine::sweep::SweepRequest {
            key: key.into(),
            from,
            to,
            points: 1000,
            spacing: engine::sweep::Spacing::Log,
        };
        g.bench_function(format!("1000 points of {key}, scene demo"), |b| {
            b.iter(|| engine::sweep::sweep(black_box(&scene), &request))
        });
        // The page's curves: SNR and the contrast detection probability, no exact tails.
        g.bench_function(
            format!("1000 points of {key}, scene demo, curves' sweep"),
            |b| {
                b.iter(|| engine::sweep::sweep_without_detection(black_box(&scene), &request, true))
            },
        );
        g.bench_function(format!("1000 points of {key}, scene demo, SNR only"), |b| {
            b.iter(|| engine::sweep::sweep_without_detection(black_box(&scene), &request, false))
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
