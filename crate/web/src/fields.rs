//! Turning what is typed in the form into scenario JSON, and scenario JSON back into field text.
//!
//! Pure functions on text and `serde_json::Value`, testable natively. They judge nothing: a
//! field that is not a number is passed on as text so that the engine names the broken rule.
//! No DOM, no engine call, no formula.

use engine::keys;
use serde_json::{Map, Value};

/// How a field's text becomes a JSON value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// A number (the usual case).
    Number,
    /// Free text, or a choice among named options.
    Text,
}

/// The JSON value for a field's text; `None` for an empty field (the key is left out, so the
/// format's default applies, or the engine reports it missing).
///
/// A number field whose text is not a JSON number becomes a JSON string, which the engine
/// refuses naming the field and the rule. A few harmless spellings people type are accepted
/// (`+5`, `.5`, `5.`); everything else goes through the same JSON number parser as a file,
/// so the page and the command-line tool read the same digits as the same number.
///
/// ```
/// use noise_budget_web::fields::{value_for, Kind};
/// assert_eq!(value_for("0.39", Kind::Number), Some(serde_json::json!(0.39)));
/// assert_eq!(value_for("abc", Kind::Number), Some(serde_json::json!("abc")));
/// assert_eq!(value_for("  ", Kind::Number), None);
/// ```
#[must_use]
pub fn value_for(text: &str, kind: Kind) -> Option<Value> {
    let t = text.trim();
    if t.is_empty() {
        return None;
    }
    match kind {
        Kind::Text => Some(Value::String(text.to_string())),
        Kind::Number => {
            let unsigned = t.strip_prefix('+').unwrap_or(t);
            let (sign, digits) = match unsigned.strip_prefix('-') {
                Some(rest) => ("-", rest),
                None => ("", unsigned),
            };
            let has_digit = digits.bytes().any(|b| b.is_ascii_digit());
            let lead = if has_digit && digits.starts_with('.') {
                "0"
            } else {
                ""
            };
            let trail = if has_digit && digits.ends_with('.') {
                "0"
            } else {
                ""
            };
            let json = format!("{sign}{lead}{digits}{trail}");
            match serde_json::from_str::<Value>(&json) {
                Ok(v @ Value::Number(_)) => Some(v),
                _ => Some(Value::String(t.to_string())),
            }
        }
    }
}

/// Put `value` at the dot `path` inside `root`, making objects on the way; a part `name[i]`
/// is element i of a list of objects (`hdr.exposures[1].ratio`; earlier elements not yet there
/// become empty objects). A path that runs into something else is left alone (the form never
/// makes one).
pub fn insert_at(root: &mut Map<String, Value>, path: &str, value: Value) {
    let mut parts = path.split('.').peekable();
    let mut here = root;
    while let Some(part) = parts.next() {
        let last = parts.peek().is_none();
        if let Some((name, i)) = split_index(part) {
            let list = here
                .entry(name.to_string())
                .or_insert_with(|| Value::Array(Vec::new()));
            let Value::Array(items) = list else { return };
            while items.len() <= i {
                items.push(Value::Object(Map::new()));
            }
            let Some(item) = items.get_mut(i) else { return };
            if last {
                *item = value;
                return;
            }
            match item {
                Value::Object(m) => here = m,
                _ => return,
            }
            continue;
        }
        if last {
            here.insert(part.to_string(), value);
            return;
        }
        let next = here
            .entry(part.to_string())
            .or_insert_with(|| Value::Object(Map::new()));
        match next {
            Value::Object(m) => here = m,
            _ => return,
        }
    }
}

/// The value at the dot `path` inside `root` (`name[i]` parts, or a bare index after a list,
/// index lists), if there is one
/// (and it is not `null`).
#[must_use]
pub fn value_at<'v>(root: &'v Value, path: &str) -> Option<&'v Value> {
    path.split('.')
        .try_fold(root, |v, part| match split_index(part) {
            Some((name, i)) => v.get(name)?.get(i),
            // An item of a report's list by its index, as the page's tables name them
            // (`hdr.transitions.0.dip_db`).
            None if v.is_array() => v.get(part.parse::<usize>().ok()?),
            None => v.get(part),
        })
        .filter(|v| !v.is_null())
}

