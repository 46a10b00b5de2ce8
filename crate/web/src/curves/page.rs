//! The Curves and Compare sections on the page: the state (the pins, the charts drawn), the
//! redraw at the next animation frame, the charts put in their slots, readouts by pointer and
//! keys, the comparison table, and the exports (SVG, PNG, CSV).
//!
//! What is drawn and written is decided by the pure modules beside this one (`charts`,
//! `table`, `pins`); here it is put on the page. It asks the app for what it cannot do itself
//! through the [`Action`] callback it is wired with, and never calls into `app`.

use std::cell::{Cell, RefCell};
use std::rc::Rc;

use engine::curves::View;
use engine::sweep::Sweep;
use engine::Report;
use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{
    Blob, CanvasRenderingContext2d, Element, Event, HtmlButtonElement, HtmlCanvasElement,
    HtmlImageElement, HtmlInputElement, HtmlSelectElement, KeyboardEvent, PointerEvent,
};

use super::charts::{self, ChartKind, Drawn, Now, PinCurves};
use super::pins::{letter, without_pins, Pins};
use crate::display::Browser;
use crate::events::{on, Action};
use crate::fields::name_words;
use crate::{chart, dom, ids};

/// Points per curve when the field is empty.
const DEFAULT_POINTS: u32 = 200;
/// Most points per curve this page draws (a chart is 546 drawing units wide: more points than
/// that add nothing visible, and every curve costs its points in evaluations).
const MAX_PAGE_POINTS: u32 = 2000;
/// Most characters of a scenario's title in an export's file name (several may be joined).
const FILE_NAME_WORDS: usize = 40;

#[derive(Default)]
struct State {
    pins: Pins,
    drawn: Vec<(ChartKind, Drawn)>,
    title: Option<String>,
    /// The last valid scenario shown (without pins) and its report.
    now: Option<(Value, Report)>,
    /// Whether the form stands valid now (else `now` is stale and cannot be pinned).
    valid: bool,
    /// What the app does when asked.
    act: Option<Rc<dyn Fn(Action)>>,
}

thread_local! {
    static STATE: RefCell<State> = RefCell::new(State::default());
    /// Whether a redraw waits for the next animation frame.
    static REDRAW_PENDING: Cell<bool> = const { Cell::new(false) };
    /// Whether the curves have been drawn once since the page started.
    static EVER_DRAWN: Cell<bool> = const { Cell::new(false) };
}

/// Ask the app (no state may be borrowed here: the app may call back into this module).
fn ask(action: Action) {
    let act = STATE.with(|s| s.borrow().act.clone());
    if let Some(act) = act {
        act(action);
    }
}

/// The scenario with the pins added (unchanged when nothing is pinned).
#[must_use]
pub fn with_pins(value: Value) -> Value {
    STATE.with(|s| s.borrow().pins.added_to(value))
}

/// Take the pins out of a scenario being loaded: one that carries them replaces the pins (an
/// empty list unpins all); one without leaves them. Returns the scenario without them, and a
/// problem for each pin left out.
pub fn take_pins(value: Value) -> (Value, Vec<engine::Problem>) {
    let (value, pins, problems) = Pins::taken_from(value);
    if let Some(pins) = pins {
        STATE.with(|s| s.borrow_mut().pins = pins);
    }
    (value, problems)
}

/// The first pinned scenario (its name and JSON), for the simulated frame beside the
/// scenario's.
#[must_use]
pub fn first_pin() -> Option<(String, Value)> {
    STATE.with(|s| {
        let s = s.borrow();
        s.pins
            .list()
            .first()
            .map(|p| (p.name.clone(), p.value.clone()))
    })
}

/// The form is not valid now: the curves keep the last valid scenario, which cannot be pinned.
pub fn mark_stale() {
    STATE.with(|s| s.borrow_mut().valid = false);
}

/// Draw the curves and the comparison for the scenario on screen (valid, as JSON, and its
/// report). A refused points field is named and the charts drawn before are kept.
pub fn show(value: &Value, report: &Report) {
    STATE.with(|s| {
        let mut s = s.borrow_mut();
        s.title = value
            .get("title")
            .and_then(Value::as_str)
            .map(str::to_string);
        s.now = Some((value.clone(), report.clone()));
        s.valid = true;
    });
    show_table();
    schedule_redraw();
}

