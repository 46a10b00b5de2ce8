//! Numbers written for people: four significant digits, SI prefixes with units, and never
//! E-notation (`687.5 µs`, `10.5 ke⁻`, `1.144 × 10⁶`). Formatting only; shared by the
//! command's tables.

/// SI prefixes from tera to nano (SI Brochure, 9th ed., Table 7).
const PREFIXES: [(f64, &str); 8] = [
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "µ"),
    (1e-9, "n"),
];

/// 4 significant digits, trailing zeros dropped.
pub fn digits(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    // OK because the count is clamped to 0..=6.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let decimals = (3.0 - v.abs().log10().floor()).clamp(0.0, 6.0) as usize;
    let t = format!("{v:.decimals$}");
    if t.contains('.') {
        t.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        t
    }
}

/// A number without a unit: plain from 0.001 to below 10⁷, else as `m × 10ⁿ` (never E-notation).
pub fn plain(x: f64) -> String {
    let a = x.abs();
    if a == 0.0 || !x.is_finite() || (1e-3..1e7).contains(&a) {
        return digits(x);
    }
    // OK because a is finite and non-zero: its decimal exponent is within ±324.
    #[allow(clippy::cast_possible_truncation)]
    let exponent = a.log10().floor() as i32;
    let mantissa = x / 10f64.powi(exponent);
    format!("{} × 10{}", digits(mantissa), superscript(exponent))
}

/// A number with its unit: plain from 0.001 to 9999, with an SI prefix beyond. `small_prefixes`
/// allows m, µ, n below 1 (for times, volts, watts).
pub fn quantity(x: f64, unit: &str, small_prefixes: bool) -> String {
    let a = x.abs();
    let with_unit = |t: String, prefix: &str| format!("{t} {prefix}{unit}").trim_end().to_string();
    if x == 0.0 || !x.is_finite() {
        return with_unit(format!("{x}"), "");
    }
    if (1e-3..1e4).contains(&a) && !(small_prefixes && a < 1.0) {
        return with_unit(digits(x), "");
    }
    match PREFIXES.iter().find(|(s, _)| a >= *s) {
        Some((scale, prefix)) if a < 1e15 => with_unit(digits(x / scale), prefix),
        _ if a >= 1e15 => format!("{} {unit}", plain(x)).trim_end().to_string(),
        _ => with_unit(digits(x / 1e-9), "n"),
    }
}

/// A time in seconds with an SI prefix (`687.5 µs`).
pub fn seconds(t: f64) -> String {
    quantity(t, "s", true)
}

fn superscript(n: i32) -> String {
    n.to_string()
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
            _ => '⁹',
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_for_people() {
        // SI prefixes: SI Brochure, 9th ed., Table 7 (k = 10³, M = 10⁶, m = 10⁻³, µ = 10⁻⁶).
        assert_eq!(quantity(10_500.0, "e⁻", false), "10.5 ke⁻");
        assert_eq!(quantity(2013.4, "e⁻", false), "2013 e⁻");
        assert_eq!(seconds(0.002), "2 ms");
        assert_eq!(seconds(6.875e-4), "687.5 µs");
        assert_eq!(quantity(0.38, "DN/e⁻", false), "0.38 DN/e⁻");
        assert_eq!(quantity(24.934, "", false), "24.93");
        assert_eq!(quantity(0.0, "e⁻", false), "0 e⁻");
        assert_eq!(quantity(0.000_014_85, "e⁻/s", false), "14.85 µe⁻/s");
        assert_eq!(plain(1_144_136.0), "1144136");
        assert_eq!(plain(2.971e-5), "2.971 × 10⁻⁵");
        assert_eq!(plain(6.2e12), "6.2 × 10¹²");
        assert_eq!(quantity(3e20, "photons", false), "3 × 10²⁰ photons");
    }
}
