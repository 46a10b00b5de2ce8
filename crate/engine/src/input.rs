//! The general JSON input reader shared by every document the engine reads (the scenario, the
//! frame manifest): one problem type, one way of reading a key and wording its problem.
//!
//! A [`Fields`] walks one JSON object, marks the keys it reads, and at the end reports every
//! key it did not read as unknown (with a "did you mean" hint, else the keys it knows), except
//! keys starting with `x_`. Rules of numbers are [`Range`]s: the format's rule, then this
//! calculator's limits. It knows nothing of what the documents mean: their rules live with
//! them (`validate`, `ptc::manifest`).

use std::fmt;

use serde_json::{Map, Value};

/// One broken rule, naming the key it concerns.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Problem {
    /// Dot path of the key (`sensor.full_well_e`), or `scenario` for the document as a whole.
    pub path: String,
    /// What is wrong, in lower case, naming the rule and the value found.
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.path, self.message)
    }
}

/// Parse JSON text, or give the one problem that says where it is malformed; `what` names
/// the document (`scenario`, `manifest`) and is the problem's path.
///
/// # Errors
/// A [`Problem`] at `what`: `not valid JSON: <serde_json's description> (line L, column C)`.
pub(crate) fn parse_json(text: &str, what: &str) -> Result<Value, Problem> {
    serde_json::from_str::<Value>(text).map_err(|e| {
        // serde_json's Display appends " at line L column C"; keep only the description.
        let s = e.to_string();
        let kind = s.find(" at line ").and_then(|i| s.get(..i)).unwrap_or(&s);
        Problem {
            path: what.to_string(),
            message: format!(
                "not valid JSON: {kind} (line {}, column {})",
                e.line(),
                e.column()
            ),
        }
    })
}

#[derive(Default)]
pub(crate) struct Problems(Vec<Problem>);

impl Problems {
    pub(crate) fn push(&mut self, path: &str, message: String) {
        self.0.push(Problem {
            path: path.to_string(),
            message,
        });
    }
    pub(crate) fn is_empty(&self) -> bool {
        self.0.is_empty()
    }
    /// The problems, in the order found.
    pub(crate) fn into_problems(self) -> Vec<Problem> {
        self.0
    }
    /// Whether a problem was found at exactly this path.
    pub(crate) fn has_problem_at(&self, path: &str) -> bool {
        self.0.iter().any(|q| q.path == path)
    }
}

/// Whether a key must be there, may be absent, or takes a default.
#[derive(Clone, Copy)]
pub(crate) enum Need {
    Required,
    Optional,
    Default(f64),
}

/// The allowed range of a number as the format states it (its rule); with this calculator's
/// limits added it is a [`RangeWithLimit`]. Built by `const` functions, so that the key
/// catalogue (`crate::keys`) states each rule once as data.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Range {
    /// (bound, inclusive): the format's rule.
    min: Option<(f64, bool)>,
    max: Option<(f64, bool)>,
}

impl Range {
    /// Any number.
    #[must_use]
    pub const fn new() -> Self {
        Range {
            min: None,
            max: None,
        }
    }
    /// Greater than `v`.
    #[must_use]
    pub const fn above(mut self, v: f64) -> Self {
        self.min = Some((v, false));
        self
    }
    /// At most `v`.
    #[must_use]
    pub const fn at_most(mut self, v: f64) -> Self {
        self.max = Some((v, true));
        self
    }
    /// Less than `v`.
    #[must_use]
    pub const fn below(mut self, v: f64) -> Self {
        self.max = Some((v, false));
        self
    }
    /// At least `v`.
    #[must_use]
    pub const fn at_least(mut self, v: f64) -> Self {
        self.min = Some((v, true));
        self
    }
    /// A lower limit of this calculator, tighter than the format's rule; checked after it.
    #[must_use]
    pub const fn at_least_limit(self, v: f64) -> RangeWithLimit {
        RangeWithLimit {
            rule: self,
            low_limit: Some(v),
            high_limit: None,
        }
    }
    /// An upper limit of this calculator, tighter than the format's rule; checked after it.
    #[must_use]
    pub const fn at_most_limit(self, v: f64) -> RangeWithLimit {
        RangeWithLimit {
            rule: self,
            low_limit: None,
            high_limit: Some(v),
        }
    }
    /// This rule with no limit of the calculator's own.
    #[must_use]
    pub const fn unlimited(self) -> RangeWithLimit {
        RangeWithLimit {
            rule: self,
            low_limit: None,
            high_limit: None,
        }
    }
    /// The lower bound and whether it is allowed itself.
    #[must_use]
    pub const fn min(&self) -> Option<(f64, bool)> {
        self.min
    }
    /// The upper bound and whether it is allowed itself.
    #[must_use]
    pub const fn max(&self) -> Option<(f64, bool)> {
        self.max
    }
}

