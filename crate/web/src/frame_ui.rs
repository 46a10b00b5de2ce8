//! "The frame, simulated": the engine's seeded picture of the test scene for the scenario on
//! screen and, beside it, for the first pinned scenario, each patch labelled with the SNR
//! measured on the frame and the model's; and the photon transfer series of the scenario's
//! sensor, as a download or handed to Measure a camera.
//!
//! Everything is computed in the frame worker (`crate/frames-worker/src/sim.rs`, the code of
//! `noise-budget simulate`), off the page's thread, so the results never wait for a picture;
//! a copy of the page without the worker (the self-contained file) says so. Frames are asked
//! for only once the user has asked for one, and again after each edit; an answer for an
//! older request is dropped. Deterministic: the seed is a field, and the same seed gives the
//! same frame (here and in `noise-budget simulate --seed`). This file only posts, receives and
//! puts on the page; words for the numbers are `sim_words.rs`'s.

use std::cell::{Cell, RefCell};

use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{Clamped, JsCast, JsValue};
use web_sys::{
    CanvasRenderingContext2d, Element, ErrorEvent, HtmlCanvasElement, HtmlInputElement, ImageData,
    MessageEvent, Worker,
};

use crate::display::Browser;
use crate::events::on_id;
use crate::sim_words::{mapping_words, patch_labels, patch_marks};
use crate::{curves, dom, frames_ui, ids};

/// The simulation worker: started on first use and kept (it holds the compiled wasm).
struct SimWorker {
    worker: Worker,
    _on_message: Closure<dyn FnMut(MessageEvent)>,
    _on_error: Closure<dyn FnMut(ErrorEvent)>,
}

thread_local! {
    static WORKER: RefCell<Option<SimWorker>> = const { RefCell::new(None) };
    /// Whether frames are shown (then edits draw them again).
    static SHOWN: Cell<bool> = const { Cell::new(false) };
    /// The scenario on screen (valid, without pins), as the last results showed it.
    static NOW: RefCell<Option<Value>> = const { RefCell::new(None) };
    /// The id of the latest frame request; answers to older ones are dropped.
    static LATEST: Cell<u32> = const { Cell::new(0) };
    /// The frames asked for by the latest request: title and whether it has come.
    static WAITING: RefCell<Vec<(String, bool)>> = const { RefCell::new(Vec::new()) };
    /// The id of the series request in progress (0: none).
    static SERIES: Cell<u32> = const { Cell::new(0) };
}

/// Request ids, one counter for frames and series: a frame request takes two (the scenario's
/// and the pin's), so an answer's slot is its id less the latest request's.
static NEXT_ID: std::sync::atomic::AtomicU32 = std::sync::atomic::AtomicU32::new(1);

fn next_id() -> u32 {
    NEXT_ID.fetch_add(1, std::sync::atomic::Ordering::Relaxed)
}

/// Wire the section's controls; on a copy without the worker, say so once.
pub fn wire() {
    if dom::by_id(ids::FRAME_VIEW).is_none() {
        return;
    }
    on_id(ids::FRAME_RUN, "click", |_| {
        SHOWN.with(|s| s.set(true));
        request_frames();
    });
    on_id(ids::FRAME_SEED, "input", |_| {
        if SHOWN.with(Cell::get) {
            request_frames();
        }
    });
    on_id(ids::FRAME_ACTUAL_PIXELS, "change", |_| set_actual_pixels());
    on_id(ids::SERIES_DOWNLOAD, "click", |_| request_series(true));
    on_id(ids::SERIES_MEASURE, "click", |_| request_series(false));
    if !frames_ui::has_worker() {
        status(&format!(
            "Note: {}.",
            frames_ui::NO_WORKER.replace("frame analysis", "frame simulation and analysis")
        ));
        for id in [ids::FRAME_RUN, ids::SERIES_DOWNLOAD, ids::SERIES_MEASURE] {
            if let Some(b) = dom::by_id(id) {
                dom::set_attr(&b, "disabled", "");
            }
        }
    }
}

