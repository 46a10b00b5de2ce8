//! The Measure section's figures: the photon transfer curve (log-log, with the fitted model
//! and the points the fit used), the variance-against-mean fit with its residuals, and the
//! averaged images' profiles, spectrograms and deviation histograms, as SVG text with a
//! `<title>` and a `<desc>`.
//!
//! It scales the engine's plot series (`engine::ptc::CurveSeries`, computed in the frame
//! worker) to a drawing; it computes no statistic and fits nothing. Tick labels are formatted
//! by the browser (`display`); axes, ticks and coordinates are `svg.rs`'s. The calculator's own
//! plots are `plot.rs`.

use std::fmt::Write as _;

use engine::ptc::{CurveSeries, SpatialSeries};

use crate::display::{self, Style};
use crate::svg::{self, escape as esc, whole as px, Axis, Scale};

/// The drawing's size and margins, in SVG user units.
const W: f64 = 1000.0;
const H: f64 = 560.0;
const LEFT: f64 = 130.0;
const RIGHT: f64 = 30.0;
const TOP: f64 = 30.0;
const BOTTOM: f64 = 90.0;

struct Plot {
    x: Axis,
    y: Axis,
    height: f64,
}

/// Where a log axis cannot place a value (≤ 0): far off the plot, on its low side.
const OFF_PLOT: f64 = -10.0;

impl Plot {
    fn sx(&self, v: f64) -> i64 {
        px(LEFT + self.x.fraction(v).unwrap_or(OFF_PLOT) * (W - LEFT - RIGHT))
    }
    fn sy(&self, v: f64) -> i64 {
        px(self.height
            - BOTTOM
            - self.y.fraction(v).unwrap_or(OFF_PLOT) * (self.height - TOP - BOTTOM))
    }
}

fn open_svg(out: &mut String, height: f64, id: &str, title: &str, desc: &str) {
    svg::open(
        out,
        &svg::Head {
            id,
            svg_id: None,
            id_suffixes: ("title", "desc"),
            width: px(W),
            height: px(height),
            attributes: "",
            title,
            desc,
        },
    );
}

fn axes(out: &mut String, f: &Plot, xlabel: &str, ylabel: &str) {
    let (x0, x1) = (px(LEFT), px(W - RIGHT));
    let (y0, y1) = (px(f.height - BOTTOM), px(TOP));
    for t in f.x.tick_values() {
        let x = f.sx(t);
        let _ = write!(
            out,
            "<line class=\"grid\" x1=\"{x}\" y1=\"{y0}\" x2=\"{x}\" y2=\"{y1}\"/>\
             <text x=\"{x}\" y=\"{}\" text-anchor=\"middle\">{}</text>",
            y0 + 30,
            esc(&display::rounded(t, Style::Number))
        );
    }
    for t in f.y.tick_values() {
        let y = f.sy(t);
        let _ = write!(
            out,
            "<line class=\"grid\" x1=\"{x0}\" y1=\"{y}\" x2=\"{x1}\" y2=\"{y}\"/>\
             <text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>",
            x0 - 10,
            y + 7,
            esc(&display::rounded(t, Style::Number))
        );
    }
    let _ = write!(
        out,
        "<polyline class=\"axis\" points=\"{x0},{y1} {x0},{y0} {x1},{y0}\"/>\
         <text x=\"{}\" y=\"{}\" text-anchor=\"middle\">{}</text>\
         <text x=\"24\" y=\"{}\" text-anchor=\"middle\" transform=\"rotate(-90 24 {})\">{}</text>",
        (x0 + x1) / 2,
        px(f.height - 20.0),
        esc(xlabel),
        (y0 + y1) / 2,
        (y0 + y1) / 2,
        esc(ylabel)
    );
}

