//! The scenario form: read it into scenario JSON, fill it from a scenario, mark refused fields.
//!
//! Fields are found by their `name` (the key's dot path, SCENARIO.md). This file does not judge
//! values (the engine does, and its messages are shown as they are) and never changes what the
//! user typed except when asked to load a whole scenario.

use engine::validate::FORMAT_VERSION;
use engine::Problem;
use serde_json::{Map, Value};
use wasm_bindgen::JsCast;
use web_sys::{Element, HtmlInputElement, HtmlSelectElement};

use crate::dom;
use crate::fields::{self, Kind};

/// The light-kind choice of the form, which decides which light fields belong to the scenario.
fn light_kind_select() -> Option<HtmlSelectElement> {
    dom::by_id_as::<HtmlSelectElement>("light-kind")
}

/// The form's named controls: (dot path, element).
fn named_controls(form: &Element) -> Vec<(String, Element)> {
    dom::all(form, "input[name], select[name]")
        .into_iter()
        .filter_map(|el| el.get_attribute("name").map(|n| (n, el)))
        .collect()
}

fn control_text(el: &Element) -> String {
    if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        i.value()
    } else if let Some(s) = el.dyn_ref::<HtmlSelectElement>() {
        s.value()
    } else {
        String::new()
    }
}

fn set_control_text(el: &Element, text: &str) {
    if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        i.set_value(text);
    } else if let Some(s) = el.dyn_ref::<HtmlSelectElement>() {
        if text.is_empty() {
            // The first option is the format's default (see www/index.html).
            s.set_selected_index(0);
        } else {
            s.set_value(text);
        }
    }
}

/// The light kind the form shows now.
fn current_light_kind() -> String {
    light_kind_select().map_or_else(String::new, |s| s.value())
}

/// Whether a control belongs to a light kind other than the chosen one.
fn in_other_light_kind(el: &Element, kind: &str) -> bool {
    el.closest("[data-light-kind]")
        .ok()
        .flatten()
        .and_then(|box_| box_.get_attribute("data-light-kind"))
        .is_some_and(|k| k != kind)
}

/// The scenario the form describes now, as JSON (possibly invalid: the engine judges it).
#[must_use]
pub fn read(form: &Element) -> Value {
    let kind = current_light_kind();
    let mut root = Map::new();
    root.insert("version".into(), Value::from(FORMAT_VERSION));
    for (path, el) in named_controls(form) {
        if in_other_light_kind(&el, &kind) {
            continue;
        }
        let k = if el.get_attribute("data-kind").as_deref() == Some("text")
            || el.dyn_ref::<HtmlSelectElement>().is_some()
        {
            Kind::Text
        } else {
            Kind::Number
        };
        if let Some(v) = fields::value_for(&control_text(&el), k) {
            fields::insert_at(&mut root, &path, v);
        }
    }
    // The light object exists even when its fields are empty, so that the engine's message
    // names the light rather than a missing object.
    root.entry("light")
        .or_insert_with(|| Value::Object(Map::new()));
    Value::Object(root)
}

/// Fill every field from a scenario that the engine has accepted.
pub fn fill(form: &Element, scenario: &Value) {
    for (path, el) in named_controls(form) {
        set_control_text(&el, &fields::text_for(fields::value_at(scenario, &path)));
    }
    if let (Some(select), Some(kind)) = (light_kind_select(), fields::light_kind_of(scenario)) {
        select.set_value(kind);
    }
    show_light_kind(form);
}

/// Show the fields of the chosen light kind and hide the others (their text is kept).
pub fn show_light_kind(form: &Element) {
    let kind = current_light_kind();
    for box_ in dom::all(form, "[data-light-kind]") {
        let mine = box_.get_attribute("data-light-kind").as_deref() == Some(kind.as_str());
        dom::set_hidden(&box_, !mine);
    }
}

/// Remove every mark of a refused field.
pub fn clear_problems(form: &Element) {
    for el in dom::all(form, "[aria-invalid]") {
        dom::remove_attr(&el, "aria-invalid");
    }
    for el in dom::all(form, ".field .problem") {
        dom::clear(&el);
    }
    if let Some(list) = dom::by_id("form-problems") {
        dom::clear(&list);
    }
}

/// Mark each refused field and put the engine's message beside it; problems that belong to no
/// field (the scenario as a whole) go in the list at the top of the form.
pub fn show_problems(form: &Element, problems: &[Problem]) {
    let general = dom::by_id("form-problems");
    for p in problems {
        let field = dom::all(form, ".field[data-path]")
            .into_iter()
            .find(|f| f.get_attribute("data-path").as_deref() == Some(p.path.as_str()));
        let slot = field
            .as_ref()
            .and_then(|f| f.query_selector(".problem").ok().flatten());
        match (field, slot) {
            (Some(field), Some(slot)) => {
                for control in dom::all(&field, "input, select") {
                    dom::set_attr(&control, "aria-invalid", "true");
                }
                let before = slot.text_content().unwrap_or_default();
                let text = if before.is_empty() {
                    p.message.clone()
                } else {
                    format!("{before}; {}", p.message)
                };
                slot.set_text_content(Some(&text));
            }
            _ => {
                if let (Some(list), Some(li)) = (&general, dom::new_element("li", &p.to_string())) {
                    let _ = list.append_child(&li);
                }
            }
        }
    }
}
