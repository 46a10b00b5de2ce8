//! Listening to the page: the one place event listeners and promise callbacks are made (`on`,
//! `on_id`, `when_settled`), and the actions a section of the page asks the app for.
//!
//! A section (the curves, the frame measurement) never calls into `app`: it is given a callback
//! of [`Action`]s when it is wired, and the app decides what each means. Nothing here knows the
//! scenario format or a figure.

use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{Event, EventTarget};

use crate::dom;

/// What a section asks the app for.
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// Run the one flow again (form → engine → results, address, store): the pins changed, so
    /// the link and the store must carry them.
    Recompute,
    /// Load this scenario into the form, as from a file; `source` names it in messages.
    Load {
        /// The scenario, as JSON.
        value: Value,
        /// What it is, for the status line ("pinned scenario B").
        source: String,
    },
}

/// Listen to `kind` events on `target` for as long as the page lives.
pub fn on(target: &EventTarget, kind: &str, handler: impl FnMut(Event) + 'static) {
    listen(target, kind, Box::new(handler));
}

/// [`on`] without a copy per handler type (the page's wasm holds one of these, not thirty).
fn listen(target: &EventTarget, kind: &str, handler: Box<dyn FnMut(Event)>) {
    let cb = Closure::wrap(handler);
    let _ = target.add_event_listener_with_callback(kind, cb.as_ref().unchecked_ref());
    // The listener lives as long as the page.
    cb.forget();
}

/// Listen to `kind` events on the element with this id, if the page has it.
pub fn on_id(id: &'static str, kind: &str, handler: impl FnMut(Event) + 'static) {
    if let Some(el) = dom::by_id(id) {
        on(&el, kind, handler);
    }
}

/// Run `ok` or `failed` once when a promise settles.
pub fn when_settled(
    promise: &js_sys::Promise,
    ok: impl FnOnce(JsValue) + 'static,
    failed: impl FnOnce(JsValue) + 'static,
) {
    settle(promise, Box::new(ok), Box::new(failed));
}

/// [`when_settled`] without a copy per callback type.
fn settle(
    promise: &js_sys::Promise,
    ok: Box<dyn FnOnce(JsValue)>,
    failed: Box<dyn FnOnce(JsValue)>,
) {
    let ok = Closure::once(ok);
    let failed = Closure::once(failed);
    let _ = promise.then2(&ok, &failed);
    // Each runs at most once, after this function returns; a user action makes one pair.
    ok.forget();
    failed.forget();
}