/// The numbers typed in one line (`1.9, 1, 2.6` or `1.9 1 2.6`), each as [`value_for`] reads a
/// number field: what is not a number is passed on as text for the engine to refuse by name.
#[must_use]
pub fn numbers_value(text: &str) -> Option<Value> {
    let items: Vec<Value> = text
        .split(|c: char| c == ',' || c == ';' || c.is_whitespace())
        .filter(|t| !t.is_empty())
        .filter_map(|t| value_for(t, Kind::Number))
        .collect();
    (!items.is_empty()).then_some(Value::Array(items))
}

/// A matrix typed a row a line, as lists of [`numbers_value`]; blank lines are skipped.
#[must_use]
pub fn matrix_value(text: &str) -> Option<Value> {
    let rows: Vec<Value> = text.lines().filter_map(numbers_value).collect();
    (!rows.is_empty()).then_some(Value::Array(rows))
}

/// The text of a list of numbers (`1.9, 1, 2.6`) or of a matrix (a row a line).
#[must_use]
pub fn numbers_text(value: Option<&Value>) -> String {
    match value {
        Some(Value::Array(items)) if items.iter().all(Value::is_array) => items
            .iter()
            .map(|row| numbers_text(Some(row)))
            .collect::<Vec<_>>()
            .join("\n"),
        Some(Value::Array(items)) => items
            .iter()
            .map(|v| text_for(Some(v)))
            .collect::<Vec<_>>()
            .join(", "),
        other => text_for(other),
    }
}

/// The text a field shows for a scenario value: numbers as written by JSON, text as is.
#[must_use]
pub fn text_for(value: Option<&Value>) -> String {
    match value {
        None | Some(Value::Null) => String::new(),
        Some(Value::String(s)) => s.clone(),
        Some(other) => other.to_string(),
    }
}

/// Which light kind (`engine::keys::LIGHT_KINDS`) the light object at `path` (`light`,
/// `background_light`) of a scenario gives: the kind whose amount key it has (of the two
/// irradiance kinds, the one that agrees on having a spectrum); a wavelength alone is the
/// monochromatic irradiance it is incomplete without.
#[must_use]
pub fn light_kind_of(scenario: &Value, path: &str) -> Option<&'static str> {
    let light = value_at(scenario, path)?;
    let has = |key: &str| value_at(light, key).is_some();
    let spectrum = has(const { keys::SPECTRUM.name });
    keys::LIGHT_KIND_AMOUNTS
        .iter()
        .filter(|(_, amount, _)| amount.strip_prefix("light.").is_some_and(&has))
        .min_by_key(|(_, _, with_spectrum)| *with_spectrum != spectrum)
        .map(|(name, _, _)| *name)
        .or_else(|| {
            has(const { keys::WAVELENGTH_NM.name })
                .then_some(const { keys::IRRADIANCE_W_PER_M2.name })
        })
}

/// A line of pasted wavelength/value pairs that is not two numbers.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PairLineProblem {
    /// The line's number, counting from 1.
    pub line: usize,
    /// What was wrong, in words.
    pub message: String,
}

/// Pairs read from pasted text: the JSON list `[[nm, value], …]` and, for each pair, the line
/// it came from (counting from 1), so that the engine's `…points[i]` messages can name the line.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Pairs {
    /// `[[a, b], …]`, the numbers as JSON reads them.
    pub list: Vec<Value>,
    /// `lines[i]` is the line of `list[i]`.
    pub lines: Vec<usize>,
    /// Lines that were not two numbers (left out of `list`).
    pub problems: Vec<PairLineProblem>,
}

