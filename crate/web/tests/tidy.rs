//! Tidy checks for the page, run natively by `cargo test`: the web crate and `www/index.html`
//! agree (ids, names, report paths), and every source file says what it is for. The generated
//! field markup is checked by `markup.rs` beside this file.
//!
//! They read files and the engine's output only; they drive no browser (the page tests do).

#![cfg(not(target_arch = "wasm32"))]

use std::fs;
use std::path::{Path, PathBuf};

use noise_budget_web::demos::DEMOS;
use noise_budget_web::fields::value_at;

fn crate_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn read(path: &Path) -> String {
    let text = fs::read_to_string(path);
    assert!(text.is_ok(), "cannot read {}", path.display());
    text.unwrap_or_default()
}

fn index_html() -> String {
    read(&crate_dir().join("../../www/index.html"))
}

fn rust_sources() -> Vec<PathBuf> {
    fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
        let entries = fs::read_dir(dir);
        assert!(entries.is_ok(), "cannot list {}", dir.display());
        for e in entries.into_iter().flatten().flatten() {
            let p = e.path();
            if p.is_dir() {
                walk(&p, out);
            } else if p.extension().and_then(|x| x.to_str()) == Some("rs") {
                out.push(p);
            }
        }
    }
    let mut out = Vec::new();
    for dir in ["src", "tests"] {
        walk(&crate_dir().join(dir), &mut out);
    }
    out.sort();
    out
}

/// The ids of `src/ids.rs`: (constant name, id).
fn id_constants() -> Vec<(String, String)> {
    let text = read(&crate_dir().join("src/ids.rs"));
    text.lines()
        .filter_map(|l| {
            let rest = l.trim().strip_prefix("pub const ")?;
            let (name, value) = rest.split_once(": &str = \"")?;
            let value = value.strip_suffix("\";")?;
            Some((name.to_string(), value.to_string()))
        })
        .collect()
}

/// Files that still look ids up by literal (checked against the page all the same): the
/// frame measurement's section (the files of `src/frames_ui/`), until its ids move to `ids.rs`.
const LITERAL_IDS_ALLOWED: &[&str] = &["frames_ui/"];

/// Every value of `attr="…"` in the HTML text.
fn attribute_values(html: &str, attr: &str) -> Vec<String> {
    let needle = format!(" {attr}=\"");
    html.match_indices(&needle)
        .filter_map(|(i, _)| {
            let rest = html.get(i + needle.len()..)?;
            rest.find('"')
                .and_then(|end| rest.get(..end))
                .map(str::to_string)
        })
        .collect()
}

/// The functions that look an element up by id: the DOM helper and the helpers that forward
/// their own `id: &'static str` parameter to it.
const LOOKUPS: &[&str] = &["by_id", "by_id_as", "on_id", "set_text_of"];

/// An id argument of a look-up in a Rust source.
#[derive(Debug)]
enum Arg {
    /// A string literal.
    Literal(String),
    /// A constant of `ids.rs` (`ids::STATUS`).
    Constant(String),
    /// Anything else (the text that starts it).
    Other(String),
}

/// Every id argument of a look-up in a Rust source, except a helper forwarding its own `id`
/// parameter.
fn looked_up_ids(src: &str) -> Vec<Arg> {
    let mut out = Vec::new();
    for name in LOOKUPS {
        for (i, _) in src.match_indices(name) {
            let before = src.get(..i).and_then(|b| b.chars().last());
            if before.is_some_and(|c| c.is_alphanumeric() || c == '_') {
                continue; // part of a longer name
            }
            let Some(rest) = src.get(i + name.len()..) else {
                continue;
            };
            let rest = match rest.strip_prefix("::<") {
                Some(r) => r.split_once(">(").map_or("", |(_, after)| after),
                None => match rest.strip_prefix('(') {
                    Some(r) => r,
                    None => continue, // another look-up name's prefix, or not a call
                },
            };
            let rest = rest.trim_start();
            if rest.starts_with("id: ") || rest.starts_with("id)") || rest.starts_with("id,") {
                continue; // the helper's own signature, or forwarding its parameter
            }
            if let Some((id, _)) = rest.strip_prefix('"').and_then(|a| a.split_once('"')) {
                out.push(Arg::Literal(id.to_string()));
            } else if let Some(c) = rest.strip_prefix("ids::") {
                let name: String = c
                    .chars()
                    .take_while(|c| c.is_ascii_uppercase() || c.is_ascii_digit() || *c == '_')
                    .collect();
                out.push(Arg::Constant(name));
            } else {
                out.push(Arg::Other(rest.chars().take(40).collect()));
            }
        }
    }
    out
}