/// Redraw the charts at the next animation frame, once however many edits come before it: an
/// edit shows its results at once and the curves a frame later, never holding the results up.
fn schedule_redraw() {
    if REDRAW_PENDING.with(Cell::get) {
        return;
    }
    let Some(w) = dom::window() else {
        return;
    };
    REDRAW_PENDING.with(|p| p.set(true));
    // The page's first drawing waits until after the first paint (an animation frame, then a
    // task): the page's start writes the first result before the browser's first layout, and
    // the curves (about 50 ms in a cold start, measured) would otherwise hold back the paint
    // that shows it. Later redraws are in the frame of the edit.
    let first = !EVER_DRAWN.with(Cell::get);
    let cb = Closure::once_into_js(move || {
        if !first {
            draw_pending();
            return;
        }
        let later = Closure::once_into_js(draw_pending);
        let queued = dom::window().is_some_and(|w| {
            w.set_timeout_with_callback_and_timeout_and_arguments_0(later.unchecked_ref(), 0)
                .is_ok()
        });
        if !queued {
            draw_pending();
        }
    });
    if w.request_animation_frame(cb.unchecked_ref()).is_err() {
        draw_pending();
    }
}

/// The redraw that [`schedule_redraw`] asked for.
fn draw_pending() {
    REDRAW_PENDING.with(|p| p.set(false));
    EVER_DRAWN.with(|d| d.set(true));
    redraw();
}

fn mark(name: &str) {
    if let Some(p) = dom::window().and_then(|w| w.performance()) {
        let _ = p.mark(name);
    }
}

/// The points per curve from the page's field, or the problem with it (named).
fn points() -> Result<u32, String> {
    let text = dom::by_id_as::<HtmlInputElement>(ids::CURVE_POINTS)
        .map(|i| i.value())
        .unwrap_or_default();
    let text = text.trim();
    if text.is_empty() {
        return Ok(DEFAULT_POINTS);
    }
    match text.parse::<u32>() {
        Ok(n) if (2..=MAX_PAGE_POINTS).contains(&n) => Ok(n),
        _ => Err(format!(
            "points per curve: must be a whole number from 2 to {MAX_PAGE_POINTS} (this page's limit), got “{text}”"
        )),
    }
}

fn budget_view() -> View {
    dom::by_id_as::<HtmlSelectElement>(ids::BUDGET_ALONG)
        .and_then(|s| View::from_name(&s.value()))
        .unwrap_or(View::Light)
}

fn views(value: &Value, n: u32) -> Vec<Option<Rc<Sweep>>> {
    View::ALL
        .iter()
        .map(|v| engine::curves::view_sweep(value, *v, n).ok().map(Rc::new))
        .collect()
}