/// A format rule plus this calculator's own limits (which keep every figure finite).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RangeWithLimit {
    rule: Range,
    low_limit: Option<f64>,
    high_limit: Option<f64>,
}

impl RangeWithLimit {
    /// An upper limit of this calculator, tighter than the format's rule.
    #[must_use]
    pub const fn at_most_limit(mut self, v: f64) -> Self {
        self.high_limit = Some(v);
        self
    }
    /// The format's rule: at most `v`.
    #[must_use]
    pub const fn at_most(mut self, v: f64) -> Self {
        self.rule.max = Some((v, true));
        self
    }
    /// The format's rule.
    #[must_use]
    pub const fn rule(&self) -> Range {
        self.rule
    }
    /// This calculator's lower limit, if it has one.
    #[must_use]
    pub const fn low_limit(&self) -> Option<f64> {
        self.low_limit
    }
    /// This calculator's upper limit, if it has one.
    #[must_use]
    pub const fn high_limit(&self) -> Option<f64> {
        self.high_limit
    }
}

impl From<Range> for RangeWithLimit {
    fn from(rule: Range) -> Self {
        RangeWithLimit {
            rule,
            low_limit: None,
            high_limit: None,
        }
    }
}

impl RangeWithLimit {
    /// The message for a value outside the range, or `None` when it is inside.
    #[must_use]
    pub fn check(&self, v: f64) -> Option<String> {
        if let Some((b, inclusive)) = self.rule.min {
            let ok = if inclusive { v >= b } else { v > b };
            if !ok {
                let op = if inclusive { "≥" } else { ">" };
                return Some(format!("must be {op} {}, got {}", show(b), show(v)));
            }
        }
        if let Some((b, inclusive)) = self.rule.max {
            let ok = if inclusive { v <= b } else { v < b };
            if !ok {
                let op = if inclusive { "≤" } else { "<" };
                return Some(format!("must be {op} {}, got {}", show(b), show(v)));
            }
        }
        if let Some(b) = self.low_limit {
            if v < b {
                return Some(format!(
                    "must be at least {} (this calculator's limit), got {}",
                    show(b),
                    show(v)
                ));
            }
        }
        if let Some(b) = self.high_limit {
            if v > b {
                return Some(format!(
                    "must be at most {} (this calculator's limit), got {}",
                    show(b),
                    show(v)
                ));
            }
        }
        None
    }
}

/// Fewest and most points of a list of `[wavelength_nm, value]` pairs (see [`Fields::pairs`]).
pub(crate) const PAIRS_MIN_POINTS: usize = 2;
pub(crate) const PAIRS_MAX_POINTS: u32 = 10_000;

/// The most keys an unknown-key message lists (see [`Fields::finish`]).
const MAX_KEYS_LISTED: usize = 12;

/// The keys of one JSON object, tracking which were read so unknown ones can be reported.
pub(crate) struct Fields<'v> {
    prefix: String,
    map: &'v Map<String, Value>,
    used: Vec<String>,
}

impl<'v> Fields<'v> {
    pub(crate) fn new(prefix: &str, map: &'v Map<String, Value>) -> Self {
        Fields {
            prefix: prefix.to_string(),
            map,
            used: Vec::new(),
        }
    }

    pub(crate) fn prefix(&self) -> String {
        if self.prefix.is_empty() {
            "scenario".to_string()
        } else {
            self.prefix.clone()
        }
    }