/// The `name`s of the scenario form's fields.
fn form_field_names() -> Vec<String> {
    let html = index_html();
    let form = html
        .split_once("<form")
        .and_then(|(_, rest)| rest.split_once("</form>"))
        .map(|(form, _)| form.to_string());
    assert!(form.is_some(), "www/index.html has no form");
    attribute_values(&form.unwrap_or_default(), "name")
}

#[test]
fn every_rust_file_opens_with_a_purpose_line() {
    for path in rust_sources() {
        let text = read(&path);
        assert!(
            text.starts_with("//!"),
            "{} must open with a `//!` line saying what it is for and what it does not do",
            path.display()
        );
    }
}

#[test]
fn every_id_constant_exists_in_index_html() {
    let ids = attribute_values(&index_html(), "id");
    let constants = id_constants();
    assert!(
        constants.len() > 30,
        "found only {} id constants: is the scan broken?",
        constants.len()
    );
    for (name, id) in &constants {
        assert!(
            ids.contains(id),
            "ids::{name} is #{id}, which www/index.html lacks"
        );
    }
}

#[test]
fn every_id_the_web_crate_looks_up_exists_in_index_html() {
    let ids = attribute_values(&index_html(), "id");
    let constants = id_constants();
    let mut checked = 0;
    for path in rust_sources()
        .into_iter()
        .filter(|p| p.starts_with(crate_dir().join("src")))
    {
        let file = path
            .strip_prefix(crate_dir().join("src"))
            .unwrap_or(&path)
            .to_string_lossy()
            .replace('\\', "/");
        for found in looked_up_ids(&read(&path)) {
            match found {
                Arg::Constant(name) => {
                    assert!(
                        constants.iter().any(|(n, _)| *n == name),
                        "{} looks up ids::{name}, which src/ids.rs lacks",
                        path.display()
                    );
                    checked += 1;
                }
                Arg::Literal(id) if LITERAL_IDS_ALLOWED.iter().any(|a| file.starts_with(a)) => {
                    assert!(
                        ids.contains(&id),
                        "{} looks up #{id}, which www/index.html lacks",
                        path.display()
                    );
                    checked += 1;
                }
                Arg::Literal(id) => panic_free_fail(&format!(
                    "{}: looks up #{id} by a literal; name it in src/ids.rs and use ids::…",
                    path.display()
                )),
                Arg::Other(arg) => panic_free_fail(&format!(
                    "{}: by_id must be called with an ids:: constant, got `{arg}`",
                    path.display()
                )),
            }
        }
    }
    assert!(
        checked > 40,
        "found only {checked} id look-ups: is the scan broken?"
    );
}

fn panic_free_fail(msg: &str) {
    assert!(msg.is_empty(), "{msg}");
}

#[test]
fn ids_in_index_html_are_unique() {
    let ids = attribute_values(&index_html(), "id");
    for id in &ids {
        assert_eq!(
            ids.iter().filter(|x| *x == id).count(),
            1,
            "duplicate id {id}"
        );
    }
}

