//! Which charts the Curves section draws and what is on each: the series (the scenario's and
//! the pins' SNR along a view, or the noise budget's shares), the axes and their words, the
//! regimes, the markers, and the readout of a point.
//!
//! Pure, natively tested: the sweeps are the engine's (`engine::curves`), the axis words and
//! units the key catalogue's (`engine::keys`); drawing is `chart.rs`. No DOM here, and no figure
//! computed: values are only placed.

use std::rc::Rc;

use engine::curves::View;
use engine::keys;
use engine::sweep::{Sweep, SweepPoint};
use engine::Report;
use serde_json::Value;

use super::contrast;
use crate::chart::{eng, Axis, Chart, Layer, Line, Marker, Region, Scale};
use crate::display::{Numbers, Style};

/// The charts, in the order the page shows them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChartKind {
    /// SNR against the signal (the light view's sweep, by signal), with the noise regimes.
    Signal,
    /// SNR against exposure time.
    Exposure,
    /// SNR against the light's amount.
    Light,
    /// SNR against temperature.
    Temperature,
    /// The noise budget's shares along a chosen view.
    Budget,
    /// The contrast detection probability against the light's amount.
    Contrast,
}

impl ChartKind {
    /// Every chart, in the page's order.
    pub const ALL: [ChartKind; 6] = [
        ChartKind::Signal,
        ChartKind::Exposure,
        ChartKind::Light,
        ChartKind::Temperature,
        ChartKind::Budget,
        ChartKind::Contrast,
    ];

    /// Its name in the page (`data-chart`) and in the SVG's id (`svg-NAME`).
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            ChartKind::Signal => "signal",
            ChartKind::Exposure => "exposure",
            ChartKind::Light => "light",
            ChartKind::Temperature => "temperature",
            ChartKind::Budget => "budget",
            ChartKind::Contrast => "contrast",
        }
    }

    /// The chart named `name` ([`ChartKind::name`]).
    #[must_use]
    pub fn from_name(name: &str) -> Option<ChartKind> {
        ChartKind::ALL.into_iter().find(|c| c.name() == name)
    }

    /// The view whose sweep it draws; the budget's is chosen on the page.
    #[must_use]
    pub fn view(self, budget_along: View) -> View {
        match self {
            ChartKind::Signal | ChartKind::Light | ChartKind::Contrast => View::Light,
            ChartKind::Exposure => View::Exposure,
            ChartKind::Temperature => View::Temperature,
            ChartKind::Budget => budget_along,
        }
    }

    /// Words for exported file names.
    #[must_use]
    pub fn file_words(self) -> &'static str {
        match self {
            ChartKind::Signal => "snr-vs-signal",
            ChartKind::Exposure => "snr-vs-exposure-time",
            ChartKind::Light => "snr-vs-light-level",
            ChartKind::Temperature => "snr-vs-temperature",
            ChartKind::Budget => "noise-budget-along",
            ChartKind::Contrast => "contrast-detection-vs-light-level",
        }
    }

    fn title_word(self) -> &'static str {
        match self {
            ChartKind::Signal => "signal",
            ChartKind::Exposure => "exposure time",
            ChartKind::Light => "light level",
            ChartKind::Temperature => "temperature",
            ChartKind::Budget | ChartKind::Contrast => "",
        }
    }
}

/// Decades of SNR shown below the highest.
const SNR_DECADES: f64 = 5.0;
/// Decades of x shown at most.
const X_DECADES: f64 = 12.0;
/// Colour of the scenario on screen, then of pins A to D.
pub const NOW_COLOR: &str = "#1d5fa8";
const PIN_COLORS: [&str; 4] = ["#c2410c", "#15803d", "#7e22ce", "#a16207"];
/// Colour of an HDR sensor's combined output (and of the circles at its switches).
const HDR_COLOR: &str = "#0f766e";
/// Dash of a temporal-SNR line (the total-SNR line is solid).
const TEMPORAL_DASH: &str = "60 40";
/// Shades of the noise regimes on the SNR-against-signal chart.
const REGION_READ: &str = "#eef2f8";
const REGION_SHOT: &str = "#ffffff";
const REGION_FPN: &str = "#f4f1e6";
const REGION_SAT: &str = "#f8e9e9";
/// Most characters of a pin's name in a legend.
const LEGEND_NAME_CHARS: usize = 34;

