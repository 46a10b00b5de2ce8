//! Small SVG plots of a light's spectrum and of the QE curve against wavelength, with the
//! sensor's response band shaded.
//!
//! Drawing only: the values plotted are the engine's (`Spectrum::power_at`, the checked QE
//! curve's points); here they are only placed on the drawing (scaled to its height). The
//! markup is built by pure functions with the primitives of `svg.rs`, tested natively; only
//! [`show`] touches the page.

use engine::spectrum::{QeCurve, Spectrum};

use crate::svg::{self, tenths as c};

/// What to draw: a curve of (wavelength nm, value) and, for a single line, its wavelength.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Curve {
    /// (wavelength nm, value), wavelengths increasing.
    pub points: Vec<(f64, f64)>,
    /// The wavelength of a single line (monochromatic light), drawn as a vertical bar.
    pub line_nm: Option<f64>,
}

/// Wavelength range drawn at least (nm): the near ultraviolet to the silicon cut-off.
const DEFAULT_RANGE_NM: (f64, f64) = (300.0, 1100.0);
/// Sampling step of a spectrum given by a formula or table of its own, nm (the plot is
/// 280 units wide, so a few hundred samples are finer than the drawing).
const SAMPLE_STEP_NM: f64 = 2.0;

/// The spectrum as a curve over `range_nm`: a user's table as its own points (zero outside,
/// as the engine reads it), a line as a bar, anything else sampled with the engine's
/// `power_at`.
#[must_use]
pub fn spectrum_curve(spectrum: &Spectrum, range_nm: (f64, f64)) -> Curve {
    match spectrum {
        Spectrum::Table { points } => Curve {
            points: closed(points),
            line_nm: None,
        },
        Spectrum::Monochromatic { wavelength_nm } => Curve {
            points: Vec::new(),
            line_nm: Some(*wavelength_nm),
        },
        other => {
            let (a, b) = range_nm;
            // OK to truncate: a count of samples, both ends finite (checked ranges).
            #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
            let n = ((b - a) / SAMPLE_STEP_NM).ceil().max(1.0) as usize;
            #[allow(clippy::cast_precision_loss)]
            let points = (0..=n)
                .map(|i| {
                    let nm = (a + i as f64 * SAMPLE_STEP_NM).min(b);
                    (nm, other.power_at(nm))
                })
                .collect();
            Curve {
                points,
                line_nm: None,
            }
        }
    }
}

/// The QE curve as drawn: its points, zero outside.
#[must_use]
pub fn qe_curve(curve: &QeCurve) -> Curve {
    Curve {
        points: closed(&curve.points),
        line_nm: None,
    }
}

/// Points with a drop to zero at both ends ("zero outside").
fn closed(points: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut out = Vec::with_capacity(points.len() + 2);
    if let Some(&(a, _)) = points.first() {
        out.push((a, 0.0));
    }
    out.extend_from_slice(points);
    if let Some(&(b, _)) = points.last() {
        out.push((b, 0.0));
    }
    out
}

/// The wavelength range to draw: the default range widened to hold the band, the curve and
/// a line.
#[must_use]
pub fn range_for(band_nm: (f64, f64), curve: Option<&Curve>) -> (f64, f64) {
    let mut lo = DEFAULT_RANGE_NM.0.min(band_nm.0);
    let mut hi = DEFAULT_RANGE_NM.1.max(band_nm.1);
    if let Some(c) = curve {
        for x in c.points.iter().map(|p| p.0).chain(c.line_nm) {
            lo = lo.min(x);
            hi = hi.max(x);
        }
    }
    (lo, hi)
}

// The drawing's size and plot area, in drawing units (written in tenths, `svg::tenths`).
const WIDTH: f64 = 320.0;
const HEIGHT: f64 = 120.0;
const LEFT: f64 = 30.0;
const RIGHT: f64 = 310.0;
const TOP: f64 = 8.0;
const BOTTOM: f64 = 98.0;

