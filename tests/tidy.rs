//! Tidy: mechanical consistency checks of the source tree, run as ordinary tests.
//!
//! They read files as text and check conventions (module doc lines, dependency direction,
//! element ids, the test command); they check no physics.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

use std::fs;
use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

fn read(rel: &str) -> String {
    fs::read_to_string(root().join(rel)).unwrap_or_else(|e| panic!("cannot read {rel}: {e}"))
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        let name = p
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        if p.is_dir() {
            if name != "target" && name != "node_modules" && !name.starts_with('.') {
                rust_files(&p, out);
            }
        } else if name.ends_with(".rs") {
            out.push(p);
        }
    }
}

#[test]
fn every_rust_file_opens_with_a_module_doc_line() {
    let mut files = Vec::new();
    rust_files(&root().join("crate"), &mut files);
    rust_files(&root().join("tests"), &mut files);
    assert!(files.len() > 10, "found only {} .rs files", files.len());
    let missing: Vec<String> = files
        .iter()
        .filter(|p| !fs::read_to_string(p).unwrap_or_default().starts_with("//!"))
        .map(|p| p.display().to_string())
        .collect();
    assert!(
        missing.is_empty(),
        "files without a leading `//!` line:\n{}",
        missing.join("\n")
    );
}

/// Crates that only make sense in a browser; the engine must never depend on them.
const WEB_CRATES: &[&str] = &[
    "wasm-bindgen",
    "web-sys",
    "js-sys",
    "serde-wasm-bindgen",
    "wasm-bindgen-futures",
    "gloo",
    "console_error_panic_hook",
];

#[test]
fn the_engine_has_no_web_crates_and_no_io() {
    let manifest = read("crate/engine/Cargo.toml");
    for c in WEB_CRATES {
        let as_dep = manifest.lines().any(|l| {
            let l = l.trim_start();
            l.starts_with(&format!("{c} "))
                || l.starts_with(&format!("{c}="))
                || l.contains(&format!("\"{c}\""))
        });
        assert!(
            !as_dep,
            "crate/engine/Cargo.toml depends on the web crate {c}"
        );
    }
    let mut files = Vec::new();
    rust_files(&root().join("crate/engine/src"), &mut files);
    for f in files {
        let text = fs::read_to_string(&f).unwrap_or_default();
        for banned in [
            "std::fs",
            "std::net",
            "std::env",
            "println!",
            "eprintln!",
            "std::io::stdin",
        ] {
            assert!(
                !text.contains(banned),
                "{} uses {banned}: the engine does no I/O",
                f.display()
            );
        }
    }
}

#[test]
fn the_frame_worker_has_no_dom_and_the_page_no_frame_decoders() {
    let worker = read("crate/frames-worker/Cargo.toml");
    assert!(
        !worker
            .lines()
            .any(|l| l.trim_start().starts_with("web-sys") || l.contains("\"web-sys\"")),
        "crate/frames-worker runs in a Web Worker and must not depend on web-sys (no DOM)"
    );
    let web = read("crate/web/Cargo.toml");
    assert!(
        web.lines().any(|l| l.starts_with("noise-budget-engine")
            && l.contains("default-features = false")),
        "crate/web must use the engine without its png/tiff features: the page's wasm decodes no frame"
    );
}

#[test]
fn every_element_the_web_crate_looks_up_exists_in_the_page() {
    let web_src = root().join("crate/web/src");
    if !web_src.exists() {
        return; // the page is not built yet
    }
    let html = read("www/index.html");
    let mut files = Vec::new();
    rust_files(&web_src, &mut files);
    let mut looked_up = 0;
    for f in files {
        let text = fs::read_to_string(&f).unwrap_or_default();
        for (i, _) in text.match_indices("by_id(\"") {
            let rest = text.get(i + 7..).unwrap_or_default();
            let id = rest.split('"').next().unwrap_or_default();
            looked_up += 1;
            assert!(
                html.contains(&format!("id=\"{id}\"")),
                "{} looks up #{id}, which www/index.html does not have",
                f.display()
            );
        }
    }
    assert!(
        looked_up > 0,
        "the web crate looks up no element by a literal id"
    );
}

#[test]
fn ci_runs_the_readme_test_command() {
    let ci = read(".ci/run");
    assert!(
        ci.contains("exec scripts/test"),
        ".ci/run must call scripts/test"
    );
    let readme = read("README.md");
    assert!(
        readme.contains("scripts/test"),
        "README must give scripts/test as the test command"
    );
}
