//! Native side of `scripts/measure-frames.mjs`: the best time of the frame-pair statistics of
//! two synthetic 16-bit frames, the same values the worker's `pair_stats_ms` times in wasm.
//!
//! Prints one JSON line; asserts nothing about speed. Usage:
//! `cargo run --release -p noise-budget-frames-worker --example pair_stats_native -- W H REPEATS`.

use std::hint::black_box;
use std::time::Instant;

fn main() {
    let args: Vec<u64> = std::env::args()
        .skip(1)
        .filter_map(|a| a.parse().ok())
        .collect();
    let (w, h, repeats) = match args.as_slice() {
        [w, h, r] => (*w, *h, *r),
        _ => (4000, 3000, 20),
    };
    let n = usize::try_from(w * h).unwrap_or(0);
    let (a, b) = noise_budget_frames_worker::job::synthetic_pair(n);
    let mut best = f64::INFINITY;
    let mut floor = f64::INFINITY;
    for _ in 0..repeats.max(1) {
        let t = Instant::now();
        black_box(engine::ptc::pair_sums(black_box(&a), black_box(&b)));
        best = best.min(t.elapsed().as_secs_f64() * 1e3);
        let t = Instant::now();
        let s: u64 = black_box(&a).iter().map(|&x| u64::from(x)).sum::<u64>()
            + black_box(&b).iter().map(|&x| u64::from(x)).sum::<u64>();
        black_box(s);
        floor = floor.min(t.elapsed().as_secs_f64() * 1e3);
    }
    println!(
        "{{\"width\": {w}, \"height\": {h}, \"repeats\": {repeats}, \"pair_stats_ms\": {best}, \"read_only_ms\": {floor}}}"
    );
}
