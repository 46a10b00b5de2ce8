//! The catalogue's `sensor` keys: the pixel and its light response, then its readout.
//!
//! Entries only (see the module above for what each field means); the validator's reading of
//! them is `validate/sensor.rs`.

use super::{Key, Object, Presence, Range, Rule, Section, Unit, When};

const fn sensor(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Sensor, Section::Sensor, path, rule)
}

const fn readout(path: &'static str, rule: Rule) -> Key {
    Key::new(Object::Sensor, Section::Readout, path, rule)
}

const fn number(presence: Presence, range: super::RangeWithLimit) -> Rule {
    Rule::Number { presence, range }
}

/// Pixel pitch.
pub const PIXEL_PITCH_UM: Key = sensor(
    "sensor.pixel_pitch_um",
    number(
        Presence::Required,
        Range::new()
            .above(0.0)
            .at_least_limit(1e-3)
            .at_most_limit(1e4),
    ),
)
.unit(Unit::same("µm"))
.words(
    "Pixel pitch",
    "pixel pitch",
    "Centre-to-centre distance of neighbouring pixels. The light-collecting area is taken as \
     its square.",
)
.sweepable();

/// Quantum efficiency η, one value.
pub const QUANTUM_EFFICIENCY: Key = sensor(
    "sensor.quantum_efficiency",
    number(
        Presence::RequiredWhen("unless a QE curve below covers the light’s spectrum or wavelength"),
        Range::new().above(0.0).at_least_limit(1e-6).at_most(1.0),
    ),
)
.unit(Unit::new("e⁻/photon", "1"))
.words(
    "Quantum efficiency η",
    "quantum efficiency",
    "Electrons collected per photon arriving on the pixel area, fill factor and microlens \
     included.",
)
.sweepable();

/// Quantum efficiency against wavelength.
pub const QUANTUM_EFFICIENCY_CURVE: Key = sensor(
    "sensor.quantum_efficiency_curve",
    Rule::Pairs {
        max_value: Some(1.0),
        presence: Presence::Optional,
    },
)
.unit(Unit::new("nm, QE", "nm, 1"))
.words(
    "Quantum efficiency curve",
    "quantum efficiency curve",
    "QE against wavelength, one pair a line (wavelength in nm, then QE, separated by a tab, \
     comma, semicolon or spaces). Linear between points, zero outside; for light with a \
     spectrum it replaces the single value above.",
);

/// Start of the response band.
pub const RESPONSE_FROM_NM: Key = sensor(
    "sensor.response_from_nm",
    number(
        Presence::DefaultFrom {
            words: "the QE curve’s first wavelength, else 380 nm",
            value: 380.0,
        },
        Range::new().above(0.0).at_most_limit(1e6),
    ),
)
.unit(Unit::same("nm"))
.words(
    "Responds from",
    "start of the response band",
    "Start of the band the sensor responds to: photons of spectral light are counted over it.",
);

/// End of the response band.
pub const RESPONSE_TO_NM: Key = sensor(
    "sensor.response_to_nm",
    number(
        Presence::DefaultFrom {
            words: "the QE curve’s last wavelength, else 780 nm",
            value: 780.0,
        },
        Range::new().above(0.0).at_most_limit(1e6),
    ),
)
.unit(Unit::same("nm"))
.words(
    "Responds to",
    "end of the response band",
    "End of that band; above its start.",
);

/// Full-well capacity.
pub const FULL_WELL_E: Key = sensor(
    "sensor.full_well_e",
    number(
        Presence::Required,
        Range::new()
            .above(0.0)
            .at_least_limit(1.0)
            .at_most_limit(1e12),
    ),
)
.unit(Unit::new("e⁻", "e-"))
.words(
    "Full-well capacity",
    "full-well capacity",
    "Most charge one pixel holds before it clips.",
)
.sweepable();

/// Capacity of the node charge binning sums into.
pub const SUMMING_WELL_E: Key = sensor(
    "sensor.summing_well_e",
    number(
        Presence::Optional,
        Range::new()
            .above(0.0)
            .at_least_limit(1.0)
            .at_most_limit(1e15),
    ),
)
.unit(Unit::new("e⁻", "e-"))
.words(
    "Summing-well capacity",
    "summing-well capacity",
    "Most charge the node that sums charge-binned pixels holds (CCD summing well, shared \
     floating diffusion). Used only with charge binning.",
);

/// Photo-response non-uniformity.
pub const PRNU_PERCENT: Key = sensor(
    "sensor.prnu_percent",
    number(
        Presence::Default(0.0),
        Range::new().at_least(0.0).at_most_limit(100.0),
    ),
)
.unit(Unit::new("% of signal", "%"))
.words(
    "PRNU",
    "PRNU",
    "Photo-response non-uniformity: pixel-to-pixel spread of sensitivity, spatial rms, as a \
     percentage of the signal. A fixed pattern: averaging frames does not reduce it.",
)
.sweepable();

