//! The scenario form: read it into scenario JSON, fill it from a scenario, mark refused fields.
//!
//! Fields are found by their `name` (the key's dot path, SCENARIO.md). This file does not judge
//! values (the engine does, and its messages are shown as they are) and never changes what the
//! user typed except when asked to load a whole scenario.

use engine::validate::FORMAT_VERSION;
use engine::Problem;
use serde_json::{Map, Value};
use wasm_bindgen::JsCast;
use web_sys::{Element, HtmlInputElement, HtmlSelectElement, HtmlTextAreaElement};

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

/// The box for scenario keys the form has no field for (other light kinds, spectra, background
/// light, QE curves, `x_` keys), as JSON text.
fn extra_box() -> Option<HtmlTextAreaElement> {
    dom::by_id_as::<HtmlTextAreaElement>("extra-json")
}

/// The scenario the form describes now, as JSON (possibly invalid: the engine judges it), or
/// the problem with the extra keys' JSON text, in the engine's words.
pub fn read(form: &Element) -> Result<Value, Vec<Problem>> {
    let mut root = read_fields(form);
    let extra_text = extra_box().map(|t| t.value()).unwrap_or_default();
    if !extra_text.trim().is_empty() {
        match serde_json::from_str::<Value>(&extra_text) {
            Ok(Value::Object(extra)) => fields::merge_missing(&mut root, &extra),
            Ok(_) => {
                return Err(vec![Problem {
                    path: EXTRA_PATH.into(),
                    message:
                        "must be a JSON object of scenario keys, like {\"background_light\": {…}}"
                            .into(),
                }])
            }
            Err(_) => {
                // Let the engine word the JSON error, as for a file.
                let problems = engine::validate::scenario_from_json(&extra_text)
                    .err()
                    .map(|e| e.problems().to_vec())
                    .unwrap_or_default();
                return Err(problems
                    .into_iter()
                    .map(|p| Problem {
                        path: EXTRA_PATH.into(),
                        message: p.message,
                    })
                    .collect());
            }
        }
    }
    Ok(Value::Object(root))
}

/// `data-path` of the extra keys' field.
const EXTRA_PATH: &str = "extra";

fn read_fields(form: &Element) -> Map<String, Value> {
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
    root
}

/// Fill every field from a scenario that the engine has accepted; keys without a field go,
/// as JSON, into the extra keys' box.
pub fn fill(form: &Element, scenario: &Value) {
    let controls = named_controls(form);
    for (path, el) in &controls {
        set_control_text(el, &fields::text_for(fields::value_at(scenario, path)));
    }
    if let Some(select) = light_kind_select() {
        // An empty choice: the light is of a kind given in the extra keys.
        select.set_value(fields::light_kind_of(scenario).unwrap_or(""));
    }
    let names: Vec<String> = controls.into_iter().map(|(p, _)| p).collect();
    if let Some(b) = extra_box() {
        let rest = fields::without_fields(scenario, &names)
            .map(|v| fields::extra_text(&v))
            .unwrap_or_default();
        b.set_value(&rest);
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
    let has_extra = extra_box().is_some_and(|b| !b.value().trim().is_empty());
    let fields = dom::all(form, ".field[data-path]");
    let field_at = |path: &str| {
        fields
            .iter()
            .find(|f| f.get_attribute("data-path").as_deref() == Some(path))
            .cloned()
    };
    for p in problems {
        // A key with no field of its own was typed in the extra keys, if there are any.
        let field = field_at(&p.path).or_else(|| {
            if has_extra && p.path != "scenario" {
                field_at(EXTRA_PATH)
            } else {
                None
            }
        });
        let slot = field
            .as_ref()
            .and_then(|f| f.query_selector(".problem").ok().flatten());
        match (field, slot) {
            (Some(field), Some(slot)) => {
                for control in dom::all(&field, "input, select, textarea") {
                    dom::set_attr(&control, "aria-invalid", "true");
                }
                let before = slot.text_content().unwrap_or_default();
                let own = field.get_attribute("data-path").as_deref() == Some(p.path.as_str());
                let message = if own {
                    p.message.clone()
                } else {
                    p.to_string()
                };
                let text = if before.is_empty() {
                    message
                } else {
                    format!("{before}; {message}")
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