/// Draw the charts again (after an edit, a pin, or a change of the points or budget view).
fn redraw() {
    let n = match points() {
        Ok(n) => {
            set_problem(ids::CURVE_POINTS_PROBLEM, None);
            n
        }
        Err(e) => {
            set_problem(ids::CURVE_POINTS_PROBLEM, Some(&e));
            return;
        }
    };
    let Some((value, report)) = STATE.with(|s| s.borrow().now.clone()) else {
        return;
    };
    mark("noise-budget:curves-start");
    let mine: Vec<Result<Sweep, String>> = View::ALL
        .iter()
        .map(|v| {
            // Marks for scripts timing one sweep (noise-budget:sweep-<view>-start / -end).
            mark(&format!("noise-budget:sweep-{}-start", v.as_str()));
            let s = engine::curves::view_sweep(&value, *v, n).map_err(|e| e.to_string());
            mark(&format!("noise-budget:sweep-{}-end", v.as_str()));
            s
        })
        .collect();
    let failed: Vec<String> = mine.iter().filter_map(|r| r.clone().err()).collect();
    set_problem(
        ids::CURVE_PROBLEM,
        (!failed.is_empty())
            .then(|| format!("Some curves cannot be drawn: {}", failed.join("; ")))
            .as_deref(),
    );
    let mine: Vec<Option<Rc<Sweep>>> = mine.into_iter().map(|r| r.ok().map(Rc::new)).collect();
    // The pins' views, made once for each number of points.
    STATE.with(|s| {
        for p in s.borrow_mut().pins.list_mut() {
            if p.views.as_ref().map(|v| v.0) != Some(n) {
                p.views = Some((n, views(&p.value, n)));
            }
        }
    });
    mark("noise-budget:curves-swept");
    let sc = engine::validate::scenario_from_value(&value).ok();
    let bare = without_pins(&value);
    let along = budget_view();
    let (drawn, pinned) = STATE.with(|s| {
        let s = s.borrow();
        let pins: Vec<PinCurves<'_>> = s
            .pins
            .list()
            .iter()
            .map(|p| PinCurves {
                name: &p.name,
                value: &p.value,
                report: &p.report,
                views: p.views.as_ref().map_or(&[][..], |v| &v.1[..]),
                on_screen: p.value == bare,
            })
            .collect();
        let now = Now {
            value: &value,
            scenario: sc.as_ref(),
            report: &report,
            views: &mine,
        };
        let mut drawn = Vec::new();
        for kind in ChartKind::ALL {
            mark(&format!("noise-budget:chart-{}-start", kind.name()));
            let d = charts::build(kind, along, &now, &pins);
            if let Some(slot) = slot(kind) {
                match &d {
                    Some(d) => {
                        slot.set_inner_html(&d.markup);
                        // Points computed for the curve (a long curve draws fewer vertices).
                        dom::set_attr(&slot, "data-points", &d.xs.len().to_string());
                    }
                    None => slot.set_inner_html(""),
                }
            }
            if let Some(d) = d {
                drawn.push((kind, d));
            }
            mark(&format!("noise-budget:chart-{}-end", kind.name()));
        }
        (drawn, pins.len())
    });
    STATE.with(|s| s.borrow_mut().drawn = drawn);
    for kind in ChartKind::ALL {
        set_readout(kind, None);
    }
    // For scripts and tests: how many pins the charts now show.
    if let Some(root) = dom::by_id(ids::CURVES) {
        dom::set_attr(&root, "data-drawn-pins", &pinned.to_string());
    }
    mark("noise-budget:curves-drawn");
}

fn slot(kind: ChartKind) -> Option<Element> {
    match kind {
        ChartKind::Signal => dom::by_id(ids::CHART_SIGNAL),
        ChartKind::Exposure => dom::by_id(ids::CHART_EXPOSURE),
        ChartKind::Light => dom::by_id(ids::CHART_LIGHT),
        ChartKind::Temperature => dom::by_id(ids::CHART_TEMPERATURE),
        ChartKind::Budget => dom::by_id(ids::CHART_BUDGET),
        ChartKind::Contrast => dom::by_id(ids::CHART_CONTRAST),
    }
}

fn set_readout(kind: ChartKind, text: Option<&str>) {
    let text = text.unwrap_or("");
    match kind {
        ChartKind::Signal => dom::set_text_of(ids::READOUT_SIGNAL, text),
        ChartKind::Exposure => dom::set_text_of(ids::READOUT_EXPOSURE, text),
        ChartKind::Light => dom::set_text_of(ids::READOUT_LIGHT, text),
        ChartKind::Temperature => dom::set_text_of(ids::READOUT_TEMPERATURE, text),
        ChartKind::Budget => dom::set_text_of(ids::READOUT_BUDGET, text),
        ChartKind::Contrast => dom::set_text_of(ids::READOUT_CONTRAST, text),
    }
}

fn set_problem(id: &'static str, text: Option<&str>) {
    if let Some(el) = dom::by_id(id) {
        el.set_text_content(text);
        dom::set_hidden(&el, text.is_none());
    }
}

/// Show point `i` of chart `kind`: the cursor and the readout.
fn show_point(kind: ChartKind, i: usize) {
    let found = STATE.with(|s| {
        let mut s = s.borrow_mut();
        let d = s
            .drawn
            .iter_mut()
            .find(|(k, _)| *k == kind)
            .map(|(_, d)| d)?;
        let i = i.min(d.xs.len().saturating_sub(1));
        d.at = i;
        let x = d.chart.px(*d.xs.get(i)?)?;
        let point = d.sweep.points.get(i)?;
        Some((
            d.chart.id.clone(),
            x,
            charts::readout(kind, &d.sweep.key, point, &Browser),
        ))
    });
    let Some((id, x, words)) = found else {
        return;
    };
    if let Some(cursor) = dom::document().and_then(|d| d.get_element_by_id(&format!("{id}-cursor")))
    {
        dom::set_attr(&cursor, "visibility", "visible");
        // Tenths of a drawing unit, as the chart writes coordinates.
        dom::set_attr(
            &cursor,
            "transform",
            &format!("translate({} 0)", crate::svg::tenths(x)),
        );
    }
    set_readout(kind, Some(&words));
}

