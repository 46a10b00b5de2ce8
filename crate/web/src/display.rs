//! How a figure is written on the page: rounded text as the browser's `Intl.NumberFormat("en")`
//! writes it (computed here from the shortest decimal form), full precision by JavaScript's
//! `Number.prototype.toString` (shortest round-trip form).
//!
//! Formatting only. It computes no figure and rounds nothing that is passed back to the engine. The [`Numbers`]
//! trait lets the page's pure parts (the curves' readouts, the comparison table) be tested
//! natively with a formatter of their own; [`Browser`] is the page's.

/// Significant digits shown for a figure: enough to compare designs, few enough to read.
const SHOWN_DIGITS: usize = 4;
/// Significant digits shown for a share or a fill, in percent.
const SHOWN_PERCENT_DIGITS: usize = 3;
/// Magnitudes outside [1e-3, 1e6) are written with an exponent.
const PLAIN_MIN: f64 = 1e-3;
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

/// Numbers as Rust writes them, for the native tests of the pure modules (the page uses
/// [`rounded`]): three decimals, percentages with one.
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

/// `digits` × 10^exp rounded to at most `n` significant digits, half away from zero on those
/// decimal digits (ICU's default rounding mode, halfExpand, which `Intl.NumberFormat` applies to
/// the shortest decimal form: 1.0005 becomes 1.001), trailing zeros dropped.
fn round_digits(mut digits: Vec<u8>, mut exp: i32, n: usize) -> (Vec<u8>, i32) {
    let n = n.max(1);
    if digits.get(n).is_some_and(|&d| d >= 5) {
        digits.truncate(n);
        let mut carry = true;
        for d in digits.iter_mut().rev() {
            if *d == 9 {
                *d = 0;
            } else {
                *d += 1;
                carry = false;
                break;
            }
        }
        if carry {
            digits.insert(0, 1);
            digits.truncate(n);
            exp += 1;
        }
    } else {
        digits.truncate(n);
    }
    while digits.len() > 1 && digits.last() == Some(&0) {
        digits.pop();
    }
    (digits, exp)
}

/// Decimal digits as text, grouped by three with commas before the point (English, as
/// `Intl.NumberFormat("en")` writes them): `(\[1, 2, 3, 5\], 3)` is `1,235`.
fn positional(digits: &[u8], exp: i32) -> String {
    let digit = |i: i64| -> char {
        usize::try_from(i)
            .ok()
            .and_then(|i| digits.get(i))
            .map_or('0', |&d| char::from(b'0' + d))
    };
    let exp = i64::from(exp);
    let len = i64::try_from(digits.len()).unwrap_or(0);
    let mut out = String::new();
    if exp < 0 {
        out.push_str("0.");
        for _ in 0..(-exp - 1) {
            out.push('0');
        }
        out.extend((0..len).map(digit));
        return out;
    }
    for i in 0..=exp {
        out.push(digit(i));
        let left = exp - i;
        if left > 0 && left % 3 == 0 {
            out.push(',');
        }
    }
    if len > exp + 1 {
        out.push('.');
        out.extend((exp + 1..len).map(digit));
    }
    out
}

