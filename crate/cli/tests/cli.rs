//! The `noise-budget` command as a user runs it: exit codes, output forms, errors on stderr.
//!
//! Runs the built binary; the figures themselves are checked in the engine's tests, so here
//! the CLI's JSON is only compared with the engine's own report for the same file.

use std::io::Write;
use std::process::{Command, Output, Stdio};

const BIN: &str = env!("CARGO_BIN_EXE_noise-budget");

fn run(args: &[&str], stdin: Option<&[u8]>) -> Output {
    let mut child = Command::new(BIN)
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary starts");
    if let Some(bytes) = stdin {
        child
            .stdin
            .take()
            .expect("stdin")
            .write_all(bytes)
            .expect("write stdin");
    } else {
        drop(child.stdin.take());
    }
    child.wait_with_output().expect("the binary finishes")
}

fn demo_paths() -> Vec<String> {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/../../www/demos");
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .expect("demo folder")
        .flatten()
        .map(|e| e.path().display().to_string())
        .filter(|p| p.ends_with(".json"))
        .collect();
    v.sort();
    v
}

/// The first demo without a colour filter array (its sensor has one QE).
fn mono_demo() -> String {
    demo_paths()
        .into_iter()
        .find(|p| {
            !std::fs::read_to_string(p)
                .unwrap_or_default()
                .contains("\"cfa\"")
        })
        .expect("a monochrome demo")
}

fn temp_file(name: &str, contents: &[u8]) -> String {
    let dir = std::env::temp_dir().join(format!("noise-budget-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let p = dir.join(name);
    std::fs::write(&p, contents).expect("write temp file");
    p.display().to_string()
}

#[test]
fn eval_prints_the_engines_report_for_every_demo() {
    let demos = demo_paths();
    assert!(
        demos.len() >= 4,
        "expected the demo scenarios, found {demos:?}"
    );
    for path in demos {
        let out = run(&["eval", &path], None);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{path}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let shown: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON on stdout");
        let text = std::fs::read_to_string(&path).expect("demo readable");
        let report = engine::evaluate_json(&text).expect("demo valid");
        assert_eq!(
            shown,
            serde_json::to_value(report).expect("serializes"),
            "{path}"
        );
    }
}

#[test]
fn eval_reads_standard_input() {
    let text = std::fs::read(mono_demo()).expect("demo");
    let out = run(&["eval", "-"], Some(&text));
    assert_eq!(out.status.code(), Some(0));
    assert!(serde_json::from_slice::<serde_json::Value>(&out.stdout).is_ok());
}

#[test]
fn the_table_shows_the_budget_and_the_warnings() {
    let path = demo_paths()
        .into_iter()
        .find(|p| p.contains("three-transistor"))
        .expect("3T demo");
    let out = run(&["eval", "--table", &path], None);
    assert_eq!(out.status.code(), Some(0));
    let t = String::from_utf8_lossy(&out.stdout);
    for needle in [
        "photon shot",
        "reset (kTC)",
        "quantization",
        "DSNU",
        "PRNU",
        "= total",
        "SNR",
        " dB",
        "minimum detectable",
        "saturation",
        "dynamic range",
        "exposure for SNR",
        "[reset_noise_dominates]",
    ] {
        assert!(t.contains(needle), "table lacks {needle:?}:\n{t}");
    }
}

#[test]
fn an_invalid_scenario_exits_2_with_every_problem_on_stderr() {
    let bad = br#"{"version": 1, "sensor": {"pixel_pitch_um": -1, "quantum_efficiency": 2,
        "full_well_e": 1000, "read_noise_e": 2, "dark_current_e_per_s": 0, "adc_bits": 12,
        "system_gain_dn_per_e": 0.3, "colour": 1}, "light": {"photons_per_pixel": 10},
        "exposure": {"time_s": 0}}"#;
    let out = run(&["eval", &temp_file("bad.json", bad)], None);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        out.stdout.is_empty(),
        "nothing on stdout for a refused scenario"
    );
    let err = String::from_utf8_lossy(&out.stderr);
    let lines: Vec<&str> = err.lines().collect();
    assert_eq!(
        lines,
        [
            "sensor.pixel_pitch_um: must be > 0, got -1",
            "sensor.quantum_efficiency: must be ≤ 1, got 2",
            "sensor.colour: unknown key; keys of your own must start with \"x_\"",
            "exposure.time_s: must be > 0, got 0",
        ]
    );
}

