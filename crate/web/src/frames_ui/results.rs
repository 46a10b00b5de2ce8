//! The result shown: the figures with their uncertainties, the colour channels' table, the
//! diagnostics, the curves and spatial plots; and "Use this sensor", which puts the measured
//! keys into the scenario form.

use std::fmt::Write as _;

use engine::ptc::SpatialSeries;
use serde_json::Value;
use wasm_bindgen::JsCast;
use web_sys::{Element, Event, HtmlInputElement, HtmlSelectElement};

use super::{status, RESULT};
use crate::display::{self, Style};
use crate::dom;
use crate::frames_plot;

/// A number at a JSON pointer of the result, if it is there.
fn num(v: &Value, pointer: &str) -> Option<f64> {
    v.pointer(pointer).and_then(Value::as_f64)
}

/// One figure of the engine's list as a value with its uncertainty and unit.
fn figure_text(f: &Value) -> (Option<f64>, String) {
    let value = f.get("value").and_then(Value::as_f64);
    let unit = f.get("unit").and_then(Value::as_str).unwrap_or_default();
    let Some(x) = value else {
        return (None, "not measured by these frames".into());
    };
    let mut text = display::rounded(x, Style::Number);
    if f.get("upper_bound") == Some(&Value::Bool(true)) {
        text = format!("< {text}");
    }
    if let Some(u) = f.get("uncertainty").and_then(Value::as_f64) {
        let _ = write!(text, " ± {}", display::rounded(u, Style::Number));
    }
    if !unit.is_empty() {
        let _ = write!(text, " {unit}");
    }
    if f.get("upper_bound") == Some(&Value::Bool(true)) {
        text.push_str(" (an upper bound: the dark noise is below what the ADC resolves)");
    }
    (value, text)
}

/// A value span carrying the figure's key and full value, for tests and copying.
fn value_span(key: &str, value: Option<f64>, text: &str) -> Option<Element> {
    let span = dom::new_element("span", text)?;
    dom::set_attr(&span, "data-measure", key);
    dom::set_attr(
        &span,
        "data-value",
        &value.map_or_else(|| "null".to_string(), display::full),
    );
    Some(span)
}

/// The figures of the engine's list, each with its clause as a tooltip.
fn figure_list(list: &Element, figures: &[Value]) {
    for f in figures {
        let key = f.get("key").and_then(Value::as_str).unwrap_or_default();
        let name = f.get("name").and_then(Value::as_str).unwrap_or_default();
        let (value, text) = figure_text(f);
        let Some(div) = dom::new_element("div", "") else {
            continue;
        };
        if let Some(dt) = dom::new_element("dt", name) {
            if let Some(c) = f.get("clause").and_then(Value::as_str) {
                dom::set_attr(&dt, "title", c);
            }
            let _ = div.append_child(&dt);
        }
        if let Some(dd) = dom::new_element("dd", "") {
            if let Some(span) = value_span(key, value, &text) {
                let _ = dd.append_child(&span);
            }
            let _ = div.append_child(&dd);
        }
        let _ = list.append_child(&div);
    }
}