/// The results show this scenario (valid, without pins): draw its frame again if one is shown.
pub fn after_results(value: &Value) {
    NOW.with(|n| *n.borrow_mut() = Some(value.clone()));
    if SHOWN.with(Cell::get) {
        request_frames();
    }
}

fn status(text: &str) {
    dom::set_text_of(ids::FRAME_STATUS, text);
}

fn series_status(text: &str) {
    dom::set_text_of(ids::SERIES_STATUS, text);
}

/// The seed typed, or the rule it breaks (shown beside the field, which keeps what was typed).
fn seed() -> Result<String, String> {
    let text = dom::by_id_as::<HtmlInputElement>(ids::FRAME_SEED)
        .map(|i| i.value())
        .unwrap_or_default();
    let text = text.trim();
    let problem = dom::by_id(ids::FRAME_SEED_PROBLEM);
    let checked = if text.is_empty() {
        Ok("1".to_string())
    } else {
        text.parse::<u64>().map(|s| s.to_string()).map_err(|_| {
            format!("seed: a whole number from 0 to 18446744073709551615, got “{text}”")
        })
    };
    if let Some(p) = problem {
        p.set_text_content(checked.as_ref().err().map(String::as_str));
        dom::set_hidden(&p, checked.is_ok());
    }
    checked
}

/// The worker, started if need be.
fn with_worker(f: impl FnOnce(&Worker)) -> Result<(), String> {
    let started = WORKER.with(|w| w.borrow().is_some());
    if !started {
        let (worker, _url) = frames_ui::new_worker()?;
        let on_message =
            Closure::<dyn FnMut(MessageEvent)>::new(|e: MessageEvent| message(&e.data()));
        let on_error = Closure::<dyn FnMut(ErrorEvent)>::new(|e: ErrorEvent| {
            e.prevent_default();
            status(&format!("The simulation stopped: {}", e.message()));
            WORKER.with(|w| {
                if let Some(w) = w.borrow_mut().take() {
                    w.worker.terminate();
                }
            });
        });
        worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
        worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
        WORKER.with(|w| {
            *w.borrow_mut() = Some(SimWorker {
                worker,
                _on_message: on_message,
                _on_error: on_error,
            });
        });
    }
    WORKER.with(|w| {
        if let Some(w) = w.borrow().as_ref() {
            f(&w.worker);
        }
    });
    Ok(())
}

fn post(kind: &str, job: &[(&str, JsValue)]) -> Result<(), String> {
    let inner = js_sys::Object::new();
    for (k, v) in job {
        let _ = js_sys::Reflect::set(&inner, &JsValue::from_str(k), v);
    }
    let msg = js_sys::Object::new();
    let _ = js_sys::Reflect::set(&msg, &JsValue::from_str(kind), &inner);
    let mut sent = Ok(());
    with_worker(|w| {
        if w.post_message(&msg).is_err() {
            sent = Err("the browser could not hand the scenario to the simulation".to_string());
        }
    })?;
    sent
}

/// Ask the worker for the frames of the scenario on screen and the first pin.
fn request_frames() {
    let Ok(seed) = seed() else {
        return;
    };
    let mut shown: Vec<(String, Value)> = Vec::new();
    if let Some(v) = NOW.with(|n| n.borrow().clone()) {
        shown.push(("This scenario".into(), v));
    }
    if let Some((name, v)) = curves::first_pin() {
        shown.push((format!("Pinned {name}"), v));
    }
    if shown.is_empty() {
        status("No valid scenario to simulate.");
        return;
    }
    let base = next_id();
    let _ = next_id(); // the pin's id: base + 1
    LATEST.with(|l| l.set(base));
    WAITING.with(|w| *w.borrow_mut() = shown.iter().map(|(t, _)| (t.clone(), false)).collect());
    if let Some(views) = dom::by_id(ids::FRAME_VIEWS) {
        dom::set_attr(&views, "aria-busy", "true");
        dom::set_attr(&views, "data-seed", &seed);
    }
    status("Simulating in the background…");
    for (i, (_, value)) in shown.iter().enumerate() {
        let id = base + u32::try_from(i).unwrap_or(0);
        let sent = post(
            "simulate",
            &[
                ("id", JsValue::from(id)),
                ("scenario", JsValue::from_str(&value.to_string())),
                ("seed", JsValue::from_str(&seed)),
            ],
        );
        if let Err(e) = sent {
            status(&e);
            return;
        }
    }
}

