//! SVG line and stacked-area charts for the page's curves: log or linear axes with ticks
//! labelled in engineering prefixes, lines, a stack of shares, shaded regions with rules,
//! markers, a legend, and a title and description for screen readers.
//!
//! Drawing only: every value drawn is given by the caller (the engine's sweeps); here they are
//! only placed on the drawing, with the primitives of `svg.rs` (axes, ticks, coordinates).
//! Pure functions, tested natively. Hand-written rather than a plotting crate: this is a few
//! hundred lines, while a general plotting library would add more to the page's wasm than the
//! whole calculator (see DEVELOPERS.md).

use std::fmt::Write as _;

use crate::svg::{self, tenths as t};
pub use crate::svg::{eng, escape, Axis, Scale};

/// A line of the chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    /// Its name in the legend.
    pub label: String,
    /// (x, y) in axis units, in order of x.
    pub points: Vec<(f64, f64)>,
    /// Stroke colour.
    pub color: &'static str,
    /// Dash pattern (SVG `stroke-dasharray`, drawing units), empty for a solid line.
    pub dash: &'static str,
    /// Whether it has an entry in the legend.
    pub legend: bool,
}

/// A layer of a stack of shares (0..1 of the whole at each x).
#[derive(Debug, Clone, PartialEq)]
pub struct Layer {
    /// Its name in the legend.
    pub label: &'static str,
    /// Fill colour.
    pub color: &'static str,
    /// Its share at each x of the stack.
    pub shares: Vec<f64>,
}

/// A marked point (the scenario's operating point).
#[derive(Debug, Clone, PartialEq)]
pub struct Marker {
    /// Position in axis units.
    pub x: f64,
    /// Position in axis units.
    pub y: f64,
    /// Colour.
    pub color: &'static str,
}

/// A shaded region of x with a name (a noise regime), bounded by rules.
#[derive(Debug, Clone, PartialEq)]
pub struct Region {
    /// Start, in x units.
    pub from: f64,
    /// End, in x units.
    pub to: f64,
    /// Its name, written at the top of the region.
    pub label: &'static str,
    /// Fill colour.
    pub color: &'static str,
}

/// A chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    /// Element id of the SVG (also prefixes the title, description and clip ids).
    pub id: String,
    /// Title, shown at the top and as the SVG's `<title>`.
    pub title: String,
    /// Description for screen readers (`<desc>`).
    pub desc: String,
    /// Horizontal axis.
    pub x: Axis,
    /// Vertical axis.
    pub y: Axis,
    /// Shaded regions of x, drawn first.
    pub regions: Vec<Region>,
    /// A stack of shares over these x values, drawn under the lines.
    pub stack: Option<(Vec<f64>, Vec<Layer>)>,
    /// Lines.
    pub lines: Vec<Line>,
    /// Marked points.
    pub markers: Vec<Marker>,
    /// A note at the end of the legend (how to read the line styles), or empty.
    pub note: String,
}

/// Drawing size and the plot area inside it, in drawing units.
pub const WIDTH: f64 = 640.0;
/// Drawing height.
pub const HEIGHT: f64 = 400.0;
/// Left edge of the plot area (room for the y tick labels and the axis name).
pub const LEFT: f64 = 78.0;
/// Right edge of the plot area.
pub const RIGHT: f64 = 604.0;
/// Top edge of the plot area (room for the title).
pub const TOP: f64 = 34.0;
/// Bottom edge of the plot area (room for x tick labels, the axis name and the legend).
pub const BOTTOM: f64 = 310.0;

const INK: &str = "#1c2330";
/// Closest two vertices of a line are drawn, in tenths of a drawing unit (one and a half
/// units: about a pixel at the size the page shows a chart, 546 units across 380 px or so);
/// closer points add nothing visible but cost drawing time. Every point still counts for
/// reading values and in the CSV.
const MIN_STEP: i64 = 15;
const GRID: &str = "#d5dbe4";

