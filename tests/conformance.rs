//! Conformance: the engine's reports against the vectors of `../shared/conformance/`.
//!
//! Source: an independent implementation of SCENARIO.md (shared/conformance/README.md).
//! Checks arithmetic against the format, not physics (that is `reference.rs`).

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use std::path::{Path, PathBuf};

use serde_json::Value;

/// Relative tolerance the conformance README sets for every number.
const REL_TOL: f64 = 1e-6;
/// Absolute tolerance near zero, from the same README.
const ABS_TOL: f64 = 1e-9;

fn conformance_dir() -> PathBuf {
    // The shared folder sits beside the project root (../shared from the root).
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../../shared/conformance")
}

/// Compare `expected` with `actual`, key by key; extra keys in `actual` are allowed.
fn check(path: &str, expected: &Value, actual: &Value, failures: &mut Vec<String>) {
    match (expected, actual) {
        (Value::Object(e), Value::Object(a)) => {
            for (k, ev) in e {
                let p = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                match a.get(k) {
                    Some(av) => check(&p, ev, av, failures),
                    None => failures.push(format!("{p}: missing from the report")),
                }
            }
        }
        (Value::Number(e), Value::Number(a)) => {
            let (e, a) = (
                e.as_f64().unwrap_or(f64::NAN),
                a.as_f64().unwrap_or(f64::NAN),
            );
            let ok = (e - a).abs() <= ABS_TOL || (e - a).abs() <= REL_TOL * e.abs();
            if !ok {
                failures.push(format!("{path}: expected {e}, got {a}"));
            }
        }
        (e, a) if e == a => {}
        (e, a) => failures.push(format!("{path}: expected {e}, got {a}")),
    }
}

#[test]
fn every_conformance_vector_matches() {
    let dir = conformance_dir();
    let mut cases = 0;
    let mut failures = Vec::new();
    let mut entries: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        .filter(|p| !p.to_string_lossy().ends_with(".report.json"))
        .collect();
    entries.sort();
    for scenario_path in entries {
        let report_path = scenario_path.with_extension("report.json");
        let text = std::fs::read_to_string(&scenario_path).expect("scenario readable");
        let expected: Value =
            serde_json::from_str(&std::fs::read_to_string(&report_path).expect("report readable"))
                .expect("report is JSON");
        let report = engine::evaluate_json(&text)
            .unwrap_or_else(|e| panic!("{} refused:\n{e}", scenario_path.display()));
        let actual = serde_json::to_value(&report).expect("report serializes");
        let name = scenario_path
            .file_name()
            .unwrap_or_default()
            .to_string_lossy()
            .to_string();
        let mut f = Vec::new();
        check("", &expected, &actual, &mut f);
        failures.extend(f.into_iter().map(|m| format!("{name}: {m}")));
        cases += 1;
    }
    assert!(
        cases >= 4,
        "expected at least 4 conformance vectors in {}, found {cases}",
        dir.display()
    );
    assert!(
        failures.is_empty(),
        "conformance failures:\n{}",
        failures.join("\n")
    );
}
