//! Benchmark: one 12-megapixel frame of the test scene (4000 × 3000, the machine-vision demo:
//! unbinned, one frame, 12-bit), side by side with numpy drawing the same chain on the same size
//! (tests/python/bench_simulate.py, when the project's .venv exists). Reports times and the
//! ratio; asserts nothing about speed, and is never run as a test.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // bench code: a failure should stop loudly

use std::hint::black_box;
use std::path::PathBuf;
use std::process::Command;
use std::time::{Duration, Instant};

use criterion::{Criterion, Throughput};
use engine::simulate::{frame, FrameSize};

const WIDTH: u32 = 4000;
const HEIGHT: u32 = 3000;

fn best_of(runs: usize, mut f: impl FnMut()) -> Duration {
    (0..runs)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed()
        })
        .min()
        .unwrap()
}

fn main() {
    // The demo with its light restated as the photons per pixel it gives, so that numpy's
    // chain (which reads photons per pixel) draws the same frame.
    let demo = engine::demos::DEMOS
        .iter()
        .find(|d| d.name == "global-shutter-machine-vision")
        .unwrap();
    let photons = engine::evaluate_json(demo.json).unwrap().photons_per_pixel;
    let mut v: serde_json::Value = serde_json::from_str(demo.json).unwrap();
    v["light"] = serde_json::json!({ "photons_per_pixel": photons });
    let text = v.to_string();
    let sc = engine::validate::scenario_from_json(&text).unwrap();
    let size = FrameSize::new(WIDTH, HEIGHT).unwrap();

    let mut c = Criterion::default()
        .sample_size(10)
        .measurement_time(Duration::from_secs(15))
        .configure_from_args();
    {
        let mut g = c.benchmark_group("simulate_12mp");
        g.throughput(Throughput::Elements(u64::from(WIDTH * HEIGHT)));
        g.bench_function("frame", |b| {
            b.iter(|| frame(black_box(&sc), 1, size).unwrap())
        });
        g.finish();
    }
    c.final_summary();

    let mut mean = 0.0;
    let t_engine = best_of(3, || {
        let f = frame(&sc, 1, size).unwrap();
        mean = f.values_dn.iter().sum::<f64>() / f.values_dn.len() as f64;
    });
    let ms = |d: Duration| d.as_secs_f64() * 1e3;
    println!("\ntest-scene frame, 12 MP, best of 3 (same run, same size and chain):");
    println!(
        "  engine                 {:9.1} ms   ({:.1} ns per pixel, mean {mean:.3} DN)",
        ms(t_engine),
        ms(t_engine) * 1e6 / f64::from(WIDTH * HEIGHT)
    );

    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..");
    let python = root.join(".venv/bin/python");
    if !python.exists() {
        println!("  numpy: skipped (no .venv; run scripts/setup)");
        return;
    }
    let path = std::env::temp_dir().join(format!(
        "noise-budget-bench-sim-{}.json",
        std::process::id()
    ));
    std::fs::write(&path, &text).unwrap();
    let out = Command::new(&python)
        .arg(root.join("tests/python/bench_simulate.py"))
        .arg(&path)
        .arg(WIDTH.to_string())
        .arg(HEIGHT.to_string())
        .output()
        .unwrap();
    let _ = std::fs::remove_file(&path);
    let stdout = String::from_utf8_lossy(&out.stdout);
    let field = |key: &str| {
        stdout
            .lines()
            .find_map(|l| l.strip_prefix(key))
            .and_then(|v| v.trim().parse::<f64>().ok())
    };
    match (field("numpy_ms "), field("mean_dn ")) {
        (Some(t), Some(m)) => println!(
            "  numpy (same chain)     {t:9.1} ms   = {:.2} × the engine's time (mean {m:.3} DN)",
            t / ms(t_engine)
        ),
        _ => println!(
            "  numpy: failed: {stdout}{}",
            String::from_utf8_lossy(&out.stderr)
        ),
    }
}
