//! Reading a scenario from JSON and checking every rule of the format, all problems at once.
//!
//! This is the only way to make a [`Scenario`]. It reports each problem with the key's dot path
//! (`sensor.full_well_e: must be > 0, got -5`); it never stops at the first. It computes no
//! noise figures. Unknown keys are problems, except keys starting with `x_`, which are ignored.
//!
//! Each key is read with the rule of its entry in the key catalogue (`crate::keys`: `K.name`,
//! `K.rule`), through the general JSON reader (`crate::input`); the rules that join keys are
//! written here, section by section: `sensor.rs`, `light.rs` (with the rules joining the light
//! and the sensor), `exposure.rs`, and in this file the scenario as a whole.

use std::fmt;

use serde_json::Value;

pub use crate::input::Problem;
use crate::input::{self, show, show_value, type_name, Fields, Need, Problems};
use crate::keys::{self, Presence, Rule};
use crate::scenario::Scenario;

mod colour;
mod detection;
mod exposure;
mod hdr;
mod light;
mod sensor;
#[cfg(test)]
mod tests;

/// The format version this engine reads and writes.
pub const FORMAT_VERSION: u64 = 1;

/// Largest |(T − T_ref) / T_d| accepted, so that 2^x and everything multiplied by it stay finite.
/// 2^200 ≈ 1.6e60; with the other limits below every figure stays far from f64 overflow.
const MAX_DOUBLINGS: f64 = 200.0;

/// A refused scenario: every problem found, in document order.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ScenarioError {
    problems: Vec<Problem>,
}

impl ScenarioError {
    /// A refusal made of these problems (at least one) by another checker of this crate.
    pub(crate) fn from_problems(problems: Vec<Problem>) -> Self {
        ScenarioError { problems }
    }

    /// The problems, at least one.
    #[must_use]
    pub fn problems(&self) -> &[Problem] {
        &self.problems
    }
}

impl fmt::Display for ScenarioError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, p) in self.problems.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{p}")?;
        }
        Ok(())
    }
}

impl std::error::Error for ScenarioError {}

/// Parse JSON text and validate it into a [`Scenario`].
///
/// # Errors
/// A [`ScenarioError`] listing every problem: malformed JSON, a wrong type, a broken rule, an
/// unknown key, a missing required key, or a version other than 1.
///
/// ```
/// let err = engine::validate::scenario_from_json("{\"version\": 2}").unwrap_err();
/// assert!(err.to_string().starts_with("version:"));
/// ```
pub fn scenario_from_json(text: &str) -> Result<Scenario, ScenarioError> {
    match input::parse_json(text, "scenario") {
        Ok(v) => scenario_from_value(&v),
        Err(problem) => Err(ScenarioError {
            problems: vec![problem],
        }),
    }
}

