//! `noise-budget characterize` end to end: frame files and a manifest on disk, the command's
//! JSON, table, messages and exit statuses. Checks the wiring, not the physics (the engine's
//! tests do that) and not the numbers against numpy (tests/python/test_frame_stats.py).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_noise-budget"))
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("cannot run the command: {e}"))
}

/// A fresh folder for one test.
fn folder(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("nb-characterize-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{e}"));
    d
}

/// A 64 × 48 16-bit PGM: 1000 DN offset + `electrons` at K = 1 DN/e⁻ (invented), with noise of
/// variance ≈ electrons + 16 made from sums of uniform xorshift draws (not a physical model; the
/// variance only has to grow with the signal for the fit to succeed).
fn write_frame(path: &Path, electrons: f64, seed: u64) {
    let (w, h) = (64usize, 48usize);
    let mut s = seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) | 1;
    let mut uniform = || {
        s ^= s << 13;
        s ^= s >> 7;
        s ^= s << 17;
        (s >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let sigma = (electrons + 16.0).sqrt();
    let mut bytes = format!("P5\n{w} {h}\n65535\n").into_bytes();
    for _ in 0..w * h {
        // Twelve uniforms on [−½, ½] sum to unit variance.
        let z: f64 = (0..12).map(|_| uniform()).sum();
        let v = (1000.0 + electrons + sigma * z).round().clamp(0.0, 65535.0) as u16;
        bytes.extend(v.to_be_bytes());
    }
    std::fs::write(path, bytes).unwrap_or_else(|e| panic!("{e}"));
}

fn manifest(dir: &Path, extra: &str) -> PathBuf {
    let mut frames = Vec::new();
    for (i, (kind, e)) in [
        ("dark", 0.0),
        ("flat", 1000.0),
        ("flat", 4000.0),
        ("flat", 9000.0),
    ]
    .iter()
    .enumerate()
    {
        for j in 0..2 {
            let name = format!("f{i}{j}.pgm");
            write_frame(&dir.join(&name), *e, (10 * i + j) as u64 + 1);
            frames.push(format!(
                r#"{{"path": "{name}", "kind": "{kind}", "exposure_time_s": 0.01, "level": "L{i}"}}"#
            ));
        }
    }
    let path = dir.join("manifest.json");
    let text = format!(
        r#"{{"version": 1, {extra} "frames": [{}]}}"#,
        frames.join(", ")
    );
    std::fs::write(&path, text).unwrap_or_else(|e| panic!("{e}"));
    path
}

#[test]
fn measures_frames_and_prints_json_and_a_table() {
    let dir = folder("ok");
    let m = manifest(&dir, "");
    let out = run(&["characterize", m.to_str().unwrap_or_default()]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value =
        serde_json::from_slice(&out.stdout).unwrap_or_else(|e| panic!("not JSON: {e}"));
    let k = v["sensor"]["system_gain_dn_per_e"].as_f64().unwrap_or(0.0);
    // The frames were made with K = 1 (invented); 64 × 48 pixels give each variance about
    // √(2/3072) = 2.6 % relative uncertainty, so 15 % is a loose wiring check.
    assert!((k - 1.0).abs() < 0.15, "K = {k}");
    assert_eq!(v["fit"]["points"].as_array().map(Vec::len), Some(4));
    assert!(v["sensor"]["read_noise_e"].is_number());

    let out = run(&["characterize", "--table", m.to_str().unwrap_or_default()]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("system gain K") && text.contains("photon transfer points"),
        "{text}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn exit_statuses_and_messages() {
    let dir = folder("bad");
    // Invalid manifest: 2, every problem with its key.
    let m = manifest(
        &dir,
        r#""typo": 1, "roi": {"x": -1, "y": 0, "width": 8, "height": 8},"#,
    );
    let out = run(&["characterize", m.to_str().unwrap_or_default()]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(
        err.contains("typo: unknown key") && err.contains("roi.x: must be a whole number"),
        "{err}"
    );

    // An undecodable frame: 2, naming the file.
    let m = manifest(&dir, "");
    std::fs::write(dir.join("f21.pgm"), b"P5 64 48 65535\n\x00").unwrap_or_else(|e| panic!("{e}"));
    let out = run(&["characterize", m.to_str().unwrap_or_default()]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("frames[5] (f21.pgm): truncated"), "{err}");

    // A missing frame file: 1.
    std::fs::remove_file(dir.join("f30.pgm")).unwrap_or_else(|e| panic!("{e}"));
    let out = run(&["characterize", m.to_str().unwrap_or_default()]);
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("frames[6] (f30.pgm): cannot read"));

    // A missing manifest: 1.
    let out = run(&[
        "characterize",
        dir.join("none.json").to_str().unwrap_or_default(),
    ]);
    assert_eq!(out.status.code(), Some(1));
    let _ = std::fs::remove_dir_all(&dir);
}
