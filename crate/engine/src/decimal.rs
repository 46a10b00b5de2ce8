//! Decimal text of an `f64` without the standard library's float formatting.
//!
//! `format!("{x}")`, `{x:e}`, `{x:.3}` and `{x:.3e}` on an `f64` link core's float formatting
//! (flt2dec: Grisu with a Dragon4 fallback and their tables), about 21 KB of wasm and 7 KB of
//! the self-contained page once packed (measured, issue 15). The engine, the page and the frame
//! worker write their numbers through these four wrappers instead, which start from the shortest
//! decimal digits that read back as the number (zmij, the algorithm serde_json writes JSON
//! numbers with, already linked):
//!
//! - [`Plain`] writes what `{}` writes (checked against it by the tests, number for number but
//!   where the binary value lies exactly halfway between two shortest forms, where zmij takes
//!   the even last digit as Python's `repr` does: both read back as the number);
//! - [`Exp`] writes what `{:e}` writes, with the same exception;
//! - [`Fixed`] and [`ExpFixed`] write what `{:.N}` and `{:.Ne}` write, except where the shortest
//!   digits end exactly on a half at the cut: those are rounded half away from zero (`Fixed(1.005,
//!   2)` is `1.01`, where `{:.2}` rounds the binary value, 1.00499…, to `1.00`), as a person
//!   reading the number would, and as the page's figures are (`Intl.NumberFormat`'s rounding).
//!   Beyond the 15 to 17 significant digits that identify the number they write zeros, where std
//!   writes the binary value's exact expansion.
//!
//! Each honours a width and alignment (`{:>8}`) through [`fmt::Formatter::pad`].

use std::fmt;

/// The shortest decimal digits that read back as |x| (finite), most significant first, without
/// leading or trailing zeros, and where the decimal point stands: |x| = 0.d₀d₁… × 10^point.
/// Zero is no digits.
struct Digits {
    digits: Vec<u8>,
    /// |x| = 0.d₀d₁d₂… × 10^point.
    point: i32,
}

impl Digits {
    fn of(x: f64) -> Digits {
        let mut buffer = zmij::Buffer::new();
        let text = buffer.format_finite(x.abs());
        let (mantissa, exponent) = match text.split_once(['e', 'E']) {
            Some((m, e)) => (m, e.parse::<i32>().unwrap_or(0)),
            None => (text, 0),
        };
        let mut digits = Vec::with_capacity(17);
        let mut before_point: i32 = 0;
        let mut seen_point = false;
        for b in mantissa.bytes() {
            match b {
                b'.' => seen_point = true,
                b'0'..=b'9' => {
                    if digits.is_empty() && b == b'0' {
                        // A leading zero: it moves the point only after the decimal point.
                        if seen_point {
                            before_point -= 1;
                        }
                        continue;
                    }
                    digits.push(b - b'0');
                    if !seen_point {
                        before_point += 1;
                    }
                }
                _ => {}
            }
        }
        while digits.last() == Some(&0) {
            digits.pop();
        }
        let point = if digits.is_empty() {
            0
        } else {
            before_point.saturating_add(exponent)
        };
        Digits { digits, point }
    }

    /// Keep `keep` digits (at least none), rounding half away from zero on the digits dropped;
    /// a carry out of the first digit moves the point.
    fn round_to(&mut self, keep: i64) {
        let len = i64::try_from(self.digits.len()).unwrap_or(i64::MAX);
        if keep >= len {
            return;
        }
        let keep = usize::try_from(keep.max(0)).unwrap_or(0);
        let up = self.digits.get(keep).is_some_and(|&d| d >= 5);
        self.digits.truncate(keep);
        if up {
            let mut carry = true;
            for d in self.digits.iter_mut().rev() {
                if *d == 9 {
                    *d = 0;
                } else {
                    *d += 1;
                    carry = false;
                    break;
                }
            }
            if carry {
                self.digits.insert(0, 1);
                self.point = self.point.saturating_add(1);
            }
        }
        while self.digits.last() == Some(&0) {
            self.digits.pop();
        }
        if self.digits.is_empty() {
            self.point = 0;
        }
    }

    /// The digit at position `i` counted from the first (zero beyond the digits held).
    fn at(&self, i: i64) -> char {
        usize::try_from(i)
            .ok()
            .and_then(|i| self.digits.get(i))
            .map_or('0', |&d| char::from(b'0' + d))
    }

    /// Positional text with exactly `decimals` digits after the point (none: no point), or as
    /// many as the digits need when `decimals` is `None`.
    fn positional(&self, out: &mut String, decimals: Option<usize>) {
        let point = i64::from(self.point);
        let len = i64::try_from(self.digits.len()).unwrap_or(0);
        if point <= 0 {
            out.push('0');
        } else {
            for i in 0..point {
                out.push(self.at(i));
            }
        }
        let after = match decimals {
            Some(n) => i64::try_from(n).unwrap_or(0),
            None => (len - point).max(0),
        };
        if after > 0 {
            out.push('.');
            for k in 0..after {
                out.push(self.at(point + k));
            }
        }
    }