fn polyline(out: &mut String, f: &Plot, pts: &[(f64, f64)], class: &str, dashed: bool) {
    if pts.len() < 2 {
        return;
    }
    let mut p = String::new();
    for (x, y) in pts {
        let _ = write!(p, "{},{} ", f.sx(*x), f.sy(*y));
    }
    let dash = if dashed {
        " stroke-dasharray=\"12 8\""
    } else {
        ""
    };
    let _ = write!(
        out,
        "<polyline class=\"{class}\"{dash} points=\"{}\"/>",
        p.trim_end()
    );
}

fn marks(out: &mut String, f: &Plot, pts: &[(f64, f64, bool)]) {
    for (x, y, used) in pts {
        let class = if *used { "used" } else { "unused" };
        let _ = write!(
            out,
            "<circle class=\"{class}\" cx=\"{}\" cy=\"{}\" r=\"8\"/>",
            f.sx(*x),
            f.sy(*y)
        );
    }
}

fn legend(out: &mut String, items: &[&str]) {
    for (i, text) in items.iter().enumerate() {
        let y = px(TOP + 10.0) + 30 * i64::try_from(i).unwrap_or(0);
        let _ = write!(
            out,
            "<text x=\"{}\" y=\"{y}\">{}</text>",
            px(LEFT + 20.0),
            esc(text)
        );
    }
}

/// The photon transfer curve; `k` is the fitted system gain, DN/e⁻.
pub fn ptc_svg(s: &CurveSeries, k: f64) -> String {
    let used = s.points.iter().filter(|p| p.used_in_fit).count();
    let xs = s.points.iter().map(|p| p.signal_dn);
    let ys = s
        .points
        .iter()
        .map(|p| p.noise_dn)
        .chain(s.model.iter().map(|m| m.1))
        .chain(std::iter::once(s.dark_noise_dn));
    let f = Plot {
        x: Axis::padded(&xs.collect::<Vec<_>>(), Scale::Log, false),
        y: Axis::padded(&ys.collect::<Vec<_>>(), Scale::Log, false),
        height: H,
    };
    let mut out = String::new();
    open_svg(
        &mut out,
        H,
        "measure-ptc-svg",
        "Photon transfer curve",
        &format!(
            "Temporal noise against signal above dark, both in DN, on logarithmic axes: {} flat \
             levels, of which the {used} drawn filled were used by the gain fit; the line is \
             the fitted model with K = {} DN/e⁻, the dashed line the dark noise.",
            s.points.len(),
            display::rounded(k, Style::Number)
        ),
    );
    axes(
        &mut out,
        &f,
        "signal above dark, DN",
        "temporal noise, DN rms",
    );
    if s.dark_noise_dn > 0.0 {
        polyline(
            &mut out,
            &f,
            &[(f.x.lo, s.dark_noise_dn), (f.x.hi, s.dark_noise_dn)],
            "model",
            true,
        );
    }
    polyline(&mut out, &f, &s.model, "model", false);
    let pts: Vec<(f64, f64, bool)> = s
        .points
        .iter()
        .map(|p| (p.signal_dn, p.noise_dn, p.used_in_fit))
        .collect();
    marks(&mut out, &f, &pts);
    legend(
        &mut out,
        &[
            "● used by the fit   ○ not used",
            "— fitted model   - - dark noise",
        ],
    );
    out.push_str("</svg>");
    out
}

