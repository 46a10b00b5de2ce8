//! Writing a report on the page: every `data-report` element gets its figure, the variance bar
//! its shares, and each warning goes beside the figures it concerns.
//!
//! Presentation only: figures are copied from the engine's report (serialized to JSON values)
//! and formatted for display; nothing is computed from them here.

use std::cell::RefCell;

use engine::report::Warning;
use serde_json::Value;
use wasm_bindgen::JsCast;
use web_sys::{Element, HtmlElement};

use crate::display::{self, Style};
use crate::dom;
use crate::fields::value_at;
use crate::ids;

thread_local! {
    /// The warnings on the page now (messages and concerns), to leave them alone when an edit
    /// does not change them.
    static SHOWN_WARNINGS: RefCell<Option<String>> = const { RefCell::new(None) };
}

/// Written on the page for a figure that does not exist in this scenario (a report `null`).
const NO_FIGURE: &str = "—";
/// `data-value` of a figure that does not exist, as in the report's JSON.
const NULL_VALUE: &str = "null";

/// Forget what was shown (the page's elements were made anew).
pub fn reset() {
    SHOWN_WARNINGS.with(|s| *s.borrow_mut() = None);
}

/// Show a report: figures, bar, warnings, and lift the stale mark.
pub fn show(report: &engine::Report) {
    // Through the report's JSON text rather than `serde_json::to_value`: the text's serializer
    // is in the module anyway (downloads, the worker's messages), and a second one for values
    // cost about 20 KB of the wasm (issue 15's size budget) for about 0.1 ms an edit.
    let Ok(value) = serde_json::to_string(report)
        .and_then(|text| serde_json::from_str::<serde_json::Value>(&text))
    else {
        return;
    };
    for list in dom::all_in_document("[data-units-of]") {
        show_light_units(&list, &value);
    }
    for group in dom::all_in_document("[data-shown-if]") {
        let path = group.get_attribute("data-shown-if").unwrap_or_default();
        dom::set_hidden(&group, value_at(&value, &path).is_none());
    }
    for host in dom::all_in_document("[data-rows]") {
        show_rows(&host, &value);
    }
    // A table of rows is named by its list's path (for the warnings about it); its cells carry
    // the figures.
    for el in dom::all_in_document("[data-report]:not([data-rows])") {
        let path = el.get_attribute("data-report").unwrap_or_default();
        write_figure(&el, value_at(&value, &path));
    }
    for el in dom::all_in_document("[data-share]") {
        let path = el.get_attribute("data-share").unwrap_or_default();
        let share = value_at(&value, &path)
            .and_then(Value::as_f64)
            .unwrap_or(0.0);
        let weight = display::full(share);
        if el.get_attribute("data-weight").as_deref() == Some(weight.as_str()) {
            continue;
        }
        if let Some(h) = el.dyn_ref::<HtmlElement>() {
            // The share itself is the flex weight: no arithmetic on it here.
            let _ = h.style().set_property("flex-grow", &weight);
        }
        dom::set_attr(&el, "data-weight", &weight);
        dom::set_attr(&el, "title", &display::rounded(share, Style::Percent));
    }
    show_warnings(&report.warnings);
    set_stale(false);
}

