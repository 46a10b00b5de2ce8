//! The SVG primitives every drawing of the page is made with: escaping, integer coordinates,
//! log and linear axes with their ticks, values with engineering prefixes, and the opening tag
//! with its title and description for screen readers.
//!
//! `chart.rs` (the curves), `plot.rs` (the light's spectrum, the QE curve) and `frames_plot.rs`
//! (the photon transfer curve) draw with these; none of them writes its own. Pure functions,
//! tested natively; no DOM, no figure computed.

use std::fmt::Write as _;

/// Most ticks an axis draws (a bound on the work for a degenerate range).
const MAX_TICKS: usize = 40;

/// Escape text for SVG markup.
#[must_use]
pub fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Largest coordinate written, in drawing units either way: far outside any drawing (points
/// beyond are clipped), and far inside the integers.
const MAX_COORD: f64 = 10_000.0;

/// A coordinate in tenths of a drawing unit, as an integer (compact and exact to write; it keeps
/// Rust's float formatting out of the page's wasm). Non-finite values are 0.
#[must_use]
pub fn tenths(v: f64) -> i64 {
    rounded(v * 10.0, 10.0 * MAX_COORD)
}

/// A coordinate in whole drawing units, as an integer; non-finite values are 0.
#[must_use]
pub fn whole(v: f64) -> i64 {
    rounded(v, MAX_COORD)
}

fn rounded(v: f64, limit: f64) -> i64 {
    if !v.is_finite() {
        return 0;
    }
    // OK: a saturating cast of a value clamped to ±limit, far inside i64.
    #[allow(clippy::cast_possible_truncation)]
    let r = v.max(-limit).min(limit).round() as i64;
    r
}

/// Write the head of a standalone SVG: the opening tag (with the namespace, so the same text is
/// an exported file), then `<title>` and `<desc>`, whose ids label it for screen readers.
pub fn open(o: &mut String, head: &Head<'_>) {
    let id = escape(head.id);
    let (ts, ds) = head.id_suffixes;
    let _ = write!(
        o,
        "<svg xmlns=\"http://www.w3.org/2000/svg\"{} viewBox=\"0 0 {} {}\" role=\"img\" \
         aria-labelledby=\"{id}-{ts} {id}-{ds}\"{}><title id=\"{id}-{ts}\">{}</title>\
         <desc id=\"{id}-{ds}\">{}</desc>",
        head.svg_id
            .map_or(String::new(), |s| format!(" id=\"{}\"", escape(s))),
        head.width,
        head.height,
        head.attributes,
        escape(head.title),
        escape(head.desc),
    );
}

/// What [`open`] writes.
pub struct Head<'a> {
    /// Prefix of the title's and description's ids.
    pub id: &'a str,
    /// The SVG element's own id, if it has one.
    pub svg_id: Option<&'a str>,
    /// Suffixes of the title's and description's ids (`t`, `d`).
    pub id_suffixes: (&'a str, &'a str),
    /// The view box's size, in the units coordinates are written in.
    pub width: i64,
    /// The view box's height.
    pub height: i64,
    /// More attributes of the tag, each with a leading space (` class="plot-svg"`).
    pub attributes: &'a str,
    /// The title.
    pub title: &'a str,
    /// The description.
    pub desc: &'a str,
}

/// How an axis maps values to positions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scale {
    /// Equal steps for equal differences.
    Linear,
    /// Equal steps for equal ratios (values must be > 0).
    Log,
}

/// One axis: its name and unit (for labels) and the range drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// What the axis shows, in words.
    pub label: String,
    /// Unit written after each tick value (with an engineering prefix); empty for a ratio.
    pub unit: &'static str,
    /// Spacing.
    pub scale: Scale,
    /// Value at the start (left or bottom).
    pub lo: f64,
    /// Value at the end (right or top).
    pub hi: f64,
}

impl Axis {
    /// An axis spanning `values` (non-finite values, and values ≤ 0 on a log axis, ignored),
    /// widened to whole decades on a log axis, with `max_decades` at most below the top.
    #[must_use]
    pub fn fitted(
        label: &str,
        unit: &'static str,
        scale: Scale,
        values: &[f64],
        max_decades: f64,
    ) -> Axis {
        let usable = |v: &&f64| v.is_finite() && (scale == Scale::Linear || **v > 0.0);
        let (mut lo, mut hi) = values
            .iter()
            .filter(usable)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        if lo > hi {
            (lo, hi) = if scale == Scale::Log {
                (1.0, 10.0)
            } else {
                (0.0, 1.0)
            };
        }
        if scale == Scale::Log {
            hi = 10f64.powf(hi.log10().ceil());
            lo = 10f64
                .powf(lo.log10().floor())
                .max(hi / 10f64.powf(max_decades));
            if lo >= hi {
                lo = hi / 10.0;
            }
        } else if lo >= hi {
            lo -= 1.0;
            hi += 1.0;
        }
        Axis {
            label: label.to_string(),
            unit,
            scale,
            lo,
            hi,
        }
    }