/// The variance-against-mean fit and, below it, its residuals.
pub fn fit_svg(s: &CurveSeries) -> String {
    let used: Vec<_> = s.points.iter().filter(|p| p.used_in_fit).collect();
    let f = Plot {
        x: Axis::padded(
            &s.points.iter().map(|p| p.signal_dn).collect::<Vec<_>>(),
            Scale::Linear,
            true,
        ),
        y: Axis::padded(
            &s.points
                .iter()
                .map(|p| p.variance_above_dark_dn2)
                .chain(s.fit_line.iter().map(|l| l.1))
                .collect::<Vec<_>>(),
            Scale::Linear,
            true,
        ),
        height: H,
    };
    let mut out = String::new();
    open_svg(
        &mut out,
        H,
        "measure-fit-svg",
        "Variance against mean, with the fitted line",
        &format!(
            "Temporal variance above dark (DN²) against mean above dark (DN), linear axes: {} \
             flat levels; the {} drawn filled are those the straight-line fit used, and its \
             slope is the system gain K.",
            s.points.len(),
            used.len()
        ),
    );
    axes(
        &mut out,
        &f,
        "mean above dark, DN",
        "variance above dark, DN²",
    );
    polyline(&mut out, &f, &s.fit_line, "model", false);
    let pts: Vec<(f64, f64, bool)> = s
        .points
        .iter()
        .map(|p| (p.signal_dn, p.variance_above_dark_dn2, p.used_in_fit))
        .collect();
    marks(&mut out, &f, &pts);
    out.push_str("</svg>");

    // The residuals of the fit, on their own axes below.
    let rh = 360.0;
    let res: Vec<(f64, f64)> = used
        .iter()
        .filter_map(|p| p.residual_dn2.map(|r| (p.signal_dn, r)))
        .collect();
    let g = Plot {
        x: f.x.clone(),
        y: Axis::padded(
            &res.iter().map(|r| r.1).collect::<Vec<_>>(),
            Scale::Linear,
            true,
        ),
        height: rh,
    };
    open_svg(
        &mut out,
        rh,
        "measure-res-svg",
        "Residuals of the variance fit",
        &format!(
            "Measured variance minus the fitted line, in DN², at the {} levels the fit used; \
             points scattered evenly about zero mean the line describes them.",
            res.len()
        ),
    );
    axes(&mut out, &g, "mean above dark, DN", "residual, DN²");
    polyline(&mut out, &g, &[(g.x.lo, 0.0), (g.x.hi, 0.0)], "axis", true);
    let rp: Vec<(f64, f64, bool)> = res.iter().map(|(x, y)| (*x, *y, true)).collect();
    marks(&mut out, &g, &rp);
    out.push_str("</svg>");
    out
}

/// Dash patterns that tell up to eight lines apart without colour (with the line-1/line-2
/// classes for a second and third shade).
const DASHES: [&str; 4] = ["", "12 8", "4 6", "20 6 4 6"];

/// One plot of several lines with a legend; `ylog` for power and counts.
fn lines_svg(
    id: &str,
    title: &str,
    desc: &str,
    labels: (&str, &str),
    lines: &[(String, Vec<(f64, f64)>)],
    ylog: bool,
) -> String {
    let f = Plot {
        x: Axis::padded(
            &lines
                .iter()
                .flat_map(|l| l.1.iter().map(|p| p.0))
                .collect::<Vec<_>>(),
            Scale::Linear,
            false,
        ),
        y: Axis::padded(
            &lines
                .iter()
                .flat_map(|l| l.1.iter().map(|p| p.1))
                .collect::<Vec<_>>(),
            if ylog { Scale::Log } else { Scale::Linear },
            !ylog,
        ),
        height: H,
    };
    let mut out = String::new();
    open_svg(&mut out, H, id, title, desc);
    axes(&mut out, &f, labels.0, labels.1);
    for (i, (name, pts)) in lines.iter().enumerate() {
        let pts: Vec<(f64, f64)> = pts
            .iter()
            .copied()
            .filter(|p| p.1.is_finite() && (!ylog || p.1 > 0.0))
            .collect();
        let dash = DASHES.get(i % DASHES.len()).copied().unwrap_or_default();
        let class = ["model", "model line-1", "model line-2"]
            .get((i / DASHES.len()) % 3)
            .copied()
            .unwrap_or("model");
        let mut p = String::new();
        for (x, y) in &pts {
            let _ = write!(p, "{},{} ", f.sx(*x), f.sy(*y));
        }
        let dash_attr = if dash.is_empty() {
            String::new()
        } else {
            format!(" stroke-dasharray=\"{dash}\"")
        };
        if pts.len() >= 2 {
            let _ = write!(
                out,
                "<polyline class=\"{class}\"{dash_attr} points=\"{}\"/>",
                p.trim_end()
            );
        }
        let y = px(TOP + 10.0) + 30 * i64::try_from(i).unwrap_or(0);
        let x0 = px(W - RIGHT - 330.0);
        let _ = write!(
            out,
            "<line class=\"{class}\"{dash_attr} x1=\"{x0}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"/>\
             <text x=\"{}\" y=\"{y}\">{}</text>",
            y - 7,
            x0 + 60,
            y - 7,
            x0 + 70,
            esc(name)
        );
    }
    out.push_str("</svg>");
    out
}

