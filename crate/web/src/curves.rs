//! The page's curves and comparison: the engine's standard views of the scenario
//! (`engine::curves`) drawn as charts, the pinned scenarios overlaid and compared in a table
//! (`engine::compare`), values read by pointer or keys, and exports (SVG, PNG, CSV).
//!
//! Every figure is the engine's; here they are placed on charts and in cells. Pins travel in
//! the scenario JSON under [`PINS_KEY`] (an `x_` key the format ignores), so a link, a saved
//! file and a kept scenario carry them without a format of their own.

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

use crate::chart::{eng, Axis, Chart, Layer, Line, Marker, Region, Scale};
use crate::display::{self, Style};
use crate::dom;
use crate::fields::name_words;

/// The scenario key that carries the pinned scenarios (ignored by the format, `x_` prefix).
pub const PINS_KEY: &str = "x_pinned";
/// Most scenarios pinned at once.
pub const MAX_PINS: usize = 4;
/// Points per curve when the field is empty.
const DEFAULT_POINTS: u32 = 200;
/// Most points per curve this page draws (a chart is 546 drawing units wide: more points than
/// that add nothing visible, and every curve costs its points in evaluations).
const MAX_PAGE_POINTS: u32 = 2000;
/// Most characters of a scenario's title in an export's file name (several may be joined).
const FILE_NAME_WORDS: usize = 40;
/// Decades of SNR shown below the highest.
const SNR_DECADES: f64 = 5.0;

/// Colour of the scenario on screen, then of pins A to D.
const NOW_COLOR: &str = "#1d5fa8";
const PIN_COLORS: [&str; MAX_PINS] = ["#c2410c", "#15803d", "#7e22ce", "#a16207"];
/// Dash of a temporal-SNR line (the total-SNR line is solid).
const TEMPORAL_DASH: &str = "60 40";
/// Shades of the noise regimes on the SNR-against-signal chart.
const REGION_READ: &str = "#eef2f8";
const REGION_SHOT: &str = "#ffffff";
const REGION_FPN: &str = "#f4f1e6";
const REGION_SAT: &str = "#f8e9e9";

/// The noise sources of the stacked chart: report key, label, colour (as the page's bar).
const SOURCES: [(&str, &str); 8] = [
    ("photon shot", "#2f6db5"),
    ("dark shot", "#7a4fa3"),
    ("background shot", "#8c6d46"),
    ("read", "#d9822b"),
    ("reset", "#c23b48"),
    ("quantization", "#6b7a8f"),
    ("DSNU", "#2e9c8a"),
    ("PRNU", "#9aa83a"),
];

fn shares(r: &Report) -> [f64; 8] {
    let s = &r.variance_share;
    [
        s.photon_shot,
        s.dark_shot,
        s.background_shot,
        s.read,
        s.reset,
        s.quantization,
        s.dsnu,
        s.prnu,
    ]
}

/// The charts, by name (the slot's id is `chart-NAME`).
const CHARTS: [&str; 5] = ["signal", "exposure", "light", "temperature", "budget"];

/// A pinned scenario.
struct Pin {
    /// Its scenario JSON (without pins of its own).
    value: Value,
    /// Its name in the table and legend.
    name: String,
    /// Its report.
    report: Report,
    /// Its views, for the points they were made with.
    views: Option<(u32, Vec<Option<Rc<Sweep>>>)>,
}

/// What a chart shows, for reading values and exporting.
struct Drawn {
    chart: Chart,
    markup: String,
    /// x of each point of the scenario's own curve (its readout is written when shown).
    xs: Vec<f64>,
    /// Index shown by the keys.
    at: usize,
    /// The sweep behind it (for CSV).
    sweep: Option<Rc<Sweep>>,
    /// Words for file names.
    file_words: &'static str,
}

/// A pin as the charts need it: name, report, views, and whether it is the scenario on screen.
type PinViews = (String, Report, Vec<Option<Rc<Sweep>>>, bool);

