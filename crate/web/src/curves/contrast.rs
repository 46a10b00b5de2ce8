//! The chart of the contrast detection probability (CDP) against light level: the light view's
//! sweep of the scenario and of the pins, each point's CDP as the engine reports it.
//!
//! Pure, natively tested, like `charts.rs` beside it (which decides when this chart is drawn):
//! every figure is the engine's (`report.detection.contrast_detection_probability`, kept by the
//! curves' lean sweep); here they are only placed, in percent on a linear axis.

use engine::Report;

use super::charts::Drawer;
use crate::chart::{Axis, Chart, Line, Marker, Scale};
use crate::display::{Numbers, Style};

/// The CDP of one report, in percent (`None` where the engine gave none: no signal).
fn percent(r: &Report) -> Option<f64> {
    r.detection
        .contrast_detection_probability
        .filter(|p| p.is_finite())
        .map(|p| p * 100.0)
}

/// A fraction in percent with at most three decimals, trailing zeros dropped ("10 %",
/// "2.5 %"): the task's inputs, written as entered.
/// Rounded with integers, so the text never depends on float formatting's precision rules.
fn pct(x: f64) -> String {
    let thousandths = (x * 100_000.0).round();
    if !thousandths.is_finite() || thousandths.abs() > 1e15 {
        return "— %".into();
    }
    #[allow(clippy::cast_possible_truncation)] // |value| ≤ 1e15, checked above
    let t = thousandths as i64;
    let sign = if t < 0 { "−" } else { "" };
    let (whole, frac) = (t.abs() / 1000, t.abs() % 1000);
    let frac = format!("{frac:03}");
    let frac = frac.trim_end_matches('0');
    if frac.is_empty() {
        format!("{sign}{whole} %")
    } else {
        format!("{sign}{whole}.{frac} %")
    }
}

/// The task in words: the Weber contrast and the confidence interval of a report.
fn task_words(r: &Report) -> String {
    format!(
        "contrast {}, interval ± {} of it",
        pct(r.detection.contrast),
        pct(r.detection.contrast_interval)
    )
}