/// Validate an already-parsed JSON value into a [`Scenario`].
///
/// # Errors
/// As [`scenario_from_json`], except for JSON syntax.
pub fn scenario_from_value(v: &Value) -> Result<Scenario, ScenarioError> {
    let mut p = Problems::default();
    let Some(map) = v.as_object() else {
        p.push(
            "scenario",
            format!("must be a JSON object, got {}", type_name(v)),
        );
        return Err(ScenarioError::from_problems(p.into_problems()));
    };
    let mut top = Fields::new("", map);

    // The version is checked first: a newer file gets one clear message, not a list of its keys.
    match top.get(const { keys::VERSION.name }) {
        None => p.push(
            "version",
            "required: this calculator reads format version 1".into(),
        ),
        Some(Value::Number(n)) if n.as_f64() == Some(1.0) => {}
        Some(Value::Number(n)) if n.as_f64().is_some_and(|x| x > 1.0) => {
            p.push(
                "version",
                format!(
                    "this scenario is format version {n}, newer than this calculator reads (version 1)"
                ),
            );
            return Err(ScenarioError::from_problems(p.into_problems()));
        }
        Some(other) => p.push("version", format!("must be 1, got {}", show_value(other))),
    }

    let title = top.string(&mut p, const { keys::TITLE.name });
    let sensor = top
        .object(&mut p, "sensor", true)
        .and_then(|mut f| sensor::read_sensor(&mut p, &mut f));
    let light = top
        .object(&mut p, "light", true)
        .and_then(|mut f| light::read_light(&mut p, &mut f));
    let background_light = top
        .object(&mut p, "background_light", false)
        .and_then(|mut f| light::read_light(&mut p, &mut f));
    let exposure = top
        .object(&mut p, "exposure", true)
        .and_then(|mut f| exposure::exposure(&mut p, &mut f));
    let temperature_c = top.number_key(&mut p, key!(keys::TEMPERATURE_C));
    let snr_threshold = top.number_key(&mut p, key!(keys::SNR_THRESHOLD));
    let processing_given = top.has(const { keys::PROCESSING.name });
    let processing = match top.object_key(&mut p, key!(keys::PROCESSING)) {
        Some(mut f) => colour::processing(&mut p, &mut f),
        None => Some(crate::colour::Processing::default()),
    };
    let hdr = top
        .object_key(&mut p, key!(keys::HDR))
        .and_then(|mut f| hdr::hdr(&mut p, &mut f, sensor.as_ref()));
    let hdr_failed = top.had_problem_at(&p, const { keys::HDR.name });
    let detection = match top.object_key(&mut p, key!(keys::DETECTION)) {
        Some(mut f) => detection::detection(&mut p, &mut f),
        None if top.has(const { keys::DETECTION.name }) => None,
        None => detection::defaults(&mut p),
    };
    top.finish(&mut p);

    // Rules that join keys, checked only where both sides were readable.
    if let Some(s) = &sensor {
        if let Some(l) = &light {
            light::check_light(&mut p, "light", l, s);
        }
        if let Some(b) = &background_light {
            light::check_light(&mut p, "background_light", b, s);
        }
    }
    if let Some(s) = &sensor {
        if processing_given && s.colour.is_none() {
            p.push(
                keys::PROCESSING.name,
                "only with a Bayer pattern (sensor.cfa): a monochrome sensor has no colours to \
                 balance or mix"
                    .into(),
            );
        }
        if let Some(crate::scenario::Hdr {
            readouts: crate::scenario::HdrReadouts::DualGain(low),
            ..
        }) = &hdr
        {
            if low.system_gain_dn_per_e >= s.system_gain_dn_per_e {
                p.push(
                    "hdr.low_gain.system_gain_dn_per_e",
                    format!(
                        "must be below the high gain's sensor.system_gain_dn_per_e ({}), got {}",
                        show(s.system_gain_dn_per_e),
                        show(low.system_gain_dn_per_e)
                    ),
                );
            }
        }
    }
    if let (Some(s), Some(t)) = (&sensor, temperature_c) {
        if let crate::scenario::DarkCurrentLaw::Bandgap(gap) = s.dark_current_law {
            let factor = crate::dark::bandgap_factor(t, s.dark_current_reference_c, &gap);
            if !(factor.is_finite() && factor <= MAX_DOUBLINGS.exp2()) {
                p.push(
                    "sensor.dark_current_reference_c",
                    format!(
                        "the band-gap law would multiply the dark current by more than 2^{} \
                         between sensor.dark_current_reference_c and temperature_c (this calculator's limit)",
                        show(MAX_DOUBLINGS)
                    ),
                );
            }
        }
        let doubling = matches!(
            s.dark_current_law,
            crate::scenario::DarkCurrentLaw::Doubling
        );
        let doublings = (t - s.dark_current_reference_c) / s.dark_current_doubling_c;
        if doubling && doublings.abs() > MAX_DOUBLINGS {
            p.push(
                "sensor.dark_current_doubling_c",
                format!(
                    "the dark current would double {} times between sensor.dark_current_reference_c \
                     and temperature_c; at most {} (this calculator's limit)",
                    show(doublings),
                    show(MAX_DOUBLINGS)
                ),
            );
        }
    }

    match (
        title,
        sensor,
        light,
        exposure,
        temperature_c,
        snr_threshold,
        processing,
        detection,
    ) {
        (
            title,
            Some(sensor),
            Some(light),
            Some(exposure),
            Some(temperature_c),
            Some(snr),
            Some(processing),
            Some(detection),
        ) if p.is_empty() && !hdr_failed => Ok(Scenario {
            title,
            sensor,
            light,
            background_light,
            exposure,
            temperature_c,
            snr_threshold: snr,
            processing,
            hdr,
            detection,
        }),
        _ => Err(ScenarioError::from_problems(p.into_problems())),
    }
}

/// A catalogue entry's name and rule, taken at compile time: `f.number_key(p, key!(K))`.
///
/// Only these two go into the code, in `const` blocks of their own: reading a field of an
/// entry at run time would put the whole entry (its label, its help) into the page's wasm.
macro_rules! key {
    ($k:path) => {
        (const { $k.name }, const { $k.rule })
    };
}
pub(crate) use key;

