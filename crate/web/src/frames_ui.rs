//! "Measure a camera": choose or drop frame files, say what each one is, have the frame worker
//! (`crate/frames-worker`, a Web Worker) analyse them, and show its result: figures with
//! uncertainties, diagnostics, the photon transfer curve and the variance fit; and hand the
//! measured sensor keys to the scenario form.
//!
//! This is the DOM side only. It writes the table as a manifest (the same JSON as
//! `noise-budget characterize` reads, with the file names as paths) and posts it with the File
//! objects to the worker, which reads one file at a time, applies the engine's manifest rules,
//! statistics and fits, and answers with JSON. Nothing here decodes a frame, checks a rule or
//! computes a statistic, and the page's wasm links no frame decoder. The worker's script is
//! embedded in the page by `scripts/embed-worker.mjs` and started from a Blob URL only when an
//! analysis starts; Cancel terminates it. Nothing here makes a request, and nothing may panic
//! on a file or on what a user types.

use std::cell::RefCell;
use std::fmt::Write as _;

use engine::ptc::{CurveSeries, SpatialSeries};
use serde_json::{json, Map, Value};
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{
    Blob, BlobPropertyBag, DragEvent, Element, ErrorEvent, Event, File, FileList, HtmlInputElement,
    HtmlSelectElement, MessageEvent, Url, Worker,
};

use crate::display::{self, Style};
use crate::dom;
use crate::events::{on_id, when_settled};
use crate::fields::{self, Kind};
use crate::frames_plot;

/// The id of the data block holding the worker's script. `scripts/embed-worker.mjs` adds it to
/// the built page (it is not in `www/index.html`, so it is looked up without `dom::by_id`).
const WORKER_SCRIPT_ID: &str = "frames-worker-script";

/// What a copy of the page without the frame worker says (the self-contained file is built
/// without it by default, to stay within its size budget).
const NO_WORKER: &str = "this copy of the page has no frame analysis: it was left out to keep \
     the self-contained file small. Open the served page (scripts/serve), or run \
     noise-budget characterize on a manifest of these files";

/// Whether the page holds the frame worker's script.
fn has_worker() -> bool {
    dom::document()
        .and_then(|d| d.get_element_by_id(WORKER_SCRIPT_ID))
        .is_some()
}

thread_local! {
    /// The chosen frame files, in the order of the table's rows.
    static FILES: RefCell<Vec<File>> = const { RefCell::new(Vec::new()) };
    /// The region of interest from a manifest, as written there (the engine checks it).
    static ROI: RefCell<Option<Value>> = const { RefCell::new(None) };
    /// The analysis in progress.
    static RUN: RefCell<Option<Running>> = const { RefCell::new(None) };
    /// The last finished or cancelled run, kept until the next one ends: its message handlers
    /// may be the code running when it ends, so they are not dropped then.
    static RETIRED: RefCell<Option<Running>> = const { RefCell::new(None) };
    /// The last result shown (the characterization: `sensor`, `channels`, …).
    static RESULT: RefCell<Option<Value>> = const { RefCell::new(None) };
}

/// A running analysis: the worker, its script's Blob URL, and its message handlers.
struct Running {
    worker: Worker,
    url: String,
    total: u32,
    done: u32,
    _on_message: Closure<dyn FnMut(MessageEvent)>,
    _on_error: Closure<dyn FnMut(ErrorEvent)>,
}

impl Running {
    /// Stop the worker and free its URL; its handlers are detached so that no queued message
    /// reaches them.
    fn stop(&self) {
        self.worker.set_onmessage(None);
        self.worker.set_onerror(None);
        self.worker.terminate();
        if !self.url.is_empty() {
            let _ = Url::revoke_object_url(&self.url);
        }
    }
}