#[derive(Default)]
struct State {
    pins: Vec<Pin>,
    drawn: Vec<(&'static str, Drawn)>,
    title: Option<String>,
    now: Option<(Value, Report)>,
}

thread_local! {
    static STATE: RefCell<State> = RefCell::new(State::default());
    /// Whether a redraw waits for the next animation frame.
    static REDRAW_PENDING: Cell<bool> = const { Cell::new(false) };
}

fn letter(i: usize) -> char {
    ['A', 'B', 'C', 'D'].get(i).copied().unwrap_or('?')
}

fn pin_name(i: usize, value: &Value) -> String {
    match value.get("title").and_then(Value::as_str).map(str::trim) {
        Some(t) if !t.is_empty() => format!("{}: {t}", letter(i)),
        _ => format!("{}", letter(i)),
    }
}

/// Take the pins (the [`PINS_KEY`]) out of a scenario.
fn strip_pins(value: &mut Value) {
    if let Some(o) = value.as_object_mut() {
        o.remove(PINS_KEY);
    }
}

/// The scenario with the pins added under [`PINS_KEY`] (unchanged when nothing is pinned).
#[must_use]
pub fn with_pins(mut value: Value) -> Value {
    STATE.with(|s| {
        let s = s.borrow();
        if let (false, Some(obj)) = (s.pins.is_empty(), value.as_object_mut()) {
            obj.insert(
                PINS_KEY.into(),
                Value::Array(s.pins.iter().map(|p| p.value.clone()).collect()),
            );
        }
    });
    value
}

/// Take the pins out of a scenario being loaded: a scenario that carries [`PINS_KEY`]
/// replaces the pins (an empty list unpins all); one without leaves them as they are.
/// Returns the scenario without the key, and a problem for each pin that is not a valid
/// scenario (those are left out, and said so).
pub fn take_pins(mut value: Value) -> (Value, Vec<engine::Problem>) {
    let mut problems = Vec::new();
    let Some(taken) = value.as_object_mut().and_then(|o| o.remove(PINS_KEY)) else {
        return (value, problems);
    };
    let Value::Array(items) = taken else {
        problems.push(engine::Problem {
            path: PINS_KEY.into(),
            message: "must be a list of scenarios; the pins were left as they were".into(),
        });
        return (value, problems);
    };
    let mut pins = Vec::new();
    for (i, mut item) in items.into_iter().enumerate() {
        if pins.len() == MAX_PINS {
            problems.push(engine::Problem {
                path: format!("{PINS_KEY}[{i}]"),
                message: format!("at most {MAX_PINS} scenarios are pinned; this one and later ones were left out"),
            });
            break;
        }
        strip_pins(&mut item);
        match engine::validate::scenario_from_value(&item) {
            Ok(sc) => {
                let name = pin_name(pins.len(), &item);
                pins.push(Pin {
                    report: engine::evaluate(&sc),
                    value: item,
                    name,
                    views: None,
                });
            }
            Err(e) => problems.extend(e.problems().iter().map(|p| engine::Problem {
                path: format!("{PINS_KEY}[{i}].{}", p.path),
                message: format!("{} (this pin was left out)", p.message),
            })),
        }
    }
    STATE.with(|s| s.borrow_mut().pins = pins);
    (value, problems)
}

/// Pin the scenario on screen. Returns what to tell the user.
pub fn pin(value: &Value) -> String {
    STATE.with(|s| {
        let mut s = s.borrow_mut();
        if s.pins.len() >= MAX_PINS {
            return format!("{MAX_PINS} scenarios are pinned already; unpin one first.");
        }
        let mut value = value.clone();
        strip_pins(&mut value);
        match engine::validate::scenario_from_value(&value) {
            Ok(sc) => {
                let name = pin_name(s.pins.len(), &value);
                let said = format!("Pinned as {name}.");
                s.pins.push(Pin {
                    report: engine::evaluate(&sc),
                    value,
                    name,
                    views: None,
                });
                said
            }
            Err(e) => format!("Not pinned: {e}"),
        }
    })
}

/// Unpin pin `i`; the later ones move up a letter.
pub fn unpin(i: usize) -> String {
    STATE.with(|s| {
        let mut s = s.borrow_mut();
        if i >= s.pins.len() {
            return String::new();
        }
        let gone = s.pins.remove(i);
        for (k, p) in s.pins.iter_mut().enumerate() {
            p.name = pin_name(k, &p.value);
        }
        format!("Unpinned {}.", gone.name)
    })
}

/// The scenario JSON of pin `i`.
#[must_use]
pub fn pinned(i: usize) -> Option<Value> {
    STATE.with(|s| s.borrow().pins.get(i).map(|p| p.value.clone()))
}

/// The points per curve from the page's field, or the problem with it (named).
fn points() -> Result<u32, String> {
    let text = dom::by_id_as::<HtmlInputElement>("curve-points")
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
    dom::by_id_as::<HtmlSelectElement>("budget-along")
        .and_then(|s| View::from_name(&s.value()))
        .unwrap_or(View::Light)
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
    let cb = Closure::once_into_js(|| {
        REDRAW_PENDING.with(|p| p.set(false));
        redraw();
    });
    if w.request_animation_frame(cb.unchecked_ref()).is_err() {
        REDRAW_PENDING.with(|p| p.set(false));
        redraw();
    }
}

fn mark(name: &str) {
    if let Some(p) = dom::window().and_then(|w| w.performance()) {
        let _ = p.mark(name);
    }
}

/// Draw the charts again (after an edit, a pin, or a change of the points or budget view).
pub fn redraw() {
    let n = match points() {
        Ok(n) => {
            set_problem("curve-points-problem", None);
            n
        }
        Err(e) => {
            set_problem("curve-points-problem", Some(&e));
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
        "curve-problem",
        (!failed.is_empty())
            .then(|| format!("Some curves cannot be drawn: {}", failed.join("; ")))
            .as_deref(),
    );
    let mine: Vec<Option<Rc<Sweep>>> = mine.into_iter().map(|r| r.ok().map(Rc::new)).collect();
    // The pins' views, made once for each number of points.
    let mut bare = value.clone();
    strip_pins(&mut bare);
    let pins: Vec<PinViews> = STATE.with(|s| {
        let mut s = s.borrow_mut();
        s.pins
            .iter_mut()
            .map(|p| {
                if p.views.as_ref().map(|v| v.0) != Some(n) {
                    let views = View::ALL
                        .iter()
                        .map(|v| {
                            engine::curves::view_sweep(&p.value, *v, n)
                                .ok()
                                .map(Rc::new)
                        })
                        .collect();
                    p.views = Some((n, views));
                }
                let views = p.views.as_ref().map(|v| v.1.clone()).unwrap_or_default();
                (p.name.clone(), p.report.clone(), views, p.value == bare)
            })
            .collect()
    });
    mark("noise-budget:curves-swept");
    let sc = engine::validate::scenario_from_value(&value).ok();
    let mut drawn = Vec::new();
    for name in CHARTS {
        mark(&format!("noise-budget:chart-{name}-start"));
        let d = build(name, &value, sc.as_ref(), &report, &mine, &pins);
        if let Some(slot) = slot(name) {
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
            drawn.push((name, d));
        }
        mark(&format!("noise-budget:chart-{name}-end"));
    }
    STATE.with(|s| s.borrow_mut().drawn = drawn);
    for name in CHARTS {
        set_readout(name, None);
    }
    // For scripts and tests: how many pins the charts now show.
    if let Some(root) = dom::by_id("curves") {
        dom::set_attr(&root, "data-drawn-pins", &pins.len().to_string());
    }
    mark("noise-budget:curves-drawn");
}

fn slot(name: &str) -> Option<Element> {
    match name {
        "signal" => dom::by_id("chart-signal"),
        "exposure" => dom::by_id("chart-exposure"),
        "light" => dom::by_id("chart-light"),
        "temperature" => dom::by_id("chart-temperature"),
        _ => dom::by_id("chart-budget"),
    }
}

fn set_problem(id: &'static str, text: Option<&str>) {
    if let Some(el) = dom::by_id(id) {
        el.set_text_content(text);
        dom::set_hidden(&el, text.is_none());
    }
}

fn view_index(v: View) -> usize {
    View::ALL.iter().position(|x| *x == v).unwrap_or(0)
}

/// The x of a report on a chart: signal for "signal", else the swept value.
fn snr_lines(
    label: &str,
    color: &'static str,
    sweep: &Sweep,
    x_of: &dyn Fn(&engine::sweep::SweepPoint) -> f64,
) -> [Line; 2] {
    let total = sweep
        .points
        .iter()
        .map(|p| (x_of(p), p.report.snr.total))
        .collect();
    let temporal = sweep
        .points
        .iter()
        .map(|p| (x_of(p), p.report.snr.temporal))
        .collect();
    [
        Line {
            label: label.to_string(),
            points: total,
            color,
            dash: "",
            legend: true,
        },
        Line {
            label: format!("{label}, temporal"),
            points: temporal,
            color,
            dash: TEMPORAL_DASH,
            legend: false,
        },
    ]
}

/// Unit of a sweep key as an axis writes it.
fn axis_unit(key: &str) -> &'static str {
    match key {
        "exposure.time_s" => "s",
        "temperature_c" => "°C",
        "light.photon_flux_per_um2_s" => "ph/(µm²·s)",
        "light.irradiance_w_per_m2" | "light.scene_irradiance_w_per_m2" => "W/m²",
        "light.photons_per_pixel" => "photons",
        "light.illuminance_lux" | "light.scene_illuminance_lux" => "lx",
        "light.scene_luminance_cd_per_m2" => "cd/m²",
        "light.scene_radiance_w_per_m2_sr" => "W/(m²·sr)",
        _ => "",
    }
}

fn axis_words(key: &str) -> &'static str {
    match key {
        "exposure.time_s" => "exposure time",
        "temperature_c" => "temperature",
        "light.photon_flux_per_um2_s" => "photon flux at the sensor",
        "light.irradiance_w_per_m2" => "irradiance at the sensor",
        "light.photons_per_pixel" => "photons per pixel",
        "light.illuminance_lux" => "illuminance at the sensor",
        "light.scene_illuminance_lux" => "illuminance on the scene",
        "light.scene_irradiance_w_per_m2" => "irradiance on the scene",
        "light.scene_luminance_cd_per_m2" => "scene luminance",
        "light.scene_radiance_w_per_m2_sr" => "scene radiance",
        _ => "value",
    }
}

