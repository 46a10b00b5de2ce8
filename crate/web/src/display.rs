//! How a figure is written on the page: rounded text by the browser's `Intl.NumberFormat`,
//! full precision by JavaScript's `Number.prototype.toString` (shortest round-trip form).
//!
//! Formatting only. It computes no figure and rounds nothing that is passed back to the engine;
//! it leaves number formatting to JavaScript because Rust's is large in wasm. The [`Numbers`]
//! trait lets the page's pure parts (the curves' readouts, the comparison table) be tested
//! natively with a formatter of their own; [`Browser`] is the page's.

#[cfg(target_arch = "wasm32")]
use js_sys::{Array, Function, Intl, Object, Reflect};
#[cfg(target_arch = "wasm32")]
use wasm_bindgen::JsValue;

/// Significant digits shown for a figure: enough to compare designs, few enough to read.
#[cfg(target_arch = "wasm32")]
const SHOWN_DIGITS: u32 = 4;
/// Significant digits shown for a share or a fill, in percent.
#[cfg(target_arch = "wasm32")]
const SHOWN_PERCENT_DIGITS: u32 = 3;
/// Magnitudes outside [1e-3, 1e6) are written with an exponent.
#[cfg(target_arch = "wasm32")]
const PLAIN_MIN: f64 = 1e-3;
#[cfg(target_arch = "wasm32")]
const PLAIN_MAX: f64 = 1e6;

/// How a figure is shown, from its element's `data-fmt`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// A number with [`SHOWN_DIGITS`] significant digits.
    Number,
    /// A fraction shown as a percentage.
    Percent,
}

/// How figures become text: rounded for reading, or in full (reading back the same number).
pub trait Numbers {
    /// The rounded text for a figure.
    fn rounded(&self, x: f64, style: Style) -> String;
    /// The figure at full precision.
    fn full(&self, x: f64) -> String;
}

/// Numbers as Rust writes them, for the native tests of the pure modules (the page uses the
/// browser's `Intl.NumberFormat`): three decimals, percentages with one.
#[cfg(test)]
pub(crate) struct Plain;

#[cfg(test)]
impl Numbers for Plain {
    fn rounded(&self, x: f64, style: Style) -> String {
        match style {
            Style::Number => format!("{x:.3}"),
            Style::Percent => format!("{:.1} %", x * 100.0),
        }
    }
    fn full(&self, x: f64) -> String {
        format!("{x}")
    }
}

/// The browser's formatting: [`rounded`] and [`full`].
#[cfg(target_arch = "wasm32")]
pub struct Browser;

#[cfg(target_arch = "wasm32")]
impl Numbers for Browser {
    fn rounded(&self, x: f64, style: Style) -> String {
        rounded(x, style)
    }
    fn full(&self, x: f64) -> String {
        full(x)
    }
}

#[cfg(target_arch = "wasm32")]
fn formatter(options: &[(&str, JsValue)]) -> Option<Function> {
    let opts = Object::new();
    for (k, v) in options {
        Reflect::set(&opts, &JsValue::from_str(k), v).ok()?;
    }
    let locales = Array::of1(&JsValue::from_str("en"));
    let nf = Intl::NumberFormat::new(&locales, &opts);
    Some(nf.format())
}

#[cfg(target_arch = "wasm32")]
thread_local! {
    static PLAIN: Option<Function> = formatter(&[
        ("maximumSignificantDigits", SHOWN_DIGITS.into()),
    ]);
    static SCIENTIFIC: Option<Function> = formatter(&[
        ("maximumSignificantDigits", SHOWN_DIGITS.into()),
        ("notation", "scientific".into()),
    ]);
    static PERCENT: Option<Function> = formatter(&[
        ("maximumSignificantDigits", SHOWN_PERCENT_DIGITS.into()),
        ("style", "percent".into()),
    ]);
}

#[cfg(target_arch = "wasm32")]
fn apply(f: Option<&Function>, x: f64) -> Option<String> {
    f?.call1(&JsValue::NULL, &JsValue::from_f64(x))
        .ok()?
        .as_string()
}

/// The rounded text for a figure.
#[cfg(target_arch = "wasm32")]
#[must_use]
pub fn rounded(x: f64, style: Style) -> String {
    let text = match style {
        Style::Percent => PERCENT.with(|f| apply(f.as_ref(), x)),
        Style::Number => {
            let a = x.abs();
            if a == 0.0 || (PLAIN_MIN..PLAIN_MAX).contains(&a) {
                PLAIN.with(|f| apply(f.as_ref(), x))
            } else {
                SCIENTIFIC
                    .with(|f| apply(f.as_ref(), x))
                    .map(|t| times_ten(&t))
            }
        }
    };
    text.unwrap_or_else(|| full(x))
}