fn write_figure(el: &Element, v: Option<&Value>) {
    // Unchanged figures are not rewritten, so an edit restyles only what it changed.
    let wanted = match v {
        Some(Value::Number(n)) => n.as_f64().map(display::full),
        Some(Value::Bool(b)) => Some(b.to_string()),
        Some(Value::String(s)) => Some(s.clone()),
        Some(Value::Array(items)) => Some(list_value(items)),
        _ => Some(NULL_VALUE.to_string()),
    };
    if wanted.is_some() && el.get_attribute("data-value") == wanted {
        return;
    }
    let unit = el.get_attribute("data-unit").unwrap_or_default();
    let fmt = el.get_attribute("data-fmt").unwrap_or_default();
    let (data, text) = match v {
        Some(Value::Number(n)) => {
            let x = n.as_f64().unwrap_or(f64::NAN);
            // A probability: a percentage from 1 %, below it a number (× 10ⁿ when small).
            let style = if fmt == "pct" || (fmt == "prob" && x >= 0.01) {
                Style::Percent
            } else {
                Style::Number
            };
            let text = if fmt == "index1" {
                // A readout's index (from 0 in the report) as people count them, from 1.
                display::rounded(x + 1.0, Style::Number)
            } else if style == Style::Number {
                let (shown, unit) = display::prefixed(x, &unit);
                format!("{}{unit}", display::rounded(shown, style))
            } else {
                format!("{}{unit}", display::rounded(x, style))
            };
            (display::full(x), text)
        }
        Some(Value::Bool(b)) => {
            let word = if *b { "yes" } else { "no" };
            (b.to_string(), word.to_string())
        }
        Some(Value::String(s)) if fmt == "text" => (s.clone(), s.clone()),
        Some(Value::String(s)) => (s.clone(), words(s)),
        // A list such as the white-balance gains: "0.73, 1, 2.96"; a range such as the
        // response band: "380–780 nm".
        Some(Value::Array(items)) => {
            let joint = if fmt == "list" { ", " } else { "–" };
            let shown: Vec<String> = items
                .iter()
                .map(|i| {
                    i.as_f64()
                        .map_or_else(|| i.to_string(), |x| display::rounded(x, Style::Number))
                })
                .collect();
            (list_value(items), format!("{}{unit}", shown.join(joint)))
        }
        _ => (NULL_VALUE.to_string(), NO_FIGURE.to_string()),
    };
    dom::set_attr(el, "data-value", &data);
    el.set_text_content(Some(&text));
}

/// `data-value` of a list (as JavaScript's `String(list)` writes it: items joined by commas).
fn list_value(items: &[Value]) -> String {
    items
        .iter()
        .map(|i| i.as_f64().map_or_else(|| i.to_string(), display::full))
        .collect::<Vec<_>>()
        .join(",")
}

/// Label and unit for a key of a report's `light_units`, named after the light given.
fn light_unit(key: &str) -> (&'static str, &'static str) {
    match key {
        "illuminance_lux" => ("illuminance at the sensor", " lx"),
        "irradiance_w_per_m2" => ("irradiance at the sensor", " W/m²"),
        "photon_flux_per_um2_s" => ("photon flux at the sensor", " photons/(µm²·s)"),
        "photons_per_pixel" => ("photons per pixel", " photons"),
        "scene_illuminance_lux" => ("illuminance on the scene", " lx"),
        "scene_irradiance_w_per_m2" => ("irradiance on the scene", " W/m²"),
        "scene_luminance_cd_per_m2" => ("scene luminance", " cd/m²"),
        "scene_radiance_w_per_m2_sr" => ("scene radiance", " W/(m²·sr)"),
        _ => ("", ""),
    }
}

/// Rebuild a list of figures from a report object whose keys depend on the light given
/// (`min_detectable.light_units`, `saturation.light_units`): one row per key present.
fn show_light_units(list: &Element, report: &Value) {
    let path = list.get_attribute("data-units-of").unwrap_or_default();
    let label = list.get_attribute("data-label").unwrap_or_default();
    let units = match value_at(report, &path) {
        Some(Value::Object(units)) => units.clone(),
        _ => serde_json::Map::new(),
    };
    // The same keys as shown: the values are written by the figures' pass; otherwise rebuild.
    let shown: Vec<String> = dom::all(list, "[data-report]")
        .iter()
        .filter_map(|e| e.get_attribute("data-report"))
        .collect();
    let wanted: Vec<String> = units.keys().map(|k| format!("{path}.{k}")).collect();
    if shown == wanted {
        return;
    }
    dom::clear(list);
    for (key, v) in &units {
        let (place, unit) = light_unit(key);
        let place = if place.is_empty() {
            key.as_str()
        } else {
            place
        };
        let row = dom::new_element("div", "");
        let dt = dom::new_element("dt", &format!("{label} {place}"));
        let dd = dom::new_element("dd", "");
        if let (Some(row), Some(dt), Some(dd)) = (row, dt, dd) {
            dom::set_attr(&dd, "data-report", &format!("{path}.{key}"));
            dom::set_attr(&dd, "data-unit", unit);
            write_figure(&dd, Some(v));
            let _ = row.append_child(&dt);
            let _ = row.append_child(&dd);
            let _ = list.append_child(&row);
        }
    }
}