/// One table for the colour channels: a row per figure, a column per channel.
fn channel_table(holder: &Element, channels: &[Value]) {
    let Some(table) = dom::new_element("table", "") else {
        return;
    };
    dom::set_attr(&table, "id", "measure-channel-table");
    if let Some(cap) = dom::new_element(
        "caption",
        "Each colour channel on its own (the figures above are the green pixels, Gr and Gb \
         pooled)",
    ) {
        let _ = table.append_child(&cap);
    }
    let Some(head) = dom::new_element("tr", "") else {
        return;
    };
    if let Some(th) = dom::new_element("th", "") {
        let _ = head.append_child(&th);
    }
    for ch in channels {
        let name = ch.get("name").and_then(Value::as_str).unwrap_or_default();
        if let Some(th) = dom::new_element("th", name) {
            dom::set_attr(&th, "scope", "col");
            let _ = head.append_child(&th);
        }
    }
    let _ = table.append_child(&head);
    let first: Vec<Value> = channels
        .first()
        .and_then(|c| c.get("figures"))
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    let mut rows: Vec<(String, String)> = first
        .iter()
        .map(|f| {
            (
                f.get("key")
                    .and_then(Value::as_str)
                    .unwrap_or_default()
                    .to_string(),
                f.get("name")
                    .and_then(Value::as_str)
                    .unwrap_or_default()
                    .to_string(),
            )
        })
        .collect();
    rows.insert(0, ("relative_response".into(), "response / green".into()));
    for (key, name) in rows {
        let Some(tr) = dom::new_element("tr", "") else {
            continue;
        };
        if let Some(th) = dom::new_element("th", &name) {
            dom::set_attr(&th, "scope", "row");
            let _ = tr.append_child(&th);
        }
        for ch in channels {
            let cname = ch.get("name").and_then(Value::as_str).unwrap_or_default();
            let (value, text) = if key == "relative_response" {
                let v = ch.get("relative_response").and_then(Value::as_f64);
                (
                    v,
                    v.map_or_else(
                        || "not measured".into(),
                        |x| display::rounded(x, Style::Number),
                    ),
                )
            } else {
                ch.get("figures")
                    .and_then(Value::as_array)
                    .and_then(|fs| {
                        fs.iter()
                            .find(|f| f.get("key").and_then(Value::as_str) == Some(&key))
                    })
                    .map_or((None, "not measured".into()), figure_text)
            };
            if let Some(td) = dom::new_element("td", "") {
                if let Some(span) = value_span(&format!("{cname}.{key}"), value, &text) {
                    let _ = td.append_child(&span);
                }
                let _ = tr.append_child(&td);
            }
        }
        let _ = table.append_child(&tr);
    }
    let _ = holder.append_child(&table);
}

pub(super) fn show_result(r: &Value) {
    let figures = r
        .get("figures")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    if let Some(list) = dom::by_id("measure-figures") {
        dom::clear(&list);
        figure_list(&list, &figures);
    }
    if let Some(p) = dom::by_id("measure-depth") {
        let bits = num(r, "/sample_depth/native_bits");
        let step = num(r, "/sample_depth/step_dn").unwrap_or(1.0);
        let container = num(r, "/sample_depth/container_bits").unwrap_or(16.0);
        let cfa = r.get("cfa").and_then(Value::as_str).unwrap_or("mono");
        let mut text = match bits {
            Some(b) => format!(
                "DN figures are in the camera's own {}-bit DN",
                display::rounded(b, Style::Number)
            ),
            None => "The camera's bit depth is not known: DN figures are in the files' DN".into(),
        };
        if step > 1.0 {
            let _ = write!(
                text,
                " (1 DN = {} DN of the {}-bit files)",
                display::rounded(step, Style::Number),
                display::rounded(container, Style::Number)
            );
        }
        if cfa != "mono" {
            let _ = write!(
                text,
                ". A {cfa} colour sensor: the figures below are its green pixels (Gr and Gb \
                 pooled); the table after them has each channel"
            );
        }
        text.push('.');
        p.set_text_content(Some(&text));
    }
    let channels = r
        .get("channels")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    if let Some(holder) = dom::by_id("measure-channels") {
        dom::clear(&holder);
        if !channels.is_empty() {
            channel_table(&holder, &channels);
        }
    }
    if let Some(sel) = dom::by_id_as::<HtmlSelectElement>("measure-use-channel") {
        let el: &Element = sel.as_ref();
        dom::clear(el);
        let mut options = vec![("", "green (Gr and Gb pooled)".to_string())];
        for ch in &channels {
            let name = ch.get("name").and_then(Value::as_str).unwrap_or_default();
            options.push((name, format!("{name} only")));
        }
        for (value, label) in options {
            if let Some(o) = dom::new_element("option", &label) {
                dom::set_attr(&o, "value", value);
                let _ = el.append_child(&o);
            }
        }
        dom::set_hidden(el, channels.is_empty());
        if let Some(l) = dom::by_id("measure-use-channel-label") {
            dom::set_hidden(&l, channels.is_empty());
        }
    }
    if let Some(list) = dom::by_id("measure-diagnostics") {
        dom::clear(&list);
        let points = r
            .pointer("/fit/points")
            .and_then(Value::as_array)
            .cloned()
            .unwrap_or_default();
        let used = points
            .iter()
            .filter(|p| p.get("used_in_gain_fit") == Some(&Value::Bool(true)))
            .count();
        let flats = points
            .iter()
            .filter(|p| p.get("kind").and_then(Value::as_str) == Some("flat"))
            .count();
        let pixels = num(r, "/fit/pixels_per_frame").unwrap_or(0.0);
        let mut lines = vec![format!(
            "the gain fit used {used} of {flats} flat levels; {} pixels per frame were analysed",
            display::rounded(pixels, Style::Number)
        )];
        if let Some(ds) = r.pointer("/fit/diagnostics").and_then(Value::as_array) {
            lines.extend(
                ds.iter()
                    .filter_map(|d| d.get("message").and_then(Value::as_str))
                    .map(str::to_string),
            );
        }
        for ch in &channels {
            let name = ch.get("name").and_then(Value::as_str).unwrap_or_default();
            if let Some(ds) = ch.pointer("/fit/diagnostics").and_then(Value::as_array) {
                lines.extend(
                    ds.iter()
                        .filter_map(|d| d.get("message").and_then(Value::as_str))
                        .map(|m| format!("channel {name}: {m}")),
                );
            }
        }
        for l in lines {
            if let Some(li) = dom::new_element("li", &l) {
                let _ = list.append_child(&li);
            }
        }
    }
    let series = r
        .get("series")
        .and_then(engine::ptc::curve_series_from_json);
    let k = num(r, "/sensor/system_gain_dn_per_e").unwrap_or(0.0);
    if let Some(series) = series {
        if let Some(el) = dom::by_id("measure-ptc") {
            el.set_inner_html(&frames_plot::ptc_svg(&series, k));
        }
        if let Some(el) = dom::by_id("measure-fit") {
            el.set_inner_html(&frames_plot::fit_svg(&series));
        }
    }
    if let Some(el) = dom::by_id("measure-spatial") {
        let spatial: Vec<SpatialSeries> = r
            .get("spatial")
            .and_then(engine::ptc::spatial_series_from_json)
            .unwrap_or_default();
        el.set_inner_html(&frames_plot::spatial_svgs(&spatial));
    }
    if let Some(el) = dom::by_id("measure-results") {
        dom::set_hidden(&el, false);
    }
}

