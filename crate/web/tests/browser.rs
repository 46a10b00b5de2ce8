//! Browser tests of the page's wiring (wasm-bindgen-test in headless Chromium): the boundary
//! puts the engine's figures on the page, follows edits, marks refused fields with the engine's
//! message, reads links, and hands JavaScript `null` for missing figures.
//!
//! They check wiring, not physics (the engine's own tests do that), and they do not build or
//! load the real page (the end-to-end tests in tests/e2e do): they mount www/index.html's body.
#![cfg(target_arch = "wasm32")]
// Test code: a broken expectation should stop the test with its message.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use noise_budget_web::{address, app, demos::DEMOS};
use wasm_bindgen::{JsCast, JsValue};
use wasm_bindgen_test::{wasm_bindgen_test, wasm_bindgen_test_configure};
use web_sys::{Document, Element, Event, HtmlInputElement};

wasm_bindgen_test_configure!(run_in_browser);

const PAGE: &str = include_str!("../../../www/index.html");

fn document() -> Document {
    web_sys::window()
        .and_then(|w| w.document())
        .expect("a browser document")
}

/// Put the page's body in the test document (beside the test runner's own output, which must
/// stay), with this address fragment and an empty store, and set it up as the real page does.
fn mount(fragment: &str) -> Document {
    let doc = document();
    let body = PAGE
        .split_once("<body>")
        .and_then(|(_, rest)| rest.split_once("</body>"))
        .map_or("", |(body, _)| body);
    assert!(!body.is_empty());
    if let Some(old) = doc.get_element_by_id("page-under-test") {
        old.remove();
    }
    let holder = doc.create_element("div").expect("a div");
    holder.set_id("page-under-test");
    holder.set_inner_html(body);
    doc.body()
        .expect("a body")
        .append_child(&holder)
        .expect("appended");
    if let Some(w) = web_sys::window() {
        if let Ok(Some(s)) = w.local_storage() {
            let _ = s.clear();
        }
        if let Ok(h) = w.history() {
            let url = if fragment.is_empty() { "#" } else { fragment };
            let _ = h.replace_state_with_url(&JsValue::NULL, "", Some(url));
        }
    }
    app::mount();
    doc
}

fn el(doc: &Document, selector: &str) -> Element {
    doc.query_selector(selector)
        .ok()
        .flatten()
        .unwrap_or_else(|| panic!("no element {selector}"))
}

fn shown(doc: &Document, path: &str) -> String {
    el(doc, &format!("[data-report=\"{path}\"]"))
        .get_attribute("data-value")
        .unwrap_or_default()
}

fn type_into(doc: &Document, name: &str, text: &str) {
    let input = el(doc, &format!("[name=\"{name}\"]"))
        .dyn_into::<HtmlInputElement>()
        .expect("an input");
    input.set_value(text);
    let init = web_sys::EventInit::new();
    init.set_bubbles(true);
    let ev = Event::new_with_event_init_dict("input", &init).expect("an input event");
    input.dispatch_event(&ev).expect("dispatched");
}

fn report_of(json: &str) -> serde_json::Value {
    serde_json::to_value(engine::evaluate_json(json).expect("a valid demo")).expect("a report")
}

fn number(v: &serde_json::Value, path: &str) -> f64 {
    noise_budget_web::fields::value_at(v, path)
        .and_then(serde_json::Value::as_f64)
        .unwrap_or(f64::NAN)
}

#[wasm_bindgen_test]
fn without_link_or_store_the_first_demo_is_shown_with_the_engines_figures() {
    let doc = mount("");
    let report = report_of(DEMOS[0].json);
    for path in [
        "snr.temporal",
        "noise_e.total",
        "saturation.level_e",
        "max_snr",
    ] {
        let got: f64 = shown(&doc, path).parse().unwrap_or(f64::NAN);
        assert_eq!(got, number(&report, path), "{path}");
    }
    assert_eq!(shown(&doc, "saturation.saturated"), "false");
    assert!(el(&doc, "html").has_attribute("data-ready"));
}