/// The chart: `x` is the light axis fitted by the caller (the same as the SNR-against-light
/// chart's), `series` the scenarios drawn (their light views).
pub(super) fn chart(x: Axis, series: &[Drawer<'_>]) -> Chart {
    let mut lines = Vec::new();
    let mut markers = Vec::new();
    for s in series {
        lines.push(Line {
            label: s.label.clone(),
            points: s
                .sweep
                .points
                .iter()
                .filter_map(|p| Some((p.value, percent(&p.report)?)))
                .collect(),
            color: s.color,
            dash: "",
            legend: true,
        });
        if let Some(y) = percent(s.report) {
            markers.push(Marker {
                x: s.here_x,
                y,
                color: s.color,
            });
        }
    }
    let tasks: Vec<String> = series.iter().map(|s| task_words(s.report)).collect();
    let same_task = tasks.iter().all(|t| Some(t) == tasks.first());
    let note = match (tasks.first(), same_task) {
        (Some(t), true) => format!("one pixel of each patch · {t}"),
        _ => "one pixel of each patch · each scenario its own contrast and interval".into(),
    };
    Chart {
        id: "svg-contrast".into(),
        title: "Contrast detection probability against light level".into(),
        desc: format!(
            "The probability that the Weber contrast measured between one output pixel of a \
             target patch and one of a reference patch lies within the confidence interval of \
             the true contrast ({}), in percent on a linear axis, against {} on a log axis. \
             Each pixel has the model's total noise at its signal, temporal and fixed-pattern \
             (contrast detection probability after Geese et al. 2018 and IEEE 2020). Circles mark \
             the scenarios' operating points.",
            tasks.join("; "),
            x.label
        ),
        x,
        y: Axis {
            label: "contrast detection probability".into(),
            unit: "%",
            scale: Scale::Linear,
            lo: 0.0,
            hi: 100.0,
        },
        regions: Vec::new(),
        stack: None,
        lines,
        markers,
        note,
    }
}

/// The readout of one point: the light amount's words are the caller's.
pub(super) fn readout(lead: &str, r: &Report, numbers: &dyn Numbers) -> String {
    match r.detection.contrast_detection_probability {
        Some(p) if p.is_finite() => format!(
            "{lead}: contrast detection probability {} ({})",
            numbers.rounded(p, Style::Percent),
            task_words(r)
        ),
        _ => format!("{lead}: no contrast detection probability (no signal)"),
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use std::rc::Rc;

    use engine::curves::{view_sweep, View};
    use engine::detection::contrast::{contrast_curve, PixelNoise};
    use serde_json::json;

    use super::super::charts::{build, readout, ChartKind, Now, PinCurves};
    use crate::display::Plain;

    fn scenario(read_noise: f64) -> serde_json::Value {
        json!({"version": 1,
            "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
                "read_noise_e": read_noise, "dark_current_e_per_s": 30, "dsnu_e": 1.5,
                "prnu_percent": 1.0, "adc_bits": 12, "system_gain_dn_per_e": 0.25},
            "light": {"photon_flux_per_um2_s": 1000}, "exposure": {"time_s": 0.01},
            "detection": {"contrast": 0.2, "contrast_interval": 0.5}})
    }

    fn views(v: &serde_json::Value) -> Vec<Option<Rc<engine::sweep::Sweep>>> {
        View::ALL
            .iter()
            .map(|view| view_sweep(v, *view, 60).ok().map(Rc::new))
            .collect()
    }

    #[test]
    fn the_curve_is_the_pixel_pairs_cdp_from_the_scenarios_noise() {
        // The model's pixel (4T with CDS, b = N = 1, no background) is contrast::PixelNoise
        // with the read variance σ_r² + 1/(12K²) (SCENARIO.md's quantization) and the dark
        // charge D·t: the chart's line must be contrast_curve of those at each point's signal.
        let v = scenario(2.0);
        let sc = engine::validate::scenario_from_value(&v).unwrap();
        let report = engine::evaluate(&sc);
        let views = views(&v);
        let now = Now {
            value: &v,
            scenario: Some(&sc),
            report: &report,
            views: &views,
        };
        let d = build(ChartKind::Contrast, View::Light, &now, &[]).unwrap();
        assert_eq!(
            d.chart.title,
            "Contrast detection probability against light level"
        );
        assert_eq!(
            (d.chart.y.lo, d.chart.y.hi, d.chart.y.unit),
            (0.0, 100.0, "%")
        );
        let line = &d.chart.lines[0];
        let unsaturated: Vec<(f64, f64, f64)> = d
            .sweep
            .points
            .iter()
            .zip(&line.points)
            .filter(|(p, _)| p.report.signal_e * 1.2 < 0.9 * 10000.0 && p.report.signal_e > 0.0)
            .map(|(p, (x, y))| {
                assert_eq!(*x, p.value);
                (p.report.signal_e, *y, p.value)
            })
            .collect();
        assert!(unsaturated.len() > 20, "{}", unsaturated.len());
        let noise = PixelNoise {
            dark_e: 30.0 * 0.01,
            read_variance_e2: 4.0 + 1.0 / (12.0 * 0.25 * 0.25),
            dsnu_e: 1.5,
            prnu_fraction: 0.01,
        };
        let signals: Vec<f64> = unsaturated.iter().map(|u| u.0).collect();
        let expected = contrast_curve(&signals, 0.2, 0.5, &noise, 1);
        for ((s, y, _), e) in unsaturated.iter().zip(&expected) {
            let e = e.unwrap() * 100.0;
            assert!(
                (y - e).abs() < 1e-9,
                "signal {s}: chart {y} %, formula {e} %"
            );
        }
        // More light, a more reliable contrast (monotone while unsaturated).
        assert!(unsaturated.windows(2).all(|w| w[1].1 >= w[0].1 - 1e-9));
        // The operating point is the report's own figure.
        let cdp = report.detection.contrast_detection_probability.unwrap();
        assert_eq!(d.chart.markers.len(), 1);
        assert!((d.chart.markers[0].y - cdp * 100.0).abs() < 1e-12);
        assert!(
            d.chart
                .note
                .contains("contrast 20 %, interval ± 50 % of it"),
            "{}",
            d.chart.note
        );
        let text = readout(
            ChartKind::Contrast,
            &d.sweep.key,
            &d.sweep.points[30],
            &Plain,
        );
        assert!(text.starts_with("photon flux at the sensor "), "{text}");
        assert!(text.contains(": contrast detection probability "), "{text}");
    }

    #[test]
    fn percentages_are_written_as_entered() {
        // Arithmetic: fractions × 100, at most three decimals, trailing zeros dropped.
        assert_eq!(super::pct(0.1), "10 %");
        assert_eq!(super::pct(0.025), "2.5 %");
        assert_eq!(super::pct(0.123_456), "12.346 %");
        assert_eq!(super::pct(1.0), "100 %");
        assert_eq!(super::pct(f64::NAN), "— %");
    }

    #[test]
    fn pins_are_drawn_with_their_own_task_and_the_note_says_so() {
        let v = scenario(2.0);
        let mut other = scenario(6.0);
        other["detection"]["contrast"] = json!(0.05);
        let sc = engine::validate::scenario_from_value(&v).unwrap();
        let report = engine::evaluate(&sc);
        let views_now = views(&v);
        let osc = engine::validate::scenario_from_value(&other).unwrap();
        let oreport = engine::evaluate(&osc);
        let oviews = views(&other);
        let pins = [PinCurves {
            name: "A: more read noise",
            value: &other,
            report: &oreport,
            views: &oviews,
            on_screen: false,
        }];
        let now = Now {
            value: &v,
            scenario: Some(&sc),
            report: &report,
            views: &views_now,
        };
        let d = build(ChartKind::Contrast, View::Light, &now, &pins).unwrap();
        assert_eq!(d.chart.lines.len(), 2);
        assert_eq!(d.chart.lines[1].label, "A: more read noise");
        assert!(d.chart.note.contains("each scenario its own contrast"));
        // A smaller contrast with more noise is less reliably measured at the same light.
        let (a, b) = (&d.chart.lines[0].points, &d.chart.lines[1].points);
        let mid = a.len() / 2;
        assert!(b[mid].1 < a[mid].1, "{:?} vs {:?}", b[mid], a[mid]);
    }
}