/// Reading a key of the catalogue with its entry's rule (from [`key!`]).
/// A rule of another kind than the method reads cannot
/// come from the catalogue (every key is read in `keys/tests.rs` with its rule); it is reported
/// as a problem, never a panic.
trait ReadKey<'v> {
    /// A number (`Rule::Number`), with its presence and range.
    fn number_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<f64>;
    /// A number whose default, computed from other keys, is `default`.
    fn number_key_or(&mut self, p: &mut Problems, key: (&str, Rule), default: f64) -> Option<f64>;
    /// A whole number (`Rule::Whole`).
    fn whole_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<u32>;
    /// One of a choice's values (`Rule::Choice`).
    fn choice_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<&'static str>;
    /// A list of wavelength/value pairs (`Rule::Pairs`).
    fn pairs_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<Vec<(f64, f64)>>;
    /// A nested object (`Rule::Object`).
    fn object_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<Fields<'v>>;
    /// A list of numbers (`Rule::Numbers`).
    fn numbers_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<Vec<f64>>;
    /// A matrix (`Rule::Matrix`).
    fn matrix_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<Vec<Vec<f64>>>;
    /// A list of objects (`Rule::List`).
    fn list_key(&mut self, p: &mut Problems, key: (&str, Rule)) -> Option<Vec<Fields<'v>>>;
}

impl<'v> ReadKey<'v> for Fields<'v> {
    fn number_key(&mut self, p: &mut Problems, (name, rule): (&str, Rule)) -> Option<f64> {
        let Rule::Number { presence, range } = rule else {
            return not_this_kind(self, p, name, "a number");
        };
        match presence {
            Presence::Required => self.number(p, name, Need::Required, range),
            Presence::RequiredSaying(missing) => {
                self.number_with(p, name, Need::Required, range, missing)
            }
            Presence::Optional | Presence::RequiredWhen(_) => {
                self.number(p, name, Need::Optional, range)
            }
            Presence::Default(v) | Presence::DefaultFrom { value: v, .. } => {
                self.number(p, name, Need::Default(v), range)
            }
        }
    }

    fn number_key_or(
        &mut self,
        p: &mut Problems,
        (name, rule): (&str, Rule),
        default: f64,
    ) -> Option<f64> {
        let Rule::Number { range, .. } = rule else {
            return not_this_kind(self, p, name, "a number");
        };
        self.number(p, name, Need::Default(default), range)
    }

    fn whole_key(&mut self, p: &mut Problems, (name, rule): (&str, Rule)) -> Option<u32> {
        let Rule::Whole { default, min, max } = rule else {
            return not_this_kind(self, p, name, "a whole number");
        };
        self.integer(p, name, default, min, max)
    }

    fn choice_key(&mut self, p: &mut Problems, (name, rule): (&str, Rule)) -> Option<&'static str> {
        let Rule::Choice { values, default } = rule else {
            return not_this_kind(self, p, name, "a choice");
        };
        self.choice(p, name, values, default)
    }

    fn pairs_key(
        &mut self,
        p: &mut Problems,
        (name, rule): (&str, Rule),
    ) -> Option<Vec<(f64, f64)>> {
        let Rule::Pairs {
            max_value,
            presence,
        } = rule
        else {
            return not_this_kind(self, p, name, "a list of pairs");
        };
        let pairs = self.pairs(p, name, max_value);
        if pairs.is_none() && !self.had_problem_at(p, name) {
            let missing = match presence {
                Presence::Required => Some("required, missing"),
                Presence::RequiredSaying(words) => Some(words),
                _ => None,
            };
            if let Some(words) = missing {
                p.push(&self.path_of(name), words.to_string());
            }
        }
        pairs
    }

    fn object_key(&mut self, p: &mut Problems, (name, rule): (&str, Rule)) -> Option<Fields<'v>> {
        let Rule::Object { required, .. } = rule else {
            return not_this_kind(self, p, name, "an object");
        };
        self.object(p, name, required)
    }

    fn numbers_key(&mut self, p: &mut Problems, (name, rule): (&str, Rule)) -> Option<Vec<f64>> {
        let Rule::Numbers { count, range, .. } = rule else {
            return not_this_kind(self, p, name, "a list of numbers");
        };
        self.numbers(p, name, count, range)
    }

    fn matrix_key(
        &mut self,
        p: &mut Problems,
        (name, rule): (&str, Rule),
    ) -> Option<Vec<Vec<f64>>> {
        let Rule::Matrix {
            rows,
            columns,
            range,
            ..
        } = rule
        else {
            return not_this_kind(self, p, name, "a matrix");
        };
        self.matrix(p, name, rows, columns, range)
    }

    fn list_key(
        &mut self,
        p: &mut Problems,
        (name, rule): (&str, Rule),
    ) -> Option<Vec<Fields<'v>>> {
        let Rule::List { min, max, .. } = rule else {
            return not_this_kind(self, p, name, "a list of objects");
        };
        self.list_of_objects(p, name, min, max)
    }
}

/// The problem for a key read as another kind than its catalogue entry says (a bug of this
/// calculator, never of the scenario; `keys/tests.rs` reads every key with its rule).
fn not_this_kind<T>(f: &mut Fields<'_>, p: &mut Problems, name: &str, kind: &str) -> Option<T> {
    f.mark_used(name);
    p.push(
        &f.path_of(name),
        format!("cannot be read as {kind}: this calculator's key catalogue disagrees with its reader (please report it)"),
    );
    None
}
