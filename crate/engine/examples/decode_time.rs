//! Time `engine::frames::decode` on one frame file (the decoders' speed, natively).
//!
//! `cargo run --release -p noise-budget-engine --example decode_time -- FILE [RUNS]` prints the
//! fastest and the median of RUNS decodes (5 by default). It measures; it asserts nothing.

#![allow(clippy::unwrap_used, clippy::expect_used)] // a measuring tool: a bad argument may panic

use std::time::Instant;

fn main() {
    let mut args = std::env::args().skip(1);
    let path = args.next().expect("usage: decode_time FILE [RUNS]");
    let runs: usize = args
        .next()
        .map_or(5, |r| r.parse().expect("RUNS is a number"));
    let bytes = std::fs::read(&path).expect("the file can be read");
    let mut times = Vec::new();
    for _ in 0..runs.max(1) {
        let t = Instant::now();
        let f = engine::frames::decode(&bytes, None).expect("the file decodes");
        times.push(t.elapsed().as_secs_f64());
        std::hint::black_box(f);
    }
    times.sort_by(f64::total_cmp);
    let median = times.get(times.len() / 2).copied().unwrap_or(f64::NAN);
    let fastest = times.first().copied().unwrap_or(f64::NAN);
    println!(
        "{path}: fastest {fastest:.4} s, median {median:.4} s of {} runs",
        times.len()
    );
}