/// The noise sources of the stacked chart: label and colour (as the page's bar).
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

/// Each source's share of the total variance, in the order of [`SOURCES`].
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

/// The scenario on screen as the charts need it.
pub struct Now<'a> {
    /// Its JSON (valid).
    pub value: &'a Value,
    /// Its checked form, for the regimes.
    pub scenario: Option<&'a engine::Scenario>,
    /// Its report.
    pub report: &'a Report,
    /// Its views' sweeps, in the order of `View::ALL` (`None` where one failed).
    pub views: &'a [Option<Rc<Sweep>>],
}

/// A pin as the charts need it.
pub struct PinCurves<'a> {
    /// Its name (legend).
    pub name: &'a str,
    /// Its scenario JSON.
    pub value: &'a Value,
    /// Its report.
    pub report: &'a Report,
    /// Its views' sweeps, as for [`Now::views`].
    pub views: &'a [Option<Rc<Sweep>>],
    /// Whether it is the scenario on screen (then drawn once, as the pin).
    pub on_screen: bool,
}

/// A chart built: what is drawn, and what reading values and exporting need.
pub struct Drawn {
    /// The chart.
    pub chart: Chart,
    /// Its SVG.
    pub markup: String,
    /// x of each point of the scenario's own curve.
    pub xs: Vec<f64>,
    /// The point of the scenario's own curve nearest its operating point.
    pub at: usize,
    /// The sweep behind it (for the readouts and the CSV).
    pub sweep: Rc<Sweep>,
}

/// The unit of a swept key as the catalogue shows it.
fn axis_unit(key: &str) -> &'static str {
    keys::sweepable(key).map_or("", |k| k.unit.shown)
}

/// The quantity of a swept key in the catalogue's words.
fn axis_words(key: &str) -> &'static str {
    keys::sweepable(key).map_or("value", |k| k.quantity)
}

fn view_index(v: View) -> usize {
    View::ALL.iter().position(|x| *x == v).unwrap_or(0)
}

/// A pin's name cut to fit a legend.
fn short(name: &str) -> String {
    if name.chars().count() <= LEGEND_NAME_CHARS {
        name.to_string()
    } else {
        let cut: String = name.chars().take(LEGEND_NAME_CHARS - 1).collect();
        format!("{cut}…")
    }
}

/// Index of the x nearest `x` (by value, which orders a log and a linear scale alike).
#[must_use]
pub fn nearest(xs: &[f64], x: f64) -> usize {
    xs.iter()
        .enumerate()
        .min_by(|a, b| (a.1 - x).abs().total_cmp(&(b.1 - x).abs()))
        .map_or(0, |(i, _)| i)
}

/// The total and temporal SNR lines of one sweep.
fn snr_lines(
    label: &str,
    color: &'static str,
    sweep: &Sweep,
    x_of: &dyn Fn(&SweepPoint) -> f64,
) -> [Line; 2] {
    let line = |get: fn(&Report) -> f64| {
        sweep
            .points
            .iter()
            .map(|p| (x_of(p), get(&p.report)))
            .collect()
    };
    [
        Line {
            label: label.to_string(),
            points: line(|r| r.snr.total),
            color,
            dash: "",
            legend: true,
        },
        Line {
            label: format!("{label}, temporal"),
            points: line(|r| r.snr.temporal),
            color,
            dash: TEMPORAL_DASH,
            legend: false,
        },
    ]
}

/// The combined output of an HDR sensor along a sweep (its total SNR), and a circle either
/// side of each switch of readout: the SNR just below and just above the dip. The switches are
/// where the engine's readout in use changes between two points of the sweep.
fn hdr_line(sweep: &Sweep, x_of: &dyn Fn(&SweepPoint) -> f64) -> (Line, Vec<Marker>) {
    let combined: Vec<(f64, f64, usize)> = sweep
        .points
        .iter()
        .filter_map(|p| {
            let h = p.report.hdr.as_ref()?;
            Some((x_of(p), h.snr.total, h.readout_in_use))
        })
        .collect();
    let mut dips = Vec::new();
    for pair in combined.windows(2) {
        if let [a, b] = pair {
            if a.2 != b.2 {
                for (x, y, _) in [a, b] {
                    dips.push(Marker {
                        x: *x,
                        y: *y,
                        color: HDR_COLOR,
                    });
                }
            }
        }
    }
    let line = Line {
        label: "HDR output, combined".into(),
        points: combined.iter().map(|(x, y, _)| (*x, *y)).collect(),
        color: HDR_COLOR,
        dash: "",
        legend: true,
    };
    (line, dips)
}