/// Split pasted text into wavelength/value pairs: one pair a line, the two numbers separated by
/// a tab, comma, semicolon or spaces; empty lines are skipped. Judges nothing else (order,
/// signs and ranges are the engine's rules).
///
/// ```
/// let p = noise_budget_web::fields::parse_pairs("400\t0.5\n\n500, 0.25\nabc");
/// assert_eq!(serde_json::Value::Array(p.list), serde_json::json!([[400, 0.5], [500, 0.25]]));
/// assert_eq!(p.lines, vec![1, 3]);
/// assert_eq!(p.problems[0].to_string(), "line 4: expected two numbers, got 'abc'");
/// ```
#[must_use]
pub fn parse_pairs(text: &str) -> Pairs {
    let mut out = Pairs::default();
    for (i, raw) in text.lines().enumerate() {
        let line = i + 1;
        let t = raw.trim();
        if t.is_empty() {
            continue;
        }
        let parts: Vec<&str> = t
            .split(|c: char| c == ',' || c == ';' || c.is_whitespace())
            .filter(|p| !p.is_empty())
            .collect();
        let numbers: Vec<Value> = parts
            .iter()
            .filter_map(|p| value_for(p, Kind::Number).filter(Value::is_number))
            .collect();
        if parts.len() == 2 && numbers.len() == 2 {
            out.list.push(Value::Array(numbers));
            out.lines.push(line);
        } else {
            out.problems.push(PairLineProblem {
                line,
                message: format!("expected two numbers, got '{t}'"),
            });
        }
    }
    out
}

impl std::fmt::Display for PairLineProblem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "line {}: {}", self.line, self.message)
    }
}

/// The text a pairs field shows for a list `[[a, b], …]`: one pair a line, tab-separated
/// (as a spreadsheet pastes); anything else as compact JSON (the engine will name it).
///
/// ```
/// let v = serde_json::json!([[400, 0.05], [440, 0.6]]);
/// assert_eq!(noise_budget_web::fields::pairs_text(Some(&v)), "400\t0.05\n440\t0.6");
/// ```
#[must_use]
pub fn pairs_text(value: Option<&Value>) -> String {
    let Some(Value::Array(items)) = value else {
        return text_for(value);
    };
    let mut lines = Vec::new();
    for item in items {
        match item.as_array().map(Vec::as_slice) {
            Some([a @ Value::Number(_), b @ Value::Number(_)]) => lines.push(format!("{a}\t{b}")),
            _ => return Value::Array(items.clone()).to_string(),
        }
    }
    lines.join("\n")
}

/// The engine's path for one point of a list (`light.spectrum.points[3]`, possibly with more
/// after it) split into the list's path and the index.
///
/// ```
/// use noise_budget_web::fields::split_index;
/// assert_eq!(split_index("light.spectrum.points[3]"), Some(("light.spectrum.points", 3)));
/// assert_eq!(split_index("sensor.quantum_efficiency_curve[0][1]"), Some(("sensor.quantum_efficiency_curve", 0)));
/// assert_eq!(split_index("light.f_number"), None);
/// ```
#[must_use]
pub fn split_index(path: &str) -> Option<(&str, usize)> {
    let (list, rest) = path.split_once('[')?;
    let (digits, _) = rest.split_once(']')?;
    Some((list, digits.parse().ok()?))
}

/// What of a scenario has no field in the form: a copy without `version` and without every
/// leaf whose dot path is in `fields`, with emptied objects dropped; `None` when nothing is left.
/// Lists (spectra, curves) are leaves.
#[must_use]
pub fn without_fields(scenario: &Value, fields: &[String]) -> Option<Value> {
    fn strip(v: &Value, prefix: &str, fields: &[String]) -> Option<Value> {
        match v {
            Value::Object(m) => {
                let mut out = Map::new();
                for (k, child) in m {
                    let path = if prefix.is_empty() {
                        k.clone()
                    } else {
                        format!("{prefix}.{k}")
                    };
                    // A list of objects whose elements have rows of fields is the form's.
                    let rows = fields.iter().any(|f| {
                        f.strip_prefix(path.as_str())
                            .is_some_and(|rest| rest.starts_with('['))
                    });
                    if path == "version" || fields.contains(&path) || rows {
                        continue;
                    }
                    if let Some(c) = strip(child, &path, fields) {
                        out.insert(k.clone(), c);
                    }
                }
                (!out.is_empty()).then_some(Value::Object(out))
            }
            other => Some(other.clone()),
        }
    }
    strip(scenario, "", fields)
}

