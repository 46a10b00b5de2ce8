//! Running the analysis: the frame worker (the page's own app script run as a worker,
//! given the page's compiled engine), the files and the manifest posted to it, its progress and
//! answer, Cancel.

use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{Blob, BlobPropertyBag, ErrorEvent, MessageEvent, Url, Worker};

use super::manifest::manifest;
use super::results::show_result;
use super::table::rows;
use super::{
    show_problems, status, Running, APP_SCRIPT_ID, FILES, NO_WORKER, RESULT, RETIRED, RUN,
};
use crate::dom;

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

/// Start the frame worker: the page's app script as a worker, from its file (the
/// served page) or from a Blob URL of its text (the self-contained file), and give it the
/// page's compiled engine (`wasm_bindgen::module()`), which it instantiates instead of a wasm of
/// its own. The second value is the Blob URL to revoke (empty for a file).
pub(crate) fn new_worker() -> Result<(Worker, String), String> {
    let app = dom::document()
        .and_then(|d| d.get_element_by_id(APP_SCRIPT_ID))
        .filter(|e| e.has_attribute("data-frames"))
        .ok_or(NO_WORKER)?;
    let refused = |e: &JsValue| {
        format!(
            "the browser refused to start the frame analysis in a worker: {}",
            js_text(e)
        )
    };
    let (worker, url) = match app.get_attribute("src").filter(|s| !s.is_empty()) {
        Some(src) => (Worker::new(&src).map_err(|e| refused(&e))?, String::new()),
        None => {
            let script = app
                .text_content()
                .filter(|t| !t.is_empty())
                .ok_or(NO_WORKER)?;
            let parts = js_sys::Array::of1(&JsValue::from_str(&script));
            let blob_options = BlobPropertyBag::new();
            blob_options.set_type("text/javascript");
            let blob = Blob::new_with_str_sequence_and_options(&parts, &blob_options)
                .map_err(|_| "the browser could not hold the frame analysis script")?;
            let url = Url::create_object_url_with_blob(&blob)
                .map_err(|_| "the browser could not hold the frame analysis script")?;
            // A classic worker, not a module one: from a page opened from file:// a module
            // worker cannot load a Blob URL (its opaque origin makes the URL cross-origin).
            match Worker::new(&url) {
                Ok(w) => (w, url),
                Err(e) => {
                    let _ = Url::revoke_object_url(&url);
                    return Err(refused(&e));
                }
            }
        }
    };
    let message = js_sys::Object::new();
    let posted = js_sys::Reflect::set(
        &message,
        &JsValue::from_str("engine"),
        &wasm_bindgen::module(),
    )
    .and_then(|_| worker.post_message(&message));
    if let Err(e) = posted {
        worker.terminate();
        if !url.is_empty() {
            let _ = Url::revoke_object_url(&url);
        }
        return Err(format!(
            "the browser could not give the frame analysis its engine: {}",
            js_text(&e)
        ));
    }
    Ok((worker, url))
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

pub(super) fn start_run() {
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
pub(super) fn end_run() {
    let run = RUN.with(|r| r.borrow_mut().take());
    if let Some(run) = &run {
        run.stop();
    }
    if run.is_some() {
        RETIRED.with(|r| *r.borrow_mut() = run);
    }
    set_running(false, 1);
}

pub(super) fn cancel() {
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