/// Dark current at the reference temperature.
pub const DARK_CURRENT_E_PER_S: Key = sensor(
    "sensor.dark_current_e_per_s",
    number(
        Presence::Required,
        Range::new().at_least(0.0).at_most_limit(1e12),
    ),
)
.unit(Unit::new("e⁻/s", "e-/s"))
.words(
    "Dark current",
    "dark current",
    "Mean thermally generated charge per pixel per second, at the reference temperature below.",
)
.sweepable();

/// The temperature the dark current is given at.
pub const DARK_CURRENT_REFERENCE_C: Key = sensor(
    "sensor.dark_current_reference_c",
    number(
        Presence::Default(25.0),
        Range::new().above(-273.15).at_most_limit(1000.0),
    ),
)
.unit(Unit::same("°C"))
.words(
    "Dark current given at",
    "dark current reference temperature",
    "Sensor temperature at which the dark current above holds.",
)
.sweepable();

/// The temperature rise that doubles the dark current.
pub const DARK_CURRENT_DOUBLING_C: Key = sensor(
    "sensor.dark_current_doubling_c",
    number(
        Presence::Default(6.5),
        Range::new().above(0.0).at_most_limit(1e6),
    ),
)
.unit(Unit::same("°C"))
.words(
    "Dark current doubles every",
    "dark current doubling temperature",
    "Temperature rise over which the dark current doubles.",
)
.sweepable()
.when(When::Choice {
    key: "dark_current_law",
    values: &["doubling"],
});

/// The colour filter array over the pixels.
pub const CFA: Key = sensor(
    "sensor.cfa",
    Rule::Choice {
        values: &["mono", "RGGB", "BGGR", "GRBG", "GBRG"],
        default: Some("mono"),
    },
)
.words(
    "Colour filter array",
    "colour filter array",
    "Mono: no colour filter. A Bayer pattern (named by its top-left 2 × 2 block) gives each \
     pixel a red, green or blue filter, each with its own quantum efficiency below; the \
     figures above are then the green channel's.",
)
.options(&[
    ("mono", "None (monochrome)"),
    ("RGGB", "Bayer RGGB"),
    ("BGGR", "Bayer BGGR"),
    ("GRBG", "Bayer GRBG"),
    ("GBRG", "Bayer GBRG"),
]);

/// Each colour channel's response.
pub const CHANNELS: Key = sensor(
    "sensor.channels",
    Rule::Object {
        object: Object::Channels,
        required: false,
    },
)
.words(
    "Colour channels",
    "colour channels",
    "The quantum efficiency of the red, green and blue pixels (R, G, B), each a value or a \
     curve; required with a Bayer pattern, refused without one.",
);

/// The law by which the dark current changes with temperature.
pub const DARK_CURRENT_LAW: Key = sensor(
    "sensor.dark_current_law",
    Rule::Choice {
        values: &["doubling", "bandgap"],
        default: Some("doubling"),
    },
)
.words(
    "Dark current against temperature",
    "dark current law",
    "Doubling: the dark current doubles every so many degrees (common practice). Band gap: \
     depletion-region generation, T^1.5·exp(−E_g(T)/2kT), with silicon's band gap by \
     Varshni's form; its doubling interval itself grows with temperature.",
)
.options(&[
    ("doubling", "Doubles every so many degrees"),
    ("bandgap", "Band-gap law of silicon"),
]);

/// The parameter set of silicon's band gap for the band-gap law.
pub const BAND_GAP_PARAMETERS: Key = sensor(
    "sensor.band_gap_parameters",
    Rule::Choice {
        values: &["varshni_1967", "thurmond_1975", "sze_ng_2007"],
        default: Some("varshni_1967"),
    },
)
.words(
    "Band-gap parameters",
    "band-gap parameter set",
    "E_g(T) = E_g(0) − α·T²/(T + β): Varshni 1967 (1.1557 eV, 702.1 µeV/K, 1108 K), \
     Thurmond 1975 (1.17 eV, 473 µeV/K, 636 K), or Sze & Ng 2007 (1.169 eV, 490 µeV/K, \
     655 K).",
)
.options(&[
    ("varshni_1967", "Varshni 1967"),
    ("thurmond_1975", "Thurmond 1975"),
    ("sze_ng_2007", "Sze & Ng 2007"),
])
.when(When::Choice {
    key: "dark_current_law",
    values: &["bandgap"],
});

/// Spatial non-uniformity of the dark current, growing with the dark charge.
pub const DARK_CURRENT_NONUNIFORMITY_PERCENT: Key = sensor(
    "sensor.dark_current_nonuniformity_percent",
    number(
        Presence::Default(0.0),
        Range::new().at_least(0.0).at_most_limit(1000.0),
    ),
)
.unit(Unit::same("% of dark current"))
.words(
    "Dark-current non-uniformity",
    "dark-current non-uniformity",
    "Pixel-to-pixel spread of the dark current, spatial rms, as a percentage of its mean: a \
     fixed pattern that grows with the dark charge (exposure, temperature), added to the DSNU \
     below in variance.",
)
.sweepable();

