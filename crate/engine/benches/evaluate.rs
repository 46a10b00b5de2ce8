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
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
