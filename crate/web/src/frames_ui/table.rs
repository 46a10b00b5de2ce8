//! The file table: the rows of chosen frame files (a file chosen again replaces the earlier
//! one), and a dropped or chosen manifest filling it in, matched by file name.

use serde_json::Value;
use wasm_bindgen::JsCast;
use web_sys::{Element, File, FileList, HtmlInputElement, HtmlSelectElement};

use super::run::end_run;
use super::{show_problems, status, FILES, ROI};
use crate::dom;
use crate::events::when_settled;

fn is_manifest(f: &File) -> bool {
    let name = f.name().to_ascii_lowercase();
    name.ends_with(".json") || f.type_() == "application/json"
}

pub(super) fn add_files(list: &FileList) {
    show_problems(&[]);
    let mut manifests = Vec::new();
    for i in 0..list.length() {
        let Some(f) = list.get(i) else { continue };
        if is_manifest(&f) {
            manifests.push(f);
        } else {
            add_frame_file(f);
        }
    }
    let count = FILES.with(|fs| fs.borrow().len());
    if let Some(t) = dom::by_id("measure-table") {
        dom::set_hidden(&t, count == 0);
    }
    status(&format!(
        "{count} frame file{} listed. Say what each is, then Analyse.",
        if count == 1 { "" } else { "s" }
    ));
    for m in manifests {
        let name = m.name();
        let failed_name = name.clone();
        when_settled(
            &m.text(),
            move |v| apply_manifest(&name, &v.as_string().unwrap_or_default()),
            move |_| show_problems(&[format!("{failed_name}: the browser could not read it")]),
        );
    }
}

pub(super) fn add_frame_file(f: File) {
    let Some(body) = dom::by_id("measure-rows") else {
        return;
    };
    let name = f.name();
    // A file chosen again under the same name replaces the earlier one.
    let existing = FILES.with(|fs| fs.borrow().iter().position(|g| g.name() == name));
    if let Some(i) = existing {
        FILES.with(|fs| {
            if let Some(slot) = fs.borrow_mut().get_mut(i) {
                *slot = f;
            }
        });
        return;
    }
    let Some(tr) = dom::new_element("tr", "") else {
        return;
    };
    dom::set_attr(&tr, "data-file", &name);
    let cell = |text: &str, class: &str| {
        let td = dom::new_element("td", text)?;
        dom::set_attr(&td, "class", class);
        let _ = tr.append_child(&td);
        Some(td)
    };
    let _ = cell(&name, "measure-name");
    let _ = cell("not read yet", "measure-size");
    if let Some(td) = cell("", "") {
        if let Some(sel) = dom::new_element("select", "") {
            dom::set_attr(&sel, "class", "measure-kind");
            dom::set_attr(&sel, "aria-label", &format!("kind of {name}"));
            for (value, label) in [("", "choose"), ("dark", "dark"), ("flat", "flat")] {
                if let Some(o) = dom::new_element("option", label) {
                    dom::set_attr(&o, "value", value);
                    let _ = sel.append_child(&o);
                }
            }
            let _ = td.append_child(&sel);
        }
    }
    for (class, what) in [
        ("measure-exposure", "exposure time in seconds"),
        ("measure-level", "level label"),
        ("measure-photons", "photons per pixel"),
    ] {
        if let Some(td) = cell("", "") {
            if let Some(input) = dom::new_element("input", "") {
                dom::set_attr(&input, "class", class);
                dom::set_attr(&input, "aria-label", &format!("{what} of {name}"));
                dom::set_attr(&input, "autocomplete", "off");
                let _ = td.append_child(&input);
            }
        }
    }
    let _ = body.append_child(&tr);
    FILES.with(|fs| fs.borrow_mut().push(f));
}

pub(super) fn clear_files() {
    end_run();
    FILES.with(|fs| fs.borrow_mut().clear());
    ROI.with(|r| *r.borrow_mut() = None);
    if let Some(body) = dom::by_id("measure-rows") {
        dom::clear(&body);
    }
    if let Some(t) = dom::by_id("measure-table") {
        dom::set_hidden(&t, true);
    }
    show_problems(&[]);
    status("The list is empty.");
}

