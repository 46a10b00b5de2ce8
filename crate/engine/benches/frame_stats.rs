//! Benchmark: frame-pair statistics of two 16-bit 12-megapixel frames, side by side with a pass
//! that only reads the same bytes (the memory-bandwidth floor) and with numpy doing the same
//! statistics on the same data (tests/python/bench_frame_stats.py, when the project's .venv
//! exists). Reports times and ratios; asserts nothing about speed, and is never run as a test.

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
use engine::frames::Frame;
use engine::ptc::{pair_sums, FrameKind, StackAccumulator, StackSpec};

/// 4000 × 3000 = 12 megapixels.
const WIDTH: usize = 4000;
const HEIGHT: usize = 3000;

/// Two frames of a flat field near 30 000 DN with noise (invented data; xorshift, fixed seed).
fn frames() -> (Vec<u16>, Vec<u16>) {
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    let mut frame = || -> Vec<u16> {
        (0..WIDTH * HEIGHT)
            .map(|_| {
                let r = next();
                // Sum of four 8-bit uniforms: roughly Gaussian, σ ≈ 148 DN.
                let noise: u64 = (0..4).map(|k| (r >> (16 * k)) & 0xff).sum();
                (29_500 + noise) as u16
            })
            .collect()
    };
    (frame(), frame())
}

/// The floor: read every sample of both frames once, summing them.
fn read_only(a: &[u16], b: &[u16]) -> u64 {
    a.iter().map(|&x| u64::from(x)).sum::<u64>() + b.iter().map(|&x| u64::from(x)).sum::<u64>()
}

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
    let (a, b) = frames();
    let bytes = (2 * WIDTH * HEIGHT * 2) as u64;

    let mut c = Criterion::default()
        .sample_size(20)
        .measurement_time(Duration::from_secs(6))
        .configure_from_args();
    {
        let mut g = c.benchmark_group("frame_pair_12mp_16bit");
        g.throughput(Throughput::Bytes(bytes));
        g.bench_function("read_only_sum", |bench| {
            bench.iter(|| read_only(black_box(&a), black_box(&b)));
        });
        g.bench_function("pair_sums", |bench| {
            bench.iter(|| pair_sums(black_box(&a), black_box(&b)));
        });
        g.finish();
    }
    c.final_summary();

    // Ratios from one more side-by-side timing in this same run (best of 15, same data).
    let t_read = best_of(15, || {
        black_box(read_only(black_box(&a), black_box(&b)));
    });
    let t_pair = best_of(15, || {
        black_box(pair_sums(black_box(&a), black_box(&b)));
    });
    // The whole stack path for a pair (frames handed over, statistics out), for information.
    let fa = Frame::new(WIDTH as u32, HEIGHT as u32, 16, a.clone()).unwrap();
    let fb = Frame::new(WIDTH as u32, HEIGHT as u32, 16, b.clone()).unwrap();
    let t_stack = best_of(15, || {
        let spec = StackSpec {
            kind: FrameKind::Flat,
            exposure_time_s: 1.0,
            level: None,
            photons_per_pixel: None,
            frames: 2,
        };
        let mut acc = StackAccumulator::new(spec, None).unwrap();
        acc.push(fa.clone()).unwrap();
        acc.push(fb.clone()).unwrap();
        black_box(acc.finish().unwrap());
    });
    // A stack of 16 frames (the pair alternately, as a camera's frames would arrive): the
    // accumulator's whole path per frame against reading the same 16 frames once.
    let t_read16 = best_of(5, || {
        let mut s = 0u64;
        for i in 0..16 {
            s += read_only(black_box(if i % 2 == 0 { &a } else { &b }), &[]);
        }
        black_box(s);
    });
    let t_stack16 = best_of(5, || {
        let spec = StackSpec {
            kind: FrameKind::Dark,
            exposure_time_s: 1.0,
            level: None,
            photons_per_pixel: None,
            frames: 16,
        };
        let mut acc = StackAccumulator::new(spec, None).unwrap();
        for i in 0..16 {
            acc.push(if i % 2 == 0 { fa.clone() } else { fb.clone() })
                .unwrap();
        }
        black_box(acc.finish().unwrap());
    });
    let t_clone16 = best_of(5, || {
        for i in 0..16 {
            black_box(if i % 2 == 0 { fa.clone() } else { fb.clone() });
        }
    });
    let ms = |d: Duration| d.as_secs_f64() * 1e3;
    println!("\nstack of 16 dark frames, 12 MP 16-bit, best of 5 (same run, same data):");
    println!("  read-only pass ×16     {:8.2} ms", ms(t_read16));
    println!(
        "  copying 16 frames      {:8.2} ms   (what a decoder's hand-over costs)",
        ms(t_clone16)
    );
    println!(
        "  stack of 16 (engine)   {:8.2} ms   = {:.2} × the read-only pass ({:.2} × without the copies)",
        ms(t_stack16),
        ms(t_stack16) / ms(t_read16),
        (ms(t_stack16) - ms(t_clone16)) / ms(t_read16)
    );
    println!("\nframe-pair statistics, 12 MP 16-bit, best of 15 (same run, same data):");
    println!("  read-only pass         {:8.2} ms", ms(t_read));
    println!(
        "  pair_sums (engine)     {:8.2} ms   = {:.2} × the read-only pass",
        ms(t_pair),
        ms(t_pair) / ms(t_read)
    );
    println!(
        "  stack of 2 (engine)    {:8.2} ms   (accumulator path, including copying both frames \
         into fresh buffers as a decoder would hand them over)",
        ms(t_stack)
    );

    // numpy on the same bytes, if the project's venv is there.
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..");
    let python = root.join(".venv/bin/python");
    let script = root.join("tests/python/bench_frame_stats.py");
    if !python.exists() {
        println!("  numpy: skipped (no .venv; run scripts/setup)");
        return;
    }
    let dir = std::env::temp_dir().join(format!("noise-budget-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let le = |v: &[u16]| -> Vec<u8> { v.iter().flat_map(|x| x.to_le_bytes()).collect() };
    std::fs::write(dir.join("a.raw"), le(&a)).unwrap();
    std::fs::write(dir.join("b.raw"), le(&b)).unwrap();
    let expected = pair_sums(&a, &b);
    let out = Command::new(&python)
        .arg(&script)
        .arg(&dir)
        .arg(WIDTH.to_string())
        .arg(HEIGHT.to_string())
        .output()
        .unwrap();
    let _ = std::fs::remove_dir_all(&dir);
    let text = String::from_utf8_lossy(&out.stdout);
    let numpy_ms = text
        .lines()
        .find_map(|l| l.strip_prefix("numpy_ms "))
        .and_then(|v| v.trim().parse::<f64>().ok());
    let numpy_var = text
        .lines()
        .find_map(|l| l.strip_prefix("temporal_variance_dn2 "))
        .and_then(|v| v.trim().parse::<f64>().ok());
    match (numpy_ms, numpy_var) {
        (Some(t), Some(v)) => {
            let ours = expected.temporal_variance_dn2().unwrap();
            println!(
                "  numpy (same statistics) {:7.2} ms   = {:.1} × slower than pair_sums \
                 (σ² numpy {v:.9}, engine {ours:.9})",
                t,
                t / ms(t_pair)
            );
        }
        _ => println!(
            "  numpy: failed: {}{}",
            text,
            String::from_utf8_lossy(&out.stderr)
        ),
    }
}