#[allow(clippy::too_many_lines)]
fn build(
    name: &'static str,
    value: &Value,
    sc: Option<&engine::Scenario>,
    report: &Report,
    mine: &[Option<Rc<Sweep>>],
    pins: &[PinViews],
) -> Option<Drawn> {
    let view = match name {
        "exposure" => View::Exposure,
        "temperature" => View::Temperature,
        "budget" => budget_view(),
        _ => View::Light,
    };
    let k = view_index(view);
    let sweep = mine.get(k).cloned().flatten()?;
    let key = sweep.key.clone();
    let here = |r: &Report, v: &Value| -> f64 {
        if name == "signal" {
            r.signal_e
        } else {
            crate::fields::value_at(v, &key)
                .and_then(Value::as_f64)
                .unwrap_or(f64::NAN)
        }
    };
    let x_of = |p: &engine::sweep::SweepPoint| -> f64 {
        if name == "signal" {
            p.report.signal_e
        } else {
            p.value
        }
    };
    let (x_label, x_unit) = if name == "signal" {
        ("signal per output pixel".to_string(), "e⁻")
    } else {
        (axis_words(&key).to_string(), axis_unit(&key))
    };
    let x_scale = if view == View::Temperature {
        Scale::Linear
    } else {
        Scale::Log
    };
    let title_word = match name {
        "signal" => "signal",
        "exposure" => "exposure time",
        "light" => "light level",
        "temperature" => "temperature",
        _ => "",
    };
    let mut lines: Vec<Line> = Vec::new();
    let mut markers = Vec::new();
    let now_label = if pins.is_empty() {
        "this scenario"
    } else {
        "on screen (not pinned)"
    };
    let here_x = here(report, value);
    let xs: Vec<f64> = sweep.points.iter().map(&x_of).collect();
    let mut all_x: Vec<f64> = xs.clone();
    if name == "budget" {
        let layers: Vec<Layer> = SOURCES
            .iter()
            .enumerate()
            .map(|(i, (label, color))| Layer {
                label,
                color,
                shares: sweep
                    .points
                    .iter()
                    .map(|p| shares(&p.report).get(i).copied().unwrap_or(0.0))
                    .collect(),
            })
            .collect();
        let x = Axis::fitted(&x_label, x_unit, x_scale, all_x.iter().copied(), 12.0);
        let y = Axis {
            label: "share of total variance".into(),
            unit: "%",
            scale: Scale::Linear,
            lo: 0.0,
            hi: 100.0,
        };
        let mut chart = Chart {
            id: "svg-budget".into(),
            title: format!("Noise budget against {}", axis_words(&key)),
            desc: format!(
                "Each noise source's share of the total variance, stacked to 100 %, against {} ({}). The vertical line is this scenario.",
                axis_words(&key),
                if x_scale == Scale::Log { "log scale" } else { "linear scale" }
            ),
            x,
            y,
            regions: Vec::new(),
            stack: Some((xs.clone(), layers)),
            lines: Vec::new(),
            markers: Vec::new(),
            note: String::new(),
        };
        // The stack is drawn in shares of the height; the axis is labelled in percent.
        if here_x.is_finite() {
            chart.lines.push(Line {
                label: "this scenario".into(),
                points: vec![(here_x, 0.0), (here_x, 100.0)],
                color: "#1c2330",
                dash: "",
                legend: true,
            });
        }
        let markup = chart.svg();
        let at = nearest(&xs, here_x);
        return Some(Drawn {
            chart,
            markup,
            xs,
            at,
            sweep: Some(sweep),
            file_words: "noise-budget-along",
        });
    }
    // The scenario on screen, unless it is one of the pins (drawn as that pin).
    if !pins.iter().any(|p| p.3) {
        lines.extend(snr_lines(now_label, NOW_COLOR, &sweep, &x_of));
        for y in [report.snr.total, report.snr.temporal] {
            markers.push(Marker {
                x: here_x,
                y,
                color: NOW_COLOR,
            });
        }
    }
    for (i, (pname, preport, pviews, _)) in pins.iter().enumerate() {
        let color = PIN_COLORS.get(i).copied().unwrap_or(NOW_COLOR);
        // Pins are overlaid only where their view varies the same quantity.
        let Some(ps) = pviews
            .get(k)
            .cloned()
            .flatten()
            .filter(|ps| ps.key == key || name == "signal")
        else {
            continue;
        };
        all_x.extend(ps.points.iter().map(&x_of));
        lines.extend(snr_lines(&short(pname), color, &ps, &x_of));
        let px = if name == "signal" {
            preport.signal_e
        } else {
            pinned_value(i, &key)
        };
        for y in [preport.snr.total, preport.snr.temporal] {
            markers.push(Marker { x: px, y, color });
        }
    }
    let x = Axis::fitted(&x_label, x_unit, x_scale, all_x.iter().copied(), 12.0);
    let y = Axis::fitted(
        "signal-to-noise ratio",
        "",
        Scale::Log,
        lines
            .iter()
            .flat_map(|l| l.points.iter().map(|p| p.1))
            .collect::<Vec<_>>(),
        SNR_DECADES,
    );
    let mut regions = Vec::new();
    if name == "signal" {
        if let Some(sc) = sc {
            let r = engine::sweep::regimes(sc);
            let sat = r.saturation_signal_e.unwrap_or(x.hi);
            let shot_end = r.shot_to_prnu_signal_e.map_or(sat, |p| p.min(sat));
            regions.push(Region {
                from: x.lo,
                to: r.read_to_shot_signal_e.min(sat),
                label: "read-noise limited",
                color: REGION_READ,
            });
            regions.push(Region {
                from: r.read_to_shot_signal_e,
                to: shot_end,
                label: "shot-noise limited",
                color: REGION_SHOT,
            });
            if let Some(p) = r.shot_to_prnu_signal_e.filter(|p| *p < sat) {
                regions.push(Region {
                    from: p,
                    to: sat,
                    label: "fixed-pattern limited",
                    color: REGION_FPN,
                });
            }
            if r.saturation_signal_e.is_some() {
                regions.push(Region {
                    from: sat,
                    to: x.hi,
                    label: "saturated",
                    color: REGION_SAT,
                });
            }
        }
    }
    let pins_words = if pins.is_empty() {
        String::new()
    } else {
        format!(
            " Pinned scenarios in their own colours: {}.",
            pins.iter()
                .map(|p| p.0.as_str())
                .collect::<Vec<_>>()
                .join("; ")
        )
    };
    let region_words = if name == "signal" {
        " Shaded: where read noise, photon shot noise or fixed-pattern noise dominates, and where the pixel saturates."
    } else {
        ""
    };
    let chart = Chart {
        id: format!("svg-{name}"),
        title: format!("SNR against {title_word}"),
        desc: format!(
            "Signal-to-noise ratio, total (solid) and temporal (dashed), against {x_label} on a {} axis, SNR on a log axis. Circles mark the scenarios' operating points.{region_words}{pins_words}",
            if x_scale == Scale::Log { "log" } else { "linear" }
        ),
        x,
        y,
        regions,
        stack: None,
        lines,
        markers,
        note: "solid: total SNR · dashed: temporal SNR".into(),
    };
    let markup = chart.svg();
    let at = nearest(&xs, here_x);
    Some(Drawn {
        chart,
        markup,
        xs,
        at,
        sweep: Some(sweep),
        file_words: match name {
            "signal" => "snr-vs-signal",
            "exposure" => "snr-vs-exposure-time",
            "light" => "snr-vs-light-level",
            _ => "snr-vs-temperature",
        },
    })
}