impl Chart {
    /// Horizontal drawing position of an x value (`None` where a log axis cannot place it).
    #[must_use]
    pub fn px(&self, v: f64) -> Option<f64> {
        self.x.fraction(v).map(|f| LEFT + f * (RIGHT - LEFT))
    }

    /// Vertical drawing position of a y value.
    #[must_use]
    pub fn py(&self, v: f64) -> Option<f64> {
        self.y.fraction(v).map(|f| BOTTOM - f * (BOTTOM - TOP))
    }

    /// The x value at a horizontal drawing position.
    #[must_use]
    pub fn x_at(&self, px: f64) -> f64 {
        self.x.value_at((px - LEFT) / (RIGHT - LEFT))
    }

    /// The SVG markup (standalone: it carries its namespace, fonts and colours, so the same
    /// text is the exported file).
    #[must_use]
    pub fn svg(&self) -> String {
        let id = escape(&self.id);
        let mut o = String::with_capacity(16 * 1024);
        svg::open(
            &mut o,
            &svg::Head {
                id: &self.id,
                svg_id: Some(&self.id),
                id_suffixes: ("t", "d"),
                width: t(WIDTH),
                height: t(HEIGHT),
                attributes:
                    " class=\"chart-svg\" font-family=\"system-ui, sans-serif\" font-size=\"140\"",
                title: &self.title,
                desc: &self.desc,
            },
        );
        let _ = write!(
            o,
            "<rect width=\"{}\" height=\"{}\" fill=\"#fff\"/>\
             <clipPath id=\"{id}-clip\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>",
            t(WIDTH),
            t(HEIGHT),
            t(LEFT),
            t(TOP),
            t(RIGHT - LEFT),
            t(BOTTOM - TOP),
        );
        let _ = write!(
            o,
            "<text x=\"{}\" y=\"{}\" font-size=\"160\" font-weight=\"bold\" fill=\"{INK}\">{}</text>",
            t(LEFT),
            t(TOP - 14.0),
            escape(&self.title)
        );
        self.draw_regions(&mut o);
        self.draw_grid(&mut o);
        self.draw_stack(&mut o);
        self.draw_lines(&mut o);
        for m in &self.markers {
            if let (Some(x), Some(y)) = (self.px(m.x), self.py(m.y)) {
                let _ = write!(
                    o,
                    "<circle cx=\"{}\" cy=\"{}\" r=\"50\" fill=\"#fff\" stroke=\"{}\" stroke-width=\"25\"/>",
                    t(x),
                    t(y),
                    m.color
                );
            }
        }
        // The cursor the page moves to the point under the pointer or chosen by keys.
        let _ = write!(
            o,
            "<g id=\"{id}-cursor\" visibility=\"hidden\" pointer-events=\"none\">\
             <path d=\"M0 {}V{}\" stroke=\"{INK}\" stroke-width=\"8\" stroke-dasharray=\"30 30\"/></g>",
            t(TOP),
            t(BOTTOM)
        );
        self.draw_legend(&mut o);
        o.push_str("</svg>");
        o
    }

    fn draw_regions(&self, o: &mut String) {
        for r in &self.regions {
            let (Some(a), Some(b)) = (self.px(r.from), self.px(r.to)) else {
                continue;
            };
            let (a, b) = (a.clamp(LEFT, RIGHT), b.clamp(LEFT, RIGHT));
            if b - a < 1.0 {
                continue;
            }
            let _ = write!(
                o,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{}\"/>",
                t(a),
                t(TOP),
                t(b - a),
                t(BOTTOM - TOP),
                r.color
            );
            if b - a > 40.0 {
                let _ = write!(
                    o,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\" font-size=\"140\" fill=\"#4a5568\">{}</text>",
                    t((a + b) / 2.0),
                    t(TOP + 12.0),
                    escape(r.label)
                );
            }
        }
    }

