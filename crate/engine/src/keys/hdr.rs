//! The catalogue's HDR keys: the `hdr` object (several exposures, or two conversion gains,
//! stitched into one output), its exposures' and its low gain's keys.
//!
//! Entries only; the validator's reading of them is `validate/hdr.rs`, the stitch
//! `crate::hdr`.

use super::{Key, Object, Presence, Range, Rule, Section, Unit, When};

const fn hdr(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Hdr, Section::Hdr, path, rule)
}

const fn exposure(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::HdrExposure, Section::Hdr, path, rule)
}

const fn low_gain(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::HdrLowGain, Section::Hdr, path, rule)
}

const fn number(presence: Presence, range: super::RangeWithLimit) -> Rule {
    Rule::Number { presence, range }
}

/// How the readouts differ.
pub const HDR_KIND: Key = hdr(
    "hdr.kind",
    Rule::Choice {
        values: &["exposures", "dual_gain"],
        default: None,
    },
)
.words(
    "HDR readout",
    "HDR readout",
    "Exposures: the pixel integrates for the exposure time, then for shorter times, each read \
     on its own (multi-exposure HDR). Dual gain: the same charge is read at a high conversion \
     gain (the sensor's own keys) and a low one (below).",
)
.options(&[
    ("exposures", "Several exposures"),
    ("dual_gain", "Dual conversion gain"),
]);

/// Where the output leaves a readout.
pub const SWITCH_FRACTION: Key = hdr(
    "hdr.switch_fraction",
    number(
        Presence::Default(0.9),
        Range::new().above(0.0).at_most(1.0).unlimited(),
    ),
)
.unit(Unit::same("of saturation"))
.words(
    "Switch at",
    "switch point",
    "The output leaves a readout when its signal reaches this fraction of the readout's \
     saturation, and takes the next one.",
);

/// The width of the blend below each switch point.
pub const BLEND_FRACTION: Key = hdr(
    "hdr.blend_fraction",
    number(
        Presence::Default(0.0),
        Range::new().at_least(0.0).below(1.0).unlimited(),
    ),
)
.unit(Unit::same("of the switch level"))
.words(
    "Blend over",
    "blend width",
    "0: a hard switch. Otherwise the output blends the two readouts linearly over this \
     fraction of the scene level below each switch point.",
);

/// The shorter exposures.
pub const EXPOSURES: Key = hdr(
    "hdr.exposures",
    Rule::List {
        object: Object::HdrExposure,
        min: 1,
        max: 3,
    },
)
.words(
    "Shorter exposures",
    "shorter exposures",
    "After the exposure time above, 1 to 3 shorter exposures, each given by its ratio to the \
     one before it (2 to 4 exposures in all).",
)
.when(When::Choice {
    key: "kind",
    values: &["exposures"],
});

/// The low conversion gain.
pub const LOW_GAIN: Key = hdr(
    "hdr.low_gain",
    Rule::Object {
        object: Object::HdrLowGain,
        required: true,
    },
)
.words(
    "Low gain",
    "low conversion gain",
    "The second reading of the same charge, at a lower conversion gain.",
)
.when(When::Choice {
    key: "kind",
    values: &["dual_gain"],
});

/// An exposure's ratio to the one before it.
pub const EXPOSURE_RATIO: Key = exposure(
    "hdr.exposures[].ratio",
    number(
        Presence::Required,
        Range::new().at_least(1.0).at_most_limit(1e6),
    ),
)
.unit(Unit::same("×"))
.words(
    "Ratio",
    "exposure ratio",
    "How many times shorter this exposure is than the one before it.",
);

/// An exposure's read noise.
pub const EXPOSURE_READ_NOISE_E: Key = exposure(
    "hdr.exposures[].read_noise_e",
    number(
        Presence::DefaultFrom {
            words: "sensor.read_noise_e",
            value: 0.0,
        },
        Range::new().at_least(0.0).at_most_limit(1e6),
    ),
)
.unit(Unit::new("e⁻ rms", "e- rms"))
.words(
    "Read noise",
    "exposure read noise",
    "Temporal read noise of this exposure's read.",
);