/// Wire the section's controls; does nothing on a page without it.
pub fn mount() {
    if dom::by_id("measure").is_none() {
        return;
    }
    on_id("measure-files", "change", |_| {
        if let Some(input) = dom::by_id_as::<HtmlInputElement>("measure-files") {
            if let Some(list) = input.files() {
                add_files(&list);
            }
            input.set_value("");
        }
    });
    on_id("measure-drop", "dragover", |e| {
        e.prevent_default();
        if let Some(el) = dom::by_id("measure-drop") {
            dom::set_class(&el, "dragging", true);
        }
    });
    on_id("measure-drop", "dragleave", |_| {
        if let Some(el) = dom::by_id("measure-drop") {
            dom::set_class(&el, "dragging", false);
        }
    });
    on_id("measure-drop", "drop", |e| {
        e.prevent_default();
        if let Some(el) = dom::by_id("measure-drop") {
            dom::set_class(&el, "dragging", false);
        }
        let list = e
            .dyn_into::<DragEvent>()
            .ok()
            .and_then(|d| d.data_transfer())
            .and_then(|t| t.files());
        if let Some(list) = list {
            add_files(&list);
        }
    });
    on_id("measure-clear", "click", |_| clear_files());
    on_id("measure-run", "click", |_| start_run());
    on_id("measure-cancel", "click", |_| cancel());
    on_id("measure-use", "click", |_| use_sensor());
    if !has_worker() {
        status(&format!("Note: {NO_WORKER}."));
    }
}

fn status(text: &str) {
    dom::set_text_of("measure-status", text);
}

fn show_problems(lines: &[String]) {
    let Some(list) = dom::by_id("measure-problems") else {
        return;
    };
    dom::clear(&list);
    for l in lines {
        if let Some(li) = dom::new_element("li", l) {
            let _ = list.append_child(&li);
        }
    }
}

// ---- the file table ---------------------------------------------------------------------

fn is_manifest(f: &File) -> bool {
    let name = f.name().to_ascii_lowercase();
    name.ends_with(".json") || f.type_() == "application/json"
}