/// Ask the worker for the scenario's photon transfer series: as a zip, or for Measure.
fn request_series(zip: bool) {
    let Ok(seed) = seed() else {
        series_status("Fix the seed first.");
        return;
    };
    let Some(value) = NOW.with(|n| n.borrow().clone()) else {
        series_status("No valid scenario to simulate.");
        return;
    };
    let id = next_id();
    SERIES.with(|s| s.set(id));
    series_status(&format!(
        "Simulating the series of this sensor (seed {seed}) in the background…"
    ));
    if let Err(e) = post(
        "series",
        &[
            ("id", JsValue::from(id)),
            ("scenario", JsValue::from_str(&value.to_string())),
            ("seed", JsValue::from_str(&seed)),
            ("zip", JsValue::from_bool(zip)),
        ],
    ) {
        series_status(&e);
    }
}

fn get(v: &JsValue, key: &str) -> Option<JsValue> {
    js_sys::Reflect::get(v, &JsValue::from_str(key))
        .ok()
        .filter(|x| !x.is_undefined() && !x.is_null())
}

fn message(data: &JsValue) {
    let kind = get(data, "type")
        .and_then(|t| t.as_string())
        .unwrap_or_default();
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)] // ids are u32
    let id = get(data, "id")
        .and_then(|i| i.as_f64())
        .map_or(0, |i| i as u32);
    let text = get(data, "result").and_then(|t| t.as_string());
    match kind.as_str() {
        "frame" => frame_came(id, text.as_deref(), get(data, "rgba")),
        "series" => series_came(id, text.as_deref(), get(data, "buffers")),
        _ => {
            let why = get(data, "message")
                .and_then(|m| m.as_string())
                .unwrap_or_else(|| format!("the simulation sent an unknown message ({kind})"));
            if id != 0 && id == SERIES.with(Cell::get) {
                series_status(&why);
            } else {
                status(&why);
            }
        }
    }
}

fn frame_came(id: u32, text: Option<&str>, rgba: Option<JsValue>) {
    let base = LATEST.with(Cell::get);
    let Some(slot) = id.checked_sub(base).map(|s| s as usize) else {
        return; // an older request
    };
    let Some(title) = WAITING.with(|w| w.borrow().get(slot).map(|(t, _)| t.clone())) else {
        return;
    };
    let Some(views) = dom::by_id(ids::FRAME_VIEWS) else {
        return;
    };
    if slot == 0 {
        dom::clear(&views);
    }
    let answer: Value = text
        .and_then(|t| serde_json::from_str(t).ok())
        .unwrap_or(Value::Null);
    let bytes = rgba.map(|b| js_sys::Uint8Array::new(&b).to_vec());
    if let Some(fig) = frame_figure(&title, &answer, bytes.as_deref()) {
        // In the order asked for, whatever order the answers come in.
        let _ = views.append_child(&fig);
        dom::set_attr(&fig, "data-slot", &slot.to_string());
    }
    let all = WAITING.with(|w| {
        let mut w = w.borrow_mut();
        if let Some(e) = w.get_mut(slot) {
            e.1 = true;
        }
        w.iter().all(|e| e.1)
    });
    if all {
        dom::remove_attr(&views, "aria-busy");
        let n = WAITING.with(|w| w.borrow().len());
        let seed = views.get_attribute("data-seed").unwrap_or_default();
        status(&if n == 1 {
            format!("Simulated with seed {seed}. Pin a scenario to see it beside this one.")
        } else {
            format!("Simulated with seed {seed}: this scenario and the first pinned one.")
        });
        set_actual_pixels();
    }
}