/// The text for the extra keys' box: one line per top-level key, each value as compact JSON,
/// so a long spectrum stays one line instead of hundreds.
///
/// ```
/// let v = serde_json::json!({"light": {"spectrum": {"kind": "cie_a"}}, "x_note": "a"});
/// assert_eq!(
///     noise_budget_web::fields::extra_text(&v),
///     "{\n  \"light\": {\"spectrum\":{\"kind\":\"cie_a\"}},\n  \"x_note\": \"a\"\n}"
/// );
/// ```
#[must_use]
pub fn extra_text(extra: &Value) -> String {
    match extra {
        Value::Object(m) => {
            let lines: Vec<String> = m
                .iter()
                .map(|(k, v)| format!("  {}: {v}", Value::String(k.clone())))
                .collect();
            format!("{{\n{}\n}}", lines.join(",\n"))
        }
        other => other.to_string(),
    }
}

/// Add the keys of `extra` to `base`, object by object; where both have a key, `base` keeps its
/// value (a field on the form wins over the same key typed in the extra keys).
pub fn merge_missing(base: &mut Map<String, Value>, extra: &Map<String, Value>) {
    for (k, v) in extra {
        match (base.get_mut(k), v) {
            (Some(Value::Object(b)), Value::Object(e)) => merge_missing(b, e),
            (Some(_), _) => {}
            (None, _) => {
                base.insert(k.clone(), v.clone());
            }
        }
    }
}