/// The rounded text for a figure, written as `Intl.NumberFormat("en")` writes it with at most
/// four significant digits (percentages with three), in scientific form outside [10⁻³, 10⁶),
/// where `2.971E-5` then becomes `2.971 × 10⁻⁵` ([`times_ten`]). Computed here rather than by
/// the browser's `Intl.NumberFormat`, whose three formatters took about 20 ms to create at the
/// page's start (measured in Chromium), with the same text (checked against node's ICU).
#[must_use]
pub fn rounded(x: f64, style: Style) -> String {
    if x.is_nan() {
        return "NaN".into();
    }
    let sign = if x.is_sign_negative() { "-" } else { "" };
    if x.is_infinite() {
        return format!("{sign}∞");
    }
    // The shortest digits of |x|, the ones JavaScript's `Number.prototype.toString` and ICU's
    // number formatting start from.
    let (digits, exp) = engine::decimal::shortest_digits(x);
    match style {
        Style::Percent => {
            let shift = if x == 0.0 { 0 } else { 2 };
            let (d, e) = round_digits(digits, exp + shift, SHOWN_PERCENT_DIGITS);
            format!("{sign}{}%", positional(&d, e))
        }
        Style::Number => {
            let a = x.abs();
            if a == 0.0 || (PLAIN_MIN..PLAIN_MAX).contains(&a) {
                let (d, e) = round_digits(digits, exp, SHOWN_DIGITS);
                format!("{sign}{}", positional(&d, e))
            } else {
                let (d, e) = round_digits(digits, exp, SHOWN_DIGITS);
                let mantissa = positional(&d, 0);
                times_ten(&format!("{sign}{mantissa}E{e}"))
            }
        }
    }
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
    // Expected texts from Node 20.20.2's Intl.NumberFormat (ICU 78.2), the formatter the page
    // used before: ("en", {maximumSignificantDigits: 4}), with notation "scientific" outside
    // [1e-3, 1e6) (then written with × 10ⁿ by times_ten), and style "percent" with 3 digits.
    #[test]
    #[allow(clippy::approx_constant)] // the values Intl was given, not π and e
    fn rounded_text_is_intl_number_formats() {
        let plain: [(f64, &str); 31] = [
            (0.0, "0"),
            (-0.0, "-0"),
            (1.0, "1"),
            (-1.0, "-1"),
            (2.5, "2.5"),
            (0.125, "0.125"),
            (1000.5, "1,001"),
            (1234.5, "1,235"),
            (1.0005, "1.001"),
            (1.00049, "1"),
            (12345.6, "12,350"),
            (99995.0, "100,000"),
            (99994.9, "99,990"),
            (999_999.0, "1,000,000"),
            (999_950.0, "1,000,000"),
            (0.001, "0.001"),
            (0.0012345, "0.001235"),
            (3.14159265, "3.142"),
            (-2.71828, "-2.718"),
            (1e-3, "0.001"),
            (123.456, "123.5"),
            (9.9995, "10"),
            (9.99949, "9.999"),
            (0.1 + 0.2, "0.3"),
            (1.0 / 3.0, "0.3333"),
            (2.0 / 3.0, "0.6667"),
            (65535.0, "65,540"),
            (4095.5, "4,096"),
            (100.0, "100"),
            (1e5, "100,000"),
            (123_456.7, "123,500"),
        ];
        for (x, want) in plain {
            assert_eq!(rounded(x, Style::Number), want, "{x}");
        }
        let scientific: [(f64, &str); 11] = [
            (2.971e-5, "2.971E-5"),
            (1.2e6, "1.2E6"),
            (9.9996e-5, "1E-4"),
            (-4e-12, "-4E-12"),
            (1.23456e20, "1.235E20"),
            (6.022_140_76e23, "6.022E23"),
            (1.0005e-7, "1.001E-7"),
            (1e-300, "1E-300"),
            (9.99951e10, "1E11"),
            (7.432e-4, "7.432E-4"),
            (1e6, "1E6"),
        ];
        for (x, intl) in scientific {
            assert_eq!(rounded(x, Style::Number), times_ten(intl), "{x}");
        }
        let percent: [(f64, &str); 14] = [
            (0.1234, "12.3%"),
            (1.0, "100%"),
            (0.000_123_4, "0.0123%"),
            (12.5, "1,250%"),
            (-0.05, "-5%"),
            (0.001, "0.1%"),
            (0.9995, "100%"),
            (0.99949, "99.9%"),
            (0.00125, "0.125%"),
            (0.5, "50%"),
            (0.333_333, "33.3%"),
            (0.0, "0%"),
            (0.0105, "1.05%"),
            (1.005, "101%"),
        ];
        for (x, want) in percent {
            assert_eq!(rounded(x, Style::Percent), want, "{x}");
        }
        assert_eq!(rounded(f64::NAN, Style::Number), "NaN");
        assert_eq!(rounded(f64::NEG_INFINITY, Style::Number), "-∞");
    }
}