/// One scenario a chart draws: the one on screen (unless it is one of the pins, then drawn
/// as that pin) or a pin whose view varies the chart's quantity.
pub(super) struct Drawer<'a> {
    /// Its legend entry.
    pub label: String,
    /// Its colour.
    pub color: &'static str,
    /// Its view's sweep.
    pub sweep: Rc<Sweep>,
    /// Its operating point on the chart's x axis.
    pub here_x: f64,
    /// Its report (the operating point's figures).
    pub report: &'a Report,
    /// Whether it is the scenario on screen (its HDR output is drawn with it).
    pub now: bool,
}

/// The scenarios chart `k` (a view's index) draws, in legend order: the scenario on screen
/// unless it is pinned, then the pins overlaid where their view varies the same quantity
/// (any view, on the SNR-against-signal chart: `any_key`). `here` gives a scenario's x.
fn drawers<'a>(
    now: &Now<'a>,
    pins: &[PinCurves<'a>],
    (k, sweep): (usize, &Rc<Sweep>),
    any_key: bool,
    here: &dyn Fn(&Value, &Report) -> f64,
) -> Vec<Drawer<'a>> {
    let mut out = Vec::new();
    if !pins.iter().any(|p| p.on_screen) {
        out.push(Drawer {
            label: if pins.is_empty() {
                "this scenario".into()
            } else {
                "on screen (not pinned)".into()
            },
            color: NOW_COLOR,
            sweep: Rc::clone(sweep),
            here_x: here(now.value, now.report),
            report: now.report,
            now: true,
        });
    }
    for (i, pin) in pins.iter().enumerate() {
        let Some(ps) = pin
            .views
            .get(k)
            .cloned()
            .flatten()
            .filter(|ps| ps.key == sweep.key || any_key)
        else {
            continue;
        };
        out.push(Drawer {
            label: short(pin.name),
            color: PIN_COLORS.get(i).copied().unwrap_or(NOW_COLOR),
            sweep: ps,
            here_x: here(pin.value, pin.report),
            report: pin.report,
            now: false,
        });
    }
    out
}

/// A chart built, with what reading values and exporting need.
fn drawn(chart: Chart, xs: Vec<f64>, at: usize, sweep: Rc<Sweep>) -> Drawn {
    let markup = chart.svg();
    Drawn {
        chart,
        markup,
        xs,
        at,
        sweep,
    }
}

