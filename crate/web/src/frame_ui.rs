//! The simulated frame on the page: the engine's seeded picture of the test scene for the
//! scenario on screen and, beside it, for the first pinned scenario, each patch labelled with
//! the SNR measured on the frame and the model's.
//!
//! Drawn only after the results: on "Simulate the frame", then again after each edit once a
//! frame is shown, in a task of its own after the results' (a zero timeout), so the figures
//! never wait for the picture. Deterministic: the seed is a field, and the same seed gives
//! the same frame (here and in `noise-budget simulate --seed`). Sizes and words are
//! `sim_view.rs`'s; every number is the engine's.

use std::cell::{Cell, RefCell};

use serde_json::Value;
use wasm_bindgen::prelude::*;
use wasm_bindgen::{Clamped, JsCast};
use web_sys::{CanvasRenderingContext2d, Element, HtmlCanvasElement, HtmlInputElement, ImageData};

use crate::display::Browser;
use crate::events::on_id;
use crate::sim_view::{mapping_words, patch_labels, rgba, size_for};
use crate::{curves, dom, ids};

thread_local! {
    /// Whether a frame is shown (then edits draw it again).
    static SHOWN: Cell<bool> = const { Cell::new(false) };
    /// Whether a drawing waits for its task.
    static PENDING: Cell<bool> = const { Cell::new(false) };
    /// The scenario on screen (valid, without pins), as the last results showed it.
    static NOW: RefCell<Option<Value>> = const { RefCell::new(None) };
}

/// Wire the section's controls.
pub fn wire() {
    on_id(ids::FRAME_RUN, "click", |_| {
        SHOWN.with(|s| s.set(true));
        schedule();
    });
    on_id(ids::FRAME_SEED, "input", |_| {
        if SHOWN.with(Cell::get) {
            schedule();
        }
    });
    on_id(ids::FRAME_ACTUAL_PIXELS, "change", |_| set_actual_pixels());
}

/// The results show this scenario (valid, without pins): draw its frame after them, if one is
/// shown.
pub fn after_results(value: &Value) {
    NOW.with(|n| *n.borrow_mut() = Some(value.clone()));
    if SHOWN.with(Cell::get) {
        schedule();
    }
}

fn schedule() {
    if PENDING.with(|p| p.replace(true)) {
        return;
    }
    let Some(w) = dom::window() else {
        return;
    };
    let cb = Closure::once_into_js(|| {
        PENDING.with(|p| p.set(false));
        draw();
    });
    if w.set_timeout_with_callback_and_timeout_and_arguments_0(cb.unchecked_ref(), 0)
        .is_err()
    {
        PENDING.with(|p| p.set(false));
    }
}

/// The seed typed, or the rule it breaks.
fn seed() -> Result<u64, String> {
    let text = dom::by_id_as::<HtmlInputElement>(ids::FRAME_SEED)
        .map(|i| i.value())
        .unwrap_or_default();
    let text = text.trim();
    if text.is_empty() {
        return Ok(1);
    }
    text.parse::<u64>()
        .map_err(|_| format!("seed: a whole number from 0 to 18446744073709551615, got “{text}”"))
}

fn draw() {
    let Some(views) = dom::by_id(ids::FRAME_VIEWS) else {
        return;
    };
    let problem = dom::by_id(ids::FRAME_SEED_PROBLEM);
    let seed = match seed() {
        Ok(s) => {
            if let Some(p) = &problem {
                dom::set_hidden(p, true);
            }
            s
        }
        Err(message) => {
            if let Some(p) = &problem {
                p.set_text_content(Some(&message));
                dom::set_hidden(p, false);
            }
            return;
        }
    };
    let mut shown: Vec<(String, Value)> = Vec::new();
    if let Some(v) = NOW.with(|n| n.borrow().clone()) {
        shown.push(("This scenario".into(), v));
    }
    if let Some((name, v)) = curves::first_pin() {
        shown.push((format!("Pinned {name}"), v));
    }
    dom::clear(&views);
    let mut drawn = 0;
    for (title, value) in &shown {
        if let Some(fig) = frame_figure(title, value, seed) {
            let _ = views.append_child(&fig);
            drawn += 1;
        }
    }
    dom::set_text_of(
        ids::FRAME_STATUS,
        &match drawn {
            0 => "No valid scenario to simulate.".to_string(),
            1 => format!("Simulated with seed {seed}. Pin a scenario to see it beside this one."),
            _ => format!("Simulated with seed {seed}: this scenario and the first pinned one."),
        },
    );
    set_actual_pixels();
}

/// One scenario's frame: heading, canvas, mapping, patch table and cautions; or its problem.
fn frame_figure(title: &str, value: &Value, seed: u64) -> Option<Element> {
    let fig = dom::new_element("figure", "")?;
    dom::set_attr(&fig, "class", "sim-frame");
    let head = dom::new_element("h3", title)?;
    let _ = fig.append_child(&head);
    let made = engine::validate::scenario_from_value(value)
        .map_err(|e| e.to_string())
        .and_then(|sc| {
            let size = size_for(sc.exposure().binning, sc.exposure().frames_averaged)
                .ok_or_else(|| "no frame size for this binning and averaging".to_string())?;
            engine::simulate::frame(&sc, seed, size).map_err(|e| e.to_string())
        });
    let frame = match made {
        Ok(f) => f,
        Err(message) => {
            let p = dom::new_element("p", &message)?;
            dom::set_attr(&p, "class", "problem");
            let _ = fig.append_child(&p);
            return Some(fig);
        }
    };
    let canvas = dom::document()?
        .create_element("canvas")
        .ok()?
        .dyn_into::<HtmlCanvasElement>()
        .ok()?;
    canvas.set_width(frame.width);
    canvas.set_height(frame.height);
    dom::set_attr(&canvas, "role", "img");
    dom::set_attr(
        &canvas,
        "aria-label",
        &format!("{title}: simulated frame of the test scene"),
    );
    let px = rgba(&frame);
    if let Some(ctx) = canvas
        .get_context("2d")
        .ok()
        .flatten()
        .and_then(|c| c.dyn_into::<CanvasRenderingContext2d>().ok())
    {
        if let Ok(img) =
            ImageData::new_with_u8_clamped_array_and_sh(Clamped(&px[..]), frame.width, frame.height)
        {
            let _ = ctx.put_image_data(&img, 0.0, 0.0);
        }
    }
    let _ = fig.append_child(&canvas);
    let caption = dom::new_element("figcaption", &mapping_words(&frame, &Browser))?;
    let _ = fig.append_child(&caption);
    let _ = fig.append_child(&patch_table(&frame)?.into());
    if !frame.cautions.is_empty() {
        let list = dom::new_element("ul", "")?;
        dom::set_attr(&list, "class", "warnings");
        for c in &frame.cautions {
            if let Some(li) = dom::new_element("li", &c.message) {
                let _ = list.append_child(&li);
            }
        }
        let _ = fig.append_child(&list);
    }
    Some(fig)
}

/// The patches: light, SNR measured on the frame (± its sampling uncertainty), the model's.
fn patch_table(frame: &engine::simulate::SceneFrame) -> Option<Element> {
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
        for text in [&l.light, &l.measured, &l.model] {
            if let Some(td) = dom::new_element("td", text) {
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