/// One scenario's frame: heading, canvas, mapping, patch table and cautions; or its problem.
fn frame_figure(title: &str, answer: &Value, rgba: Option<&[u8]>) -> Option<Element> {
    let fig = dom::new_element("figure", "")?;
    dom::set_attr(&fig, "class", "sim-frame");
    let head = dom::new_element("h3", title)?;
    let _ = fig.append_child(&head);
    let frame = answer.get("frame");
    let size = frame.and_then(|f| {
        let w = u32::try_from(f.get("width")?.as_u64()?).ok()?;
        let h = u32::try_from(f.get("height")?.as_u64()?).ok()?;
        Some((w, h))
    });
    let (Some(frame), Some((w, h)), Some(px)) = (frame, size, rgba) else {
        let why = answer
            .get("problem")
            .and_then(Value::as_str)
            .unwrap_or("the simulation gave no frame");
        let p = dom::new_element("p", why)?;
        dom::set_attr(&p, "class", "problem");
        let _ = fig.append_child(&p);
        return Some(fig);
    };
    let canvas = dom::document()?
        .create_element("canvas")
        .ok()?
        .dyn_into::<HtmlCanvasElement>()
        .ok()?;
    canvas.set_width(w);
    canvas.set_height(h);
    dom::set_attr(&canvas, "role", "img");
    dom::set_attr(
        &canvas,
        "aria-label",
        &format!("{title}: simulated frame of the test scene"),
    );
    if let Some(ctx) = canvas
        .get_context("2d")
        .ok()
        .flatten()
        .and_then(|c| c.dyn_into::<CanvasRenderingContext2d>().ok())
    {
        if let Ok(img) = ImageData::new_with_u8_clamped_array_and_sh(Clamped(px), w, h) {
            let _ = ctx.put_image_data(&img, 0.0, 0.0);
        }
        // Each patch's number, as the table gives it, in a corner of its cell: written on a
        // small dark box so it reads on bright and dark patches alike.
        let size = (f64::from(h) / 30.0).clamp(8.0, 16.0);
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)] // 8 ≤ size ≤ 16
        let px_size = size.round() as u32;
        ctx.set_font(&format!("600 {px_size}px sans-serif"));
        ctx.set_text_baseline("top");
        for (x, y, n) in patch_marks(frame) {
            // Digits are about 0.6 em wide in a sans-serif face.
            #[allow(clippy::cast_precision_loss)] // a patch number has one or two digits
            let width = 0.62 * size * n.len() as f64;
            ctx.set_fill_style_str("rgba(0, 0, 0, 0.6)");
            ctx.fill_rect(x + 1.0, y + 1.0, width + 4.0, size + 3.0);
            ctx.set_fill_style_str("#ffffff");
            let _ = ctx.fill_text(&n, x + 3.0, y + 2.5);
        }
    }
    let _ = fig.append_child(&canvas);
    let caption = dom::new_element("figcaption", &mapping_words(frame, &Browser))?;
    let _ = fig.append_child(&caption);
    let table = patch_table(frame)?;
    let _ = fig.append_child(&table);
    let cautions = frame
        .get("cautions")
        .and_then(Value::as_array)
        .map(Vec::as_slice)
        .unwrap_or_default();
    if !cautions.is_empty() {
        let list = dom::new_element("ul", "")?;
        dom::set_attr(&list, "class", "warnings");
        for c in cautions {
            let text = c.get("message").and_then(Value::as_str).unwrap_or_default();
            if let Some(li) = dom::new_element("li", text) {
                let _ = list.append_child(&li);
            }
        }
        let _ = fig.append_child(&list);
    }
    Some(fig)
}

