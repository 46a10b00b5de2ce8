//! A key's presence and rule in words, for help texts: made from the same [`Rule`] the validator
//! checks, so a help text cannot state another limit. Numbers are written as people read them
//! (`10 000`, `10¹²`), never in E-notation. No rule is decided here.

use super::{Key, Presence, Range, RangeWithLimit, Rule};
use crate::input::{PAIRS_MAX_POINTS, PAIRS_MIN_POINTS};

/// The presence and the rule of a key, as sentences.
pub(super) fn rule(k: &Key) -> String {
    let mut out: Vec<String> = Vec::new();
    match k.rule {
        Rule::Number { presence, range } => {
            out.push(presence_words(presence));
            out.push(range_words(range));
        }
        Rule::Whole { default, min, max } => {
            out.push(match default {
                Some(d) => format!("Default: {d}."),
                None => "Required.".into(),
            });
            out.push(format!(
                "A whole number from {} to {}.",
                number(f64::from(min)),
                number(f64::from(max))
            ));
        }
        Rule::Choice { default, .. } => out.push(match default {
            Some(d) => format!("Default: {d}."),
            None => "Required.".into(),
        }),
        Rule::Text => out.push("Optional.".into()),
        Rule::Pairs {
            max_value,
            presence,
        } => {
            out.push(presence_words(presence));
            let values = match max_value {
                Some(m) => format!("from 0 to {}", number(m)),
                None => "at least 0".into(),
            };
            out.push(format!(
                "{PAIRS_MIN_POINTS} to {} points, wavelengths increasing; values {values}, not all 0.",
                number(f64::from(PAIRS_MAX_POINTS))
            ));
        }
        Rule::Object { required, .. } => out.push(if required {
            "Required.".into()
        } else {
            "Optional.".into()
        }),
        Rule::Numbers {
            count,
            range,
            default_words,
        } => {
            out.push(format!("Default: {default_words}."));
            out.push(format!("{count} numbers; for each:"));
            out.push(range_words(range));
        }
        Rule::Matrix {
            rows,
            columns,
            range,
            default_words,
        } => {
            out.push(format!("Default: {default_words}."));
            out.push(format!("{rows} rows of {columns} numbers; for each:"));
            out.push(range_words(range));
        }
        Rule::List { min, max, .. } => out.push(format!("From {min} to {max} of them.")),
        Rule::Version => out.push("Must be 1.".into()),
    }
    out.retain(|s| !s.is_empty());
    out.join(" ")
}

fn presence_words(p: Presence) -> String {
    match p {
        Presence::Required | Presence::RequiredSaying(_) => "Required.".into(),
        Presence::RequiredWhen(when) => format!("Required {when}."),
        Presence::Optional => "Optional.".into(),
        Presence::Default(v) => format!("Default: {}.", number(v)),
        Presence::DefaultFrom { words, .. } => format!("Default: {words}."),
    }
}

/// `Above 0; this calculator takes 1 to 10¹².`, or empty for any number.
fn range_words(r: RangeWithLimit) -> String {
    let rule = format_rule(r.rule());
    let limits = match (r.low_limit(), r.high_limit()) {
        (Some(a), Some(b)) => format!("this calculator takes {} to {}", number(a), number(b)),
        (Some(a), None) => format!("this calculator takes at least {}", number(a)),
        (None, Some(b)) => format!("this calculator takes at most {}", number(b)),
        (None, None) => String::new(),
    };
    let text = match (rule.is_empty(), limits.is_empty()) {
        (true, true) => return String::new(),
        (false, true) => rule,
        (true, false) => limits,
        (false, false) => format!("{rule}; {limits}"),
    };
    let mut chars = text.chars();
    match chars.next() {
        Some(first) => format!("{}{}.", first.to_uppercase(), chars.as_str()),
        None => String::new(),
    }
}

fn format_rule(r: Range) -> String {
    match (r.min(), r.max()) {
        (Some((a, true)), Some((b, true))) => format!("from {} to {}", number(a), number(b)),
        (Some((a, false)), Some((b, true))) => {
            format!("above {}, at most {}", number(a), number(b))
        }
        (Some((a, true)), Some((b, false))) => format!("from {}, below {}", number(a), number(b)),
        (Some((a, false)), Some((b, false))) => {
            format!("above {}, below {}", number(a), number(b))
        }
        (Some((a, true)), None) => format!("at least {}", number(a)),
        (Some((a, false)), None) => format!("above {}", number(a)),
        (None, Some((b, true))) => format!("at most {}", number(b)),
        (None, Some((b, false))) => format!("below {}", number(b)),
        (None, None) => String::new(),
    }
}

/// Narrow no-break space between groups of three digits (SI: a thin space, never a comma).
const GROUP: char = '\u{202f}';

/// A number as help text writes it: powers of ten from 10⁶ up and 10⁻⁴ down as `10ⁿ`, whole
/// numbers from 10 000 in groups of three digits, the rest as the shortest decimal that reads
/// back the same; a minus sign, not a hyphen.
///
/// ```
/// use engine::keys::number_words as n;
/// assert_eq!(n(1e12), "10¹²");
/// assert_eq!(n(1e-6), "10⁻⁶");
/// assert_eq!(n(100_000.0), "100\u{202f}000");
/// assert_eq!(n(-273.15), "−273.15");
/// assert_eq!(n(0.001), "0.001");
/// ```
#[must_use]
pub fn number(x: f64) -> String {
    if x < 0.0 {
        return format!("−{}", number(-x));
    }
    let e = crate::decimal::Exp(x).to_string();
    if let Some(("1", exp)) = e.split_once('e') {
        if let Ok(p) = exp.parse::<i32>() {
            if p >= 6 || p <= -4 {
                return format!("10{}", superscript(p));
            }
        }
    }
    let plain = crate::decimal::Plain(x).to_string();
    if x >= 10_000.0 && x.fract() == 0.0 {
        let digits: Vec<char> = plain.chars().collect();
        let mut out = String::new();
        for (i, c) in digits.iter().enumerate() {
            if i > 0 && (digits.len() - i).is_multiple_of(3) {
                out.push(GROUP);
            }
            out.push(*c);
        }
        return out;
    }
    plain
}

fn superscript(p: i32) -> String {
    p.to_string()
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
