//! Native side of `scripts/measure-series.mjs`'s "same code" comparison: the worker's
//! [`Job`](noise_budget_frames_worker::job::Job) over a folder's manifest and files, with the
//! files read into memory before each is given (untimed), so that only the analysis is timed,
//! the same way `scripts/measure-series.mjs` times the worker's wasm in node.
//!
//! Prints one JSON line; asserts nothing about speed. Usage:
//! `cargo run --release -p noise-budget-frames-worker --example job_native -- DIR`.
//! With `--answer` after DIR it prints the job's answer instead (the worker's JSON, plot series
//! included), which `tests/e2e/worker-wasm.test.mjs` compares with the page's wasm.

use std::time::Instant;

use noise_budget_frames_worker::job::Job;

fn main() {
    let dir = std::path::PathBuf::from(std::env::args().nth(1).unwrap_or_else(|| ".".into()));
    let Ok(manifest) = std::fs::read_to_string(dir.join("manifest.json")) else {
        eprintln!("job_native: no manifest.json in {}", dir.display());
        std::process::exit(2);
    };
    let paths: Vec<String> = serde_json::from_str::<serde_json::Value>(&manifest)
        .ok()
        .and_then(|v| {
            v.get("frames")?
                .as_array()?
                .iter()
                .map(|f| f.get("path")?.as_str().map(String::from))
                .collect()
        })
        .unwrap_or_default();
    let (mut read_ms, mut give_ms) = (0.0, 0.0);
    let mut job = Job::start(&manifest);
    while let Some(i) = job.wanted() {
        let t = Instant::now();
        let bytes = paths
            .get(i)
            .ok_or_else(|| format!("no path for frames[{i}]"))
            .and_then(|p| std::fs::read(dir.join(p)).map_err(|e| e.to_string()));
        read_ms += t.elapsed().as_secs_f64() * 1e3;
        let t = Instant::now();
        let _ = match &bytes {
            Ok(b) => job.give(i, Ok(&|buffer: &mut Vec<u8>| buffer.clone_from(b))),
            Err(e) => job.give(i, Err(e.clone())),
        };
        give_ms += t.elapsed().as_secs_f64() * 1e3;
    }
    let t = Instant::now();
    let answer = job.answer();
    let answer_ms = t.elapsed().as_secs_f64() * 1e3;
    if std::env::args().nth(2).as_deref() == Some("--answer") {
        println!("{answer}");
        return;
    }
    println!(
        "{}",
        serde_json::json!({
            "read_ms": read_ms, "give_ms": give_ms, "answer_ms": answer_ms,
            "ok": answer.starts_with("{\"result\"")
        })
    );
}