/// The figure at full precision, as JavaScript writes it (reads back to the same number).
#[cfg(target_arch = "wasm32")]
#[must_use]
pub fn full(x: f64) -> String {
    js_sys::Number::from(x)
        .to_string_with_radix(10)
        .map_or_else(|_| String::new(), String::from)
}

/// Units written with an SI prefix (SI Brochure, 9th edition, §3): seconds, the radiometric and
/// photometric units and the electrical ones. Counts (e⁻, DN, photons) and compound units
/// with a prefix inside (photons/(µm²·s)) are not: the trade writes 0.03 e⁻, not 30 me⁻.
const PREFIXED_UNITS: [&str; 12] = [
    "s",
    "W/m²",
    "lx",
    "W",
    "V",
    "A",
    "J",
    "Hz",
    "F",
    "C",
    "cd/m²",
    "W/(m²·sr)",
];

/// The SI prefix for a value's engineering exponent (a multiple of 3 in −15..=12), if any.
const fn si_prefix(exp3: i32) -> Option<&'static str> {
    Some(match exp3 {
        -15 => "f",
        -12 => "p",
        -9 => "n",
        -6 => "µ",
        -3 => "m",
        0 => "",
        3 => "k",
        6 => "M",
        9 => "G",
        12 => "T",
        _ => return None,
    })
}

/// A value and its unit (`unit` as an element's `data-unit`, with its leading space) split
/// into the number to write and the unit with its SI prefix: `(2.971e-5, " s")` becomes
/// `(29.71, " µs")`. Units outside [`PREFIXED_UNITS`], zero, and values beyond the prefixes
/// come back unchanged.
#[must_use]
pub fn prefixed(x: f64, unit: &str) -> (f64, String) {
    let bare = unit.trim_start();
    if x == 0.0 || !x.is_finite() || !PREFIXED_UNITS.contains(&bare) {
        return (x, unit.to_string());
    }
    // OK to truncate: the decade count of a finite non-zero double, within ±330.
    #[allow(clippy::cast_possible_truncation)]
    let exp3 = (x.abs().log10() / 3.0).floor() as i32 * 3;
    match si_prefix(exp3) {
        Some(p) => {
            let space = &unit[..unit.len() - bare.len()];
            (x / 10f64.powi(exp3), format!("{space}{p}{bare}"))
        }
        None => (x, unit.to_string()),
    }
}

/// `Intl.NumberFormat`'s scientific text written as people read it: `2.971E-5` becomes
/// `2.971 × 10⁻⁵` (no E-notation on the page). Text without an `E` comes back unchanged.
#[must_use]
pub fn times_ten(text: &str) -> String {
    let Some((mantissa, exponent)) = text.split_once('E') else {
        return text.to_string();
    };
    let superscript: String = exponent
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            '9' => '⁹',
            other => other,
        })
        .collect();
    if exponent == "0" {
        return mantissa.to_string();
    }
    format!("{mantissa} × 10{superscript}")
}

#[cfg(test)]
mod tests {
    use super::*;

    // Common practice, no source: the prefixes of SI Brochure §3 on the page's units.
    #[test]
    fn seconds_and_watts_get_prefixes_counts_do_not() {
        let (v, u) = prefixed(2.971e-5, " s");
        assert!((v - 29.71).abs() < 1e-9 && u == " µs", "{v} {u}");
        let (v, u) = prefixed(7.432e-4, " W/m²");
        assert!((v - 743.2).abs() < 1e-9 && u == " µW/m²", "{v} {u}");
        let (v, u) = prefixed(1500.0, " lx");
        assert!((v - 1.5).abs() < 1e-12 && u == " klx", "{v} {u}");
        assert_eq!(prefixed(0.02971, " e⁻"), (0.02971, " e⁻".to_string()));
        assert_eq!(prefixed(0.0, " s"), (0.0, " s".to_string()));
        assert_eq!(prefixed(3.0, " s"), (3.0, " s".to_string()));
        // Beyond the prefixes: unchanged (written with × 10ⁿ by the caller).
        assert_eq!(prefixed(1e-20, " s"), (1e-20, " s".to_string()));
    }

    #[test]
    fn scientific_text_becomes_times_ten() {
        assert_eq!(times_ten("2.971E-5"), "2.971 × 10⁻⁵");
        assert_eq!(times_ten("1.2E6"), "1.2 × 10⁶");
        assert_eq!(times_ten("-4E-12"), "-4 × 10⁻¹²");
        assert_eq!(times_ten("5E0"), "5");
        assert_eq!(times_ten("123.4"), "123.4");
    }
}
