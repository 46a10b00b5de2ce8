//! Native baseline for scripts/measure-simulate.mjs: the same frame as the wasm build, timed.
//! Usage: simulate-native SCENARIO WIDTH HEIGHT REPEATS; prints `native_ms T mean M`.

use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let json = std::fs::read_to_string(&args[1]).expect("scenario");
    let (w, h, n): (u32, u32, u32) = (
        args[2].parse().unwrap(),
        args[3].parse().unwrap(),
        args[4].parse().unwrap(),
    );
    let mut best = f64::INFINITY;
    let mut mean = 0.0;
    for _ in 0..n {
        let t = Instant::now();
        mean = noise_budget_wasm_simulate::frame_mean(&json, w, h, 1);
        best = best.min(t.elapsed().as_secs_f64() * 1e3);
    }
    println!("native_ms {best:.3} mean {mean:?}");
}
