//! The scenario form: read it into scenario JSON, fill it from a scenario, mark refused fields.
//!
//! Fields are found by their `name` (the key's dot path, SCENARIO.md). Boxes of fields that
//! belong to one choice (`data-if` = the id of a choice, `data-in` = its values) are read only
//! while that choice is made. This file does not judge values (the engine does, and its
//! messages are shown as they are; pasted pairs are only split into lines) and never changes
//! what the user typed except when asked to load a whole scenario.

use engine::validate::FORMAT_VERSION;
use engine::Problem;
use serde_json::{Map, Value};
use wasm_bindgen::JsCast;
use web_sys::{Element, HtmlInputElement, HtmlSelectElement, HtmlTextAreaElement};

use crate::dom;
use crate::fields::{self, Kind};
use crate::ids;

/// The light-kind choices of the form (not scenario keys: they decide which fields are read),
/// with the light object each one is for.
fn light_kind_selects() -> [(Option<HtmlSelectElement>, &'static str); 2] {
    [
        (dom::by_id_as::<HtmlSelectElement>(ids::LIGHT_KIND), "light"),
        (
            dom::by_id_as::<HtmlSelectElement>(ids::BACKGROUND_KIND),
            "background_light",
        ),
    ]
}

/// The form's named controls: (dot path, element).
fn named_controls(form: &Element) -> Vec<(String, Element)> {
    dom::all(form, "input[name], select[name], textarea[name]")
        .into_iter()
        .filter_map(|el| el.get_attribute("name").map(|n| (n, el)))
        .collect()
}

fn control_text(el: &Element) -> String {
    if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        i.value()
    } else if let Some(s) = el.dyn_ref::<HtmlSelectElement>() {
        s.value()
    } else if let Some(t) = el.dyn_ref::<HtmlTextAreaElement>() {
        t.value()
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
    } else if let Some(t) = el.dyn_ref::<HtmlTextAreaElement>() {
        t.set_value(text);
    }
}

/// Whether a box of fields belongs to the choice made now: its `data-if` names a choice's id,
/// its `data-in` the values (space-separated) for which it belongs.
fn box_active(box_: &Element) -> bool {
    let choice = box_.get_attribute("data-if").unwrap_or_default();
    let value = dom::document()
        .and_then(|d| d.get_element_by_id(&choice))
        .map(|el| control_text(&el))
        .unwrap_or_default();
    box_.get_attribute("data-in")
        .unwrap_or_default()
        .split_whitespace()
        .any(|v| v == value)
}

/// Whether a control sits in a box (or a box within a box) of a choice not made now.
fn in_inactive_box(el: &Element) -> bool {
    let mut here = el.parent_element();
    while let Some(node) = here {
        let Some(box_) = node.closest("[data-if]").ok().flatten() else {
            return false;
        };
        if !box_active(&box_) {
            return true;
        }
        here = box_.parent_element();
    }
    false
}

/// The box for scenario keys the form has no field for (other light kinds, spectra, background
/// light, QE curves, `x_` keys), as JSON text.
fn extra_box() -> Option<HtmlTextAreaElement> {
    dom::by_id_as::<HtmlTextAreaElement>(ids::EXTRA_JSON)
}

/// The scenario the form describes, with the problems of pasted lists that the form found
/// itself (lines that are not two numbers), and for each pasted list the line of each point.
pub struct FormScenario {
    /// The scenario as JSON (possibly invalid: the engine judges it). Lines that are not two
    /// numbers are left out of their list, so the engine still checks the others.
    pub value: Value,
    /// Lines that are not two numbers, each at its list's path.
    pub own_problems: Vec<Problem>,
    /// (list path, line of each point).
    lines: Vec<(String, Vec<usize>)>,
}

impl FormScenario {
    /// The engine's problems, with a point of a pasted list (`light.spectrum.points[3]`) put at
    /// the list's field and named by its line.
    #[must_use]
    pub fn at_lines(&self, problems: &[Problem]) -> Vec<Problem> {
        problems
            .iter()
            .map(|p| {
                let line = fields::split_index(&p.path).and_then(|(list, i)| {
                    self.lines
                        .iter()
                        .find(|(path, _)| path == list)
                        .and_then(|(path, lines)| Some((path, *lines.get(i)?)))
                });
                match line {
                    Some((path, n)) => Problem {
                        path: path.clone(),
                        message: format!("line {n}: {}", p.message),
                    },
                    None => p.clone(),
                }
            })
            .collect()
    }
}

