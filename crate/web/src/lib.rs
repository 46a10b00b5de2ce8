//! The page's wasm boundary: reads the form and the address, calls the engine, writes results.
//!
//! The only crate that touches the DOM. It holds no formula and no validation rule: every
//! figure and every refusal comes from `engine`; rounded display text is written as the
//! browser's `Intl.NumberFormat("en")` writes it (`display.rs`). Nothing here may panic on what
//! a user types, links or opens.

pub mod address;
pub mod chart;
pub mod curves;
pub mod demos;
pub mod detection_plot;
pub mod display;
pub mod fields;
pub mod ids;
#[cfg(not(target_arch = "wasm32"))]
pub mod markup;
pub mod plot;
pub mod sim_words;
pub mod svg;

#[cfg(target_arch = "wasm32")]
pub mod app;
#[cfg(target_arch = "wasm32")]
pub mod dom;
#[cfg(target_arch = "wasm32")]
mod events;
#[cfg(target_arch = "wasm32")]
mod form;
#[cfg(target_arch = "wasm32")]
mod frame_ui;
#[cfg(target_arch = "wasm32")]
mod frames_plot;
#[cfg(target_arch = "wasm32")]
mod frames_ui;
#[cfg(target_arch = "wasm32")]
mod results;
#[cfg(target_arch = "wasm32")]
mod store;

/// The frame worker's exports (`Analysis`, `simulate_frame`, …), linked into this module so
/// that the worker runs the page's own compiled engine.
#[cfg(all(target_arch = "wasm32", feature = "frames"))]
pub use noise_budget_frames_worker;

#[cfg(target_arch = "wasm32")]
use wasm_bindgen::prelude::*;

/// Entry point: set the page up (does nothing on a page without the calculator's form, nor in
/// the frame worker, which instantiates this same module and has no window).
#[cfg(target_arch = "wasm32")]
#[wasm_bindgen(start)]
pub fn start() {
    if web_sys::window().is_none() {
        return;
    }
    app::mount();
    frames_ui::mount();
}

/// Evaluate a scenario (JSON text) and return the report as a JavaScript object, with `null`
/// for figures that do not exist; for scripts and tests that want figures without the form.
///
/// # Errors
/// The engine's problems, one per line, each naming its key.
#[cfg(target_arch = "wasm32")]
#[wasm_bindgen]
pub fn evaluate(scenario_json: &str) -> Result<JsValue, JsError> {
    // As the report's JSON text, parsed by the browser: the same JavaScript object (figures
    // that do not exist are `null`), with no second serializer in the module.
    let report = engine::evaluate_json(scenario_json).map_err(|e| JsError::new(&e.to_string()))?;
    let text = serde_json::to_string(&report).map_err(|e| JsError::new(&e.to_string()))?;
    js_sys::JSON::parse(&text).map_err(|_| JsError::new("the report's JSON did not parse"))
}

/// The calculator's version.
#[cfg(target_arch = "wasm32")]
#[wasm_bindgen]
#[must_use]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}