pub(super) fn rows() -> Vec<Element> {
    dom::by_id("measure-rows").map_or_else(Vec::new, |b| dom::all(&b, "tr"))
}

pub(super) fn row_input(row: &Element, class: &str) -> Option<HtmlInputElement> {
    row.query_selector(&format!("input.{class}"))
        .ok()
        .flatten()
        .and_then(|e| e.dyn_into::<HtmlInputElement>().ok())
}

pub(super) fn row_kind(row: &Element) -> Option<HtmlSelectElement> {
    row.query_selector("select.measure-kind")
        .ok()
        .flatten()
        .and_then(|e| e.dyn_into::<HtmlSelectElement>().ok())
}

fn text_of(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        // serde_json's writer, not `Display` (which would link Rust's float formatting).
        Value::Number(_) => serde_json::to_string(v).unwrap_or_default(),
        _ => String::new(),
    }
}

/// Fill the table from a manifest: each entry's file is matched by its name.
pub(super) fn apply_manifest(manifest_name: &str, text: &str) {
    let v: Value = match serde_json::from_str(text) {
        Ok(v) => v,
        Err(e) => {
            show_problems(&[format!("{manifest_name}: not valid JSON: {e}")]);
            return;
        }
    };
    let mut problems = Vec::new();
    let rows = rows();
    let frames = v.get("frames").and_then(Value::as_array);
    let Some(frames) = frames else {
        show_problems(&[format!("{manifest_name}: no \"frames\" list")]);
        return;
    };
    let mut matched = 0;
    for (i, entry) in frames.iter().enumerate() {
        let path = entry.get("path").map(text_of).unwrap_or_default();
        let base = path.rsplit(['/', '\\']).next().unwrap_or_default();
        let row = rows
            .iter()
            .find(|r| r.get_attribute("data-file").as_deref() == Some(base));
        let Some(row) = row else {
            problems.push(format!(
                "{manifest_name}: frames[{i}] names \"{path}\", which is not among the chosen files"
            ));
            continue;
        };
        matched += 1;
        if let (Some(sel), Some(kind)) = (row_kind(row), entry.get("kind")) {
            sel.set_value(&text_of(kind));
        }
        for (key, class) in [
            ("exposure_time_s", "measure-exposure"),
            ("level", "measure-level"),
            ("photons_per_pixel", "measure-photons"),
        ] {
            if let Some(input) = row_input(row, class) {
                input.set_value(&entry.get(key).map(text_of).unwrap_or_default());
            }
        }
        if let Some(raw) = entry.get("raw") {
            fill_raw(raw);
        }
    }
    if let Some(raw) = v.get("raw") {
        fill_raw(raw);
    }
    if let Some(sel) = dom::by_id_as::<HtmlSelectElement>("measure-cfa") {
        sel.set_value(&v.get("cfa").map_or_else(|| "mono".into(), text_of));
    }
    if let Some(input) = dom::by_id_as::<HtmlInputElement>("measure-bits") {
        input.set_value(&v.get("significant_bits").map(text_of).unwrap_or_default());
    }
    // The region of interest goes to the worker as written; the engine checks it.
    let roi = v.get("roi").cloned();
    let has_roi = roi.is_some();
    ROI.with(|r| *r.borrow_mut() = roi);
    show_problems(&problems);
    status(&format!(
        "{manifest_name} described {matched} of the listed files{}.",
        if has_roi {
            ", with a region of interest"
        } else {
            ""
        }
    ));
}

fn fill_raw(raw: &Value) {
    for (key, id) in [("width", 0), ("height", 1), ("bits", 2)] {
        let input = match id {
            0 => dom::by_id_as::<HtmlInputElement>("measure-raw-width"),
            1 => dom::by_id_as::<HtmlInputElement>("measure-raw-height"),
            _ => dom::by_id_as::<HtmlInputElement>("measure-raw-bits"),
        };
        if let (Some(input), Some(v)) = (input, raw.get(key)) {
            input.set_value(&text_of(v));
        }
    }
}
