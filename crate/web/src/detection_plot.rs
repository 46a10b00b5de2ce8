//! The Detection group's plot: the distribution of the output charge with dark charge only and
//! with the scenario's signal added, and the decision threshold above which a pixel is declared
//! a signal. Values from the engine (`detection::counting::charge_distribution` at the report's
//! detection inputs); drawn with `chart.rs`. Pure and natively tested; `show` puts it on the
//! page.
//!
//! The report gives one frame's charges (the average of N frames). The distribution is the
//! N-frame sum's, Poisson(N·(s + d)) + Normal(0, N·σ²) as the detection is made
//! (docs/scenario-format.md, "Detection"), drawn against the sum ÷ N so that its axis is the
//! report's charge: the density is scaled by N accordingly.

use engine::Report;

use crate::chart::{Axis, Chart, Line, Region, Scale};

/// Points of a density curve (the engine refines the step when the read noise is below half an
/// electron, so that single-electron peaks show).
const POINTS: usize = 400;
/// Mean charge (sum of the N frames) above which the plot is left out: the distributions are
/// close to Gaussian there (the Poisson's skewness 1/√μ is below 0.1), and drawing them would
/// cost more than the results (common practice, no source).
pub const MAX_MEAN_E: f64 = 100.0;

/// The chart for this report; `None` when the detection figures are absent or the charge is
/// too large to be worth drawing (see [`MAX_MEAN_E`]).
#[must_use]
pub fn chart(report: &Report, frames: u32) -> Option<Chart> {
    let d = &report.detection;
    let n = f64::from(frames.max(1));
    let sigma = d.read_noise_e? * n;
    let threshold = d.threshold_e?;
    let dark = n * (report.dark_e + report.background_e);
    let signal = n * report.signal_e;
    if dark + signal > MAX_MEAN_E || (dark + signal).is_nan() {
        return None;
    }
    let dist = engine::detection::counting::charge_distribution(dark, signal, sigma, POINTS)?;
    let x: Vec<f64> = dist.charge_e.iter().map(|c| c / n).collect();
    let line = |values: &[f64]| -> Vec<(f64, f64)> {
        x.iter().zip(values).map(|(a, v)| (*a, v * n)).collect()
    };
    let dark_line = line(&dist.dark);
    let signal_line = line(&dist.signal);
    let top = x.last().copied().unwrap_or(threshold);
    let ys: Vec<f64> = dark_line
        .iter()
        .chain(&signal_line)
        .map(|p| p.1)
        .chain([0.0])
        .collect();
    let y_label = if dist.discrete {
        "probability"
    } else {
        "probability density, per e⁻"
    };
    Some(Chart {
        id: "svg-detection".into(),
        title: "Output charge: dark only and with the signal".into(),
        desc: format!(
            "The distribution of one output pixel's charge with dark charge only and with this scenario's signal added (Poisson counts plus Gaussian read noise), against the charge on a linear axis. Shaded: above the threshold of {} e⁻, where a pixel is declared a signal.{}",
            engine::decimal::Fixed(threshold, 4),
            if dist.peaks_resolved && !dist.discrete {
                " The read noise is low enough for single electrons to show as separate peaks."
            } else {
                ""
            }
        ),
        x: Axis::fitted("output charge", "e⁻", Scale::Linear, &x, 1.0),
        y: Axis::fitted(y_label, "", Scale::Linear, &ys, 1.0),
        regions: vec![Region {
            from: threshold,
            to: top.max(threshold),
            label: "declared a signal",
            color: "#eef6ee",
        }],
        stack: None,
        lines: vec![
            Line {
                label: "dark only".into(),
                points: dark_line,
                color: "#6b7a8f",
                dash: "",
                legend: true,
            },
            Line {
                label: "with the signal".into(),
                points: signal_line,
                color: "#1d5fa8",
                dash: "",
                legend: true,
            },
        ],
        markers: Vec::new(),
        note: "shaded: above the threshold".into(),
    })
}

/// Draw the plot for a valid scenario's report into its slot (emptied when there is none).
#[cfg(target_arch = "wasm32")]
pub fn show(scenario: &engine::Scenario, report: &Report) {
    use crate::{dom, ids};
    if let Some(slot) = dom::by_id(ids::DETECTION_PLOT) {
        let markup = chart(report, scenario.exposure().frames_averaged).map_or_else(
            || {
                format!(
                    "<p class=\"hint\">No plot of the charge: above {} e⁻ of mean charge the counts are close to Gaussian, and the exact and Gaussian figures above agree.</p>",
                    engine::decimal::Plain(MAX_MEAN_E)
                )
            },
            |c| c.svg(),
        );
        slot.set_inner_html(&markup);
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::chart;

    fn report(read_noise: f64, photons: f64, frames: u32) -> engine::Report {
        // REFERENCES.md §8's pixel: σ_r as given, dark 0.01 e⁻, QE 0.5, quantization negligible.
        let v = serde_json::json!({"version": 1,
            "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.5, "full_well_e": 10000,
                "read_noise_e": read_noise, "dark_current_e_per_s": 1, "adc_bits": 32,
                "system_gain_dn_per_e": 1000},
            "light": {"photons_per_pixel": photons},
            "exposure": {"time_s": 0.01, "frames_averaged": frames}});
        engine::evaluate_json(&v.to_string()).unwrap()
    }

    /// The area under a curve by trapezoids.
    fn area(points: &[(f64, f64)]) -> f64 {
        points
            .windows(2)
            .map(|w| (w[1].0 - w[0].0) * (w[1].1 + w[0].1) / 2.0)
            .sum()
    }

    #[test]
    fn the_plot_shows_both_distributions_and_the_threshold() {
        let r = report(1.0, 6.52, 1);
        let c = chart(&r, 1).unwrap();
        assert_eq!(c.lines.len(), 2);
        let tau = r.detection.threshold_e.unwrap();
        // REFERENCES.md §8: τ = 3.1409 e⁻ for σ_r = 1, d = 0.01, P_FA = 1e-3.
        assert!((tau - 3.1409).abs() < 1e-3, "{tau}");
        assert_eq!(c.regions[0].from, tau);
        // Each curve is a density: its integral (trapezoids) is 1 within the plotted range.
        for l in &c.lines {
            let area = area(&l.points);
            assert!((area - 1.0).abs() < 1e-3, "{}: {area}", l.label);
        }
        assert!(c.svg().contains("declared a signal"));
    }

    #[test]
    fn averaged_frames_keep_the_axis_in_one_frames_charge_and_densities_integrate_to_one() {
        let r = report(1.0, 6.52, 4);
        let c = chart(&r, 4).unwrap();
        for l in &c.lines {
            let area = area(&l.points);
            assert!((area - 1.0).abs() < 1e-3, "{}: {area}", l.label);
        }
        // The signal curve peaks near one frame's mean charge, s + d.
        let peak = c.lines[1]
            .points
            .iter()
            .max_by(|a, b| a.1.total_cmp(&b.1))
            .unwrap()
            .0;
        let mean = r.signal_e + r.dark_e;
        assert!((peak - mean).abs() < 1.0, "peak {peak}, mean {mean}");
    }

    #[test]
    fn large_charges_are_left_out() {
        let r = report(1.0, 1000.0, 1);
        assert!(chart(&r, 1).is_none());
    }
}
