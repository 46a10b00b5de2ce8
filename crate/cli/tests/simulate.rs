//! `noise-budget simulate` as a user runs it: the files it writes, the loop through
//! `characterize`, exit codes and the messages for bad arguments.
//!
//! The simulation's statistics are checked in the engine's `tests/simulate.rs` and against
//! numpy in `tests/python/test_simulate.py`; here the files are compared with the engine's own
//! output for the same scenario, seed and size.

use std::path::PathBuf;
use std::process::{Command, Output};

const BIN: &str = env!("CARGO_BIN_EXE_noise-budget");

fn run(args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .output()
        .expect("the binary runs")
}

fn demo(name: &str) -> String {
    format!("{}/../../www/demos/{name}.json", env!("CARGO_MANIFEST_DIR"))
}

fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "noise-budget-simulate-{}-{name}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn scenario(path: &str) -> engine::Scenario {
    let text = std::fs::read_to_string(path).expect("demo");
    engine::validate::scenario_from_json(&text).expect("valid")
}

#[test]
fn a_simulated_series_is_measured_by_characterize() {
    let dir = temp_dir("series");
    let series = dir.join("series");
    let path = demo("global-shutter-machine-vision");
    let out = run(&[
        "simulate",
        &path,
        "--series",
        series.to_str().unwrap(),
        "--size",
        "96x96",
        "--seed",
        "5",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let summary: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON");
    assert_eq!(summary["seed"], 5);
    assert_eq!(
        summary["series"]["frames"].as_array().map(Vec::len),
        Some(126)
    );

    // The files are the engine's, byte for byte.
    let plan = engine::simulate::series_plan(
        &scenario(&path),
        5,
        engine::simulate::FrameSize::new(96, 96).unwrap(),
    )
    .unwrap();
    for i in [0, 61, 125] {
        let name = &plan.frames[i].path;
        let written = std::fs::read(series.join(name)).expect("frame written");
        assert_eq!(written, plan.render_pgm(i).unwrap(), "{name}");
    }
    assert_eq!(
        std::fs::read_to_string(series.join("manifest.json")).unwrap(),
        plan.manifest_json()
    );

    let measured = run(&[
        "characterize",
        series.join("manifest.json").to_str().unwrap(),
    ]);
    assert_eq!(measured.status.code(), Some(0), "{}", stderr(&measured));
    let c: serde_json::Value = serde_json::from_slice(&measured.stdout).expect("JSON");
    // K from 9216 pixels per frame: each variance known to √(2/n) = 1.5 %; the slope over
    // ~15 levels to about that (tests/simulate.rs); 4 × 1.5 % = 5.9 % (the demo's K 0.38).
    let k = c["sensor"]["system_gain_dn_per_e"].as_f64().unwrap();
    assert!(
        (k / 0.38 - 1.0).abs() < 4.0 * (2.0f64 / 9216.0).sqrt(),
        "K {k}"
    );
    assert_eq!(c["sensor"]["adc_bits"], 12);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_frame_is_a_16_bit_png_of_the_engines_samples() {
    let dir = temp_dir("frame");
    let png = dir.join("scene.png");
    let pgm = dir.join("scene.PGM");
    let path = demo("cooled-scientific");
    for file in [&png, &pgm] {
        let out = run(&[
            "simulate",
            &path,
            "--frame",
            file.to_str().unwrap(),
            "--size",
            "60x40",
            "--seed",
            "3",
        ]);
        assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
        // Four averaged frames of a 16-bit ADC have quarter-DN steps a 16-bit file cannot hold.
        assert!(stderr(&out).starts_with("caution: "), "{}", stderr(&out));
    }
    let frame = engine::simulate::frame(
        &scenario(&path),
        3,
        engine::simulate::FrameSize::new(60, 40).unwrap(),
    )
    .unwrap();
    let want = frame.to_16_bit();
    // 16-bit ADC, 2 × 2 charge binning: full scale 65 535, so samples are DN × 1.
    assert_eq!(want.scale, 1.0);
    for file in [&png, &pgm] {
        let decoded = engine::frames::decode(&std::fs::read(file).unwrap(), None).unwrap();
        assert_eq!((decoded.width(), decoded.height()), (60, 40));
        assert_eq!(decoded.sample_bits(), 16);
        assert_eq!(
            decoded.pixels(),
            want.samples.as_slice(),
            "{}",
            file.display()
        );
    }
    let bytes = std::fs::read(&png).unwrap();
    let text = String::from_utf8_lossy(&bytes);
    assert!(
        text.contains("sample = DN × 1"),
        "the PNG states its mapping"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_summary_gives_each_patch_and_the_table_reads_well() {
    let dir = temp_dir("summary");
    let png = dir.join("a.png");
    let path = demo("global-shutter-machine-vision");
    let out = run(&[
        "simulate",
        &path,
        "--frame",
        png.to_str().unwrap(),
        "--size",
        "120x80",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let s: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let patches = s["frame"]["patches"].as_array().unwrap();
    assert_eq!(patches.len(), 12);
    assert_eq!(patches[9]["light_factor"], 1.0);
    assert!(patches[9]["model"]["snr_total"].as_f64().unwrap() > 1.0);
    assert!(patches[9]["measured"]["snr"].as_f64().unwrap() > 1.0);
    assert_eq!(s["frame"]["sample_scale"], 16.0);
    assert_eq!(s["seed"], 1);

    let table = run(&[
        "simulate",
        &path,
        "--frame",
        png.to_str().unwrap(),
        "--size",
        "120x80",
        "--table",
    ]);
    let t = String::from_utf8_lossy(&table.stdout);
    assert!(t.contains("test-scene frame"), "{t}");
    assert!(t.contains("×1/256"), "{t}");
    assert!(
        !t.contains("e-0") && !t.contains("e+"),
        "no E-notation: {t}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn bad_arguments_are_named_and_exit_2() {
    let dir = temp_dir("bad");
    let png = dir.join("a.png");
    let png = png.to_str().unwrap();
    let path = demo("global-shutter-machine-vision");
    let cases: [(&[&str], &str); 5] = [
        (
            &["simulate", &path, "--frame", png, "--size", "640"],
            "--size",
        ),
        (
            &["simulate", &path, "--frame", png, "--size", "0x4"],
            "at least 1 pixel",
        ),
        (
            &["simulate", &path, "--frame", png, "--seed", "many"],
            "--seed",
        ),
        (&["simulate", &path], "nothing to write"),
        (
            &["simulate", &path, "--frame", "a.tiff"],
            "--frame: the file name must end in .png or .pgm",
        ),
    ];
    for (args, words) in cases {
        let out = run(args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        assert!(stderr(&out).contains(words), "{args:?}: {}", stderr(&out));
    }
    // An invalid scenario: every problem with its key.
    let bad = dir.join("bad.json");
    std::fs::write(&bad, r#"{"version": 1, "sensor": {"full_well_e": -5}}"#).unwrap();
    let out = run(&["simulate", bad.to_str().unwrap(), "--frame", png]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("sensor.full_well_e: must be > 0, got -5"));
    // What the engine refuses.
    let wide = dir.join("wide.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    v["sensor"]["adc_bits"] = serde_json::json!(20);
    std::fs::write(&wide, v.to_string()).unwrap();
    let out = run(&[
        "simulate",
        wide.to_str().unwrap(),
        "--series",
        dir.join("s").to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).starts_with("sensor.adc_bits: a series is written as 16-bit PGM"));
    assert!(!dir.join("s").exists(), "nothing written when refused");
    let out = run(&["simulate", &path, "--frame", png, "--size", "20000x20000"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).starts_with("size: "), "{}", stderr(&out));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn files_that_cannot_be_read_or_written_exit_1() {
    let out = run(&["simulate", "no-such-scenario.json", "--frame", "a.png"]);
    assert_eq!(out.status.code(), Some(1));
    assert!(stderr(&out).contains("cannot read no-such-scenario.json"));
    let dir = temp_dir("unwritable");
    let blocker = dir.join("file");
    std::fs::write(&blocker, b"x").unwrap();
    let inside = blocker.join("series");
    let path = demo("global-shutter-machine-vision");
    let out = run(&[
        "simulate",
        &path,
        "--series",
        inside.to_str().unwrap(),
        "--size",
        "4x4",
    ]);
    assert_eq!(out.status.code(), Some(1));
    assert!(stderr(&out).contains("cannot write"), "{}", stderr(&out));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn simulate_has_help_naming_its_options() {
    let out = run(&["simulate", "--help"]);
    assert_eq!(out.status.code(), Some(0));
    let help = String::from_utf8_lossy(&out.stdout);
    for option in [
        "--frame",
        "--series",
        "--seed",
        "--size",
        "--table",
        "manifest.json",
    ] {
        assert!(help.contains(option), "--help lacks {option}");
    }
}

#[test]
fn a_scenario_on_standard_input_and_a_seed_give_the_same_frame() {
    use std::io::Write;
    let dir = temp_dir("stdin");
    let (a, b, c) = (dir.join("a.pgm"), dir.join("b.pgm"), dir.join("c.pgm"));
    let path = demo("three-transistor-no-cds");
    let text = std::fs::read(&path).unwrap();
    let mut child = Command::new(BIN)
        .args([
            "simulate",
            "-",
            "--frame",
            a.to_str().unwrap(),
            "--size",
            "30x20",
            "--seed",
            "8",
        ])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    child.stdin.take().unwrap().write_all(&text).unwrap();
    assert!(child.wait_with_output().unwrap().status.success());
    for (file, seed) in [(&b, "8"), (&c, "9")] {
        let out = run(&[
            "simulate",
            &path,
            "--frame",
            file.to_str().unwrap(),
            "--size",
            "30x20",
            "--seed",
            seed,
        ]);
        assert!(out.status.success());
    }
    let pixels = |p: &PathBuf| {
        let f = engine::frames::decode(&std::fs::read(p).unwrap(), None).unwrap();
        f.pixels().to_vec()
    };
    assert_eq!(pixels(&a), pixels(&b));
    assert_ne!(pixels(&b), pixels(&c));
    let _ = std::fs::remove_dir_all(&dir);
}