fn chart_of(el: &Element) -> Option<ChartKind> {
    let fig = el.closest("[data-chart]").ok().flatten()?;
    ChartKind::from_name(&fig.get_attribute("data-chart")?)
}

fn on_pointer(e: &PointerEvent) {
    let Some(el) = e.target().and_then(|t| t.dyn_into::<Element>().ok()) else {
        return;
    };
    let Some(kind) = chart_of(&el) else {
        return;
    };
    let Some(svg) = el.closest("svg").ok().flatten() else {
        return;
    };
    let rect = svg.get_bounding_client_rect();
    if rect.width() <= 0.0 {
        return;
    }
    let px = (f64::from(e.client_x()) - rect.left()) / rect.width() * chart::WIDTH;
    let i = STATE.with(|s| {
        let s = s.borrow();
        let d = s.drawn.iter().find(|(k, _)| *k == kind).map(|(_, d)| d)?;
        let x = d.chart.x_at(px);
        // Nearest by position on the drawing.
        d.xs.iter()
            .enumerate()
            .filter_map(|(i, v)| {
                d.chart
                    .px(*v)
                    .map(|p| (i, (p - d.chart.px(x).unwrap_or(px)).abs()))
            })
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(i, _)| i)
    });
    if let Some(i) = i {
        show_point(kind, i);
    }
}

fn drawn_at(kind: ChartKind) -> (usize, usize) {
    STATE.with(|s| {
        s.borrow()
            .drawn
            .iter()
            .find(|(k, _)| *k == kind)
            .map_or((0, 0), |(_, d)| (d.at, d.xs.len()))
    })
}

fn on_key(e: &KeyboardEvent) {
    let Some(el) = e.target().and_then(|t| t.dyn_into::<Element>().ok()) else {
        return;
    };
    let Some(kind) = chart_of(&el) else {
        return;
    };
    let (at, len) = drawn_at(kind);
    if len == 0 {
        return;
    }
    let step = (len / 20).max(1);
    let to = match e.key().as_str() {
        "ArrowRight" | "ArrowUp" => at.saturating_add(1),
        "ArrowLeft" | "ArrowDown" => at.saturating_sub(1),
        "PageUp" => at.saturating_add(step),
        "PageDown" => at.saturating_sub(step),
        "Home" => 0,
        "End" => len - 1,
        _ => return,
    };
    e.prevent_default();
    show_point(kind, to.min(len - 1));
}