/// Put the measured sensor keys into the scenario form's fields (named by their scenario key
/// paths); the form then recomputes as after any edit, and the engine judges the result.
pub(super) fn use_sensor() {
    let Some(result) = RESULT.with(|r| r.borrow().clone()) else {
        status("Analyse frames first.");
        return;
    };
    let channel = dom::by_id_as::<HtmlSelectElement>("measure-use-channel")
        .map(|s| s.value())
        .unwrap_or_default();
    let measured = if channel.is_empty() {
        result.get("sensor").cloned()
    } else {
        result
            .get("channels")
            .and_then(Value::as_array)
            .and_then(|cs| {
                cs.iter()
                    .find(|c| c.get("name").and_then(Value::as_str) == Some(channel.as_str()))
            })
            .and_then(|c| c.get("sensor").cloned())
    };
    let Some(measured) = measured else {
        status("Analyse frames first.");
        return;
    };
    let which = if channel.is_empty() {
        String::new()
    } else {
        format!(" of channel {channel}")
    };
    let Some(form_el) = dom::by_id("scenario-form") else {
        return;
    };
    let mut set = Vec::new();
    let mut last = None;
    for (key, v) in measured.as_object().into_iter().flatten() {
        let Some(x) = v.as_f64() else { continue };
        let field = form_el
            .query_selector(&format!("[name=\"sensor.{key}\"]"))
            .ok()
            .flatten()
            .and_then(|e| e.dyn_into::<HtmlInputElement>().ok());
        if let Some(input) = field {
            input.set_value(&display::full(x));
            set.push(key.clone());
            last = Some(input);
        }
    }
    // One input event, as a person's edit makes: the form reads every field again.
    if let Some(input) = last {
        let init = web_sys::EventInit::new();
        init.set_bubbles(true);
        if let Ok(e) = Event::new_with_event_init_dict("input", &init) {
            let _ = input.dispatch_event(&e);
        }
    }
    status(&format!(
        "The scenario's sensor now has the measured {}{which}.",
        set.join(", ")
    ));
}