/// The SVG markup of one plot. `y_top`: the value at the top of the drawing (`None`: the
/// curve's own peak, for a relative spectrum). `id` makes the title's and description's ids.
#[must_use]
pub fn svg(
    id: &str,
    title: &str,
    desc: &str,
    curve: &Curve,
    band_nm: (f64, f64),
    range_nm: (f64, f64),
    y_top: Option<f64>,
) -> String {
    let (lo, hi) = range_nm;
    let span = if hi > lo { hi - lo } else { 1.0 };
    let x_of = |nm: f64| LEFT + (nm - lo) / span * (RIGHT - LEFT);
    let peak = curve.points.iter().map(|p| p.1).fold(0.0_f64, f64::max);
    let top = y_top.filter(|t| *t > 0.0).unwrap_or(peak);
    let top = if top > 0.0 && top.is_finite() {
        top
    } else {
        1.0
    };
    let y_of = |v: f64| BOTTOM - (v / top).clamp(0.0, 1.0) * (BOTTOM - TOP);
    let mut out = String::new();
    svg::open(
        &mut out,
        &svg::Head {
            id,
            svg_id: None,
            id_suffixes: ("t", "d"),
            width: c(WIDTH),
            height: c(HEIGHT),
            attributes: " class=\"plot-svg\"",
            title,
            desc,
        },
    );
    let (b0, b1) = (x_of(band_nm.0.max(lo)), x_of(band_nm.1.min(hi)));
    out.push_str(&format!(
        "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"#dde8f5\"/>",
        c(b0),
        c(TOP),
        c((b1 - b0).max(0.0)),
        c(BOTTOM - TOP)
    ));
    out.push_str(&format!(
        "<path d=\"M{} {}H{}M{} {}V{}\" stroke=\"#5a6475\" stroke-width=\"8\" fill=\"none\"/>",
        c(LEFT),
        c(BOTTOM),
        c(RIGHT),
        c(LEFT),
        c(TOP),
        c(BOTTOM)
    ));
    if !curve.points.is_empty() {
        let d: Vec<String> = curve
            .points
            .iter()
            .enumerate()
            .map(|(i, &(x, y))| {
                let cmd = if i == 0 { 'M' } else { 'L' };
                format!("{cmd}{} {}", c(x_of(x)), c(y_of(y)))
            })
            .collect();
        out.push_str(&format!(
            "<path d=\"{}\" stroke=\"#1d5fa8\" stroke-width=\"14\" fill=\"none\" stroke-linejoin=\"round\"/>",
            d.join("")
        ));
    }
    if let Some(nm) = curve.line_nm {
        out.push_str(&format!(
            "<path d=\"M{x} {}V{}\" stroke=\"#1d5fa8\" stroke-width=\"20\"/>",
            c(BOTTOM),
            c(TOP),
            x = c(x_of(nm))
        ));
    }
    for (x, anchor, nm) in [(LEFT, "start", lo), (RIGHT, "end", hi)] {
        out.push_str(&format!(
            "<text x=\"{}\" y=\"{}\" font-size=\"90\" text-anchor=\"{anchor}\" fill=\"#1c2330\">{} nm</text>",
            c(x),
            c(HEIGHT - 6.0),
            c(nm) / 10
        ));
    }
    out.push_str("</svg>");
    out
}