/// The chart `kind` of the scenario on screen with the pins overlaid; `None` when its view
/// could not be swept.
#[must_use]
pub fn build(
    kind: ChartKind,
    budget_along: View,
    now: &Now<'_>,
    pins: &[PinCurves<'_>],
) -> Option<Drawn> {
    let view = kind.view(budget_along);
    let k = view_index(view);
    let sweep = now.views.get(k).cloned().flatten()?;
    let key = sweep.key.as_str();
    let by_signal = kind == ChartKind::Signal;
    let x_of = |p: &SweepPoint| -> f64 {
        if by_signal {
            p.report.signal_e
        } else {
            p.value
        }
    };
    let here = |v: &Value, r: &Report| {
        if by_signal {
            r.signal_e
        } else {
            crate::fields::value_at(v, key)
                .and_then(Value::as_f64)
                .unwrap_or(f64::NAN)
        }
    };
    let here_x = here(now.value, now.report);
    let (x_label, x_unit) = if by_signal {
        ("signal per output pixel".to_string(), "e⁻")
    } else {
        (axis_words(key).to_string(), axis_unit(key))
    };
    let x_scale = if view == View::Temperature {
        Scale::Linear
    } else {
        Scale::Log
    };
    let xs: Vec<f64> = sweep.points.iter().map(x_of).collect();
    let at = nearest(&xs, here_x);
    if kind == ChartKind::Budget {
        let chart = budget(&sweep, &xs, here_x, (&x_label, x_unit), x_scale);
        return Some(drawn(chart, xs, at, sweep));
    }
    let scenarios = drawers(now, pins, (k, &sweep), by_signal, &here);
    let mut all_x = xs.clone();
    for d in scenarios.iter().filter(|d| !d.now) {
        all_x.extend(d.sweep.points.iter().map(x_of));
    }
    let x = Axis::fitted(&x_label, x_unit, x_scale, &all_x, X_DECADES);
    if kind == ChartKind::Contrast {
        return Some(drawn(contrast::chart(x, &scenarios), xs, at, sweep));
    }
    let mut lines: Vec<Line> = Vec::new();
    let mut markers = Vec::new();
    for d in &scenarios {
        lines.extend(snr_lines(&d.label, d.color, &d.sweep, &x_of));
        for y in [d.report.snr.total, d.report.snr.temporal] {
            markers.push(Marker {
                x: d.here_x,
                y,
                color: d.color,
            });
        }
        if let Some(h) = d.report.hdr.as_ref().filter(|_| d.now) {
            let (line, dips) = hdr_line(&d.sweep, &x_of);
            lines.push(line);
            markers.extend(dips);
            markers.push(Marker {
                x: d.here_x,
                y: h.snr.total,
                color: HDR_COLOR,
            });
        }
    }
    let y = Axis::fitted(
        "signal-to-noise ratio",
        "",
        Scale::Log,
        &lines
            .iter()
            .flat_map(|l| l.points.iter().map(|p| p.1))
            .collect::<Vec<_>>(),
        SNR_DECADES,
    );
    let regions = match (by_signal, now.scenario) {
        (true, Some(sc)) => regimes(sc, &x),
        _ => Vec::new(),
    };
    let pins_words = if pins.is_empty() {
        String::new()
    } else {
        format!(
            " Pinned scenarios in their own colours: {}.",
            pins.iter().map(|p| p.name).collect::<Vec<_>>().join("; ")
        )
    };
    let hdr_words = if now.report.hdr.is_some() && !pins.iter().any(|p| p.on_screen) {
        " The HDR output's combined total SNR in teal, with circles just below and just above each switch of readout, where the SNR dips."
    } else {
        ""
    };
    let region_words = if by_signal {
        " Shaded: where read noise, photon shot noise or fixed-pattern noise dominates, and where the pixel saturates."
    } else {
        ""
    };
    let chart = Chart {
        id: format!("svg-{}", kind.name()),
        title: format!("SNR against {}", kind.title_word()),
        desc: format!(
            "Signal-to-noise ratio, total (solid) and temporal (dashed), against {x_label} on a {} axis, SNR on a log axis. Circles mark the scenarios' operating points.{hdr_words}{region_words}{pins_words}",
            if x_scale == Scale::Log { "log" } else { "linear" }
        ),
        x,
        y,
        regions,
        stack: None,
        lines,
        markers,
        note: if now.report.hdr.is_some() && !pins.iter().any(|p| p.on_screen) {
            "solid: total SNR · dashed: temporal · teal: HDR output, ○ at its switches".into()
        } else {
            "solid: total SNR · dashed: temporal SNR".into()
        },
    };
    Some(drawn(chart, xs, at, sweep))
}

/// The stacked noise budget along a sweep, with the scenario as a vertical line.
fn budget(
    sweep: &Sweep,
    xs: &[f64],
    here_x: f64,
    (label, unit): (&str, &'static str),
    x_scale: Scale,
) -> Chart {
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
    let mut chart = Chart {
        id: "svg-budget".into(),
        title: format!("Noise budget against {label}"),
        desc: format!(
            "Each noise source's share of the total variance, stacked to 100 %, against {label} ({}). The vertical line is this scenario.",
            if x_scale == Scale::Log { "log scale" } else { "linear scale" }
        ),
        x: Axis::fitted(label, unit, x_scale, xs, X_DECADES),
        y: Axis {
            label: "share of total variance".into(),
            unit: "%",
            scale: Scale::Linear,
            lo: 0.0,
            hi: 100.0,
        },
        regions: Vec::new(),
        stack: Some((xs.to_vec(), layers)),
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
    chart
}

/// The noise regimes of the SNR-against-signal chart, from the engine's boundaries.
fn regimes(sc: &engine::Scenario, x: &Axis) -> Vec<Region> {
    let r = engine::sweep::regimes(sc);
    let sat = r.saturation_signal_e.unwrap_or(x.hi);
    let shot_end = r.shot_to_prnu_signal_e.map_or(sat, |p| p.min(sat));
    let mut regions = vec![
        Region {
            from: x.lo,
            to: r.read_to_shot_signal_e.min(sat),
            label: "read-noise limited",
            color: REGION_READ,
        },
        Region {
            from: r.read_to_shot_signal_e,
            to: shot_end,
            label: "shot-noise limited",
            color: REGION_SHOT,
        },
    ];
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
    regions
}

/// The readout of one point of chart `kind`, whose sweep varies `key`.
#[must_use]
pub fn readout(kind: ChartKind, key: &str, p: &SweepPoint, numbers: &dyn Numbers) -> String {
    if kind == ChartKind::Contrast {
        let lead = format!("{} {}", axis_words(key), eng(p.value, axis_unit(key)));
        return contrast::readout(&lead, &p.report, numbers);
    }
    if kind == ChartKind::Budget {
        let parts: Vec<String> = SOURCES
            .iter()
            .zip(shares(&p.report))
            .filter(|(_, s)| *s > 0.0)
            .map(|((label, _), s)| format!("{label} {}", numbers.rounded(s, Style::Percent)))
            .collect();
        return format!(
            "{} {}: {}",
            axis_words(key),
            eng(p.value, axis_unit(key)),
            parts.join(", ")
        );
    }
    let lead = if kind == ChartKind::Signal {
        format!("signal {}", eng(p.report.signal_e, "e⁻"))
    } else {
        format!("{} {}", axis_words(key), eng(p.value, axis_unit(key)))
    };
    format!(
        "{lead}: SNR total {}, temporal {}",
        numbers.rounded(p.report.snr.total, Style::Number),
        numbers.rounded(p.report.snr.temporal, Style::Number)
    )
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use std::rc::Rc;

    use engine::curves::{view_sweep, View};
    use serde_json::{json, Value};

    use super::{build, readout, ChartKind, Drawn, Now, PinCurves};
    use crate::display::Plain;

    fn scenario(read_noise: f64) -> Value {
        json!({"version": 1,
            "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
                "read_noise_e": read_noise, "dark_current_e_per_s": 30, "prnu_percent": 3.0,
                "adc_bits": 12, "system_gain_dn_per_e": 0.25},
            "light": {"photon_flux_per_um2_s": 1000}, "exposure": {"time_s": 0.01}})
    }

    fn views(v: &Value) -> Vec<Option<Rc<engine::sweep::Sweep>>> {
        View::ALL
            .iter()
            .map(|view| view_sweep(v, *view, 40).ok().map(Rc::new))
            .collect()
    }

    fn draw(kind: ChartKind, v: &Value, pins: &[PinCurves<'_>]) -> Drawn {
        let sc = engine::validate::scenario_from_value(v).unwrap();
        let report = engine::evaluate(&sc);
        let views = views(v);
        let now = Now {
            value: v,
            scenario: Some(&sc),
            report: &report,
            views: &views,
        };
        build(kind, View::Exposure, &now, pins).unwrap()
    }

    #[test]
    fn chart_kinds_have_names_and_views() {
        for k in ChartKind::ALL {
            assert_eq!(ChartKind::from_name(k.name()), Some(k));
        }
        assert_eq!(ChartKind::from_name("nothing"), None);
        assert_eq!(ChartKind::Signal.view(View::Temperature), View::Light);
        assert_eq!(ChartKind::Budget.view(View::Temperature), View::Temperature);
    }

    #[test]
    fn each_chart_has_its_title_axes_and_series() {
        let v = scenario(2.5);
        let d = draw(ChartKind::Signal, &v, &[]);
        assert_eq!(d.chart.title, "SNR against signal");
        assert_eq!(d.chart.x.label, "signal per output pixel");
        assert_eq!(d.chart.lines.len(), 2, "total and temporal");
        let regions: Vec<&str> = d.chart.regions.iter().map(|r| r.label).collect();
        assert_eq!(
            regions,
            [
                "read-noise limited",
                "shot-noise limited",
                "fixed-pattern limited",
                "saturated"
            ]
        );
        // The light chart's axis is named and unit-ed by the key catalogue.
        let d = draw(ChartKind::Light, &v, &[]);
        assert_eq!(
            d.chart.x.title(),
            "photon flux at the sensor, photons/(µm²·s)"
        );
        assert_eq!(d.xs.len(), 40);
        assert!(
            (d.xs[d.at] / 1000.0 - 1.0).abs() < 0.2,
            "the operating point is near 1000"
        );
        let d = draw(ChartKind::Temperature, &v, &[]);
        assert_eq!(d.chart.x.title(), "temperature");
        let d = draw(ChartKind::Budget, &v, &[]);
        assert_eq!(d.chart.title, "Noise budget against exposure time");
        assert!(d.chart.stack.is_some());
        assert!(d.markup.contains("<title id=\"svg-budget-t\">"));
    }

    #[test]
    fn an_hdr_scenario_adds_its_combined_output_with_circles_either_side_of_each_switch() {
        // Three exposures 16 : 1 apart: two switches along the light view, each a pair of
        // circles on the combined line where the engine's readout in use changes.
        let mut v = scenario(2.5);
        v["hdr"] = json!({"kind": "exposures", "exposures": [{"ratio": 16}, {"ratio": 256}]});
        let d = draw(ChartKind::Light, &v, &[]);
        let hdr = d
            .chart
            .lines
            .iter()
            .find(|l| l.label == "HDR output, combined")
            .unwrap();
        assert_eq!(hdr.points.len(), 40);
        let used: Vec<usize> = d
            .sweep
            .points
            .iter()
            .map(|p| p.report.hdr.as_ref().unwrap().readout_in_use)
            .collect();
        assert_eq!(
            (used[0], used[39]),
            (0, 2),
            "the view crosses both switches: {used:?}"
        );
        let circles: Vec<(f64, f64)> = d
            .chart
            .markers
            .iter()
            .filter(|m| m.color == super::HDR_COLOR)
            .map(|m| (m.x, m.y))
            .collect();
        // Two per switch, and the operating point on the combined line.
        assert_eq!(circles.len(), 2 * 2 + 1, "{circles:?}");
        for pair in circles[..4].chunks(2) {
            let (below, above) = (pair[0], pair[1]);
            assert!(below.0 < above.0);
            assert!(below.1 > above.1, "the SNR dips at the switch: {pair:?}");
            assert!(hdr.points.contains(&below) && hdr.points.contains(&above));
        }
        assert!(d.chart.desc.contains("HDR output"));
        // A plain scenario has no such line.
        let d = draw(ChartKind::Light, &scenario(2.5), &[]);
        assert!(d
            .chart
            .lines
            .iter()
            .all(|l| l.label != "HDR output, combined"));
    }

    #[test]
    fn pins_are_overlaid_in_their_colours_and_the_pinned_scenario_once() {
        let v = scenario(2.5);
        let other = scenario(6.0);
        let sc = engine::validate::scenario_from_value(&other).unwrap();
        let report = engine::evaluate(&sc);
        let pviews = views(&other);
        let pin = |on_screen| PinCurves {
            name: "A: a pin whose name is longer than any legend can hold",
            value: &other,
            report: &report,
            views: &pviews,
            on_screen,
        };
        let d = draw(ChartKind::Exposure, &v, &[pin(false)]);
        assert_eq!(d.chart.lines.len(), 4);
        assert_eq!(d.chart.lines[0].label, "on screen (not pinned)");
        assert!(
            d.chart.lines[2].label.ends_with('…') && d.chart.lines[2].label.chars().count() == 34
        );
        assert!(d
            .chart
            .desc
            .contains("Pinned scenarios in their own colours: A: a pin"));
        let d = draw(ChartKind::Exposure, &v, &[pin(true)]);
        assert_eq!(d.chart.lines.len(), 2, "the scenario on screen is the pin");
    }

    #[test]
    fn readouts_name_the_quantity_in_the_catalogues_words() {
        let v = scenario(2.5);
        let d = draw(ChartKind::Exposure, &v, &[]);
        let p = &d.sweep.points[0];
        let text = readout(ChartKind::Exposure, &d.sweep.key, p, &Plain);
        assert!(text.starts_with("exposure time "), "{text}");
        assert!(text.contains(": SNR total "), "{text}");
        let text = readout(ChartKind::Budget, &d.sweep.key, p, &Plain);
        assert!(text.contains("read "), "{text}");
        let text = readout(ChartKind::Signal, &d.sweep.key, p, &Plain);
        assert!(text.starts_with("signal "), "{text}");
    }
}
