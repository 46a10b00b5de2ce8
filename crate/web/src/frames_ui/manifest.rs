//! The table as a manifest for the worker (format version 1, the file names as paths), with
//! the raw size, the region of interest, the colour filter layout and the bit depth.

use serde_json::{json, Map, Value};
use web_sys::{HtmlInputElement, HtmlSelectElement};

use super::table::{row_input, row_kind, rows};
use super::ROI;
use crate::dom;
use crate::fields::{self, Kind};

fn input_text(id: &'static str) -> String {
    dom::by_id_as::<HtmlInputElement>(id)
        .map(|i| i.value().trim().to_string())
        .unwrap_or_default()
}

/// A typed value as JSON, read as the scenario form reads a number field: nothing when empty,
/// a number when it reads as one, else the text itself, so that the engine names the key and
/// shows what was typed.
fn typed(text: &str) -> Option<Value> {
    fields::value_for(text, Kind::Number)
}

/// The table as a manifest (format version 1, the file names as paths), in the order of the
/// rows, which is the order of [`FILES`](super::FILES). It checks nothing: the worker's engine does.
pub(super) fn manifest() -> Value {
    let mut frames = Vec::new();
    for row in rows() {
        let mut entry = Map::new();
        entry.insert(
            "path".into(),
            Value::String(row.get_attribute("data-file").unwrap_or_default()),
        );
        if let Some(kind) = row_kind(&row).map(|s| s.value()) {
            if !kind.is_empty() {
                entry.insert("kind".into(), Value::String(kind));
            }
        }
        for (key, class) in [
            ("exposure_time_s", "measure-exposure"),
            ("photons_per_pixel", "measure-photons"),
        ] {
            let text = row_input(&row, class)
                .map(|i| i.value())
                .unwrap_or_default();
            if let Some(v) = typed(&text) {
                entry.insert(key.into(), v);
            }
        }
        let level = row_input(&row, "measure-level")
            .map(|i| i.value().trim().to_string())
            .unwrap_or_default();
        if !level.is_empty() {
            entry.insert("level".into(), Value::String(level));
        }
        frames.push(Value::Object(entry));
    }
    let mut m = Map::new();
    m.insert("version".into(), json!(1));
    let mut raw = Map::new();
    for (key, id) in [
        ("width", input_text("measure-raw-width")),
        ("height", input_text("measure-raw-height")),
        ("bits", input_text("measure-raw-bits")),
    ] {
        if let Some(v) = typed(&id) {
            raw.insert(key.into(), v);
        }
    }
    if !raw.is_empty() {
        m.insert("raw".into(), Value::Object(raw));
    }
    if let Some(roi) = ROI.with(|r| r.borrow().clone()) {
        m.insert("roi".into(), roi);
    }
    let cfa = dom::by_id_as::<HtmlSelectElement>("measure-cfa")
        .map(|s| s.value())
        .unwrap_or_default();
    if !cfa.is_empty() && cfa != "mono" {
        m.insert("cfa".into(), Value::String(cfa));
    }
    if let Some(v) = typed(&input_text("measure-bits")) {
        m.insert("significant_bits".into(), v);
    }
    m.insert("frames".into(), Value::Array(frames));
    Value::Object(m)
}