/// Wire the charts' pointer, focus and key handling, the exports, the fields, and the pin
/// button and the table's Show / Unpin buttons; `act` is what the app does when asked.
pub fn wire(act: impl Fn(Action) + 'static) {
    STATE.with(|s| s.borrow_mut().act = Some(Rc::new(act)));
    let Some(root) = dom::by_id(ids::CURVES) else {
        return;
    };
    on(&root, "pointermove", |e: Event| {
        if let Some(p) = e.dyn_ref::<PointerEvent>() {
            on_pointer(p);
        }
    });
    on(&root, "keydown", |e: Event| {
        if let Some(k) = e.dyn_ref::<KeyboardEvent>() {
            on_key(k);
        }
    });
    on(&root, "focusin", |e: Event| {
        let el = e.target().and_then(|t| t.dyn_into::<Element>().ok());
        if let Some(el) = el.filter(|el| el.class_list().contains("chart-slot")) {
            if let Some(kind) = chart_of(&el) {
                show_point(kind, drawn_at(kind).0);
            }
        }
    });
    on(&root, "click", |e: Event| {
        let Some(b) = e
            .target()
            .and_then(|t| t.dyn_into::<Element>().ok())
            .and_then(|t| t.closest("[data-export]").ok().flatten())
        else {
            return;
        };
        if let (Some(kind), Some(format)) = (chart_of(&b), b.get_attribute("data-export")) {
            export(kind, &format);
        }
    });
    for kind in ChartKind::ALL {
        if let Some(el) = slot(kind) {
            dom::set_attr(&el, "tabindex", "0");
        }
    }
    if let Some(i) = dom::by_id(ids::CURVE_POINTS) {
        on(&i, "input", |_| redraw());
    }
    if let Some(i) = dom::by_id(ids::BUDGET_ALONG) {
        on(&i, "change", |_| redraw());
    }
    if let Some(b) = dom::by_id(ids::COMPARE_CSV) {
        on(&b, "click", |_| export_comparison());
    }
    if let Some(b) = dom::by_id(ids::PIN_SCENARIO) {
        on(&b, "click", |_| {
            let said = STATE.with(|s| {
                let mut s = s.borrow_mut();
                match (s.valid, s.now.clone()) {
                    (true, Some((value, _))) => s.pins.pin(&value),
                    _ => "Some fields are marked invalid; fix them first, then pin.".into(),
                }
            });
            ask(Action::Recompute);
            dom::set_text_of(ids::PIN_STATUS, &said);
        });
    }
    if let Some(t) = dom::by_id(ids::COMPARE_TABLE) {
        on(&t, "click", |e: Event| {
            let Some(el) = e.target().and_then(|t| t.dyn_into::<Element>().ok()) else {
                return;
            };
            if let Some(i) = el
                .get_attribute("data-pin-drop")
                .and_then(|i| i.parse().ok())
            {
                let said = STATE.with(|s| s.borrow_mut().pins.unpin(i));
                ask(Action::Recompute);
                dom::set_text_of(ids::PIN_STATUS, &said);
            } else if let Some(i) = el
                .get_attribute("data-pin-load")
                .and_then(|i| i.parse::<usize>().ok())
            {
                let value = STATE.with(|s| s.borrow().pins.value(i).cloned());
                if let Some(value) = value {
                    ask(Action::Load {
                        value,
                        source: format!("pinned scenario {}", letter(i)),
                    });
                }
            }
        });
    }
}

/// The request that gives a sweep's points again: its key, ends, number and spacing.
fn same_range(sweep: &Sweep) -> engine::sweep::SweepRequest {
    let ends = (sweep.points.first(), sweep.points.last());
    let (from, to) = match ends {
        (Some(a), Some(b)) => (a.value, b.value),
        _ => (0.0, 0.0),
    };
    engine::sweep::SweepRequest {
        key: sweep.key.clone(),
        from,
        to,
        points: u32::try_from(sweep.points.len()).unwrap_or(0),
        spacing: sweep.spacing,
    }
}

fn export(kind: ChartKind, format: &str) {
    let found = STATE.with(|s| {
        let s = s.borrow();
        let d = s.drawn.iter().find(|(k, _)| *k == kind).map(|(_, d)| d)?;
        let stem = format!(
            "noise-budget_{}_{}",
            name_words(s.title.as_deref(), FILE_NAME_WORDS),
            kind.file_words()
        );
        let now = s.now.as_ref().map(|(v, _)| v.clone());
        Some((stem, d.markup.clone(), Rc::clone(&d.sweep), now))
    });
    let Some((stem, markup, sweep, now)) = found else {
        say("Nothing to export yet: the chart is not drawn.");
        return;
    };
    match format {
        "svg" => {
            let file = format!("{stem}.svg");
            if dom::download(&file, "image/svg+xml", &markup) {
                say(&format!("Saved {file} (in your downloads)."));
            }
        }
        "csv" => {
            let file = format!("{stem}_sweep-{}.csv", sweep.key);
            // The curves' sweep has no detection figures; the file has every column, so the
            // same range is swept again in full (as `noise-budget sweep` does).
            let full = now.and_then(|v| engine::sweep::sweep(&v, &same_range(&sweep)).ok());
            let csv = engine::sweep::to_csv(full.as_ref().unwrap_or(&sweep));
            if dom::download(&file, "text/csv", &csv) {
                say(&format!("Saved {file} (in your downloads)."));
            }
        }
        "png" => png(&format!("{stem}.png"), &markup),
        _ => {}
    }
}

fn say(text: &str) {
    dom::set_text_of(ids::PIN_STATUS, "");
    dom::set_text_of(ids::STATUS, text);
}