    fn draw_grid(&self, o: &mut String) {
        let mut d = String::new();
        let xt = self.x.ticks();
        let yt = self.y.ticks();
        for (v, _) in &xt {
            if let Some(x) = self.px(*v) {
                let _ = write!(d, "M{} {}V{}", t(x), t(TOP), t(BOTTOM));
            }
        }
        for (v, _) in &yt {
            if let Some(y) = self.py(*v) {
                let _ = write!(d, "M{} {}H{}", t(LEFT), t(y), t(RIGHT));
            }
        }
        let _ = write!(
            o,
            "<path d=\"{d}\" stroke=\"{GRID}\" stroke-width=\"6\" fill=\"none\"/>\
             <path d=\"M{} {}V{}H{}\" stroke=\"{INK}\" stroke-width=\"10\" fill=\"none\"/>",
            t(LEFT),
            t(TOP),
            t(BOTTOM),
            t(RIGHT)
        );
        for (v, label) in &xt {
            if let Some(x) = self.px(*v) {
                let _ = write!(
                    o,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\" fill=\"{INK}\">{}</text>",
                    t(x),
                    t(BOTTOM + 16.0),
                    escape(label)
                );
            }
        }
        for (v, label) in &yt {
            if let Some(y) = self.py(*v) {
                let _ = write!(
                    o,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"end\" fill=\"{INK}\">{}</text>",
                    t(LEFT - 6.0),
                    t(y + 4.0),
                    escape(label)
                );
            }
        }
        let _ = write!(
            o,
            "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\" fill=\"{INK}\">{}</text>\
             <text transform=\"translate({} {}) rotate(-90)\" text-anchor=\"middle\" fill=\"{INK}\">{}</text>",
            t((LEFT + RIGHT) / 2.0),
            t(BOTTOM + 34.0),
            escape(&self.x.title()),
            t(16.0),
            t((TOP + BOTTOM) / 2.0),
            escape(&self.y.title())
        );
    }

    fn draw_stack(&self, o: &mut String) {
        let Some((xs, layers)) = &self.stack else {
            return;
        };
        // Columns closer than MIN_STEP to the last one kept are left out (the last kept).
        let mut kept_at: Option<i64> = None;
        let n = xs.len();
        let cols: Vec<Option<f64>> = xs
            .iter()
            .enumerate()
            .map(|(i, x)| {
                let p = self.px(*x)?;
                let tp = t(p);
                if i + 1 < n && kept_at.is_some_and(|k| (tp - k).abs() < MIN_STEP) {
                    return None;
                }
                kept_at = Some(tp);
                Some(p)
            })
            .collect();
        let mut below = vec![0.0_f64; xs.len()];
        let _ = write!(o, "<g clip-path=\"url(#{}-clip)\">", escape(&self.id));
        for layer in layers {
            if layer.shares.iter().all(|s| *s <= 0.0) {
                continue;
            }
            let above: Vec<f64> = below
                .iter()
                .zip(layer.shares.iter().chain(std::iter::repeat(&0.0)))
                .map(|(b, s)| b + s.max(0.0))
                .collect();
            let mut d = String::new();
            let y = |share: f64| BOTTOM - share.clamp(0.0, 1.0) * (BOTTOM - TOP);
            for (x, top) in cols.iter().zip(&above) {
                if let Some(x) = x {
                    let cmd = if d.is_empty() { 'M' } else { 'L' };
                    let _ = write!(d, "{cmd}{} {}", t(*x), t(y(*top)));
                }
            }
            for (x, b) in cols.iter().zip(&below).rev() {
                if let Some(x) = x {
                    let _ = write!(d, "L{} {}", t(*x), t(y(*b)));
                }
            }
            if !d.is_empty() {
                let _ = write!(o, "<path d=\"{d}Z\" fill=\"{}\"/>", layer.color);
            }
            below = above;
        }
        o.push_str("</g>");
    }

