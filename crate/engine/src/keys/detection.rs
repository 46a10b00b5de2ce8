//! The catalogue's detection keys: the optional `detection` object, the task the report's
//! detection figures answer (false-alarm and detection probabilities, pixels searched, the
//! contrast of the contrast detection probability).
//!
//! Entries only; the validator's reading of them is `validate/detection.rs`, the figures
//! `crate::detection` (wired into the report by `model/detection.rs`). The page shows them
//! with the conditions.

use super::{Key, Object, Presence, Range, Rule, Section, Unit};
use crate::detection::contrast::DEFAULT_CONFIDENCE_INTERVAL;
use crate::detection::neyman_pearson::MIN_PROBABILITY;
use crate::detection::{DEFAULT_DETECTION_PROBABILITY, DEFAULT_FALSE_ALARM_PROBABILITY};

const fn detection(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Detection, Section::Conditions, path, rule)
}

/// A probability strictly between 0 and 1, within the detection solvers' limits
/// [1e-15, 1 − 1e-15] (`neyman_pearson::MIN_PROBABILITY`).
const fn probability(default: f64) -> Rule {
    Rule::Number {
        presence: Presence::Default(default),
        range: Range::new()
            .above(0.0)
            .below(1.0)
            .at_least_limit(MIN_PROBABILITY)
            .at_most_limit(1.0 - MIN_PROBABILITY),
    }
}

/// The per-pixel false-alarm probability.
pub const FALSE_ALARM_PROBABILITY: Key = detection(
    "detection.false_alarm_probability",
    probability(DEFAULT_FALSE_ALARM_PROBABILITY),
)
.unit(Unit::new("per pixel", "1"))
.sweepable()
.words(
    "False-alarm probability",
    "false-alarm probability",
    "Probability that a pixel without signal is declared detected: sets the decision \
     threshold on the charge (Neyman–Pearson, exact Poisson–Gaussian).",
);

/// The detection probability the detection signal is found for.
pub const DETECTION_PROBABILITY: Key = detection(
    "detection.detection_probability",
    probability(DEFAULT_DETECTION_PROBABILITY),
)
.unit(Unit::new("probability", "1"))
.sweepable()
.words(
    "Detection probability wanted",
    "required detection probability",
    "The report's detection signal is the signal detected with this probability at the \
     threshold.",
);

/// Pixels searched per frame.
pub const PIXELS_SEARCHED: Key = detection(
    "detection.pixels",
    Rule::Whole {
        // One: the per-frame figure is the per-pixel one until the pixels searched are given
        // (a default of a megapixel put a false-alarm warning on every scenario).
        default: Some(1),
        min: 1,
        max: 4_000_000_000,
    },
)
.unit(Unit::same("pixels"))
.sweepable()
.words(
    "Pixels searched",
    "pixels searched per frame",
    "M pixels searched in each frame, for the probability of at least one false alarm in a \
     frame. Give the pixels of the region you search: with the default of one, the per-frame \
     figure is the per-pixel one.",
);

/// The Weber contrast of the target patch.
pub const CONTRAST: Key = detection(
    "detection.contrast",
    Rule::Number {
        presence: Presence::Default(0.1),
        range: Range::new().above(-1.0).at_most(100.0).unlimited(),
    },
)
.unit(Unit::new("Weber contrast", "1"))
.sweepable()
.words(
    "Contrast",
    "contrast",
    "Weber contrast C of a target patch against a reference patch at the scenario's light \
     (target signal × (1 + C)), for the contrast detection probability; not 0.",
);

/// The confidence interval of the contrast detection probability.
pub const CONTRAST_INTERVAL: Key = detection(
    "detection.contrast_interval",
    Rule::Number {
        presence: Presence::Default(DEFAULT_CONFIDENCE_INTERVAL),
        range: Range::new().above(0.0).at_most(1.0).unlimited(),
    },
)
.unit(Unit::new("of the contrast", "1"))
.sweepable()
.words(
    "Contrast interval",
    "contrast confidence interval",
    "ε: the contrast detection probability is the probability that the measured contrast \
     lies within ±ε·|C| of the true one.",
);

/// The `detection` object itself, a key of the scenario.
pub const DETECTION: Key = Key::new(
    Object::Scenario,
    Section::Conditions,
    "detection",
    Rule::Object {
        object: Object::Detection,
        required: false,
    },
)
.words(
    "Detection",
    "detection task",
    "The detection task for the report's detection figures. Left out: every key at its \
     default.",
);

/// The scenario's detection key.
pub(super) const TOP_KEYS: &[Key] = &[DETECTION];
/// The `detection` object's keys, in the order the page shows them.
pub(super) const KEYS: &[Key] = &[
    FALSE_ALARM_PROBABILITY,
    DETECTION_PROBABILITY,
    PIXELS_SEARCHED,
    CONTRAST,
    CONTRAST_INTERVAL,
];