/// The line's points less their mean (profiles are shown as deviations, so that dark and flat
/// share an axis).
fn less_mean(pts: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let n = pts.len().max(1);
    #[allow(clippy::cast_precision_loss)] // a profile has at most 2^28 points
    let m = pts.iter().map(|p| p.1).sum::<f64>() / n as f64;
    pts.iter().map(|(x, y)| (*x, y - m)).collect()
}

/// Every spatial plot: row and column profiles, horizontal and vertical spectrograms, and the
/// dark and flat deviation histograms, each with a line per channel and image.
#[must_use]
pub fn spatial_svgs(series: &[SpatialSeries]) -> String {
    let pick = |name: &str, image: Option<&str>, centre: bool| -> Vec<(String, Vec<(f64, f64)>)> {
        series
            .iter()
            .filter(|s| s.series == name && image.is_none_or(|i| s.image == i))
            .map(|s| {
                let label = if s.channel == "all" {
                    s.image.clone()
                } else {
                    format!("{} {}", s.image, s.channel)
                };
                let pts = if centre {
                    less_mean(&s.points)
                } else {
                    s.points.clone()
                };
                (label, pts)
            })
            .collect()
    };
    let plots = [
        (
            "measure-rows-svg",
            "Row profiles",
            "Mean of each row of the averaged images, less the image mean, in DN: a row pattern \
             shows as a wave or steps.",
            ("row", "row mean − mean, DN"),
            pick("row_profile", None, true),
            false,
        ),
        (
            "measure-columns-svg",
            "Column profiles",
            "Mean of each column of the averaged images, less the image mean, in DN.",
            ("column", "column mean − mean, DN"),
            pick("column_profile", None, true),
            false,
        ),
        (
            "measure-hspec-svg",
            "Horizontal spectrograms",
            "Power of the Fourier transform along rows, averaged over rows, in DN², against \
             frequency in cycles per pixel, logarithmic power axis: a flat floor is white \
             pixel noise, peaks are periodic column patterns.",
            ("frequency, cycles per pixel", "power, DN²"),
            pick("horizontal_spectrogram", None, false),
            true,
        ),
        (
            "measure-vspec-svg",
            "Vertical spectrograms",
            "Power of the Fourier transform along columns, averaged over columns, in DN²: peaks \
             are periodic row patterns.",
            ("frequency, cycles per pixel", "power, DN²"),
            pick("vertical_spectrogram", None, false),
            true,
        ),
        (
            "measure-dhist-svg",
            "Dark image histogram",
            "Pixels of the averaged dark image by their deviation from its mean, in DN, on a \
             logarithmic count axis: hot pixels sit far to the right.",
            ("deviation from the mean, DN", "pixels"),
            pick("histogram", Some("dark"), false),
            true,
        ),
        (
            "measure-fhist-svg",
            "Flat image histogram",
            "Pixels of the averaged flat image by their deviation from its mean, in percent of \
             the mean above dark, logarithmic count axis: dark (dead) pixels sit far to the \
             left.",
            ("deviation from the mean, % of the signal", "pixels"),
            pick("histogram", Some("flat"), false),
            true,
        ),
    ];
    let mut out = String::new();
    for (id, title, desc, labels, lines, ylog) in plots {
        if !lines.is_empty() {
            out.push_str(&lines_svg(id, title, desc, labels, &lines, ylog));
        }
    }
    out
}