fn add_files(list: &FileList) {
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

fn add_frame_file(f: File) {
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

fn clear_files() {
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

fn rows() -> Vec<Element> {
    dom::by_id("measure-rows").map_or_else(Vec::new, |b| dom::all(&b, "tr"))
}

fn row_input(row: &Element, class: &str) -> Option<HtmlInputElement> {
    row.query_selector(&format!("input.{class}"))
        .ok()
        .flatten()
        .and_then(|e| e.dyn_into::<HtmlInputElement>().ok())
}

fn row_kind(row: &Element) -> Option<HtmlSelectElement> {
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
fn apply_manifest(manifest_name: &str, text: &str) {
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

// ---- the manifest for the worker ----------------------------------------------------------

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
/// rows, which is the order of [`FILES`]. It checks nothing: the worker's engine does.
fn manifest() -> Value {
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

// ---- running ------------------------------------------------------------------------------

fn set_running(running: bool, total: u32) {
    if let Some(b) = dom::by_id("measure-cancel") {
        dom::set_hidden(&b, !running);
    }
    if let Some(b) = dom::by_id("measure-run") {
        if running {
            dom::set_attr(&b, "disabled", "");
        } else {
            dom::remove_attr(&b, "disabled");
        }
    }
    if let Some(p) = dom::by_id("measure-progress") {
        dom::set_hidden(&p, !running);
        dom::set_attr(&p, "max", &total.max(1).to_string());
        dom::set_attr(&p, "value", "0");
    }
    if let Some(s) = dom::by_id("measure") {
        dom::set_attr(&s, "aria-busy", if running { "true" } else { "false" });
    }
}

/// Start the frame worker: from its own file next to the served page (the data block's
/// `data-src`, so the page's HTML stays small and starts sooner), or from the script embedded
/// in the self-contained file through a Blob URL. The second value is the Blob URL to revoke
/// (empty for a file).
fn new_worker() -> Result<(Worker, String), String> {
    let block = dom::document().and_then(|d| d.get_element_by_id(WORKER_SCRIPT_ID));
    if let Some(src) = block
        .as_ref()
        .and_then(|e| e.get_attribute("data-src"))
        .filter(|s| !s.is_empty())
    {
        return Worker::new(&src).map(|w| (w, String::new())).map_err(|e| {
            format!(
                "the browser refused to start the frame analysis in a worker: {}",
                js_text(&e)
            )
        });
    }
    let script = block
        .and_then(|e| e.text_content())
        .filter(|t| !t.is_empty())
        .ok_or(NO_WORKER)?;
    let parts = js_sys::Array::of1(&JsValue::from_str(&script));
    let options = BlobPropertyBag::new();
    options.set_type("text/javascript");
    let blob = Blob::new_with_str_sequence_and_options(&parts, &options)
        .map_err(|_| "the browser could not hold the frame analysis script")?;
    let url = Url::create_object_url_with_blob(&blob)
        .map_err(|_| "the browser could not hold the frame analysis script")?;
    match Worker::new(&url) {
        Ok(w) => Ok((w, url)),
        Err(e) => {
            let _ = Url::revoke_object_url(&url);
            Err(format!(
                "the browser refused to start the frame analysis in a worker: {}",
                js_text(&e)
            ))
        }
    }
}

fn js_text(v: &JsValue) -> String {
    v.as_string()
        .or_else(|| {
            js_sys::Reflect::get(v, &JsValue::from_str("message"))
                .ok()
                .and_then(|m| m.as_string())
        })
        .unwrap_or_else(|| "no reason given".into())
}

fn start_run() {
    show_problems(&[]);
    if RUN.with(|r| r.borrow().is_some()) {
        return;
    }
    let files = FILES.with(|fs| fs.borrow().clone());
    if files.is_empty() {
        show_problems(&["choose or drop the frame files first".into()]);
        status("Nothing was analysed: see the problems below.");
        return;
    }
    let manifest = manifest().to_string();
    let (worker, url) = match new_worker() {
        Ok(w) => w,
        Err(e) => {
            show_problems(&[e]);
            status("Nothing was analysed: see the problems below.");
            return;
        }
    };
    let on_message = Closure::<dyn FnMut(MessageEvent)>::new(|e: MessageEvent| message(&e.data()));
    let on_error = Closure::<dyn FnMut(ErrorEvent)>::new(|e: ErrorEvent| {
        e.prevent_default();
        finish_with_problems(&[format!("the frame analysis stopped: {}", e.message())]);
    });
    worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
    worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
    let array = js_sys::Array::new();
    for f in &files {
        array.push(f);
    }
    let msg = js_sys::Object::new();
    let _ = js_sys::Reflect::set(&msg, &"manifest".into(), &JsValue::from_str(&manifest));
    let _ = js_sys::Reflect::set(&msg, &"files".into(), &array);
    let total = u32::try_from(files.len()).unwrap_or(u32::MAX);
    if let Err(e) = worker.post_message(&msg) {
        worker.terminate();
        let _ = Url::revoke_object_url(&url);
        show_problems(&[format!(
            "the browser could not hand the files to the frame analysis: {}",
            js_text(&e)
        )]);
        return;
    }
    for row in rows() {
        if let Some(cell) = row.query_selector(".measure-size").ok().flatten() {
            cell.set_text_content(Some("waiting"));
        }
    }
    RUN.with(|r| {
        *r.borrow_mut() = Some(Running {
            worker,
            url,
            total,
            done: 0,
            _on_message: on_message,
            _on_error: on_error,
        });
    });
    if let Some(r) = dom::by_id("measure-results") {
        dom::set_hidden(&r, true);
    }
    set_running(true, total);
    status(&format!(
        "Reading {total} frame files on this computer, one at a time…"
    ));
}

/// End the run: stop its worker and keep its handlers until the next run ends.
fn end_run() {
    let run = RUN.with(|r| r.borrow_mut().take());
    if let Some(run) = &run {
        run.stop();
    }
    if run.is_some() {
        RETIRED.with(|r| *r.borrow_mut() = run);
    }
    set_running(false, 1);
}

fn cancel() {
    let was_running = RUN.with(|r| r.borrow().is_some());
    end_run();
    if was_running {
        status("Analysis cancelled. The files and what you typed are still listed; Analyse starts again.");
    }
}

/// A property of a message from the worker, if present.
fn get(v: &JsValue, key: &str) -> Option<JsValue> {
    js_sys::Reflect::get(v, &JsValue::from_str(key))
        .ok()
        .filter(|x| !x.is_undefined())
}

/// One message from the worker.
fn message(data: &JsValue) {
    if RUN.with(|r| r.borrow().is_none()) {
        return;
    }
    let kind = get(data, "type")
        .and_then(|t| t.as_string())
        .unwrap_or_default();
    match kind.as_str() {
        "progress" => {
            let index = get(data, "index").and_then(|i| i.as_f64()).and_then(|i| {
                if i >= 0.0 {
                    Some(i)
                } else {
                    None
                }
            });
            let frame = get(data, "frame").and_then(|f| f.as_string());
            #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)] // a row index
            if let Some(row) = index.and_then(|i| rows().get(i as usize).cloned()) {
                if let Some(cell) = row.query_selector(".measure-size").ok().flatten() {
                    cell.set_text_content(Some(frame.as_deref().unwrap_or("unreadable")));
                }
            }
            let done = RUN.with(|r| {
                r.borrow_mut().as_mut().map_or(0, |run| {
                    run.done = run.done.saturating_add(1).min(run.total);
                    run.done
                })
            });
            if let Some(p) = dom::by_id("measure-progress") {
                dom::set_attr(&p, "value", &done.to_string());
            }
        }
        "done" => {
            let text = get(data, "result")
                .and_then(|t| t.as_string())
                .unwrap_or_default();
            finish(&text);
        }
        _ => {
            let why = get(data, "message")
                .and_then(|m| m.as_string())
                .unwrap_or_else(|| format!("the frame analysis sent an unknown message ({kind})"));
            finish_with_problems(&[why]);
        }
    }
}

fn finish_with_problems(lines: &[String]) {
    end_run();
    show_problems(lines);
    status("The frames could not be analysed: see the problems below.");
}

fn finish(text: &str) {
    let done = RUN.with(|r| r.borrow().as_ref().map_or(0, |run| run.done));
    end_run();
    let answer: Value = serde_json::from_str(text).unwrap_or(Value::Null);
    if let Some(problems) = answer.get("problems").and_then(Value::as_array) {
        let lines: Vec<String> = problems
            .iter()
            .map(|p| p.as_str().unwrap_or_default().to_string())
            .collect();
        show_problems(&lines);
        status("The frames could not be analysed: see the problems below.");
        return;
    }
    let Some(result) = answer.get("result") else {
        show_problems(&["the frame analysis gave no result".into()]);
        return;
    };
    show_result(result);
    let stacks = result
        .pointer("/fit/points")
        .and_then(Value::as_array)
        .map_or(0, Vec::len);
    status(&format!(
        "Analysed {done} frame files in {stacks} stacks, on this computer."
    ));
    RESULT.with(|r| *r.borrow_mut() = Some(result.clone()));
}

// ---- results ------------------------------------------------------------------------------

/// A number at a JSON pointer of the result, if it is there.
fn num(v: &Value, pointer: &str) -> Option<f64> {
    v.pointer(pointer).and_then(Value::as_f64)
}

/// One figure of the engine's list as a value with its uncertainty and unit.
fn figure_text(f: &Value) -> (Option<f64>, String) {
    let value = f.get("value").and_then(Value::as_f64);
    let unit = f.get("unit").and_then(Value::as_str).unwrap_or_default();
    let Some(x) = value else {
        return (None, "not measured by these frames".into());
    };
    let mut text = display::rounded(x, Style::Number);
    if f.get("upper_bound") == Some(&Value::Bool(true)) {
        text = format!("< {text}");
    }
    if let Some(u) = f.get("uncertainty").and_then(Value::as_f64) {
        let _ = write!(text, " ± {}", display::rounded(u, Style::Number));
    }
    if !unit.is_empty() {
        let _ = write!(text, " {unit}");
    }
    if f.get("upper_bound") == Some(&Value::Bool(true)) {
        text.push_str(" (an upper bound: the dark noise is below what the ADC resolves)");
    }
    (value, text)
}

/// A value span carrying the figure's key and full value, for tests and copying.
fn value_span(key: &str, value: Option<f64>, text: &str) -> Option<Element> {
    let span = dom::new_element("span", text)?;
    dom::set_attr(&span, "data-measure", key);
    dom::set_attr(
        &span,
        "data-value",
        &value.map_or_else(|| "null".to_string(), display::full),
    );
    Some(span)
}

/// The figures of the engine's list, each with its clause as a tooltip.
fn figure_list(list: &Element, figures: &[Value]) {
    for f in figures {
        let key = f.get("key").and_then(Value::as_str).unwrap_or_default();
        let name = f.get("name").and_then(Value::as_str).unwrap_or_default();
        let (value, text) = figure_text(f);
        let Some(div) = dom::new_element("div", "") else {
            continue;
        };
        if let Some(dt) = dom::new_element("dt", name) {
            if let Some(c) = f.get("clause").and_then(Value::as_str) {
                dom::set_attr(&dt, "title", c);
            }
            let _ = div.append_child(&dt);
        }
        if let Some(dd) = dom::new_element("dd", "") {
            if let Some(span) = value_span(key, value, &text) {
                let _ = dd.append_child(&span);
            }
            let _ = div.append_child(&dd);
        }
        let _ = list.append_child(&div);
    }
}

/// One table for the colour channels: a row per figure, a column per channel.
fn channel_table(holder: &Element, channels: &[Value]) {
    let Some(table) = dom::new_element("table", "") else {
        return;
    };
    dom::set_attr(&table, "id", "measure-channel-table");
    if let Some(cap) = dom::new_element(
        "caption",
        "Each colour channel on its own (the figures above are the green pixels, Gr and Gb \
         pooled)",
    ) {
        let _ = table.append_child(&cap);
    }
    let Some(head) = dom::new_element("tr", "") else {
        return;
    };
    if let Some(th) = dom::new_element("th", "") {
        let _ = head.append_child(&th);
    }
    for ch in channels {
        let name = ch.get("name").and_then(Value::as_str).unwrap_or_default();
        if let Some(th) = dom::new_element("th", name) {
            dom::set_attr(&th, "scope", "col");
            let _ = head.append_child(&th);
        }
    }
    let _ = table.append_child(&head);
    let first: Vec<Value> = channels
        .first()
        .and_then(|c| c.get("figures"))
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    let mut rows: Vec<(String, String)> = first
        .iter()
        .map(|f| {
            (
                f.get("key")
                    .and_then(Value::as_str)
                    .unwrap_or_default()
                    .to_string(),
                f.get("name")
                    .and_then(Value::as_str)
                    .unwrap_or_default()
                    .to_string(),
            )
        })
        .collect();
    rows.insert(0, ("relative_response".into(), "response / green".into()));
    for (key, name) in rows {
        let Some(tr) = dom::new_element("tr", "") else {
            continue;
        };
        if let Some(th) = dom::new_element("th", &name) {
            dom::set_attr(&th, "scope", "row");
            let _ = tr.append_child(&th);
        }
        for ch in channels {
            let cname = ch.get("name").and_then(Value::as_str).unwrap_or_default();
            let (value, text) = if key == "relative_response" {
                let v = ch.get("relative_response").and_then(Value::as_f64);
                (
                    v,
                    v.map_or_else(
                        || "not measured".into(),
                        |x| display::rounded(x, Style::Number),
                    ),
                )
            } else {
                ch.get("figures")
                    .and_then(Value::as_array)
                    .and_then(|fs| {
                        fs.iter()
                            .find(|f| f.get("key").and_then(Value::as_str) == Some(&key))
                    })
                    .map_or((None, "not measured".into()), figure_text)
            };
            if let Some(td) = dom::new_element("td", "") {
                if let Some(span) = value_span(&format!("{cname}.{key}"), value, &text) {
                    let _ = td.append_child(&span);
                }
                let _ = tr.append_child(&td);
            }
        }
        let _ = table.append_child(&tr);
    }
    let _ = holder.append_child(&table);
}

fn show_result(r: &Value) {
    let figures = r
        .get("figures")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    if let Some(list) = dom::by_id("measure-figures") {
        dom::clear(&list);
        figure_list(&list, &figures);
    }
    if let Some(p) = dom::by_id("measure-depth") {
        let bits = num(r, "/sample_depth/native_bits");
        let step = num(r, "/sample_depth/step_dn").unwrap_or(1.0);
        let container = num(r, "/sample_depth/container_bits").unwrap_or(16.0);
        let cfa = r.get("cfa").and_then(Value::as_str).unwrap_or("mono");
        let mut text = match bits {
            Some(b) => format!(
                "DN figures are in the camera's own {}-bit DN",
                display::rounded(b, Style::Number)
            ),
            None => "The camera's bit depth is not known: DN figures are in the files' DN".into(),
        };
        if step > 1.0 {
            let _ = write!(
                text,
                " (1 DN = {} DN of the {}-bit files)",
                display::rounded(step, Style::Number),
                display::rounded(container, Style::Number)
            );
        }
        if cfa != "mono" {
            let _ = write!(
                text,
                ". A {cfa} colour sensor: the figures below are its green pixels (Gr and Gb \
                 pooled); the table after them has each channel"
            );
        }
        text.push('.');
        p.set_text_content(Some(&text));
    }
    let channels = r
        .get("channels")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    if let Some(holder) = dom::by_id("measure-channels") {
        dom::clear(&holder);
        if !channels.is_empty() {
            channel_table(&holder, &channels);
        }
    }
    if let Some(sel) = dom::by_id_as::<HtmlSelectElement>("measure-use-channel") {
        let el: &Element = sel.as_ref();
        dom::clear(el);
        let mut options = vec![("", "green (Gr and Gb pooled)".to_string())];
        for ch in &channels {
            let name = ch.get("name").and_then(Value::as_str).unwrap_or_default();
            options.push((name, format!("{name} only")));
        }
        for (value, label) in options {
            if let Some(o) = dom::new_element("option", &label) {
                dom::set_attr(&o, "value", value);
                let _ = el.append_child(&o);
            }
        }
        dom::set_hidden(el, channels.is_empty());
        if let Some(l) = dom::by_id("measure-use-channel-label") {
            dom::set_hidden(&l, channels.is_empty());
        }
    }
    if let Some(list) = dom::by_id("measure-diagnostics") {
        dom::clear(&list);
        let points = r
            .pointer("/fit/points")
            .and_then(Value::as_array)
            .cloned()
            .unwrap_or_default();
        let used = points
            .iter()
            .filter(|p| p.get("used_in_gain_fit") == Some(&Value::Bool(true)))
            .count();
        let flats = points
            .iter()
            .filter(|p| p.get("kind").and_then(Value::as_str) == Some("flat"))
            .count();
        let pixels = num(r, "/fit/pixels_per_frame").unwrap_or(0.0);
        let mut lines = vec![format!(
            "the gain fit used {used} of {flats} flat levels; {} pixels per frame were analysed",
            display::rounded(pixels, Style::Number)
        )];
        if let Some(ds) = r.pointer("/fit/diagnostics").and_then(Value::as_array) {
            lines.extend(
                ds.iter()
                    .filter_map(|d| d.get("message").and_then(Value::as_str))
                    .map(str::to_string),
            );
        }
        for ch in &channels {
            let name = ch.get("name").and_then(Value::as_str).unwrap_or_default();
            if let Some(ds) = ch.pointer("/fit/diagnostics").and_then(Value::as_array) {
                lines.extend(
                    ds.iter()
                        .filter_map(|d| d.get("message").and_then(Value::as_str))
                        .map(|m| format!("channel {name}: {m}")),
                );
            }
        }
        for l in lines {
            if let Some(li) = dom::new_element("li", &l) {
                let _ = list.append_child(&li);
            }
        }
    }
    let series = r
        .get("series")
        .and_then(|s| serde_json::from_value::<CurveSeries>(s.clone()).ok());
    let k = num(r, "/sensor/system_gain_dn_per_e").unwrap_or(0.0);
    if let Some(series) = series {
        if let Some(el) = dom::by_id("measure-ptc") {
            el.set_inner_html(&frames_plot::ptc_svg(&series, k));
        }
        if let Some(el) = dom::by_id("measure-fit") {
            el.set_inner_html(&frames_plot::fit_svg(&series));
        }
    }
    if let Some(el) = dom::by_id("measure-spatial") {
        let spatial: Vec<SpatialSeries> = r
            .get("spatial")
            .and_then(|s| serde_json::from_value(s.clone()).ok())
            .unwrap_or_default();
        el.set_inner_html(&frames_plot::spatial_svgs(&spatial));
    }
    if let Some(el) = dom::by_id("measure-results") {
        dom::set_hidden(&el, false);
    }
}

/// Put the measured sensor keys into the scenario form's fields (named by their scenario key
/// paths); the form then recomputes as after any edit, and the engine judges the result.
fn use_sensor() {
    let Some(result) = RESULT.with(|r| r.borrow().clone()) else {
        status("Analyse frames first.");
        return;
    };
    let channel = dom::by_id_as::<HtmlSelectElement>("measure-use-channel")
        .map(|s| s.value())
        .unwrap_or_default();
    let measured = if channel.is_empty() {
        result.get("sensor").cloned()
    } else {
        result
            .get("channels")
            .and_then(Value::as_array)
            .and_then(|cs| {
                cs.iter()
                    .find(|c| c.get("name").and_then(Value::as_str) == Some(channel.as_str()))
            })
            .and_then(|c| c.get("sensor").cloned())
    };
    let Some(measured) = measured else {
        status("Analyse frames first.");
        return;
    };
    let which = if channel.is_empty() {
        String::new()
    } else {
        format!(" of channel {channel}")
    };
    let Some(form_el) = dom::by_id("scenario-form") else {
        return;
    };
    let mut set = Vec::new();
    let mut last = None;
    for (key, v) in measured.as_object().into_iter().flatten() {
        let Some(x) = v.as_f64() else { continue };
        let field = form_el
            .query_selector(&format!("[name=\"sensor.{key}\"]"))
            .ok()
            .flatten()
            .and_then(|e| e.dyn_into::<HtmlInputElement>().ok());
        if let Some(input) = field {
            input.set_value(&display::full(x));
            set.push(key.clone());
            last = Some(input);
        }
    }
    // One input event, as a person's edit makes: the form reads every field again.
    if let Some(input) = last {
        let init = web_sys::EventInit::new();
        init.set_bubbles(true);
        if let Ok(e) = Event::new_with_event_init_dict("input", &init) {
            let _ = input.dispatch_event(&e);
        }
    }
    status(&format!(
        "The scenario's sensor now has the measured {}{which}.",
        set.join(", ")
    ));
}