    /// Scientific text `d.ddd` + `e` + exponent, with exactly `decimals` digits after the point
    /// or as many as the digits need.
    fn scientific(&self, out: &mut String, decimals: Option<usize>) {
        let len = i64::try_from(self.digits.len()).unwrap_or(0);
        out.push(self.at(0));
        let after = match decimals {
            Some(n) => i64::try_from(n).unwrap_or(0),
            None => (len - 1).max(0),
        };
        if after > 0 {
            out.push('.');
            for k in 0..after {
                out.push(self.at(1 + k));
            }
        }
        out.push('e');
        let exponent = if self.digits.is_empty() {
            0
        } else {
            self.point - 1
        };
        out.push_str(&exponent.to_string());
    }
}

/// The shortest decimal digits that read back as |x| (finite), most significant first, and the
/// decimal exponent of the first: |x| = d₀.d₁d₂… × 10^exp, the digits and exponent `{:e}`
/// writes (zero is `[0]`, 0). For a caller that rounds and lays out digits itself, without
/// going through text (the page's figures, crate/web's display).
#[must_use]
pub fn shortest_digits(x: f64) -> (Vec<u8>, i32) {
    let d = Digits::of(x);
    if d.digits.is_empty() {
        (vec![0], 0)
    } else {
        (d.digits, d.point - 1)
    }
}

/// The text of a value that is not finite, as Rust writes it, or `None`.
fn not_finite(x: f64) -> Option<&'static str> {
    if x.is_nan() {
        Some("NaN")
    } else if x == f64::INFINITY {
        Some("inf")
    } else if x == f64::NEG_INFINITY {
        Some("-inf")
    } else {
        None
    }
}

fn write(
    f: &mut fmt::Formatter<'_>,
    x: f64,
    body: impl FnOnce(&mut String, Digits),
) -> fmt::Result {
    if let Some(text) = not_finite(x) {
        return f.pad(text);
    }
    let mut out = String::with_capacity(24);
    if x.is_sign_negative() {
        out.push('-');
    }
    body(&mut out, Digits::of(x));
    f.pad(&out)
}

/// `x` as `{}` writes it: the shortest digits that read back as `x`, positional (`0.0000001`,
/// `1e21` as `1000000000000000000000`), `-0` for negative zero.
#[derive(Debug, Clone, Copy)]
pub struct Plain(pub f64);

impl fmt::Display for Plain {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write(f, self.0, |out, d| d.positional(out, None))
    }
}

/// `x` as `{:e}` writes it: the shortest digits, scientific (`2.971e-5`, `1e0`).
#[derive(Debug, Clone, Copy)]
pub struct Exp(pub f64);

impl fmt::Display for Exp {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write(f, self.0, |out, d| d.scientific(out, None))
    }
}

/// `x` with `.1` decimals, as `{:.N}` writes it (half away from zero on the shortest digits).
#[derive(Debug, Clone, Copy)]
pub struct Fixed(pub f64, pub usize);

impl fmt::Display for Fixed {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let decimals = self.1;
        write(f, self.0, |out, mut d| {
            let decimals_i = i64::try_from(decimals).unwrap_or(i64::MAX);
            d.round_to(i64::from(d.point).saturating_add(decimals_i));
            d.positional(out, Some(decimals));
        })
    }
}

/// `x` in scientific form with `.1` decimals, as `{:.Ne}` writes it.
#[derive(Debug, Clone, Copy)]
pub struct ExpFixed(pub f64, pub usize);

impl fmt::Display for ExpFixed {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let decimals = self.1;
        write(f, self.0, |out, mut d| {
            d.round_to(
                i64::try_from(decimals)
                    .unwrap_or(i64::MAX)
                    .saturating_add(1),
            );
            d.scientific(out, Some(decimals));
        })
    }
}

#[cfg(test)]
mod tests {
    use super::{Exp, ExpFixed, Fixed, Plain};
    use proptest::prelude::*;

    // The reference throughout is the standard library's own float formatting (core::fmt,
    // flt2dec), computing the same text: these wrappers replace it in the wasm.

    fn values() -> Vec<f64> {
        vec![
            0.0,
            -0.0,
            1.0,
            -1.0,
            0.1,
            0.3,
            2.971e-5,
            7.432e-4,
            1e-7,
            1e21,
            1e22,
            123_456.0,
            9.999_999_999_999_998e22,
            f64::MIN_POSITIVE,
            5e-324,
            f64::MAX,
            f64::MIN,
            std::f64::consts::PI,
            1.0 / 3.0,
            0.7,
            2.3,
            99.96,
            0.000_999_95,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
        ]
    }