/// An exposure's full well.
pub const EXPOSURE_FULL_WELL_E: Key = exposure(
    "hdr.exposures[].full_well_e",
    number(
        Presence::DefaultFrom {
            words: "sensor.full_well_e",
            value: 1.0,
        },
        Range::new()
            .above(0.0)
            .at_least_limit(1.0)
            .at_most_limit(1e12),
    ),
)
.unit(Unit::same("e⁻"))
.words(
    "Full well",
    "exposure full well",
    "Most charge this exposure holds (a split or lateral-overflow pixel may hold another).",
);

/// The low gain's system gain.
pub const LOW_GAIN_SYSTEM_GAIN_DN_PER_E: Key = low_gain(
    "hdr.low_gain.system_gain_dn_per_e",
    number(
        Presence::Required,
        Range::new()
            .above(0.0)
            .at_least_limit(1e-9)
            .at_most_limit(1e9),
    ),
)
.unit(Unit::new("DN/e⁻", "DN/e-"))
.words(
    "System gain K",
    "low-gain system gain",
    "Digital numbers per electron at the low gain; below the sensor's own (high-gain) K.",
);

/// The low gain's read noise.
pub const LOW_GAIN_READ_NOISE_E: Key = low_gain(
    "hdr.low_gain.read_noise_e",
    number(
        Presence::Required,
        Range::new().at_least(0.0).at_most_limit(1e6),
    ),
)
.unit(Unit::new("e⁻ rms", "e- rms"))
.words(
    "Read noise",
    "low-gain read noise",
    "Temporal read noise of the low-gain read, in electrons.",
);

/// The low gain's usable charge.
pub const LOW_GAIN_FULL_WELL_E: Key = low_gain(
    "hdr.low_gain.full_well_e",
    number(
        Presence::Required,
        Range::new()
            .above(0.0)
            .at_least_limit(1.0)
            .at_most_limit(1e12),
    ),
)
.unit(Unit::same("e⁻"))
.words(
    "Full well",
    "low-gain full well",
    "Most charge the low-gain reading holds (the photodiode with the added capacitance).",
);

/// The low gain's conversion gain.
pub const LOW_GAIN_CONVERSION_GAIN_UV_PER_E: Key = low_gain(
    "hdr.low_gain.conversion_gain_uv_per_e",
    number(
        Presence::DefaultFrom {
            words: "the high gain's, scaled by the ratio of the system gains",
            value: 1.0,
        },
        Range::new()
            .above(0.0)
            .at_least_limit(1e-6)
            .at_most_limit(1e9),
    ),
)
.unit(Unit::new("µV/e⁻", "uV/e-"))
.words(
    "Conversion gain",
    "low-gain conversion gain",
    "Output voltage per electron at the low gain; sets its reset noise with DDS or a single \
     sample.",
);

/// The `hdr` object itself, a key of the scenario.
pub const HDR: Key = Key::new(
    Object::Scenario,
    Section::Hdr,
    "hdr",
    Rule::Object {
        object: Object::Hdr,
        required: false,
    },
)
.words(
    "High dynamic range",
    "HDR readout",
    "Several readouts of the pixel combined into one linear output. Left out: one readout. \
     The figures above are the first readout's (the longest exposure, or the high gain).",
);

/// The scenario's HDR key.
pub(super) const TOP_KEYS: &[Key] = &[HDR];
/// The `hdr` object's keys.
pub(super) const HDR_KEYS: &[Key] = &[
    HDR_KIND,
    SWITCH_FRACTION,
    BLEND_FRACTION,
    EXPOSURES,
    LOW_GAIN,
];
/// An exposure's keys.
pub(super) const EXPOSURE_KEYS: &[Key] =
    &[EXPOSURE_RATIO, EXPOSURE_READ_NOISE_E, EXPOSURE_FULL_WELL_E];
/// The low gain's keys.
pub(super) const LOW_GAIN_KEYS: &[Key] = &[
    LOW_GAIN_SYSTEM_GAIN_DN_PER_E,
    LOW_GAIN_READ_NOISE_E,
    LOW_GAIN_FULL_WELL_E,
    LOW_GAIN_CONVERSION_GAIN_UV_PER_E,
];
