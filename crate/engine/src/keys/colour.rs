//! The catalogue's colour keys: each channel's response under a colour filter array
//! (`sensor.channels.R|G|B`), and how raw channels become output colours (`processing`).
//!
//! Entries only; the validator's reading of them is `validate/colour.rs`, the arithmetic
//! `crate::colour`.

use super::{Key, Object, Presence, Range, Rule, Section, Unit};

const fn channels(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Channels, Section::Colour, path, rule)
}

const fn channel(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Channel, Section::Colour, path, rule)
}

const fn processing(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Processing, Section::Colour, path, rule)
}

const CHANNEL_OBJECT: Rule = Rule::Object {
    object: Object::Channel,
    required: true,
};

/// The red pixels.
pub const CHANNEL_R: Key = channels("sensor.channels.R", CHANNEL_OBJECT).words(
    "Red pixels",
    "red channel",
    "The response of the pixels under red filters.",
);
/// The green pixels (both greens of a Bayer quad).
pub const CHANNEL_G: Key = channels("sensor.channels.G", CHANNEL_OBJECT).words(
    "Green pixels",
    "green channel",
    "The response of the pixels under green filters (both of a Bayer quad).",
);
/// The blue pixels.
pub const CHANNEL_B: Key = channels("sensor.channels.B", CHANNEL_OBJECT).words(
    "Blue pixels",
    "blue channel",
    "The response of the pixels under blue filters.",
);

/// A channel's quantum efficiency, one value.
pub const CHANNEL_QUANTUM_EFFICIENCY: Key = channel(
    "sensor.channels.R.quantum_efficiency",
    Rule::Number {
        presence: Presence::RequiredWhen(
            "unless the channel's QE curve covers the light’s spectrum or wavelength",
        ),
        range: Range::new().above(0.0).at_least_limit(1e-6).at_most(1.0),
    },
)
.unit(Unit::new("e⁻/photon", "1"))
.words(
    "Quantum efficiency",
    "channel quantum efficiency",
    "Electrons collected per photon arriving on the pixel area through this channel's filter.",
);

/// A channel's quantum efficiency against wavelength.
pub const CHANNEL_QUANTUM_EFFICIENCY_CURVE: Key = channel(
    "sensor.channels.R.quantum_efficiency_curve",
    Rule::Pairs {
        max_value: Some(1.0),
        presence: Presence::Optional,
    },
)
.unit(Unit::new("nm, QE", "nm, 1"))
.words(
    "Quantum efficiency curve",
    "channel quantum efficiency curve",
    "This channel's QE against wavelength, filter included, one pair a line (wavelength in nm, \
     then QE). For light with a spectrum it replaces the single value.",
);

/// White-balance gains.
pub const WHITE_BALANCE: Key = processing(
    "processing.white_balance",
    Rule::Numbers {
        count: 3,
        range: Range::new()
            .above(0.0)
            .at_least_limit(1e-3)
            .at_most_limit(1e3),
        default_words: "1, 1, 1",
    },
)
.unit(Unit::same("×"))
.words(
    "White balance",
    "white-balance gains",
    "Gains of R, G and B applied before the colour matrix, as [r, g, b].",
);

/// The colour-correction matrix.
pub const COLOUR_MATRIX: Key = processing(
    "processing.colour_matrix",
    Rule::Matrix {
        rows: 3,
        columns: 3,
        range: Range::new().at_least_limit(-100.0).at_most_limit(100.0),
        default_words: "the identity",
    },
)
.words(
    "Colour matrix",
    "colour-correction matrix",
    "3 × 3 matrix from white-balanced R, G, B to output R, G, B, rows first: \
     [[rr, rg, rb], [gr, gg, gb], [br, bg, bb]].",
);

/// Correlation of the raw channels' noise.
pub const CHANNEL_CORRELATION: Key = processing(
    "processing.channel_correlation",
    Rule::Number {
        presence: Presence::Default(0.0),
        range: Range::new().at_least(0.0).at_most(1.0).unlimited(),
    },
)
.words(
    "Channel correlation",
    "channel noise correlation",
    "Correlation coefficient of the noise of every pair of raw channels in one output pixel: 0 \
     for a 2 × 2 quad made into one colour pixel, above 0 where interpolating demosaicing \
     shares samples between channels.",
);

/// The `processing` object itself, a key of the scenario.
pub const PROCESSING: Key = Key::new(
    Object::Scenario,
    Section::Colour,
    "processing",
    Rule::Object {
        object: Object::Processing,
        required: false,
    },
)
.words(
    "Colour processing",
    "colour processing",
    "White balance and colour matrix between the raw channels and the output colours; only \
     with a Bayer pattern. Left out: no gains, no matrix.",
);

/// The scenario's colour key.
pub(super) const TOP_KEYS: &[Key] = &[PROCESSING];
/// The `sensor.channels` object's keys.
pub(super) const CHANNELS_KEYS: &[Key] = &[CHANNEL_R, CHANNEL_G, CHANNEL_B];
/// A channel's keys.
pub(super) const CHANNEL_KEYS: &[Key] =
    &[CHANNEL_QUANTUM_EFFICIENCY, CHANNEL_QUANTUM_EFFICIENCY_CURVE];
/// The `processing` object's keys.
pub(super) const PROCESSING_KEYS: &[Key] = &[WHITE_BALANCE, COLOUR_MATRIX, CHANNEL_CORRELATION];