/// Draw the plots of a valid scenario: the light's and the background's spectrum, and the QE
/// curve; a plot with nothing to draw is emptied.
#[cfg(target_arch = "wasm32")]
pub fn show(scenario: &engine::Scenario) {
    use crate::{dom, ids};
    let band = scenario.sensor().response_band_nm;
    let band_words = format!(
        "The shaded part is the band the sensor responds to, {} to {} nm.",
        c(band.0) / 10,
        c(band.1) / 10
    );
    let spectrum_plot = |slot: Option<web_sys::Element>,
                         id: &str,
                         light: Option<&engine::light::Light>| {
        let Some(slot) = slot else { return };
        let spectrum = light.and_then(engine::light::Light::spectrum);
        let markup = spectrum.map_or_else(String::new, |s| {
            let range = range_for(band, None);
            let curve = spectrum_curve(s, range);
            let range = range_for(band, Some(&curve));
            let curve = if matches!(s, Spectrum::Table { .. } | Spectrum::Monochromatic { .. }) {
                curve
            } else {
                spectrum_curve(s, range)
            };
            svg(
                id,
                &format!("Spectrum: {}", s.kind().replace('_', " ")),
                &format!("Relative power per nanometre against wavelength, scaled to its peak. {band_words}"),
                &curve,
                band,
                range,
                None,
            )
        });
        slot.set_inner_html(&markup);
    };
    spectrum_plot(
        dom::by_id(ids::PLOT_LIGHT),
        "plot-light-svg",
        Some(scenario.light()),
    );
    spectrum_plot(
        dom::by_id(ids::PLOT_BACKGROUND),
        "plot-bg-svg",
        scenario.background_light(),
    );
    if let Some(slot) = dom::by_id(ids::PLOT_QE) {
        let markup = scenario
            .sensor()
            .quantum_efficiency_curve
            .as_ref()
            .map_or_else(String::new, |q| {
                let curve = qe_curve(q);
                svg(
                    "plot-qe-svg",
                    "Quantum efficiency curve",
                    &format!("Quantum efficiency from 0 to 1 against wavelength, zero outside the points given. {band_words}"),
                    &curve,
                    band,
                    range_for(band, Some(&curve)),
                    Some(1.0),
                )
            });
        slot.set_inner_html(&markup);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_table_is_drawn_as_its_points_with_zero_outside() {
        let s = Spectrum::Table {
            points: vec![(400.0, 0.5), (500.0, 1.0)],
        };
        let c = spectrum_curve(&s, (300.0, 1100.0));
        assert_eq!(
            c.points,
            vec![(400.0, 0.0), (400.0, 0.5), (500.0, 1.0), (500.0, 0.0)]
        );
    }

    #[test]
    fn a_formula_spectrum_is_sampled_across_the_range_with_the_engines_values() {
        let s = Spectrum::EqualEnergy;
        let c = spectrum_curve(&s, (300.0, 1100.0));
        assert_eq!(c.points.first(), Some(&(300.0, 1.0)));
        assert_eq!(c.points.last(), Some(&(1100.0, 1.0)));
        assert_eq!(c.points.len(), 401);
    }

    #[test]
    fn the_range_holds_the_band_and_the_curve() {
        let c = Curve {
            points: vec![(250.0, 1.0), (1200.0, 0.0)],
            line_nm: None,
        };
        assert_eq!(range_for((380.0, 780.0), None), (300.0, 1100.0));
        assert_eq!(range_for((200.0, 780.0), Some(&c)), (200.0, 1200.0));
    }

    #[test]
    fn the_markup_has_a_title_a_description_the_band_and_the_curve() {
        let c = Curve {
            points: vec![(400.0, 0.0), (700.0, 2.0)],
            line_nm: None,
        };
        let m = svg(
            "p",
            "A & B",
            "desc <x>",
            &c,
            (380.0, 780.0),
            (300.0, 1100.0),
            None,
        );
        assert!(m.starts_with("<svg "));
        assert!(m.contains("<title id=\"p-t\">A &amp; B</title>"));
        assert!(m.contains("<desc id=\"p-d\">desc &lt;x&gt;</desc>"));
        assert!(m.contains("<rect "));
        // 400 nm at the bottom, 700 nm (the peak) at the top.
        assert!(m.contains("M650 980L1700 80"), "{m}");
        assert!(m.contains(">300 nm</text>") && m.contains(">1100 nm</text>"));
        assert!(m.ends_with("</svg>"));
    }

    #[test]
    fn a_line_is_a_bar_and_nothing_breaks_on_an_empty_curve() {
        let m = svg(
            "p",
            "t",
            "d",
            &Curve {
                points: vec![],
                line_nm: Some(700.0),
            },
            (380.0, 780.0),
            (300.0, 1100.0),
            Some(1.0),
        );
        assert!(m.contains("M1700 980V80"), "{m}");
        let m = svg(
            "p",
            "t",
            "d",
            &Curve::default(),
            (1.0, 1.0),
            (5.0, 5.0),
            None,
        );
        assert!(m.ends_with("</svg>"));
    }
}