    pub(crate) fn path_of(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            key.to_string()
        } else {
            format!("{}.{key}", self.prefix)
        }
    }

    pub(crate) fn has(&self, key: &str) -> bool {
        self.map.get(key).is_some_and(|v| !v.is_null())
    }

    pub(crate) fn mark_used(&mut self, key: &str) {
        self.used.push(key.to_string());
    }

    pub(crate) fn had_problem_at(&self, p: &Problems, key: &str) -> bool {
        let path = self.path_of(key);
        p.0.iter().any(|q| {
            q.path == path
                || q.path
                    .strip_prefix(path.as_str())
                    .is_some_and(|rest| rest.starts_with(['[', '.']))
        })
    }

    /// The value of `key`, marking it read; `null` counts as absent.
    pub(crate) fn get(&mut self, key: &str) -> Option<&'v Value> {
        self.mark_used(key);
        self.map.get(key).filter(|v| !v.is_null())
    }

    pub(crate) fn number(
        &mut self,
        p: &mut Problems,
        key: &str,
        need: Need,
        range: impl Into<RangeWithLimit>,
    ) -> Option<f64> {
        let path = self.path_of(key);
        let v = match (self.get(key), need) {
            (None, Need::Required) => {
                p.push(&path, "required, missing".into());
                return None;
            }
            (None, Need::Optional) => return None,
            (None, Need::Default(d)) => return Some(d),
            (Some(v), _) => v,
        };
        let Some(x) = v.as_f64().filter(|x| x.is_finite()) else {
            p.push(&path, format!("must be a number, got {}", show_value(v)));
            return None;
        };
        match range.into().check(x) {
            Some(msg) => {
                p.push(&path, msg);
                None
            }
            None => Some(x),
        }
    }

    /// As [`Fields::number`], with a message of its own for a missing required key.
    pub(crate) fn number_with(
        &mut self,
        p: &mut Problems,
        key: &str,
        need: Need,
        range: impl Into<RangeWithLimit>,
        missing: &str,
    ) -> Option<f64> {
        if matches!(need, Need::Required) && !self.has(key) {
            self.mark_used(key);
            p.push(&self.path_of(key), missing.to_string());
            return None;
        }
        self.number(p, key, need, range)
    }

    /// An optional list of `[wavelength_nm, value]` pairs: at least 2, at most 10 000, with
    /// wavelengths > 0 strictly increasing, values finite, ≥ 0, at most `max_value`, not all 0.
    pub(crate) fn pairs(
        &mut self,
        p: &mut Problems,
        key: &str,
        max_value: Option<f64>,
    ) -> Option<Vec<(f64, f64)>> {
        let path = self.path_of(key);
        let v = self.get(key)?;
        let Some(items) = v.as_array() else {
            p.push(
                &path,
                format!(
                    "must be a list of [wavelength_nm, value] pairs, got {}",
                    show_value(v)
                ),
            );
            return None;
        };
        let most = usize::try_from(PAIRS_MAX_POINTS).unwrap_or(usize::MAX);
        if items.len() < PAIRS_MIN_POINTS || items.len() > most {
            p.push(
                &path,
                format!(
                    "must have from {PAIRS_MIN_POINTS} to {PAIRS_MAX_POINTS} points, got {}",
                    items.len()
                ),
            );
            return None;
        }
        let before = p.0.len();
        let mut out: Vec<(f64, f64)> = Vec::with_capacity(items.len());
        for (i, item) in items.iter().enumerate() {
            let here = format!("{path}[{i}]");
            let pair = item.as_array().filter(|a| a.len() == 2).and_then(|a| {
                let x = a.first()?.as_f64()?;
                let y = a.get(1)?.as_f64()?;
                Some((x, y))
            });
            let Some((nm, y)) = pair else {
                p.push(
                    &here,
                    format!(
                        "must be a pair [wavelength_nm, value] of numbers, got {}",
                        show_value(item)
                    ),
                );
                continue;
            };
            if !(nm > 0.0 && nm <= 1e6) {
                p.push(
                    &here,
                    format!(
                        "wavelength must be > 0 nm and at most 1e6, got {}",
                        show(nm)
                    ),
                );
                continue;
            }
            if let Some(&(prev, _)) = out.last() {
                if nm <= prev {
                    p.push(
                        &here,
                        format!(
                            "wavelengths must increase, got {} nm after {} nm",
                            show(nm),
                            show(prev)
                        ),
                    );
                    continue;
                }
            }
            if y < 0.0 || max_value.is_some_and(|m| y > m) {
                let rule =
                    max_value.map_or("≥ 0".to_string(), |m| format!("from 0 to {}", show(m)));
                p.push(&here, format!("value must be {rule}, got {}", show(y)));
                continue;
            }
            out.push((nm, y));
        }
        if p.0.len() > before {
            return None;
        }
        if out.iter().all(|(_, y)| *y == 0.0) {
            p.push(&path, "every value is 0".into());
            return None;
        }
        Some(out)
    }

    pub(crate) fn integer(
        &mut self,
        p: &mut Problems,
        key: &str,
        default: Option<u32>,
        min: u32,
        max: u32,
    ) -> Option<u32> {
        let path = self.path_of(key);
        let v = match (self.get(key), default) {
            (None, Some(d)) => return Some(d),
            (None, None) => {
                p.push(&path, "required, missing".into());
                return None;
            }
            (Some(v), _) => v,
        };
        let Some(x) = v.as_f64().filter(|x| x.is_finite()) else {
            p.push(
                &path,
                format!("must be a whole number, got {}", show_value(v)),
            );
            return None;
        };
        if x.fract() != 0.0 {
            p.push(&path, format!("must be a whole number, got {}", show(x)));
            return None;
        }
        if x < f64::from(min) || x > f64::from(max) {
            p.push(
                &path,
                format!(
                    "must be a whole number from {min} to {max}, got {}",
                    show(x)
                ),
            );
            return None;
        }
        // OK because x is whole and within [min, max] ⊂ u32.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        Some(x as u32)
    }

    /// An optional whole number from `min` to `max`: `None` when absent (or `null`), and when
    /// it breaks the rule (the problem is recorded).
    pub(crate) fn optional_integer(
        &mut self,
        p: &mut Problems,
        key: &str,
        min: u32,
        max: u32,
    ) -> Option<u32> {
        if !self.has(key) {
            self.mark_used(key);
            return None;
        }
        self.integer(p, key, None, min, max)
    }

    pub(crate) fn choice(
        &mut self,
        p: &mut Problems,
        key: &str,
        allowed: &[&'static str],
        default: Option<&'static str>,
    ) -> Option<&'static str> {
        let path = self.path_of(key);
        let v = match (self.get(key), default) {
            (None, Some(d)) => return Some(d),
            (None, None) => {
                p.push(&path, "required, missing".into());
                return None;
            }
            (Some(v), _) => v,
        };
        let quoted: Vec<String> = allowed.iter().map(|a| format!("\"{a}\"")).collect();
        match v.as_str().and_then(|s| allowed.iter().find(|a| **a == s)) {
            Some(a) => Some(a),
            None => {
                p.push(
                    &path,
                    format!(
                        "must be one of {}, got {}",
                        quoted.join(", "),
                        show_value(v)
                    ),
                );
                None
            }
        }
    }

    pub(crate) fn string(&mut self, p: &mut Problems, key: &str) -> Option<String> {
        match self.get(key) {
            None => None,
            Some(Value::String(s)) => Some(s.clone()),
            Some(v) => {
                p.push(
                    &self.path_of(key),
                    format!("must be text, got {}", show_value(v)),
                );
                None
            }
        }
    }

    pub(crate) fn object(
        &mut self,
        p: &mut Problems,
        key: &str,
        required: bool,
    ) -> Option<Fields<'v>> {
        let path = self.path_of(key);
        match self.get(key) {
            None => {
                if required {
                    p.push(&path, "required, missing".into());
                }
                None
            }
            Some(Value::Object(m)) => Some(Fields::new(&path, m)),
            Some(v) => {
                p.push(&path, format!("must be an object, got {}", show_value(v)));
                None
            }
        }
    }

    /// An optional list of exactly `count` numbers, each within `range`; `None` when absent
    /// or wrong (every wrong element is reported, at `key[i]`).
    pub(crate) fn numbers(
        &mut self,
        p: &mut Problems,
        key: &str,
        count: u32,
        range: RangeWithLimit,
    ) -> Option<Vec<f64>> {
        let path = self.path_of(key);
        let v = self.get(key)?;
        numbers_at(p, &path, v, count, range, "numbers")
    }

    /// An optional matrix: a list of `rows` lists of `columns` numbers, each within `range`.
    pub(crate) fn matrix(
        &mut self,
        p: &mut Problems,
        key: &str,
        rows: u32,
        columns: u32,
        range: RangeWithLimit,
    ) -> Option<Vec<Vec<f64>>> {
        let path = self.path_of(key);
        let v = self.get(key)?;
        let shape = format!("a list of {rows} rows, each a list of {columns} numbers");
        let Some(items) = v.as_array() else {
            p.push(&path, format!("must be {shape}, got {}", show_value(v)));
            return None;
        };
        if items.len() != rows as usize {
            p.push(
                &path,
                format!("must be {shape}: {} rows given", items.len()),
            );
            return None;
        }
        let before = p.0.len();
        let out: Vec<Vec<f64>> = items
            .iter()
            .enumerate()
            .filter_map(|(i, row)| {
                numbers_at(
                    p,
                    &format!("{path}[{i}]"),
                    row,
                    columns,
                    range,
                    "numbers (a row)",
                )
            })
            .collect();
        (p.0.len() == before && out.len() == rows as usize).then_some(out)
    }

    /// A list of `min` to `max` objects: each element's reader, at `key[i]`; `None` when
    /// absent or not such a list.
    pub(crate) fn list_of_objects(
        &mut self,
        p: &mut Problems,
        key: &str,
        min: u32,
        max: u32,
    ) -> Option<Vec<Fields<'v>>> {
        let path = self.path_of(key);
        let v = self.get(key)?;
        let Some(items) = v.as_array() else {
            p.push(
                &path,
                format!("must be a list of objects, got {}", show_value(v)),
            );
            return None;
        };
        if items.len() < min as usize || items.len() > max as usize {
            p.push(
                &path,
                format!("must list from {min} to {max}, got {}", items.len()),
            );
            return None;
        }
        let before = p.0.len();
        let mut out = Vec::with_capacity(items.len());
        for (i, item) in items.iter().enumerate() {
            let here = format!("{path}[{i}]");
            match item {
                Value::Object(m) => out.push(Fields::new(&here, m)),
                other => p.push(
                    &here,
                    format!("must be an object, got {}", show_value(other)),
                ),
            }
        }
        (p.0.len() == before).then_some(out)
    }

    /// Report every key that was not read, except extension keys starting with `x_`.
    pub(crate) fn finish(&self, p: &mut Problems) {
        for key in self.map.keys() {
            if key.starts_with("x_") || self.used.iter().any(|u| u == key) {
                continue;
            }
            // A near miss gets "did you mean"; otherwise a small object lists the keys it
            // knows (a long list, like the sensor's, would bury the message).
            let mut known: Vec<&str> = self.used.iter().map(String::as_str).collect();
            crate::small_sort::sort_by(&mut known, |a, b| a.cmp(b));
            known.dedup();
            let hint = match self.used.iter().find(|u| near_miss(u, key)) {
                Some(u) => format!(" (did you mean \"{u}\"?)"),
                None if known.len() <= MAX_KEYS_LISTED => {
                    format!("; the keys here are {}", known.join(", "))
                }
                None => String::new(),
            };
            p.push(
                &self.path_of(key),
                format!("unknown key{hint}; keys of your own must start with \"x_\""),
            );
        }
    }
}