    fn draw_lines(&self, o: &mut String) {
        let _ = write!(
            o,
            "<g clip-path=\"url(#{}-clip)\" fill=\"none\">",
            escape(&self.id)
        );
        for line in &self.lines {
            let mut d = String::new();
            // The last vertex written, and the last point passed over (written if the run
            // ends there, so a line always reaches its last point).
            let mut last: Option<(i64, i64)> = None;
            let mut skipped: Option<(i64, i64)> = None;
            for &(x, y) in &line.points {
                match (self.px(x), self.py(y)) {
                    (Some(px), Some(py)) => {
                        let v = (t(px), t(py));
                        match last {
                            Some(l)
                                if (v.0 - l.0).abs() < MIN_STEP && (v.1 - l.1).abs() < MIN_STEP =>
                            {
                                skipped = Some(v);
                            }
                            _ => {
                                let cmd = if last.is_some() { 'L' } else { 'M' };
                                let _ = write!(d, "{cmd}{} {}", v.0, v.1);
                                last = Some(v);
                                skipped = None;
                            }
                        }
                    }
                    _ => {
                        if let Some(v) = skipped.take() {
                            let _ = write!(d, "L{} {}", v.0, v.1);
                        }
                        last = None;
                    }
                }
            }
            if let Some(v) = skipped {
                let _ = write!(d, "L{} {}", v.0, v.1);
            }
            if d.is_empty() {
                continue;
            }
            let dash = if line.dash.is_empty() {
                String::new()
            } else {
                format!(" stroke-dasharray=\"{}\"", line.dash)
            };
            let _ = write!(
                o,
                "<path d=\"{d}\" stroke=\"{}\" stroke-width=\"20\" stroke-linejoin=\"round\"{dash}/>",
                line.color
            );
        }
        o.push_str("</g>");
    }