    /// An axis spanning `values` with room around them: whole decades on a log axis; on a
    /// linear one 5 % either side, and zero included when `with_zero`. Unnamed (the caller
    /// writes its own axis names).
    #[must_use]
    pub fn padded(values: &[f64], scale: Scale, with_zero: bool) -> Axis {
        let log = scale == Scale::Log;
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for &v in values
            .iter()
            .filter(|v| v.is_finite() && (!log || **v > 0.0))
        {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        if !lo.is_finite() {
            (lo, hi) = if log { (1.0, 10.0) } else { (0.0, 1.0) };
        }
        if log {
            lo = 10f64.powf(lo.log10().floor());
            hi = 10f64.powf(hi.log10().ceil());
            if hi <= lo {
                hi = lo * 10.0;
            }
        } else {
            if with_zero {
                lo = lo.min(0.0);
                hi = hi.max(0.0);
            }
            let pad = if hi > lo { (hi - lo) * 0.05 } else { 1.0 };
            lo -= pad;
            hi += pad;
        }
        Axis {
            label: String::new(),
            unit: "",
            scale,
            lo,
            hi,
        }
    }

    /// Where `v` falls between the ends, 0 at `lo` and 1 at `hi` (beyond them outside 0..1;
    /// `None` for a value a log axis cannot place).
    #[must_use]
    pub fn fraction(&self, v: f64) -> Option<f64> {
        let f = match self.scale {
            Scale::Linear => (v - self.lo) / (self.hi - self.lo),
            Scale::Log if v > 0.0 => (v / self.lo).ln() / (self.hi / self.lo).ln(),
            Scale::Log => return None,
        };
        f.is_finite().then_some(f)
    }

    /// The value at fraction `f` of the way from `lo` to `hi`.
    #[must_use]
    pub fn value_at(&self, f: f64) -> f64 {
        match self.scale {
            Scale::Linear => self.lo + f * (self.hi - self.lo),
            Scale::Log => self.lo * (self.hi / self.lo).powf(f),
        }
    }

    /// Whether the unit is short enough to write after every tick (else the axis name
    /// carries it and ticks show the number with its prefix only).
    fn unit_on_ticks(&self) -> bool {
        self.unit.chars().count() <= 3
    }

    /// The axis name as drawn: with its unit when the ticks do not carry it.
    #[must_use]
    pub fn title(&self) -> String {
        if self.unit_on_ticks() {
            self.label.clone()
        } else {
            format!("{}, {}", self.label, self.unit)
        }
    }

    /// Tick values and their labels (engineering prefixes, with the unit when it is short).
    #[must_use]
    pub fn ticks(&self) -> Vec<(f64, String)> {
        let unit = if self.unit_on_ticks() { self.unit } else { "" };
        self.tick_values()
            .into_iter()
            .map(|v| (v, eng(v, unit)))
            .collect()
    }

    /// Tick values: every decade of a log axis (every other one beyond eight, with 2 and 5
    /// between when it spans less than two), round steps of 1, 2 or 5 on a linear one.
    #[must_use]
    pub fn tick_values(&self) -> Vec<f64> {
        let mut out = Vec::new();
        match self.scale {
            Scale::Log => {
                let (a, b) = (self.lo.log10().ceil(), self.hi.log10().floor());
                let decades = b - a;
                let every = if decades > 8.0 { 2.0 } else { 1.0 };
                let mut k = a;
                while k <= b && out.len() < MAX_TICKS {
                    let v = 10f64.powf(k);
                    out.push(v);
                    if decades < 2.0 {
                        for m in [2.0, 5.0] {
                            let w = v * m;
                            if w <= self.hi {
                                out.push(w);
                            }
                        }
                    }
                    k += every;
                }
            }
            Scale::Linear => {
                let raw = (self.hi - self.lo) / 5.0;
                if !(raw > 0.0 && raw.is_finite()) {
                    return out;
                }
                let mag = 10f64.powf(raw.log10().floor());
                let step = [1.0, 2.0, 5.0, 10.0]
                    .into_iter()
                    .map(|m| m * mag)
                    .find(|s| *s >= raw)
                    .unwrap_or(10.0 * mag);
                let mut v = (self.lo / step).ceil() * step;
                while v <= self.hi + step * 1e-9 && out.len() < MAX_TICKS {
                    // Snap away the rounding left by the multiplication (−0.0000001 → 0).
                    out.push((v / step).round() * step);
                    v += step;
                }
            }
        }
        out
    }
}

/// A value with an engineering prefix and its unit: `eng(0.00025, "s")` is `250 µs`; three
/// significant digits at most, trailing zeros dropped. A unit-less value above 1000 gets `k`,
/// `M`; a temperature or a dB value is written plain.
#[must_use]
pub fn eng(v: f64, unit: &str) -> String {
    if !v.is_finite() {
        return "—".into();
    }
    let plain = unit == "°C" || unit == "dB" || unit == "%";
    let exp3 = if v == 0.0 || plain {
        0
    } else {
        // OK to truncate: a decade count of a finite non-zero double, within ±330.
        #[allow(clippy::cast_possible_truncation)]
        let e = (v.abs().log10() / 3.0).floor() as i32 * 3;
        e.clamp(-15, 12)
    };
    let prefix = match exp3 {
        -15 => "f",
        -12 => "p",
        -9 => "n",
        -6 => "µ",
        -3 => "m",
        3 => "k",
        6 => "M",
        9 => "G",
        12 => "T",
        _ => "",
    };
    let m = v / 10f64.powi(exp3);
    // Digits after the point for three significant digits.
    let int_digits = if m == 0.0 {
        1.0
    } else {
        m.abs().log10().floor() + 1.0
    };
    // OK to truncate: 0..=2.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let decimals = (3.0 - int_digits).clamp(0.0, 2.0) as usize;
    let mut text = engine::decimal::Fixed(m, decimals).to_string();
    if text.contains('.') {
        text = text.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    if text == "-0" {
        text = "0".into();
    }
    let sep = if unit.is_empty() && prefix.is_empty() {
        ""
    } else {
        " "
    };
    format!("{text}{sep}{prefix}{unit}")
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::*;

    #[test]
    fn engineering_prefixes() {
        // SI prefixes (BIPM, The International System of Units, 9th ed., 2019, table 7).
        assert_eq!(eng(0.00025, "s"), "250 µs");
        assert_eq!(eng(1e-3, "s"), "1 ms");
        assert_eq!(eng(1.0, "s"), "1 s");
        assert_eq!(eng(12_500.0, "e⁻"), "12.5 ke⁻");
        assert_eq!(eng(1e6, "lx"), "1 Mlx");
        assert_eq!(eng(0.1, ""), "100 m");
        assert_eq!(eng(100.0, ""), "100");
        assert_eq!(eng(2000.0, ""), "2 k");
        assert_eq!(eng(-15.0, "°C"), "-15 °C");
        assert_eq!(eng(0.0, "s"), "0 s");
        assert_eq!(eng(4.567_8, "e⁻"), "4.57 e⁻");
        assert_eq!(eng(f64::NAN, "s"), "—");
    }

    #[test]
    fn log_axes_take_whole_decades_and_tick_each() {
        let a = Axis::fitted("x", "s", Scale::Log, &[2e-4, 0.0, 3.0, f64::NAN], 12.0);
        assert_eq!((a.lo, a.hi), (1e-4, 10.0));
        let labels: Vec<String> = a.ticks().into_iter().map(|t| t.1).collect();
        assert_eq!(labels, ["100 µs", "1 ms", "10 ms", "100 ms", "1 s", "10 s"]);
        assert!((a.fraction(1e-2).unwrap() - 0.4).abs() < 1e-12);
        assert!((a.value_at(0.4) / 1e-2 - 1.0).abs() < 1e-12);
        assert_eq!(a.fraction(0.0), None);
        // Capped at max_decades below the top.
        let a = Axis::fitted("y", "", Scale::Log, &[1e-9, 50.0], 4.0);
        assert_eq!((a.lo, a.hi), (1e-2, 100.0));
    }

    #[test]
    fn linear_ticks_are_round_steps() {
        let a = Axis::fitted("T", "°C", Scale::Linear, &[-15.0, 65.0], 0.0);
        let ticks: Vec<f64> = a.ticks().into_iter().map(|t| t.0).collect();
        assert_eq!(ticks, [0.0, 20.0, 40.0, 60.0]);
        // A long unit moves from the ticks to the axis name.
        let a = Axis::fitted("flux", "ph/(µm²·s)", Scale::Log, &[1.0, 1e3], 12.0);
        assert_eq!(a.ticks()[3].1, "1 k");
        assert_eq!(a.title(), "flux, ph/(µm²·s)");
    }

    #[test]
    fn padded_axes_hold_their_values_with_room() {
        let a = Axis::padded(&[2.0, 80.0], Scale::Log, false);
        assert_eq!((a.lo, a.hi), (1.0, 100.0));
        let a = Axis::padded(&[10.0, 30.0], Scale::Linear, true);
        assert_eq!((a.lo, a.hi), (-1.5, 31.5));
        let a = Axis::padded(&[f64::NAN], Scale::Linear, false);
        assert_eq!((a.lo, a.hi), (-0.05, 1.05));
    }

    #[test]
    fn coordinates_are_integers_and_never_fail() {
        assert_eq!(tenths(12.34), 123);
        assert_eq!(whole(12.5), 13);
        assert_eq!(whole(f64::NAN), 0);
        assert_eq!(whole(1e300), 10_000);
        assert_eq!(tenths(-1e300), -100_000);
    }

    #[test]
    fn the_head_is_labelled_and_escaped() {
        let mut o = String::new();
        open(
            &mut o,
            &Head {
                id: "p",
                svg_id: None,
                id_suffixes: ("t", "d"),
                width: 100,
                height: 50,
                attributes: " class=\"plot-svg\"",
                title: "A & B",
                desc: "<x>",
            },
        );
        assert_eq!(
            o,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 100 50\" role=\"img\" \
             aria-labelledby=\"p-t p-d\" class=\"plot-svg\"><title id=\"p-t\">A &amp; B</title>\
             <desc id=\"p-d\">&lt;x&gt;</desc>"
        );
    }
}