/// A pin's name cut to fit a legend.
fn short(name: &str) -> String {
    const MOST: usize = 34;
    if name.chars().count() <= MOST {
        name.to_string()
    } else {
        format!("{}…", name.chars().take(MOST - 1).collect::<String>())
    }
}

fn pinned_value(i: usize, key: &str) -> f64 {
    STATE.with(|s| {
        s.borrow()
            .pins
            .get(i)
            .and_then(|p| crate::fields::value_at(&p.value, key).and_then(Value::as_f64))
            .unwrap_or(f64::NAN)
    })
}

/// Index of the x nearest `x` (by position on a log or linear scale alike: by value order).
fn nearest(xs: &[f64], x: f64) -> usize {
    xs.iter()
        .enumerate()
        .min_by(|a, b| {
            let da = (a.1 - x).abs();
            let db = (b.1 - x).abs();
            da.total_cmp(&db)
        })
        .map_or(0, |(i, _)| i)
}

fn set_readout(name: &str, text: Option<&str>) {
    let id = match name {
        "signal" => "readout-signal",
        "exposure" => "readout-exposure",
        "light" => "readout-light",
        "temperature" => "readout-temperature",
        _ => "readout-budget",
    };
    dom::set_text_of(id, text.unwrap_or(""));
}

/// Show point `i` of chart `name`: the cursor and the readout.
fn show_point(name: &str, i: usize) {
    let found = STATE.with(|s| {
        let mut s = s.borrow_mut();
        let d = s
            .drawn
            .iter_mut()
            .find(|(n, _)| *n == name)
            .map(|(_, d)| d)?;
        let i = i.min(d.xs.len().saturating_sub(1));
        d.at = i;
        let x = d.chart.px(*d.xs.get(i)?)?;
        let sweep = d.sweep.as_ref()?;
        let point = sweep.points.get(i)?;
        Some((d.chart.id.clone(), x, readout(name, &sweep.key, point)))
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
            &format!("translate({} 0)", (x * 10.0).round()),
        );
    }
    set_readout(name, Some(&words));
}

