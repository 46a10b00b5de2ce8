//! The catalogue's keys of the scenario itself (`version`, `title`, the conditions) and of its
//! `exposure`.
//!
//! Entries only; the validator reads them in `validate/mod.rs` and `validate/exposure.rs`.

use super::{Key, Object, Presence, Range, Rule, Section, Unit};

/// The format version.
pub const VERSION: Key = Key::new(Object::Scenario, Section::Hidden, "version", Rule::Version)
    .words(
        "Format version",
        "format version",
        "The version of the scenario format; this calculator reads version 1.",
    );

/// Free text.
pub const TITLE: Key = Key::new(Object::Scenario, Section::Scenario, "title", Rule::Text).words(
    "Title",
    "title",
    "Free text to tell scenarios apart; printed at the top of the report.",
);

/// The keys of the scenario itself that come first.
pub(super) const HEAD: &[Key] = &[VERSION, TITLE];

const fn exposure(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Exposure, Section::Exposure, path, rule)
}

/// Integration time of one frame.
pub const TIME_S: Key = exposure(
    "exposure.time_s",
    Rule::Number {
        presence: Presence::Required,
        range: Range::new()
            .above(0.0)
            .at_least_limit(1e-12)
            .at_most_limit(1e6),
    },
)
.unit(Unit::same("s"))
.words(
    "Exposure time",
    "exposure time",
    "Integration time of one frame, in seconds (0.01 is 10 ms).",
)
.sweepable();

/// Frames averaged.
pub const FRAMES_AVERAGED: Key = exposure(
    "exposure.frames_averaged",
    Rule::Whole {
        default: Some(1),
        min: 1,
        max: 1_000_000,
    },
)
.unit(Unit::same("frames"))
.words(
    "Frames averaged",
    "frames averaged",
    "N frames averaged into one result: temporal noise falls, fixed patterns stay.",
)
.sweepable();

/// The binning factor.
pub const BINNING: Key = exposure(
    "exposure.binning",
    Rule::Whole {
        default: Some(1),
        min: 1,
        max: 1000,
    },
)
.unit(Unit::new("pixels per side", "pixels"))
.words(
    "Binning",
    "binning",
    "b × b neighbouring pixels combined into one output pixel; 1 means no binning.",
)
.sweepable();

/// Where binned pixels are summed.
pub const BINNING_MODE: Key = exposure(
    "exposure.binning_mode",
    Rule::Choice {
        values: &["charge", "digital"],
        default: Some("digital"),
    },
)
.words(
    "Binning done",
    "binning mode",
    "Charge binning sums before the read, so read noise counts once; digital binning reads \
     every pixel.",
)
.options(&[
    ("digital", "digitally, after each pixel is read"),
    ("charge", "in charge, read once"),
]);

/// The exposure's keys in the order the page shows them.
pub(super) const EXPOSURE: &[Key] = &[TIME_S, FRAMES_AVERAGED, BINNING, BINNING_MODE];

const fn condition(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Scenario, Section::Conditions, path, rule)
}

/// Sensor temperature.
pub const TEMPERATURE_C: Key = condition(
    "temperature_c",
    Rule::Number {
        presence: Presence::Default(25.0),
        range: Range::new().above(-273.15).at_most_limit(1000.0),
    },
)
.unit(Unit::same("°C"))
.words(
    "Sensor temperature",
    "temperature",
    "Temperature of the sensor die while exposing; scales the dark current.",
)
.sweepable();

/// The SNR that counts as detected.
pub const SNR_THRESHOLD: Key = condition(
    "snr_threshold",
    Rule::Number {
        presence: Presence::Default(1.0),
        range: Range::new()
            .above(0.0)
            .at_least_limit(1e-3)
            .at_most_limit(1e6),
    },
)
.unit(Unit::new("ratio", "1"))
.words(
    "Detected at SNR",
    "SNR threshold",
    "Signal-to-noise ratio that counts as detected, for the detection limit and the exposure \
     needed.",
)
.sweepable();

/// The conditions, in the order the page shows them.
pub(super) const CONDITIONS: &[Key] = &[TEMPERATURE_C, SNR_THRESHOLD];