    #[test]
    fn plain_and_exp_are_what_std_writes() {
        for x in values() {
            assert_eq!(Plain(x).to_string(), format!("{x}"), "{{}} of {x:e}");
            assert_eq!(Exp(x).to_string(), format!("{x:e}"), "{{:e}} of {x:e}");
        }
    }

    #[test]
    fn fixed_is_what_std_writes_away_from_ties() {
        // Beyond the 15 to 17 significant digits that identify a number, std writes the binary
        // value's exact expansion and these wrappers write zeros: f64::MAX and the subnormal
        // 5e-324 (one digit, 4.94…e-324) are left out.
        for x in values()
            .into_iter()
            .filter(|x| x.is_nan() || x.abs() < 1e15 && (*x == 0.0 || x.abs() >= f64::MIN_POSITIVE))
        {
            for n in [0, 1, 2, 3, 4, 6] {
                assert_eq!(
                    Fixed(x, n).to_string(),
                    format!("{x:.n$}"),
                    "{{:.{n}}} of {x:e}"
                );
                assert_eq!(
                    ExpFixed(x, n).to_string(),
                    format!("{x:.n$e}"),
                    "{{:.{n}e}} of {x:e}"
                );
            }
        }
    }

    #[test]
    fn ties_on_the_shortest_digits_round_away_from_zero() {
        // Common practice, no source: 1.005 is 1.00499999999999989… in binary, which {:.2}
        // rounds down; a reader of "1.005" rounds it up, as Intl.NumberFormat does.
        assert_eq!(Fixed(1.005, 2).to_string(), "1.01");
        assert_eq!(Fixed(-0.125, 2).to_string(), "-0.13");
        assert_eq!(Fixed(0.5, 0).to_string(), "1");
        assert_eq!(Fixed(9.995, 2).to_string(), "10.00");
        assert_eq!(ExpFixed(9.995, 2).to_string(), "1.00e1");
        assert_eq!(Fixed(0.0004, 3).to_string(), "0.000");
        assert_eq!(Fixed(-0.0004, 3).to_string(), "-0.000");
    }

    #[test]
    #[allow(clippy::unwrap_used)] // test code
    fn shortest_digits_are_those_std_writes_with_an_exponent() {
        for x in values().into_iter().filter(|x| x.is_finite()) {
            let e = format!("{:e}", x.abs());
            let (mantissa, exponent) = e.split_once('e').unwrap();
            let want: Vec<u8> = mantissa
                .bytes()
                .filter(u8::is_ascii_digit)
                .map(|b| b - b'0')
                .collect();
            assert_eq!(
                super::shortest_digits(x),
                (want, exponent.parse().unwrap()),
                "{e}"
            );
        }
    }

    #[test]
    fn width_and_alignment_are_honoured() {
        assert_eq!(format!("{:>8}", Fixed(1.5, 2)), "    1.50");
        assert_eq!(format!("{:<6}|", Plain(0.25)), "0.25  |");
    }

    /// True when the shortest digits of |x| cut after `keep` significant digits end exactly
    /// on a half: where this module and std may differ by design.
    fn tie_at(text_exp: &str, keep: usize) -> bool {
        let mantissa = text_exp.split('e').next().unwrap_or("");
        let digits: Vec<u8> = mantissa.bytes().filter(u8::is_ascii_digit).collect();
        digits.get(keep) == Some(&b'5') && digits.len() == keep + 1
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(4000))]
        #[test]
        fn any_bits_give_std_text(bits in any::<u64>()) {
            // Where the binary value lies exactly halfway between two shortest forms (at 17
            // digits), zmij takes the even one, as Python's repr does, and std the other:
            // both read back as the number, have as many digits and differ by one in the last.
            let x = f64::from_bits(bits);
            for (ours, std) in [(Plain(x).to_string(), format!("{x}")), (Exp(x).to_string(), format!("{x:e}"))] {
                if ours != std {
                    prop_assert!(x.is_finite());
                    prop_assert_eq!(ours.parse::<f64>().map(f64::to_bits), Ok(bits));
                    prop_assert_eq!(ours.len(), std.len());
                }
            }
        }

        #[test]
        fn ordinary_magnitudes_give_std_fixed_text(m in -1.0e7f64..1.0e7, scale in -12i32..12, n in 0usize..8) {
            let x = m * 10f64.powi(scale);
            let e = format!("{:e}", x.abs());
            // Decimals kept in scientific form: n; in positional form: point + n digits.
            let point = e.split('e').nth(1).and_then(|s| s.parse::<i64>().ok()).unwrap_or(0) + 1;
            let keep_fixed = usize::try_from(point + i64::try_from(n).unwrap_or(0)).unwrap_or(0);
            if !tie_at(&e, n + 1) {
                prop_assert_eq!(ExpFixed(x, n).to_string(), format!("{x:.n$e}"));
            }
            if keep_fixed < 15 && !tie_at(&e, keep_fixed) {
                prop_assert_eq!(Fixed(x, n).to_string(), format!("{x:.n$}"));
            }
        }
    }
}