/// The scenario the form describes now, or the problem with the extra keys' JSON text, in the
/// engine's words.
pub fn read(form: &Element) -> Result<FormScenario, Vec<Problem>> {
    let mut read = read_fields(form);
    let extra_text = extra_box().map(|t| t.value()).unwrap_or_default();
    if !extra_text.trim().is_empty() {
        match serde_json::from_str::<Value>(&extra_text) {
            Ok(Value::Object(extra)) => {
                if let Value::Object(root) = &mut read.value {
                    fields::merge_missing(root, &extra);
                }
            }
            Ok(_) => {
                return Err(vec![Problem {
                    path: EXTRA_PATH.into(),
                    message: "must be a JSON object of scenario keys, like {\"x_note\": \"…\"}"
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
    Ok(read)
}

/// `data-path` of the extra keys' field.
const EXTRA_PATH: &str = "extra";

fn read_fields(form: &Element) -> FormScenario {
    let mut root = Map::new();
    let mut own_problems = Vec::new();
    let mut lines = Vec::new();
    root.insert("version".into(), Value::from(FORMAT_VERSION));
    for (path, el) in named_controls(form) {
        if in_inactive_box(&el) {
            continue;
        }
        let data_kind = el.get_attribute("data-kind");
        if data_kind.as_deref() == Some("pairs") {
            let text = control_text(&el);
            if text.trim().is_empty() {
                continue;
            }
            let pairs = fields::parse_pairs(&text);
            own_problems.extend(pairs.problems.iter().map(|p| Problem {
                path: path.clone(),
                message: p.to_string(),
            }));
            fields::insert_at(&mut root, &path, Value::Array(pairs.list));
            lines.push((path, pairs.lines));
            continue;
        }
        if el
            .get_attribute("data-omit-default")
            .is_some_and(|d| d == control_text(&el))
        {
            continue;
        }
        let listed = match data_kind.as_deref() {
            Some("numbers") => Some(fields::numbers_value(&control_text(&el))),
            Some("matrix") => Some(fields::matrix_value(&control_text(&el))),
            _ => None,
        };
        if let Some(v) = listed {
            if let Some(v) = v {
                fields::insert_at(&mut root, &path, v);
            }
            continue;
        }
        let k = if data_kind.as_deref() == Some("text")
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
    FormScenario {
        value: Value::Object(root),
        own_problems,
        lines,
    }
}

/// Fill every field from a scenario that the engine has accepted; keys without a field go,
/// as JSON, into the extra keys' box.
pub fn fill(form: &Element, scenario: &Value) {
    let controls = named_controls(form);
    for (path, el) in &controls {
        let value = fields::value_at(scenario, path);
        let text = match el.get_attribute("data-kind").as_deref() {
            Some("pairs") => fields::pairs_text(value),
            Some("numbers" | "matrix") => fields::numbers_text(value),
            _ => fields::text_for(value),
        };
        set_control_text(el, &text);
    }
    for (select, object) in light_kind_selects() {
        if let Some(select) = select {
            // No light there: the empty choice ("none" for the background light).
            select.set_value(fields::light_kind_of(scenario, object).unwrap_or(""));
        }
    }
    let names: Vec<String> = controls.into_iter().map(|(p, _)| p).collect();
    if let Some(b) = extra_box() {
        let rest = fields::without_fields(scenario, &names)
            .map(|v| fields::extra_text(&v))
            .unwrap_or_default();
        b.set_value(&rest);
    }
    show_chosen(form);
}

/// Show the boxes of the choices made and hide the others (their text is kept).
pub fn show_chosen(form: &Element) {
    for box_ in dom::all(form, "[data-if]") {
        dom::set_hidden(&box_, !box_active(&box_));
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
    if let Some(list) = dom::by_id(ids::FORM_PROBLEMS) {
        dom::clear(&list);
    }
}

/// Mark each refused field and put the engine's message beside it; problems that belong to no
/// field (the scenario as a whole) go in the list at the top of the form.
pub fn show_problems(form: &Element, problems: &[Problem]) {
    let general = dom::by_id(ids::FORM_PROBLEMS);
    let has_extra = extra_box().is_some_and(|b| !b.value().trim().is_empty());
    let fields = dom::all(form, ".field[data-path]");
    // A field stands for its own path and for those in its `data-also` (a choice's object).
    let field_at = |path: &str| {
        fields
            .iter()
            .find(|f| {
                f.get_attribute("data-path").as_deref() == Some(path)
                    || f.get_attribute("data-also")
                        .is_some_and(|a| a.split_whitespace().any(|p| p == path))
            })
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
                let own = field.get_attribute("data-path").as_deref() == Some(p.path.as_str())
                    || field
                        .get_attribute("data-also")
                        .is_some_and(|a| a.split_whitespace().any(|q| q == p.path));
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