#[test]
fn malformed_input_exits_2_without_panicking() {
    for (name, bytes) in [
        ("empty.json", &b""[..]),
        ("truncated.json", &br#"{"version": 1, "sensor": {"#[..]),
        ("binary.json", &[0xff, 0xfe, 0x00, 0x12, 0x80][..]),
        ("list.json", &b"[1,2,3]"[..]),
        ("newer.json", &br#"{"version": 7}"#[..]),
    ] {
        let out = run(&["eval", &temp_file(name, bytes)], None);
        assert_eq!(out.status.code(), Some(2), "{name}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(!err.contains("panicked"), "{name}: {err}");
        assert!(
            err.starts_with("scenario:") || err.starts_with("version:"),
            "{name}: {err}"
        );
    }
}

#[test]
fn a_missing_file_exits_1() {
    let out = run(&["eval", "/nonexistent/scenario.json"], None);
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot read /nonexistent/scenario.json"));
}

#[test]
fn example_prints_a_valid_scenario_and_lists_the_demos() {
    let out = run(&["example"], None);
    assert_eq!(out.status.code(), Some(0));
    let again = run(&["eval", "-"], Some(&out.stdout));
    assert_eq!(
        again.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&again.stderr)
    );
    let list = run(&["example", "--list"], None);
    let names: Vec<String> = String::from_utf8_lossy(&list.stdout)
        .lines()
        .filter_map(|l| l.split_whitespace().next().map(String::from))
        .collect();
    assert_eq!(names.len(), demo_paths().len(), "every demo file is listed");
    for n in names {
        let out = run(&["example", &n], None);
        assert_eq!(out.status.code(), Some(0), "{n}");
        assert!(
            engine::evaluate_json(&String::from_utf8_lossy(&out.stdout)).is_ok(),
            "{n}"
        );
    }
    let unknown = run(&["example", "no-such-demo"], None);
    assert_eq!(unknown.status.code(), Some(2));
}

#[test]
fn every_command_has_help() {
    for args in [
        &["--help"][..],
        &["eval", "--help"],
        &["example", "--help"],
        &["sweep", "--help"],
        &["help", "eval"],
    ] {
        let out = run(args, None);
        assert_eq!(out.status.code(), Some(0), "{args:?}");
        assert!(
            String::from_utf8_lossy(&out.stdout).contains("Usage"),
            "{args:?}"
        );
    }
}

#[test]
fn sweep_writes_csv_that_a_general_purpose_reader_parses() {
    let path = demo_paths()
        .into_iter()
        .find(|p| p.contains("cooled"))
        .expect("demo");
    let out = run(
        &[
            "sweep",
            "--vary",
            "exposure.time_s",
            "--from",
            "1e-4",
            "--to",
            "1",
            "--points",
            "200",
            "--log",
            &path,
        ],
        None,
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // Python's standard csv module (RFC 4180 dialect "excel") as the independent reader.
    let script = "import csv, sys\n\
        rows = list(csv.reader(sys.stdin))\n\
        assert rows[0][0] == 'exposure.time_s [s]', rows[0][0]\n\
        assert all(len(r) == len(rows[0]) for r in rows), 'ragged rows'\n\
        t = [float(r[0]) for r in rows[1:]]\n\
        assert len(t) == 200 and t[0] == 1e-4 and t[-1] == 1.0, (len(t), t[0], t[-1])\n\
        assert all(a < b for a, b in zip(t, t[1:])), 'not increasing'\n\
        i = rows[0].index('snr.temporal [ratio]')\n\
        s = [float(r[i]) for r in rows[1:]]\n\
        assert all(a < b for a, b in zip(s, s[1:])), 'SNR not rising with exposure'\n\
        print(len(rows) - 1)\n";
    let mut child = Command::new("python3")
        .args(["-c", script])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("python3 runs");
    child
        .stdin
        .take()
        .expect("stdin")
        .write_all(&out.stdout)
        .expect("pipe csv");
    let py = child.wait_with_output().expect("python3 finishes");
    assert!(
        py.status.success(),
        "python csv check failed: {}",
        String::from_utf8_lossy(&py.stderr)
    );
    assert_eq!(String::from_utf8_lossy(&py.stdout).trim(), "200");
}

#[test]
fn sweep_json_and_bad_ranges() {
    // A monochrome demo: its single QE is a key a sweep may vary.
    let path = mono_demo();
    let out = run(
        &[
            "sweep",
            "--vary",
            "temperature_c",
            "--from",
            "-20",
            "--to",
            "40",
            "--points",
            "4",
            "--format",
            "json",
            &path,
        ],
        None,
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON");
    assert_eq!(v["points"].as_array().map(Vec::len), Some(4));
    assert_eq!(v["unit"], "°C");
    let bad = run(
        &[
            "sweep",
            "--vary",
            "sensor.quantum_efficiency",
            "--from",
            "0.5",
            "--to",
            "2",
            &path,
        ],
        None,
    );
    assert_eq!(bad.status.code(), Some(2));
    assert_eq!(
        String::from_utf8_lossy(&bad.stderr).trim(),
        "sweep.to: at 2: sensor.quantum_efficiency: must be ≤ 1, got 2"
    );
}

/// REFERENCES.md §8's case as a scenario: σ_r = 1 e⁻, dark 0.01 e⁻, quantization negligible
/// (K = 1000 DN/e⁻), p_fa 1e-3, one pixel searched.
const DETECTION_SCENARIO: &str = r#"{"version":1,"sensor":{"pixel_pitch_um":3.45,
  "quantum_efficiency":0.5,"full_well_e":10000,"read_noise_e":1.0,"dark_current_e_per_s":1,
  "adc_bits":32,"system_gain_dn_per_e":1000},"light":{"photons_per_pixel":6.52},
  "exposure":{"time_s":0.01},"detection":{"pixels":1}}"#;

#[test]
fn the_table_shows_the_detection_figures() {
    let path = temp_file("detection.json", DETECTION_SCENARIO.as_bytes());
    let out = run(&["eval", "--table", &path], None);
    assert_eq!(out.status.code(), Some(0));
    let t = String::from_utf8_lossy(&out.stdout);
    // REFERENCES.md §8, σ_r = 1.0, to the table's 4 digits: τ 3.1409 (Gauss 3.1156),
    // s50 3.2600 (Gauss 3.1056); one pixel: the frame's false alarm is the pixel's.
    for needle in [
        "detection (false alarm 0.001 per pixel, 1 pixels per frame",
        "threshold                 3.141 e⁻ (3.116 e⁻), false alarm achieved 0.001",
        "signal for p_d 0.5        3.26 e⁻ (3.106 e⁻)",
        "detection probability     0.5 (",
        "false alarm per frame     0.001;",
        "read noise (Gaussian)     1 e⁻ rms",
        "photon counting           miscount 0.6171 (interior)",
        "not photon-number resolving",
        "contrast detection prob.",
        "(contrast 0.1, interval ±0.5 of it)",
    ] {
        assert!(t.contains(needle), "table lacks {needle:?}:\n{t}");
    }
    // A million pixels searched: a false alarm in nearly every frame (1 − (1 − 1e-3)^1e6),
    // and the warning that says so, in the table too.
    let many = DETECTION_SCENARIO.replace(
        r#""detection":{"pixels":1}"#,
        r#""detection":{"pixels":1000000}"#,
    );
    let path = temp_file("detection-many.json", many.as_bytes());
    let t = String::from_utf8_lossy(&run(&["eval", "--table", &path], None).stdout).to_string();
    assert!(t.contains("1000000 pixels per frame"), "{t}");
    assert!(t.contains("[detection_frame_false_alarm_likely]"), "{t}");
    // The default is one pixel: no such warning.
    let defaults = DETECTION_SCENARIO.replace(r#""detection":{"pixels":1}"#, r#""x_note":0"#);
    let path = temp_file("detection-defaults.json", defaults.as_bytes());
    let t = String::from_utf8_lossy(&run(&["eval", "--table", &path], None).stdout).to_string();
    assert!(!t.contains("[detection_frame_false_alarm_likely]"), "{t}");
}

#[test]
fn sweep_has_the_detection_columns() {
    let path = temp_file("detection-sweep.json", DETECTION_SCENARIO.as_bytes());
    let args = [
        "sweep",
        "--vary",
        "sensor.read_noise_e",
        "--from",
        "1",
        "--to",
        "3",
        "--points",
        "5",
        &path,
    ];
    let csv = run(&args, None);
    assert_eq!(
        csv.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&csv.stderr)
    );
    let text = String::from_utf8_lossy(&csv.stdout);
    let rows: Vec<Vec<&str>> = text
        .lines()
        .map(|l| l.trim_end_matches('\r').split(',').collect())
        .collect();
    let mut json_args = args.to_vec();
    json_args.splice(9..9, ["--format", "json"]);
    let json: serde_json::Value =
        serde_json::from_slice(&run(&json_args, None).stdout).expect("sweep JSON");
    for (column, name) in [
        ("detection.signal_e [e-]", "signal_e"),
        (
            "detection.detection_probability [fraction]",
            "detection_probability",
        ),
        (
            "detection.contrast_detection_probability [fraction]",
            "contrast_detection_probability",
        ),
    ] {
        let i = rows[0]
            .iter()
            .position(|h| *h == column)
            .unwrap_or_else(|| panic!("no column {column}: {:?}", rows[0]));
        for (row, point) in rows[1..]
            .iter()
            .zip(json["points"].as_array().expect("points"))
        {
            let want = point["report"]["detection"][name].as_f64().expect(name);
            let got: f64 = row[i].parse().expect("a number");
            assert_eq!(got, want, "{column}"); // the same engine double, shortest form both
        }
    }
    // Above 1 e⁻ (where the charge's comb is blurred, REFERENCES.md §8) the exact s50 grows
    // with the read noise: more Gaussian noise, a higher threshold.
    let i = rows[0]
        .iter()
        .position(|h| *h == "detection.signal_e [e-]")
        .expect("column");
    let s: Vec<f64> = rows[1..]
        .iter()
        .map(|r| r[i].parse().expect("number"))
        .collect();
    assert!(s.windows(2).all(|w| w[0] < w[1]), "{s:?}");
}