/// The words of a file name from a scenario's title: letters and digits kept (ASCII letters in
/// lower case, others as written: Unicode's case tables would add about 16 KB to the page's
/// wasm for a file name), any run of other characters as one dash, at most `most` characters;
/// `scenario` when nothing is left.
///
/// ```
/// use noise_budget_web::fields::name_words;
/// assert_eq!(name_words(Some("Dock, north camera (dusk)"), 60), "dock-north-camera-dusk");
/// assert_eq!(name_words(Some(" — "), 60), "scenario");
/// assert_eq!(name_words(Some("Kamera Süd"), 60), "kamera-süd");
/// assert_eq!(name_words(None, 60), "scenario");
/// ```
#[must_use]
pub fn name_words(title: Option<&str>, most: usize) -> String {
    let mut name = String::new();
    for c in title.unwrap_or("").chars().map(|c| c.to_ascii_lowercase()) {
        if c.is_alphanumeric() {
            name.push(c);
        } else if !name.is_empty() && !name.ends_with('-') {
            name.push('-');
        }
        if name.chars().count() >= most {
            break;
        }
    }
    let name = name.trim_end_matches('-');
    if name.is_empty() {
        "scenario".into()
    } else {
        name.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn numbers_are_read_like_json_files() {
        for (text, want) in [
            ("10500", json!(10500)),
            ("-5", json!(-5)),
            ("1e-3", json!(0.001)),
            (" 2.4 ", json!(2.4)),
            ("+7", json!(7)),
            (".5", json!(0.5)),
            ("-.5", json!(-0.5)),
            ("5.", json!(5.0)),
        ] {
            assert_eq!(value_for(text, Kind::Number), Some(want), "{text:?}");
        }
    }

    #[test]
    fn non_numbers_pass_through_as_text_for_the_engine_to_refuse() {
        for text in ["abc", "0,39", "1e400", "NaN", "inf", "--1", ".", "1 2"] {
            assert_eq!(
                value_for(text, Kind::Number),
                Some(Value::String(text.to_string())),
                "{text:?}"
            );
        }
    }

    #[test]
    fn text_fields_keep_spaces_and_empty_is_absent() {
        assert_eq!(value_for(" a b ", Kind::Text), Some(json!(" a b ")));
        assert_eq!(value_for("", Kind::Text), None);
        assert_eq!(value_for("   ", Kind::Text), None);
    }

    #[test]
    fn lists_of_objects_and_numbers() {
        let mut m = Map::new();
        insert_at(&mut m, "hdr.exposures[1].ratio", json!(16));
        insert_at(&mut m, "hdr.exposures[0].ratio", json!(8));
        let v = Value::Object(m);
        assert_eq!(
            v,
            json!({"hdr": {"exposures": [{"ratio": 8}, {"ratio": 16}]}})
        );
        assert_eq!(value_at(&v, "hdr.exposures[1].ratio"), Some(&json!(16)));
        assert_eq!(value_at(&v, "hdr.exposures[2].ratio"), None);
        // A report's list items by a bare index, as the page's tables name them.
        assert_eq!(value_at(&v, "hdr.exposures.1.ratio"), Some(&json!(16)));
        assert_eq!(value_at(&v, "hdr.exposures.2.ratio"), None);
        assert_eq!(value_at(&v, "hdr.exposures.x"), None);
        assert_eq!(value_at(&v, "hdr.1"), None);
        assert_eq!(numbers_value(" 1.9, 1 2.6"), Some(json!([1.9, 1, 2.6])));
        assert_eq!(numbers_value("1, x"), Some(json!([1, "x"])));
        assert_eq!(numbers_value("  "), None);
        let m = matrix_value("1 0 0\n\n0, 1, 0\n0 0 1\n").unwrap_or_default();
        assert_eq!(m, json!([[1, 0, 0], [0, 1, 0], [0, 0, 1]]));
        assert_eq!(numbers_text(Some(&m)), "1, 0, 0\n0, 1, 0\n0, 0, 1");
        assert_eq!(numbers_text(Some(&json!([1.9, 1, 2.6]))), "1.9, 1, 2.6");
        let names = vec!["hdr.exposures[0].ratio".to_string(), "hdr.kind".to_string()];
        let s = json!({"hdr": {"kind": "exposures", "exposures": [{"ratio": 4}]}, "x_a": 1});
        assert_eq!(without_fields(&s, &names), Some(json!({"x_a": 1})));
    }

    #[test]
    fn insert_and_read_dot_paths() {
        let mut m = Map::new();
        insert_at(&mut m, "sensor.full_well_e", json!(10));
        insert_at(&mut m, "sensor.readout", json!("cds"));
        insert_at(&mut m, "temperature_c", json!(25));
        let v = Value::Object(m);
        assert_eq!(
            v,
            json!({"sensor": {"full_well_e": 10, "readout": "cds"}, "temperature_c": 25})
        );
        assert_eq!(value_at(&v, "sensor.full_well_e"), Some(&json!(10)));
        assert_eq!(value_at(&v, "sensor.nothing"), None);
        assert_eq!(value_at(&v, "temperature_c.deeper"), None);
        let mut m = Map::new();
        insert_at(&mut m, "a", json!(1));
        insert_at(&mut m, "a.b", json!(2));
        assert_eq!(Value::Object(m), json!({"a": 1}));
    }

    #[test]
    fn text_for_values() {
        assert_eq!(text_for(Some(&json!(0.002))), "0.002");
        assert_eq!(text_for(Some(&json!(12))), "12");
        assert_eq!(text_for(Some(&json!("dds"))), "dds");
        assert_eq!(text_for(None), "");
        assert_eq!(text_for(Some(&Value::Null)), "");
        // What a field shows reads back as the same number.
        for x in [0.002, 1e-9, 3.45, 10500.0, 1e20, 0.1 + 0.2] {
            let t = text_for(Some(&json!(x)));
            assert_eq!(value_for(&t, Kind::Number), Some(json!(x)), "{t}");
        }
    }

    #[test]
    fn keys_without_fields_are_split_off_and_merged_back() {
        let scenario = json!({
            "version": 1,
            "sensor": {"full_well_e": 10, "quantum_efficiency_curve": [[400, 0.5], [700, 0.4]]},
            "light": {"irradiance_w_per_m2": 2, "spectrum": {"kind": "cie_a"}},
            "background_light": {"illuminance_lux": 3, "spectrum": {"kind": "cie_d65"}},
            "temperature_c": 20
        });
        let fields: Vec<String> = [
            "sensor.full_well_e",
            "light.irradiance_w_per_m2",
            "temperature_c",
        ]
        .iter()
        .map(|s| (*s).to_string())
        .collect();
        let rest = without_fields(&scenario, &fields);
        assert_eq!(
            rest,
            Some(json!({
                "sensor": {"quantum_efficiency_curve": [[400, 0.5], [700, 0.4]]},
                "light": {"spectrum": {"kind": "cie_a"}},
                "background_light": {"illuminance_lux": 3, "spectrum": {"kind": "cie_d65"}}
            }))
        );
        // The form's part plus the rest is the scenario again.
        let mut base = Map::new();
        for f in &fields {
            if let Some(v) = value_at(&scenario, f) {
                insert_at(&mut base, f, v.clone());
            }
        }
        base.insert("version".into(), json!(1));
        if let Some(Value::Object(rest)) = rest {
            merge_missing(&mut base, &rest);
        }
        assert_eq!(Value::Object(base), scenario);
        assert_eq!(
            without_fields(&json!({"version": 1, "temperature_c": 2}), &fields),
            None
        );
    }

    #[test]
    fn a_field_wins_over_the_same_key_in_the_extra_keys() {
        let mut base = Map::new();
        insert_at(&mut base, "sensor.full_well_e", json!(10));
        let extra = json!({"sensor": {"full_well_e": 99, "x_note": "a"}});
        if let Value::Object(e) = extra {
            merge_missing(&mut base, &e);
        }
        assert_eq!(
            Value::Object(base),
            json!({"sensor": {"full_well_e": 10, "x_note": "a"}})
        );
    }

    #[test]
    fn light_kinds() {
        let kind = |v: Value| light_kind_of(&v, "light");
        assert_eq!(
            kind(json!({"light": {"irradiance_w_per_m2": 1, "wavelength_nm": 500}})),
            Some("irradiance_w_per_m2")
        );
        assert_eq!(
            kind(json!({"light": {"wavelength_nm": 500}})),
            Some("irradiance_w_per_m2")
        );
        assert_eq!(
            kind(json!({"light": {"irradiance_w_per_m2": 1, "spectrum": {"kind": "cie_a"}}})),
            Some("irradiance_spectrum")
        );
        assert_eq!(
            kind(json!({"light": {"photons_per_pixel": 3}})),
            Some("photons_per_pixel")
        );
        assert_eq!(
            kind(json!({"light": {"scene_luminance_cd_per_m2": 3, "f_number": 2}})),
            Some("scene_luminance_cd_per_m2")
        );
        assert_eq!(kind(json!({"light": {}})), None);
        assert_eq!(kind(json!({})), None);
        assert_eq!(
            light_kind_of(
                &json!({"background_light": {"illuminance_lux": 3}}),
                "background_light"
            ),
            Some("illuminance_lux")
        );
    }

    #[test]
    fn pairs_split_on_tabs_commas_semicolons_and_spaces() {
        let p = parse_pairs("400\t0.05\r\n 440 , 0.6\n455;1\n470   4.5e-1\n\n");
        assert_eq!(
            Value::Array(p.list),
            json!([[400, 0.05], [440, 0.6], [455, 1], [470, 0.45]])
        );
        assert_eq!(p.lines, vec![1, 2, 3, 4]);
        assert!(p.problems.is_empty());
    }

    #[test]
    fn a_line_that_is_not_two_numbers_is_named() {
        let p = parse_pairs("400 0.1\n\n500\n600 0.2 7\nabc\n700 x\n1e400 1\n800 0.3");
        let lines: Vec<String> = p.problems.iter().map(ToString::to_string).collect();
        assert_eq!(
            lines,
            [
                "line 3: expected two numbers, got '500'",
                "line 4: expected two numbers, got '600 0.2 7'",
                "line 5: expected two numbers, got 'abc'",
                "line 6: expected two numbers, got '700 x'",
                "line 7: expected two numbers, got '1e400 1'",
            ]
        );
        assert_eq!(Value::Array(p.list), json!([[400, 0.1], [800, 0.3]]));
        assert_eq!(p.lines, vec![1, 8]);
    }

    #[test]
    fn pairs_round_trip_through_their_text() {
        let v = json!([[350, 0.05], [400, 0.35], [1100, 0.0], [555.5, 1e-3]]);
        let p = parse_pairs(&pairs_text(Some(&v)));
        assert_eq!(Value::Array(p.list), v);
        assert_eq!(pairs_text(None), "");
        assert_eq!(pairs_text(Some(&json!([[1, 2, 3]]))), "[[1,2,3]]");
    }
}