/// The patches: light, SNR measured on the frame (± its sampling uncertainty), the model's.
fn patch_table(frame: &Value) -> Option<Element> {
    let table = dom::new_element("table", "")?;
    dom::set_attr(&table, "class", "budget sim-patches");
    let caption = dom::new_element(
        "caption",
        "Patches, left to right and top to bottom: total SNR measured on this frame and the model's",
    )?;
    let _ = table.append_child(&caption);
    let thead = dom::new_element("thead", "")?;
    let tr = dom::new_element("tr", "")?;
    for h in ["patch", "light", "measured", "model"] {
        if let Some(th) = dom::new_element("th", h) {
            dom::set_attr(&th, "scope", "col");
            let _ = tr.append_child(&th);
        }
    }
    let _ = thead.append_child(&tr);
    let _ = table.append_child(&thead);
    let body = dom::new_element("tbody", "")?;
    for (i, l) in patch_labels(frame, &Browser).iter().enumerate() {
        let tr = dom::new_element("tr", "")?;
        let th = dom::new_element("th", &(i + 1).to_string())?;
        dom::set_attr(&th, "scope", "row");
        let _ = tr.append_child(&th);
        let cells = [
            (&l.light, None, ""),
            (&l.measured, l.measured_value, "measured"),
            (&l.model, l.model_value, "model"),
        ];
        for (text, value, name) in cells {
            if let Some(td) = dom::new_element("td", text) {
                if let Some(v) = value {
                    // The engine's number in full, for scripts and tests (serde_json's writer,
                    // not `Display`, which would link Rust's float formatting).
                    dom::set_attr(&td, "data-sim", name);
                    dom::set_attr(
                        &td,
                        "data-value",
                        &serde_json::to_string(&v).unwrap_or_default(),
                    );
                }
                let _ = tr.append_child(&td);
            }
        }
        let _ = body.append_child(&tr);
    }
    let _ = table.append_child(&body);
    Some(table)
}

/// Show each frame at one screen pixel per output pixel, or scaled to the column.
fn set_actual_pixels() {
    let on =
        dom::by_id_as::<HtmlInputElement>(ids::FRAME_ACTUAL_PIXELS).is_some_and(|i| i.checked());
    if let Some(views) = dom::by_id(ids::FRAME_VIEWS) {
        dom::set_class(&views, "actual-pixels", on);
    }
}

fn series_came(id: u32, text: Option<&str>, buffers: Option<JsValue>) {
    if id != SERIES.with(Cell::get) {
        return;
    }
    SERIES.with(|s| s.set(0));
    let answer: Value = text
        .and_then(|t| serde_json::from_str(t).ok())
        .unwrap_or(Value::Null);
    if let Some(p) = answer.get("problem").and_then(Value::as_str) {
        series_status(&format!("The series could not be simulated: {p}"));
        return;
    }
    let buffers: Vec<JsValue> = buffers
        .map(|b| js_sys::Array::from(&b).iter().collect())
        .unwrap_or_default();
    if let Some(name) = answer.get("name").and_then(Value::as_str) {
        let blob = buffers.first().and_then(|b| {
            let opts = web_sys::BlobPropertyBag::new();
            opts.set_type("application/zip");
            web_sys::Blob::new_with_buffer_source_sequence_and_options(
                &js_sys::Array::of1(b),
                &opts,
            )
            .ok()
        });
        let done = blob.is_some_and(|b| dom::download_blob(name, &b));
        series_status(&if done {
            format!("Saved {name}: the frames and manifest.json, as noise-budget simulate --series writes them.")
        } else {
            "The browser did not take the download.".to_string()
        });
        return;
    }
    let manifest = answer
        .get("manifest")
        .and_then(Value::as_str)
        .unwrap_or_default();
    let names: Vec<&str> = answer
        .get("names")
        .and_then(Value::as_array)
        .map(|a| a.iter().filter_map(Value::as_str).collect())
        .unwrap_or_default();
    if names.is_empty() || names.len() != buffers.len() {
        series_status("The simulation gave no frames.");
        return;
    }
    let files: Vec<(String, JsValue)> = names
        .iter()
        .map(|n| (*n).to_string())
        .zip(buffers)
        .collect();
    frames_ui::try_simulated(&files, manifest);
    series_status(&format!(
        "{} simulated frames of this sensor are in Measure a camera below, with their manifest; the analysis runs on them there.",
        files.len()
    ));
}