#[test]
fn every_report_path_on_the_page_exists_in_a_report() {
    let html = index_html();
    let mut paths = attribute_values(&html, "data-report");
    paths.extend(attribute_values(&html, "data-share"));
    paths.extend(attribute_values(&html, "data-shown-if"));
    assert!(paths.len() > 40, "found only {} report paths", paths.len());
    // A table's row template names its cells by the item's index `{i}`: the first item's paths
    // must exist, and the table's own path must be a list.
    let paths: Vec<String> = paths.iter().map(|p| p.replace("{i}", "0")).collect();
    let lists = attribute_values(&html, "data-rows");
    assert!(
        lists.len() >= 4,
        "found only {} tables of rows",
        lists.len()
    );
    // noise_uv is null without a conversion gain: the demo with one shows every path.
    let mut reports = Vec::new();
    for d in DEMOS {
        let report = engine::evaluate_json(d.json);
        assert!(report.is_ok(), "{}", d.name);
        if let Ok(r) = report {
            let v = serde_json::to_value(&r);
            assert!(v.is_ok());
            reports.push(v.unwrap_or_default());
        }
    }
    for p in &paths {
        let present = reports.iter().any(|r| {
            // A key whose value is null exists; `value_at` skips nulls, so look at the parent.
            value_at(r, p).is_some()
                || p.rsplit_once('.').map_or_else(
                    || r.get(p).is_some(),
                    |(parent, key)| value_at(r, parent).and_then(|o| o.get(key)).is_some(),
                )
        });
        assert!(present, "data-report=\"{p}\" is not a path of the report");
    }
    for l in &lists {
        assert!(
            reports
                .iter()
                .any(|r| value_at(r, l).is_some_and(serde_json::Value::is_array)),
            "data-rows=\"{l}\" is not a list in any demo's report"
        );
    }
}

#[test]
fn every_leaf_of_a_version_1_demo_has_a_field_named_by_its_path() {
    // Every key of every demo has a field (lists such as spectra and QE curves are one field,
    // a box of pasted pairs); nothing a demo uses needs the "other scenario keys" box.
    let additions: [&str; 0] = [];
    let names = form_field_names();
    let mut checked = 0;
    for d in DEMOS
        .iter()
        .filter(|d| !additions.iter().any(|a| d.json.contains(a)))
    {
        checked += 1;
        let v: serde_json::Value = serde_json::from_str(d.json).unwrap_or_default();
        let mut leaves = Vec::new();
        collect_leaves(&v, String::new(), &mut leaves);
        for path in leaves {
            if path == "version" {
                continue; // written by the page, not typed
            }
            // A list of objects (an HDR readout's exposures) has a row of fields per element.
            let rows = names.iter().any(|n| {
                n.strip_prefix(path.as_str())
                    .is_some_and(|r| r.starts_with('['))
            });
            assert!(
                names.contains(&path) || rows,
                "demo {}: no form field named \"{path}\"",
                d.name
            );
        }
    }
    assert!(checked >= 6, "only {checked} demos");
    for n in &names {
        assert!(
            !n.starts_with("x_"),
            "form field names are scenario keys, not extensions: {n}"
        );
    }
}

fn collect_leaves(v: &serde_json::Value, prefix: String, out: &mut Vec<String>) {
    match v {
        serde_json::Value::Object(m) => {
            for (k, child) in m {
                let p = if prefix.is_empty() {
                    k.clone()
                } else {
                    format!("{prefix}.{k}")
                };
                collect_leaves(child, p, out);
            }
        }
        _ => out.push(prefix),
    }
}

#[test]
fn every_form_field_is_a_scenario_key_the_engine_accepts() {
    // Each named field is a key of the engine's catalogue (at one of its places; a row of a
    // list of objects by its element), and each key a demo uses has a field. The catalogue
    // itself is checked against the validator in the engine (`keys/tests.rs`).
    let names = form_field_names();
    assert!(names.len() >= 22, "found only {} named fields", names.len());
    for name in &names {
        let general = strip_indices(name);
        assert!(
            engine::keys::find(&general).is_some(),
            "field {name} is not a key of the engine's catalogue"
        );
    }
    for d in DEMOS {
        let v: serde_json::Value = serde_json::from_str(d.json).unwrap_or_default();
        let mut leaves = Vec::new();
        collect_leaves(&v, String::new(), &mut leaves);
        for leaf in leaves.iter().filter(|l| *l != "version") {
            let known = engine::keys::find(leaf).is_some();
            assert!(known, "{}: {leaf} is not a key of the catalogue", d.name);
        }
    }
}

/// `hdr.exposures[1].ratio` as the catalogue writes it, `hdr.exposures[].ratio`.
fn strip_indices(path: &str) -> String {
    let mut out = String::new();
    let mut in_index = false;
    for c in path.chars() {
        match c {
            '[' => {
                in_index = true;
                out.push('[');
            }
            ']' => {
                in_index = false;
                out.push(']');
            }
            _ if in_index => {}
            _ => out.push(c),
        }
    }
    out
}