/// Dark signal non-uniformity.
pub const DSNU_E: Key = sensor(
    "sensor.dsnu_e",
    number(
        Presence::Default(0.0),
        Range::new().at_least(0.0).at_most_limit(1e9),
    ),
)
.unit(Unit::new("e⁻ rms", "e- rms"))
.words(
    "DSNU",
    "DSNU",
    "Dark signal non-uniformity: pixel-to-pixel spread of the dark level, spatial rms. A fixed \
     pattern.",
)
.sweepable();

/// How the reset level is sampled.
pub const READOUT: Key = readout(
    "sensor.readout",
    Rule::Choice {
        values: &["cds", "dds", "single"],
        default: Some("cds"),
    },
)
.words(
    "Reset sampling",
    "reset sampling",
    "CDS cancels reset (kTC) noise, as in a pinned-photodiode pixel. DDS subtracts a different \
     reset and leaves 2kT/C; a single sample leaves kT/C. DDS and single need the capacitance \
     or the conversion gain.",
)
.options(&[
    ("cds", "CDS: correlated double sampling"),
    ("dds", "DDS: two separate resets"),
    ("single", "Single sample"),
]);

/// Temporal read noise.
pub const READ_NOISE_E: Key = readout(
    "sensor.read_noise_e",
    number(
        Presence::Required,
        Range::new().at_least(0.0).at_most_limit(1e6),
    ),
)
.unit(Unit::new("e⁻ rms", "e- rms"))
.words(
    "Read noise",
    "read noise",
    "Temporal noise of one read of the pixel, without reset, quantization or dark shot noise.",
)
.sweepable();

/// Sense-node capacitance.
pub const SENSE_NODE_CAPACITANCE_FF: Key = readout(
    "sensor.sense_node_capacitance_ff",
    number(
        Presence::RequiredWhen("for DDS and single sampling, unless the conversion gain is given"),
        Range::new()
            .above(0.0)
            .at_least_limit(1e-6)
            .at_most_limit(1e9),
    ),
)
.unit(Unit::same("fF"))
.words(
    "Sense-node capacitance",
    "sense-node capacitance",
    "Floating-diffusion capacitance C; sets reset noise. Give it, the conversion gain, or both; \
     one empty is derived from the other.",
)
.sweepable()
.derived("sense_node_capacitance_ff");

/// Output-referred conversion gain.
pub const CONVERSION_GAIN_UV_PER_E: Key = readout(
    "sensor.conversion_gain_uv_per_e",
    number(
        Presence::Optional,
        Range::new()
            .above(0.0)
            .at_least_limit(1e-6)
            .at_most_limit(1e9),
    ),
)
.unit(Unit::new("µV/e⁻", "µV/e-"))
.words(
    "Conversion gain",
    "conversion gain",
    "Output voltage per electron; q/C with a unity-gain buffer when only C is given. Used to \
     show the noise in µV.",
)
.sweepable()
.derived("conversion_gain_uv_per_e");

/// System gain K.
pub const SYSTEM_GAIN_DN_PER_E: Key = readout(
    "sensor.system_gain_dn_per_e",
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
    "system gain",
    "Digital numbers out of the ADC per electron, as EMVA 1288 measures it.",
)
.sweepable();

/// ADC resolution.
pub const ADC_BITS: Key = readout(
    "sensor.adc_bits",
    Rule::Whole {
        default: None,
        min: 1,
        max: 32,
    },
)
.unit(Unit::new("bits", "bit"))
.words(
    "ADC resolution",
    "ADC resolution",
    "Bits of the analog-to-digital converter.",
)
.sweepable();

/// Offset before the ADC.
pub const BLACK_LEVEL_DN: Key = readout(
    "sensor.black_level_dn",
    number(
        Presence::Default(0.0),
        Range::new().at_least(0.0).unlimited(),
    ),
)
.unit(Unit::same("DN"))
.words(
    "Black level",
    "black level",
    "Offset added before the ADC; it uses up part of the ADC’s range, so it must be below its \
     full scale, 2^bits − 1.",
)
.sweepable();

/// The sensor's keys in the order the page shows them.
pub(super) const KEYS: &[Key] = &[
    PIXEL_PITCH_UM,
    QUANTUM_EFFICIENCY,
    QUANTUM_EFFICIENCY_CURVE,
    RESPONSE_FROM_NM,
    RESPONSE_TO_NM,
    FULL_WELL_E,
    SUMMING_WELL_E,
    PRNU_PERCENT,
    DARK_CURRENT_E_PER_S,
    DARK_CURRENT_REFERENCE_C,
    DARK_CURRENT_LAW,
    DARK_CURRENT_DOUBLING_C,
    BAND_GAP_PARAMETERS,
    DSNU_E,
    DARK_CURRENT_NONUNIFORMITY_PERCENT,
    CFA,
    CHANNELS,
    READOUT,
    READ_NOISE_E,
    SENSE_NODE_CAPACITANCE_FF,
    CONVERSION_GAIN_UV_PER_E,
    SYSTEM_GAIN_DN_PER_E,
    ADC_BITS,
    BLACK_LEVEL_DN,
];