#[wasm_bindgen_test]
fn an_edit_updates_the_figures_and_a_refused_value_is_marked_not_computed() {
    let doc = mount("");
    type_into(&doc, "sensor.read_noise_e", "7");
    assert_eq!(shown(&doc, "noise_e.read"), "7");
    let before = shown(&doc, "snr.total");

    type_into(&doc, "sensor.read_noise_e", "-1");
    let input = el(&doc, "[name=\"sensor.read_noise_e\"]");
    assert_eq!(input.get_attribute("aria-invalid").as_deref(), Some("true"));
    let message = el(&doc, "[data-path=\"sensor.read_noise_e\"] .problem").text_content();
    assert_eq!(message.as_deref(), Some("must be ≥ 0, got -1"));
    assert!(el(&doc, "#results").class_list().contains("stale"));
    assert_eq!(shown(&doc, "snr.total"), before, "last valid figures stay");
    assert_eq!(shown(&doc, "noise_e.read"), "7");

    type_into(&doc, "sensor.read_noise_e", "2");
    assert!(!input.has_attribute("aria-invalid"));
    assert!(!el(&doc, "#results").class_list().contains("stale"));
    assert_eq!(shown(&doc, "noise_e.read"), "2");
}

#[wasm_bindgen_test]
fn a_link_in_the_address_is_loaded_and_a_malformed_one_is_reported() {
    let demo = &DEMOS[2];
    let compact = serde_json::from_str::<serde_json::Value>(demo.json)
        .map(|v| v.to_string())
        .unwrap_or_default();
    let doc = mount(&address::fragment_for(&compact));
    let title = el(&doc, "[name=\"title\"]").dyn_into::<HtmlInputElement>();
    let want = serde_json::from_str::<serde_json::Value>(demo.json)
        .ok()
        .and_then(|v| v.get("title").and_then(|t| t.as_str()).map(str::to_string));
    assert_eq!(title.map(|t| t.value()).ok(), want);
    assert!(el(&doc, "#load-problems").has_attribute("hidden"));

    let doc = mount("#scenario=not*base64");
    assert!(!el(&doc, "#load-problems").has_attribute("hidden"));
    let text = el(&doc, "#load-problems-list")
        .text_content()
        .unwrap_or_default();
    assert!(text.contains("base64url"), "{text}");
    // The page still shows a valid scenario: the first demo.
    let report = report_of(DEMOS[0].json);
    let got: f64 = shown(&doc, "snr.temporal").parse().unwrap_or(f64::NAN);
    assert_eq!(got, number(&report, "snr.temporal"));
}

#[wasm_bindgen_test]
fn evaluate_gives_javascript_null_for_missing_figures_and_throws_on_bad_input() {
    let scenario = r#"{"version":1,"sensor":{"pixel_pitch_um":3,"quantum_efficiency":0.5,
        "full_well_e":1000,"read_noise_e":2,"dark_current_e_per_s":1,"adc_bits":12,
        "system_gain_dn_per_e":0.5},"light":{"photons_per_pixel":100},"exposure":{"time_s":0.01}}"#;
    let report = noise_budget_web::evaluate(scenario);
    assert!(report.is_ok());
    let report = report.unwrap_or(JsValue::UNDEFINED);
    let get = |k: &str| js_sys::Reflect::get(&report, &JsValue::from_str(k)).unwrap_or_default();
    assert!(
        get("noise_uv").is_null(),
        "no conversion gain: noise_uv is null"
    );
    assert!(get("exposure_for_threshold_s").is_null());
    assert!(get("snr").is_object());
    assert!(noise_budget_web::evaluate("{").is_err());
    assert!(noise_budget_web::evaluate(r#"{"version":2}"#).is_err());
}