    fn draw_legend(&self, o: &mut String) {
        let mut entries: Vec<(&str, &str, &str, bool)> = self
            .lines
            .iter()
            .filter(|l| l.legend)
            .map(|l| (l.label.as_str(), l.color, l.dash, false))
            .collect();
        if let Some((_, layers)) = &self.stack {
            entries.extend(
                layers
                    .iter()
                    .filter(|l| l.shares.iter().any(|s| *s > 0.0))
                    .map(|l| (l.label, l.color, "", true)),
            );
        }
        let (mut x, mut y) = (LEFT, BOTTOM + 56.0);
        for (label, color, dash, block) in entries {
            // Rough width of the label at this font size (0.6 em a character).
            #[allow(clippy::cast_precision_loss)]
            let w = 30.0 + label.chars().count() as f64 * 7.8 + 14.0;
            if x + w > RIGHT && x > LEFT {
                x = LEFT;
                y += 18.0;
            }
            if block {
                let _ = write!(
                    o,
                    "<rect x=\"{}\" y=\"{}\" width=\"220\" height=\"100\" fill=\"{color}\"/>",
                    t(x),
                    t(y - 9.0)
                );
            } else {
                let dash = if dash.is_empty() {
                    String::new()
                } else {
                    format!(" stroke-dasharray=\"{dash}\"")
                };
                let _ = write!(
                    o,
                    "<path d=\"M{} {}h240\" stroke=\"{color}\" stroke-width=\"20\"{dash}/>",
                    t(x),
                    t(y - 4.0)
                );
            }
            let _ = write!(
                o,
                "<text x=\"{}\" y=\"{}\" fill=\"{INK}\">{}</text>",
                t(x + 30.0),
                t(y),
                escape(label)
            );
            x += w;
        }
        if !self.note.is_empty() {
            #[allow(clippy::cast_precision_loss)]
            let w = self.note.chars().count() as f64 * 7.8;
            if x + w > RIGHT && x > LEFT {
                x = LEFT;
                y += 18.0;
            }
            let _ = write!(
                o,
                "<text x=\"{}\" y=\"{}\" fill=\"#4a5568\">{}</text>",
                t(x),
                t(y),
                escape(&self.note)
            );
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::*;

    fn chart() -> Chart {
        Chart {
            id: "c".into(),
            title: "SNR & exposure".into(),
            desc: "a <test>".into(),
            x: Axis::fitted("exposure time", "s", Scale::Log, &[1e-3, 1.0], 12.0),
            y: Axis::fitted("SNR", "", Scale::Log, &[1.0, 100.0], 6.0),
            regions: vec![Region {
                from: 1e-3,
                to: 1e-2,
                label: "read-noise limited",
                color: "#eee",
            }],
            stack: None,
            lines: vec![Line {
                label: "total".into(),
                points: vec![(1e-3, 1.0), (1e-2, 0.0), (1e-1, 10.0), (1.0, 100.0)],
                color: "#123456",
                dash: "",
                legend: true,
            }],
            markers: vec![Marker {
                x: 0.1,
                y: 10.0,
                color: "#123456",
            }],
            note: "solid: total".into(),
        }
    }

    #[test]
    fn the_markup_is_standalone_and_labelled() {
        let m = chart().svg();
        assert!(m.starts_with("<svg xmlns=\"http://www.w3.org/2000/svg\" id=\"c\""));
        assert!(m.contains("<title id=\"c-t\">SNR &amp; exposure</title>"));
        assert!(m.contains("<desc id=\"c-d\">a &lt;test&gt;</desc>"));
        assert!(m.contains(">read-noise limited</text>"));
        assert!(m.contains(">1 ms</text>") && m.contains(">100 ms</text>"));
        assert!(m.contains(">solid: total</text>"));
        assert!(m.ends_with("</svg>"));
    }

    #[test]
    fn a_point_a_log_axis_cannot_place_breaks_the_line() {
        let c = chart();
        let m = c.svg();
        // x 1e-3 is the left edge, y 1 the bottom; the zero at 1e-2 lifts the pen.
        let start = format!("M{} {}", t(LEFT), t(BOTTOM));
        let after = format!("M{} {}", t(c.px(0.1).unwrap()), t(c.py(10.0).unwrap()));
        assert!(m.contains(&format!("d=\"{start}{after}L")), "{m}");
    }

    #[test]
    fn points_closer_than_half_a_unit_are_drawn_once_and_the_last_is_kept() {
        let mut c = chart();
        c.lines[0].points = (0..=1000)
            .map(|i| (1e-3 * 1000f64.powf(f64::from(i) / 1000.0), 5.0))
            .collect();
        let m = c.svg();
        let d = m.split("stroke=\"#123456\"").next().unwrap();
        let d = &d[d.rfind("d=\"").unwrap()..];
        let vertices = d.matches(['M', 'L']).count();
        // 526 units wide and 1.5 units at least between vertices: 1001 points give 360 or so.
        assert!((300..=365).contains(&vertices), "{vertices}");
        assert!(
            d.contains(&format!("L{} ", t(RIGHT))),
            "reaches the right edge: {d}"
        );
        let dense = |step: f64| -> usize {
            let mut c = chart();
            c.lines[0].points = (0..=10_000)
                .map(|i| (1e-3 + step * f64::from(i), 5.0))
                .collect();
            let m = c.svg();
            let d = m.split("stroke=\"#123456\"").next().unwrap();
            d[d.rfind("d=\"").unwrap()..].matches(['M', 'L']).count()
        };
        // 10 001 points over a hundredth of the axis: a handful of vertices, not ten thousand.
        assert!(dense(1e-8) < 20);
    }

    #[test]
    fn positions_and_values_invert() {
        let c = chart();
        let px = c.px(0.03).unwrap();
        assert!((c.x_at(px) / 0.03 - 1.0).abs() < 1e-12);
        assert_eq!(c.px(1e-3), Some(LEFT));
        assert_eq!(c.py(100.0), Some(TOP));
    }

    #[test]
    fn a_stack_fills_from_the_bottom_and_skips_empty_layers() {
        let mut c = chart();
        c.stack = Some((
            vec![1e-3, 1.0],
            vec![
                Layer {
                    label: "read",
                    color: "#d9822b",
                    shares: vec![1.0, 0.25],
                },
                Layer {
                    label: "none",
                    color: "#000",
                    shares: vec![0.0, 0.0],
                },
            ],
        ));
        let m = c.svg();
        assert!(m.contains("fill=\"#d9822b\""));
        assert!(!m.contains("fill=\"#000\""));
        assert!(m.contains(">read</text>") && !m.contains(">none</text>"));
    }
}