/// Draw the SVG on a canvas at twice its size and download it as PNG.
fn png(file: &str, markup: &str) {
    let Some(doc) = dom::document() else { return };
    let (Some(img), Some(canvas)) = (
        doc.create_element("img")
            .ok()
            .and_then(|e| e.dyn_into::<HtmlImageElement>().ok()),
        doc.create_element("canvas")
            .ok()
            .and_then(|e| e.dyn_into::<HtmlCanvasElement>().ok()),
    ) else {
        say("This browser cannot make a PNG here; export the SVG instead.");
        return;
    };
    // OK: the chart's size in drawing units, twice.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let (w, h) = ((chart::WIDTH * 2.0) as u32, (chart::HEIGHT * 2.0) as u32);
    canvas.set_width(w);
    canvas.set_height(h);
    let file = file.to_string();
    let img2 = img.clone();
    let onload = Closure::once_into_js(move || {
        let ctx = canvas
            .get_context("2d")
            .ok()
            .flatten()
            .and_then(|c| c.dyn_into::<CanvasRenderingContext2d>().ok());
        let Some(ctx) = ctx else {
            say("This browser cannot make a PNG here; export the SVG instead.");
            return;
        };
        let _ = ctx.draw_image_with_html_image_element_and_dw_and_dh(
            &img2,
            0.0,
            0.0,
            f64::from(w),
            f64::from(h),
        );
        let done = Closure::once_into_js(move |blob: JsValue| match blob.dyn_into::<Blob>() {
            Ok(b) if dom::download_blob(&file, &b) => {
                say(&format!("Saved {file} (in your downloads)."));
            }
            _ => say("This browser refused to make the PNG; export the SVG instead."),
        });
        if canvas.to_blob(done.unchecked_ref()).is_err() {
            say("This browser refused to make the PNG; export the SVG instead.");
        }
    });
    img.set_onload(Some(onload.unchecked_ref()));
    // Percent-encoded text: an SVG needs no base64 in a data URL.
    let data = String::from(js_sys::encode_uri_component(markup));
    img.set_src(&format!("data:image/svg+xml;charset=utf-8,{data}"));
}

/// The comparison's columns: the pins, then the scenario on screen when it is not one of them.
fn columns() -> Vec<(String, Report)> {
    STATE.with(|s| {
        let s = s.borrow();
        let mut cols: Vec<(String, Report)> = s
            .pins
            .list()
            .iter()
            .map(|p| (p.name.clone(), p.report.clone()))
            .collect();
        if let Some((v, r)) = &s.now {
            if !s.pins.holds(v) {
                cols.push(("on screen".into(), r.clone()));
            }
        }
        cols
    })
}

fn show_table() {
    let pins = STATE.with(|s| s.borrow().pins.len());
    let (Some(table), Some(head), Some(body)) = (
        dom::by_id(ids::COMPARE_TABLE),
        dom::by_id(ids::COMPARE_HEAD),
        dom::by_id(ids::COMPARE_BODY),
    ) else {
        return;
    };
    if let Some(b) = dom::by_id_as::<HtmlButtonElement>(ids::COMPARE_CSV) {
        b.set_disabled(pins == 0);
    }
    if let Some(b) = dom::by_id_as::<HtmlButtonElement>(ids::PIN_SCENARIO) {
        b.set_disabled(pins >= super::pins::MAX_PINS);
    }
    dom::set_hidden(&table, pins == 0);
    if pins == 0 {
        head.set_inner_html("");
        body.set_inner_html("");
        return;
    }
    let cols = columns();
    let names: Vec<&str> = cols.iter().map(|c| c.0.as_str()).collect();
    let reports: Vec<&Report> = cols.iter().map(|c| &c.1).collect();
    head.set_inner_html(&super::table::head(&names, pins));
    body.set_inner_html(&super::table::body(
        &engine::compare::rows(&reports),
        &Browser,
    ));
}

fn export_comparison() {
    let cols = columns();
    if cols.is_empty() {
        return;
    }
    let names: Vec<&str> = cols.iter().map(|c| c.0.as_str()).collect();
    let reports: Vec<&Report> = cols.iter().map(|c| &c.1).collect();
    let csv = engine::compare::to_csv(&names, &reports);
    let words: Vec<String> = STATE.with(|s| {
        s.borrow()
            .pins
            .list()
            .iter()
            .map(|p| {
                name_words(
                    p.value.get("title").and_then(Value::as_str),
                    FILE_NAME_WORDS,
                )
            })
            .collect()
    });
    let file = format!("noise-budget_comparison_{}.csv", words.join("_vs_"));
    if dom::download(&file, "text/csv", &csv) {
        say(&format!("Saved {file} (in your downloads)."));
    }
}
