//! "Measure a camera": choose or drop frame files, say what each one is, have the frame worker
//! (`crate/frames-worker`, a Web Worker) analyse them, and show its result: figures with
//! uncertainties, diagnostics, the photon transfer curve and the variance fit; and hand the
//! measured sensor keys to the scenario form.
//!
//! This is the DOM side only. It writes the table as a manifest (the same JSON as
//! `noise-budget characterize` reads, with the file names as paths) and posts it with the File
//! objects to the worker, which reads the files (four ahead of its analysis), applies the
//! engine's manifest rules, statistics and fits, and answers with JSON. Nothing here decodes
//! a frame, checks a rule or computes a statistic. The worker is the page's own app script
//! run as a worker and given the page's compiled engine (`run::new_worker`), started
//! only when an analysis starts; Cancel terminates it. Nothing here sends a frame anywhere, and nothing may panic on
//! a file or on what a user types.
//!
//! Here: the section's state, `mount` and the status and problem lines. `table.rs` the file
//! table and a manifest filling it in; `manifest.rs` the table as the worker's manifest;
//! `run.rs` the worker and its messages; `results.rs` the result shown and "Use this sensor".

use std::cell::RefCell;

use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::JsCast;
use web_sys::{DragEvent, ErrorEvent, File, HtmlInputElement, MessageEvent, Url, Worker};

use crate::dom;
use crate::events::on_id;

mod manifest;
mod results;
mod run;
mod table;

use results::use_sensor;
pub(crate) use run::new_worker;
use run::{cancel, start_run};
use table::{add_files, add_frame_file, apply_manifest, clear_files};

/// The id of the app script's element (written by `scripts/single-file.mjs`, not in
/// `www/index.html`, so it is looked up without `dom::by_id`). The frame worker is that same
/// script, run as a worker; its `data-frames` attribute says that the script (and the
/// module it carries) holds the frame worker's exports.
pub(crate) const APP_SCRIPT_ID: &str = "noise-budget-app";

/// What a copy of the page without the frame worker says (the self-contained file is built
/// without it for now, to stay within its size budget).
pub(crate) const NO_WORKER: &str =
    "this copy of the page has no frame analysis: it was left out to keep \
     the self-contained file small. Open the served page (scripts/serve), or run \
     noise-budget characterize on a manifest of these files";

/// Whether the page's script holds the frame worker.
pub(crate) fn has_worker() -> bool {
    dom::document()
        .and_then(|d| d.get_element_by_id(APP_SCRIPT_ID))
        .is_some_and(|e| e.has_attribute("data-frames"))
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

/// A running analysis: the worker, its script's Blob URL (empty for the served page's file),
/// and its message handlers.
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

/// Put a simulated series (each file's name and bytes, and its manifest's text) in the table as
/// if chosen, fill the table from the manifest and analyse it: "try Measure with simulated
/// frames" (`frame_ui.rs`). The files are the worker's, made in this browser.
pub(crate) fn try_simulated(files: &[(String, wasm_bindgen::JsValue)], manifest_text: &str) {
    clear_files();
    for (name, bytes) in files {
        let parts = js_sys::Array::of1(bytes);
        if let Ok(f) = File::new_with_buffer_source_sequence(&parts, name) {
            add_frame_file(f);
        }
    }
    let count = FILES.with(|fs| fs.borrow().len());
    if let Some(t) = dom::by_id("measure-table") {
        dom::set_hidden(&t, count == 0);
    }
    apply_manifest("the simulated series' manifest.json", manifest_text);
    if let Some(s) = dom::by_id("measure") {
        s.scroll_into_view();
    }
    start_run();
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
