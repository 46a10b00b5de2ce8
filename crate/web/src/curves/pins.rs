//! The pinned scenarios: up to [`MAX_PINS`] valid scenarios carried in the scenario JSON under
//! [`PINS_KEY`] (an `x_` key the format ignores), so a link, a saved file and a kept scenario
//! carry them without a format of their own.
//!
//! Pure: a list of pins with their reports (and the views drawn for them, kept so that they are
//! swept once per number of points), natively tested. No DOM.

use std::rc::Rc;

use engine::sweep::Sweep;
use engine::{Problem, Report};
use serde_json::Value;

/// The scenario key that carries the pinned scenarios (ignored by the format, `x_` prefix).
pub const PINS_KEY: &str = "x_pinned";
/// Most scenarios pinned at once.
pub const MAX_PINS: usize = 4;

/// A pinned scenario.
pub struct Pin {
    /// Its scenario JSON (without pins of its own).
    pub value: Value,
    /// Its name in the table and legend (`A`, or `A: <title>`).
    pub name: String,
    /// Its report.
    pub report: Report,
    /// Its views (`engine::curves::View::ALL`), for the number of points they were made with.
    pub views: Option<(u32, Vec<Option<Rc<Sweep>>>)>,
}

/// The pinned scenarios, A to D.
#[derive(Default)]
pub struct Pins(Vec<Pin>);

/// The letter of pin `i`.
#[must_use]
pub fn letter(i: usize) -> char {
    ['A', 'B', 'C', 'D'].get(i).copied().unwrap_or('?')
}

fn pin_name(i: usize, value: &Value) -> String {
    match value.get("title").and_then(Value::as_str).map(str::trim) {
        Some(t) if !t.is_empty() => format!("{}: {t}", letter(i)),
        _ => format!("{}", letter(i)),
    }
}

/// Take the pins ([`PINS_KEY`]) out of a scenario.
pub fn strip_pins(value: &mut Value) {
    if let Some(o) = value.as_object_mut() {
        o.remove(PINS_KEY);
    }
}

/// A copy of the scenario without its pins.
#[must_use]
pub fn without_pins(value: &Value) -> Value {
    let mut bare = value.clone();
    strip_pins(&mut bare);
    bare
}

impl Pins {
    /// The pins, in order.
    #[must_use]
    pub fn list(&self) -> &[Pin] {
        &self.0
    }

    /// The pins, to update the views kept with them.
    pub fn list_mut(&mut self) -> &mut [Pin] {
        &mut self.0
    }

    /// How many are pinned.
    #[must_use]
    pub fn len(&self) -> usize {
        self.0.len()
    }

    /// Whether none is pinned.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// The scenario JSON of pin `i`.
    #[must_use]
    pub fn value(&self, i: usize) -> Option<&Value> {
        self.0.get(i).map(|p| &p.value)
    }

    /// The scenario with the pins added under [`PINS_KEY`] (unchanged when nothing is pinned).
    #[must_use]
    pub fn added_to(&self, mut value: Value) -> Value {
        if let (false, Some(obj)) = (self.0.is_empty(), value.as_object_mut()) {
            obj.insert(
                PINS_KEY.into(),
                Value::Array(self.0.iter().map(|p| p.value.clone()).collect()),
            );
        }
        value
    }

    /// The pins a scenario being loaded carries: `None` when it has no [`PINS_KEY`] (the pins
    /// stay as they are), else the valid ones (an empty list unpins all). Returns the scenario
    /// without the key, and a problem for each pin left out (not a valid scenario, or too many).
    #[must_use]
    pub fn taken_from(mut value: Value) -> (Value, Option<Pins>, Vec<Problem>) {
        let mut problems = Vec::new();
        let Some(taken) = value.as_object_mut().and_then(|o| o.remove(PINS_KEY)) else {
            return (value, None, problems);
        };
        let Value::Array(items) = taken else {
            problems.push(Problem {
                path: PINS_KEY.into(),
                message: "must be a list of scenarios; the pins were left as they were".into(),
            });
            return (value, None, problems);
        };
        let mut pins = Pins::default();
        for (i, mut item) in items.into_iter().enumerate() {
            if pins.len() == MAX_PINS {
                problems.push(Problem {
                    path: format!("{PINS_KEY}[{i}]"),
                    message: format!(
                        "at most {MAX_PINS} scenarios are pinned; this one and later ones were left out"
                    ),
                });
                break;
            }
            strip_pins(&mut item);
            if let Err(e) = pins.push(item) {
                problems.extend(e.problems().iter().map(|p| Problem {
                    path: format!("{PINS_KEY}[{i}].{}", p.path),
                    message: format!("{} (this pin was left out)", p.message),
                }));
            }
        }
        (value, Some(pins), problems)
    }