/// Whether two key names differ only a little (a typo): same after dropping `_` and case,
/// or one edit apart.
pub(crate) fn near_miss(a: &str, b: &str) -> bool {
    let norm = |s: &str| s.to_ascii_lowercase().replace('_', "");
    if norm(a) == norm(b) {
        return true;
    }
    edit_distance(a, b) <= 2
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut cur = Vec::with_capacity(b.len() + 1);
        cur.push(i + 1);
        for (j, cb) in b.iter().enumerate() {
            let sub = prev.get(j).copied().unwrap_or(usize::MAX) + usize::from(ca != cb);
            let del = prev
                .get(j + 1)
                .copied()
                .unwrap_or(usize::MAX)
                .saturating_add(1);
            let ins = cur.get(j).copied().unwrap_or(usize::MAX).saturating_add(1);
            cur.push(sub.min(del).min(ins));
        }
        prev = cur;
    }
    prev.last().copied().unwrap_or(0)
}

/// A JSON value's type in words, for messages.
pub(crate) fn type_name(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true or false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

/// A value as it appears in a message: numbers and short text shown, the rest by type.
pub(crate) fn show_value(v: &Value) -> String {
    match v {
        Value::Number(n) => n.to_string(),
        Value::String(s) if s.chars().count() <= 40 => format!("\"{s}\""),
        Value::String(_) => "long text".into(),
        Value::Bool(b) => b.to_string(),
        other => type_name(other).into(),
    }
}

/// A number as it appears in a message: plain for everyday magnitudes, exponent otherwise.
pub(crate) fn show(x: f64) -> String {
    let a = x.abs();
    if a != 0.0 && !(1e-4..1e6).contains(&a) {
        crate::decimal::Exp(x).to_string()
    } else {
        crate::decimal::Plain(x).to_string()
    }
}

/// `v` as exactly `count` numbers within `range`, reporting each wrong element at `path[i]`.
fn numbers_at(
    p: &mut Problems,
    path: &str,
    v: &Value,
    count: u32,
    range: RangeWithLimit,
    what: &str,
) -> Option<Vec<f64>> {
    let Some(items) = v.as_array() else {
        p.push(
            path,
            format!("must be a list of {count} {what}, got {}", show_value(v)),
        );
        return None;
    };
    if items.len() != count as usize {
        p.push(
            path,
            format!("must be a list of {count} {what}, got {}", items.len()),
        );
        return None;
    }
    let before = p.0.len();
    let mut out = Vec::with_capacity(items.len());
    for (i, item) in items.iter().enumerate() {
        let here = format!("{path}[{i}]");
        match item.as_f64().filter(|x| x.is_finite()) {
            None => p.push(&here, format!("must be a number, got {}", show_value(item))),
            Some(x) => match range.check(x) {
                Some(msg) => p.push(&here, msg),
                None => out.push(x),
            },
        }
    }
    (p.0.len() == before).then_some(out)
}