/// Make a table's rows match the report's list at the host's `data-rows` path: one row per
/// item from the host's `<template>`, whose `{i}` (the item's index in the report's paths) and
/// `{n}` (its number, from 1) are filled in. The figures are written by the figures' pass;
/// rows are only rebuilt when the number of items changes.
fn show_rows(host: &Element, report: &Value) {
    let path = host.get_attribute("data-rows").unwrap_or_default();
    let wanted = value_at(report, &path)
        .and_then(Value::as_array)
        .map_or(0, Vec::len);
    let rows = dom::all(host, ":scope > tr");
    if rows.len() == wanted {
        return;
    }
    for row in rows {
        row.remove();
    }
    let Some(pattern) = host
        .query_selector(":scope > template")
        .ok()
        .flatten()
        .map(|t| t.inner_html())
    else {
        return;
    };
    let html: String = (0..wanted)
        .map(|i| {
            pattern
                .replace("{i}", &i.to_string())
                .replace("{n}", &(i + 1).to_string())
        })
        .collect();
    let _ = host.insert_adjacent_html("beforeend", &html);
}

/// A report word (`full_well`, `adc`) as plain words.
fn words(s: &str) -> String {
    match s {
        "full_well" => "the full well".into(),
        "adc" => "the ADC range".into(),
        "summing_well" => "the summing well".into(),
        other => other.replace('_', " "),
    }
}

/// Put each warning's sentence in the warning list of every result group holding a figure it
/// concerns, and mark those figures; a warning about no shown figure goes in the general list.
fn show_warnings(warnings: &[Warning]) {
    let signature: String = warnings
        .iter()
        .map(|w| format!("{}\u{1f}{}\n", w.message, w.concerns.join(",")))
        .collect();
    if SHOWN_WARNINGS.with(|s| *s.borrow() == Some(signature.clone())) {
        return;
    }
    SHOWN_WARNINGS.with(|s| *s.borrow_mut() = Some(signature));
    for list in dom::all_in_document("[data-warn-host] > .warnings") {
        dom::clear(&list);
    }
    if let Some(general) = dom::by_id(ids::WARNINGS_GENERAL) {
        dom::clear(&general);
    }
    for el in dom::all_in_document("[data-report].warned") {
        dom::set_class(&el, "warned", false);
    }
    for w in warnings {
        let code = w.code.as_str();
        let mut lists: Vec<Element> = Vec::new();
        for path in &w.concerns {
            for fig in dom::all_in_document("[data-report]")
                .into_iter()
                .filter(|e| e.get_attribute("data-report").as_deref() == Some(path))
            {
                dom::set_class(&fig, "warned", true);
                let list = fig
                    .closest("[data-warn-host]")
                    .ok()
                    .flatten()
                    .and_then(|h| h.query_selector(":scope > .warnings").ok().flatten());
                if let Some(list) = list {
                    if !lists.iter().any(|l| l.is_same_node(Some(&list))) {
                        lists.push(list);
                    }
                }
            }
        }
        if lists.is_empty() {
            lists.extend(dom::by_id(ids::WARNINGS_GENERAL));
        }
        for list in lists {
            if let Some(li) = dom::new_element("li", &w.message) {
                dom::set_attr(&li, "data-warning", code);
                let _ = list.append_child(&li);
            }
        }
    }
}

/// Mark the results as belonging to an earlier, valid scenario (or not).
pub fn set_stale(stale: bool) {
    if let Some(results) = dom::by_id(ids::RESULTS) {
        dom::set_class(&results, "stale", stale);
        if stale {
            dom::set_attr(&results, "aria-describedby", "stale-note");
        } else {
            dom::remove_attr(&results, "aria-describedby");
        }
    }
    if let Some(note) = dom::by_id(ids::STALE_NOTE) {
        dom::set_hidden(&note, !stale);
    }
}