    fn push(&mut self, value: Value) -> Result<String, engine::ScenarioError> {
        let sc = engine::validate::scenario_from_value(&value)?;
        let name = pin_name(self.0.len(), &value);
        self.0.push(Pin {
            report: engine::evaluate(&sc),
            value,
            name: name.clone(),
            views: None,
        });
        Ok(name)
    }

    /// Pin a scenario (its own pins left out). Returns what to tell the user.
    pub fn pin(&mut self, value: &Value) -> String {
        if self.0.len() >= MAX_PINS {
            return format!("{MAX_PINS} scenarios are pinned already; unpin one first.");
        }
        match self.push(without_pins(value)) {
            Ok(name) => format!("Pinned as {name}."),
            Err(e) => format!("Not pinned: {e}"),
        }
    }

    /// Unpin pin `i`; the later ones move up a letter. Returns what to tell the user.
    pub fn unpin(&mut self, i: usize) -> String {
        if i >= self.0.len() {
            return String::new();
        }
        let gone = self.0.remove(i);
        for (k, p) in self.0.iter_mut().enumerate() {
            p.name = pin_name(k, &p.value);
        }
        format!("Unpinned {}.", gone.name)
    }

    /// Whether the scenario (without its pins) is one of the pins.
    #[must_use]
    pub fn holds(&self, value: &Value) -> bool {
        let bare = without_pins(value);
        self.0.iter().any(|p| p.value == bare)
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use serde_json::{json, Value};

    use super::{Pins, MAX_PINS, PINS_KEY};

    fn scenario(title: &str, read_noise: f64) -> Value {
        json!({"version": 1, "title": title,
            "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
                "read_noise_e": read_noise, "dark_current_e_per_s": 1, "adc_bits": 12,
                "system_gain_dn_per_e": 0.25},
            "light": {"photon_flux_per_um2_s": 1000}, "exposure": {"time_s": 0.01}})
    }

    #[test]
    fn pins_are_lettered_and_travel_in_the_scenario() {
        let mut pins = Pins::default();
        assert_eq!(pins.pin(&scenario("bench", 2.0)), "Pinned as A: bench.");
        assert_eq!(pins.pin(&scenario(" ", 3.0)), "Pinned as B.");
        let carried = pins.added_to(scenario("now", 4.0));
        assert_eq!(carried[PINS_KEY].as_array().unwrap().len(), 2);
        let (bare, again, problems) = Pins::taken_from(carried);
        assert!(problems.is_empty());
        assert!(bare.get(PINS_KEY).is_none());
        let again = again.unwrap();
        assert_eq!(again.list()[1].name, "B");
        assert!(again.holds(&scenario("bench", 2.0)));
        assert!(!again.holds(&scenario("bench", 2.5)));
        assert_eq!(pins.unpin(0), "Unpinned A: bench.");
        assert_eq!(pins.list()[0].name, "A");
        assert_eq!(pins.unpin(7), "");
    }

    #[test]
    fn bad_and_surplus_pins_are_left_out_and_said_so() {
        let mut bad = scenario("bad", 2.0);
        bad["sensor"]["full_well_e"] = json!(-1);
        let items: Vec<Value> = std::iter::once(bad)
            .chain((0..5).map(|i| scenario("ok", 2.0 + f64::from(i))))
            .collect();
        let (_, pins, problems) = Pins::taken_from(json!({ PINS_KEY: items }));
        assert_eq!(pins.unwrap().len(), MAX_PINS);
        let lines: Vec<String> = problems.iter().map(ToString::to_string).collect();
        assert_eq!(
            lines,
            [
                "x_pinned[0].sensor.full_well_e: must be > 0, got -1 (this pin was left out)",
                "x_pinned[5]: at most 4 scenarios are pinned; this one and later ones were left out",
            ]
        );
        let (_, pins, problems) = Pins::taken_from(json!({ PINS_KEY: 3 }));
        assert!(pins.is_none());
        assert_eq!(problems[0].path, PINS_KEY);
        let (_, pins, problems) = Pins::taken_from(json!({"version": 1}));
        assert!(pins.is_none() && problems.is_empty());
    }
}