/// The readout of one point of chart `name`.
fn readout(name: &str, key: &str, p: &engine::sweep::SweepPoint) -> String {
    if name == "budget" {
        let parts: Vec<String> = SOURCES
            .iter()
            .zip(shares(&p.report))
            .filter(|(_, s)| *s > 0.0)
            .map(|((label, _), s)| format!("{label} {}", display::rounded(s, Style::Percent)))
            .collect();
        return format!(
            "{} {}: {}",
            axis_words(key),
            eng(p.value, axis_unit(key)),
            parts.join(", ")
        );
    }
    let lead = if name == "signal" {
        format!("signal {}", eng(p.report.signal_e, "e⁻"))
    } else {
        format!("{} {}", axis_words(key), eng(p.value, axis_unit(key)))
    };
    format!(
        "{lead}: SNR total {}, temporal {}",
        display::rounded(p.report.snr.total, Style::Number),
        display::rounded(p.report.snr.temporal, Style::Number)
    )
}

fn chart_name_of(el: &Element) -> Option<&'static str> {
    let fig = el.closest("[data-chart]").ok().flatten()?;
    let n = fig.get_attribute("data-chart")?;
    CHARTS.into_iter().find(|c| *c == n)
}

fn on_pointer(e: &PointerEvent) {
    let Some(el) = e.target().and_then(|t| t.dyn_into::<Element>().ok()) else {
        return;
    };
    let Some(name) = chart_name_of(&el) else {
        return;
    };
    let Some(svg) = el.closest("svg").ok().flatten() else {
        return;
    };
    let rect = svg.get_bounding_client_rect();
    if rect.width() <= 0.0 {
        return;
    }
    let px = (f64::from(e.client_x()) - rect.left()) / rect.width() * crate::chart::WIDTH;
    let i = STATE.with(|s| {
        let s = s.borrow();
        let d = s.drawn.iter().find(|(n, _)| *n == name).map(|(_, d)| d)?;
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
        show_point(name, i);
    }
}

fn on_key(e: &KeyboardEvent) {
    let Some(el) = e.target().and_then(|t| t.dyn_into::<Element>().ok()) else {
        return;
    };
    let Some(name) = chart_name_of(&el) else {
        return;
    };
    let (at, len) = STATE.with(|s| {
        s.borrow()
            .drawn
            .iter()
            .find(|(n, _)| *n == name)
            .map_or((0, 0), |(_, d)| (d.at, d.xs.len()))
    });
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
    show_point(name, to.min(len - 1));
}

/// Wire the charts' pointer, focus and key handling, the exports, the fields, and the pin
/// button and the table's Show / Unpin buttons.
pub fn wire() {
    use crate::app::on;
    let Some(root) = dom::by_id("curves") else {
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
            if let Some(name) = chart_name_of(&el) {
                let at = STATE.with(|s| {
                    s.borrow()
                        .drawn
                        .iter()
                        .find(|(n, _)| *n == name)
                        .map_or(0, |(_, d)| d.at)
                });
                show_point(name, at);
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
        if let (Some(name), Some(kind)) = (chart_name_of(&b), b.get_attribute("data-export")) {
            export(name, &kind);
        }
    });
    for name in CHARTS {
        if let Some(el) = slot(name) {
            dom::set_attr(&el, "tabindex", "0");
        }
    }
    if let Some(i) = dom::by_id("curve-points") {
        on(&i, "input", |_| redraw());
    }
    if let Some(i) = dom::by_id("budget-along") {
        on(&i, "change", |_| redraw());
    }
    if let Some(b) = dom::by_id("compare-csv") {
        on(&b, "click", |_| export_comparison());
    }
    if let Some(b) = dom::by_id("pin-scenario") {
        on(&b, "click", |_| {
            let said = match crate::app::valid_scenario() {
                Some(v) => pin(&v),
                None => "Some fields are marked invalid; fix them first, then pin.".into(),
            };
            crate::app::recompute();
            dom::set_text_of("pin-status", &said);
        });
    }
    if let Some(t) = dom::by_id("compare-table") {
        on(&t, "click", |e: Event| {
            let Some(el) = e.target().and_then(|t| t.dyn_into::<Element>().ok()) else {
                return;
            };
            if let Some(i) = el
                .get_attribute("data-pin-drop")
                .and_then(|i| i.parse().ok())
            {
                let said = unpin(i);
                crate::app::recompute();
                dom::set_text_of("pin-status", &said);
            } else if let Some(i) = el
                .get_attribute("data-pin-load")
                .and_then(|i| i.parse::<usize>().ok())
            {
                if let Some(v) = pinned(i) {
                    crate::app::load_value(&v, &format!("pinned scenario {}", letter(i)));
                }
            }
        });
    }
}

fn export(name: &str, kind: &str) {
    let found = STATE.with(|s| {
        let s = s.borrow();
        let d = s.drawn.iter().find(|(n, _)| *n == name).map(|(_, d)| d)?;
        let stem = format!(
            "noise-budget_{}_{}",
            name_words(s.title.as_deref(), FILE_NAME_WORDS),
            d.file_words
        );
        Some((stem, d.markup.clone(), d.sweep.clone()))
    });
    let Some((stem, markup, sweep)) = found else {
        say("Nothing to export yet: the chart is not drawn.");
        return;
    };
    match kind {
        "svg" => {
            let file = format!("{stem}.svg");
            if dom::download(&file, "image/svg+xml", &markup) {
                say(&format!("Saved {file} (in your downloads)."));
            }
        }
        "csv" => {
            let Some(sweep) = sweep else { return };
            let file = format!("{stem}_sweep-{}.csv", sweep.key);
            if dom::download(&file, "text/csv", &engine::sweep::to_csv(&sweep)) {
                say(&format!("Saved {file} (in your downloads)."));
            }
        }
        "png" => png(&format!("{stem}.png"), &markup),
        _ => {}
    }
}

fn say(text: &str) {
    dom::set_text_of("pin-status", "");
    dom::set_text_of("status", text);
}

/// Draw the SVG on a canvas at twice its size and download it as PNG.
fn png(file: &str, markup: &str) {
    use base64::Engine as _;
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
    let (w, h) = (
        (crate::chart::WIDTH * 2.0) as u32,
        (crate::chart::HEIGHT * 2.0) as u32,
    );
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
    let data = base64::engine::general_purpose::STANDARD.encode(markup.as_bytes());
    img.set_src(&format!("data:image/svg+xml;base64,{data}"));
}

/// The comparison's columns: the pins, then the scenario on screen when it is not one of them.
fn columns() -> Vec<(String, Report)> {
    STATE.with(|s| {
        let s = s.borrow();
        let mut cols: Vec<(String, Report)> = s
            .pins
            .iter()
            .map(|p| (p.name.clone(), p.report.clone()))
            .collect();
        if let Some((v, r)) = &s.now {
            let mut bare = v.clone();
            strip_pins(&mut bare);
            if !s.pins.iter().any(|p| p.value == bare) {
                cols.push(("on screen".into(), r.clone()));
            }
        }
        cols
    })
}

fn show_table() {
    let pins = STATE.with(|s| s.borrow().pins.len());
    let (Some(table), Some(head), Some(body)) = (
        dom::by_id("compare-table"),
        dom::by_id("compare-head"),
        dom::by_id("compare-body"),
    ) else {
        return;
    };
    if let Some(b) = dom::by_id_as::<HtmlButtonElement>("compare-csv") {
        b.set_disabled(pins == 0);
    }
    if let Some(b) = dom::by_id_as::<HtmlButtonElement>("pin-scenario") {
        b.set_disabled(pins >= MAX_PINS);
    }
    dom::set_hidden(&table, pins == 0);
    if pins == 0 {
        head.set_inner_html("");
        body.set_inner_html("");
        return;
    }
    let cols = columns();
    let reports: Vec<&Report> = cols.iter().map(|c| &c.1).collect();
    let rows = engine::compare::rows(&reports);
    let mut h = String::from("<tr><th scope=\"col\">figure</th>");
    for (i, (name, _)) in cols.iter().enumerate() {
        h.push_str(&format!("<th scope=\"col\">{}", crate::chart::escape(name)));
        if i < pins {
            h.push_str(&format!(
                " <button type=\"button\" data-pin-load=\"{i}\">Show</button><button type=\"button\" data-pin-drop=\"{i}\">Unpin</button>"
            ));
        }
        h.push_str("</th>");
    }
    h.push_str("</tr>");
    head.set_inner_html(&h);
    let mut b = String::new();
    for row in rows {
        let unit = match row.unit {
            "ratio" | "fraction" => String::new(),
            "e-" => " e⁻".into(),
            "e- rms" => " e⁻ rms".into(),
            u => format!(" {u}"),
        };
        b.push_str(&format!(
            "<tr data-figure=\"{}\"><th scope=\"row\">{}{}</th>",
            row.key,
            row.label,
            if unit.is_empty() {
                String::new()
            } else {
                format!(",{unit}")
            }
        ));
        for (i, v) in row.values.iter().enumerate() {
            let shown = |x: f64| {
                if row.unit == "fraction" {
                    display::rounded(x, Style::Percent)
                } else {
                    display::rounded(x, Style::Number)
                }
            };
            let text = v.map_or_else(|| "—".to_string(), shown);
            let data = v.map_or_else(|| "null".to_string(), display::full);
            let diff = row.differences.get(i).copied().flatten();
            let ratio = row.ratios.get(i).copied().flatten();
            let change = match (i, row.change, diff, ratio) {
                (0, _, _, _) => String::new(),
                (_, engine::compare::Change::Ratio, _, Some(r)) => format!(
                    "<span class=\"diff\" data-ratio=\"{}\">×{}</span>",
                    display::full(r),
                    display::rounded(r, Style::Number)
                ),
                (_, _, Some(d), _) => {
                    let sign = if d > 0.0 { "+" } else { "" };
                    // A change of a fraction is in percentage points, not relative.
                    let d_text = if row.unit == "fraction" {
                        format!("{sign}{} points", display::rounded(d, Style::Percent))
                    } else {
                        format!("{sign}{}{unit}", display::rounded(d, Style::Number))
                    };
                    format!(
                        "<span class=\"diff\" data-difference=\"{}\">{d_text}</span>",
                        display::full(d)
                    )
                }
                _ => String::new(),
            };
            b.push_str(&format!("<td data-value=\"{data}\">{text}{change}</td>"));
        }
        b.push_str("</tr>");
    }
    body.set_inner_html(&b);
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
