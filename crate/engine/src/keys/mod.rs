//! The catalogue of scenario keys: one entry per key of the format, stating once its dot path,
//! rule and default, unit (as shown to people and as written in CSV headers), label, help,
//! whether a sweep may vary it, and the section and choice it belongs to.
//!
//! Everything that needs to know a key reads it here: the validator checks each key with the
//! rule of its entry (`validate`), `sweep` takes the keys it may vary and their CSV units,
//! `curves` and the page's charts the axis words, the command's `--table` the units, and the
//! page's field markup is generated from it (`crate/web`, `markup.rs`), with help text that
//! quotes the rule ([`Key::help`]) so that it cannot state another. Rules that join keys (a
//! black level below the ADC's full scale, a capacitance for a DDS readout) live in `validate`,
//! and are named here only in words. This module reads no JSON and computes no figure.
//!
//! Adding a key is adding an entry: a `const` in the file of its object (`sensor.rs`,
//! `light.rs`, `scenario.rs`), listed in that file's `KEYS` in the order the page shows it,
//! then read in `validate` with `K.name` and `K.rule`. A nested object (a `detection` object,
//! per-channel values of a colour filter array) is a new [`Object`] with the places it occurs
//! at; a choice is [`Rule::Choice`], and keys that only belong while a choice is made say so
//! with [`When`]; a list of objects (the exposures of an HDR readout) is one more [`Rule`]
//! (a list of an [`Object`]'s keys), read by one more `Fields` method.
//!
//! Entries are `const`s and the run-time tables (such as [`SWEEPABLE`]) are projections made
//! at compile time, so a build that only validates (the page's wasm) carries the rules and
//! names it uses, not the help texts.

mod colour;
mod detection;
mod hdr;
mod light;
mod scenario;
mod sensor;
mod words;

pub use crate::input::{Range, RangeWithLimit};
pub use colour::{
    CHANNEL_B, CHANNEL_CORRELATION, CHANNEL_G, CHANNEL_QUANTUM_EFFICIENCY,
    CHANNEL_QUANTUM_EFFICIENCY_CURVE, CHANNEL_R, COLOUR_MATRIX, PROCESSING, WHITE_BALANCE,
};
pub use detection::{
    CONTRAST, CONTRAST_INTERVAL, DETECTION, DETECTION_PROBABILITY, FALSE_ALARM_PROBABILITY,
    PIXELS_SEARCHED,
};
pub use hdr::{
    BLEND_FRACTION, EXPOSURES, EXPOSURE_FULL_WELL_E, EXPOSURE_RATIO, EXPOSURE_READ_NOISE_E, HDR,
    HDR_KIND, LOW_GAIN, LOW_GAIN_CONVERSION_GAIN_UV_PER_E, LOW_GAIN_FULL_WELL_E,
    LOW_GAIN_READ_NOISE_E, LOW_GAIN_SYSTEM_GAIN_DN_PER_E, SWITCH_FRACTION,
};
pub use light::{
    light_kind, light_kind_name, LightKind, FIELD_ANGLE_DEG, F_NUMBER, ILLUMINANCE_LUX,
    IRRADIANCE_W_PER_M2, LENS_TRANSMISSION, LIGHT_KINDS, MAGNIFICATION, PHOTONS_PER_PIXEL,
    PHOTON_FLUX_PER_UM2_S, REFLECTANCE, SCENE_ILLUMINANCE_LUX, SCENE_IRRADIANCE_W_PER_M2,
    SCENE_LUMINANCE_CD_PER_M2, SCENE_RADIANCE_W_PER_M2_SR, SPECTRUM, SPECTRUM_CENTRE_NM,
    SPECTRUM_FWHM_NM, SPECTRUM_KIND, SPECTRUM_POINTS, SPECTRUM_TEMPERATURE_K,
    SPECTRUM_WAVELENGTH_NM, WAVELENGTH_NM,
};
pub use scenario::{
    BINNING, BINNING_MODE, FRAMES_AVERAGED, SNR_THRESHOLD, TEMPERATURE_C, TIME_S, TITLE, VERSION,
};
pub use sensor::{
    ADC_BITS, BAND_GAP_PARAMETERS, BLACK_LEVEL_DN, CFA, CHANNELS, CONVERSION_GAIN_UV_PER_E,
    DARK_CURRENT_DOUBLING_C, DARK_CURRENT_E_PER_S, DARK_CURRENT_LAW,
    DARK_CURRENT_NONUNIFORMITY_PERCENT, DARK_CURRENT_REFERENCE_C, DSNU_E, FULL_WELL_E,
    PIXEL_PITCH_UM, PRNU_PERCENT, QUANTUM_EFFICIENCY, QUANTUM_EFFICIENCY_CURVE, READOUT,
    READ_NOISE_E, RESPONSE_FROM_NM, RESPONSE_TO_NM, SENSE_NODE_CAPACITANCE_FF, SUMMING_WELL_E,
    SYSTEM_GAIN_DN_PER_E,
};
pub use words::number as number_words;

/// A JSON object of the scenario that holds keys.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Object {
    /// The scenario itself (`version`, `title`, `temperature_c`, …).
    Scenario,
    /// `sensor`.
    Sensor,
    /// A light: `light`, and the same keys in `background_light`.
    Light,
    /// The spectrum of a light: `light.spectrum`, `background_light.spectrum`.
    Spectrum,
    /// `exposure`.
    Exposure,
    /// `sensor.channels`: the colour channels under a colour filter array.
    Channels,
    /// One colour channel: `sensor.channels.R`, `.G`, `.B`.
    Channel,
    /// `processing`: white balance and the colour matrix.
    Processing,
    /// `hdr`: several readouts stitched into one output.
    Hdr,
    /// One shorter exposure of a multi-exposure HDR readout: `hdr.exposures[i]` (written
    /// `hdr.exposures[]` in the catalogue's paths).
    HdrExposure,
    /// `hdr.low_gain`: the low conversion gain of a dual-gain readout.
    HdrLowGain,
    /// `detection`: the detection task of the report's detection figures.
    Detection,
}

impl Object {
    /// The dot paths where this object occurs, the first being the one its entries are
    /// written for (`""` for the scenario itself).
    #[must_use]
    pub const fn places(self) -> &'static [&'static str] {
        match self {
            Object::Scenario => &[""],
            Object::Sensor => &["sensor"],
            Object::Light => &["light", "background_light"],
            Object::Spectrum => &["light.spectrum", "background_light.spectrum"],
            Object::Exposure => &["exposure"],
            Object::Channels => &["sensor.channels"],
            Object::Channel => &[
                "sensor.channels.R",
                "sensor.channels.G",
                "sensor.channels.B",
            ],
            Object::Processing => &["processing"],
            Object::Hdr => &["hdr"],
            Object::HdrExposure => &["hdr.exposures[]"],
            Object::HdrLowGain => &["hdr.low_gain"],
            Object::Detection => &["detection"],
        }
    }
}

/// Where the page's form shows a key (each section is a fieldset of its own).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Section {
    /// Not a field of the form (the page writes it itself: `version`).
    Hidden,
    /// The scenario as a whole (its title).
    Scenario,
    /// The sensor's pixel and its light response.
    Sensor,
    /// How the pixel is read out and digitised.
    Readout,
    /// A light (the light, and the background light: the same keys).
    Light,
    /// The exposure.
    Exposure,
    /// The conditions of the measurement.
    Conditions,
    /// Colour: the channels of a colour filter array, and the colour processing.
    Colour,
    /// High dynamic range: several readouts of the pixel.
    Hdr,
}

/// A unit as shown to people (`e⁻ rms`) and as written in CSV headers (`e- rms`); empty for a
/// key without one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Unit {
    /// As the page, the table and the charts write it.
    pub shown: &'static str,
    /// As a CSV header writes it (stable: files are read by other programs).
    pub csv: &'static str,
}

impl Unit {
    /// No unit (text, a choice).
    pub const NONE: Unit = Unit { shown: "", csv: "" };

    /// A unit written the same way everywhere.
    #[must_use]
    pub const fn same(both: &'static str) -> Unit {
        Unit {
            shown: both,
            csv: both,
        }
    }

    /// A unit shown one way and written another in CSV headers.
    #[must_use]
    pub const fn new(shown: &'static str, csv: &'static str) -> Unit {
        Unit { shown, csv }
    }
}

/// Whether a number key must be given, and what it is when it is not.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Presence {
    /// Required: missing is an error.
    Required,
    /// Required, with these words instead of "required, missing" when it is missing.
    RequiredSaying(&'static str),
    /// Required only in some cases, which a rule joining keys checks; the words say when
    /// ("unless …", "with …").
    RequiredWhen(&'static str),
    /// May be left out; nothing takes its place.
    Optional,
    /// Left out, it takes this value.
    Default(f64),
    /// Left out, it takes a value from other keys, as the words say; `value` when they give none.
    DefaultFrom {
        /// What it takes, in words.
        words: &'static str,
        /// The value when the other keys give none.
        value: f64,
    },
}

/// What the validator checks of a key's value: its type, and its range or choices.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum Rule {
    /// A number.
    Number {
        /// Whether it must be given.
        presence: Presence,
        /// The format's rule, then this calculator's limits.
        range: RangeWithLimit,
    },
    /// A whole number from `min` to `max`.
    Whole {
        /// The value when left out; `None`: required.
        default: Option<u32>,
        /// Smallest allowed.
        min: u32,
        /// Largest allowed.
        max: u32,
    },
    /// One of these values (in the order the validator's message lists them).
    Choice {
        /// The values allowed.
        values: &'static [&'static str],
        /// The value when left out; `None`: required.
        default: Option<&'static str>,
    },
    /// Free text, optional.
    Text,
    /// A list of `[wavelength_nm, value]` pairs, optional where not said otherwise.
    Pairs {
        /// Largest value allowed, if any (values are ≥ 0).
        max_value: Option<f64>,
        /// Whether it must be given.
        presence: Presence,
    },
    /// A nested object of keys of its own.
    Object {
        /// Which.
        object: Object,
        /// Whether it must be given.
        required: bool,
    },
    /// A list of exactly `count` numbers (white-balance gains), optional.
    Numbers {
        /// How many.
        count: u32,
        /// The range of each.
        range: RangeWithLimit,
        /// What it is when left out, in words.
        default_words: &'static str,
    },
    /// A matrix of numbers, a list of `rows` lists of `columns` each (a colour matrix),
    /// optional.
    Matrix {
        /// Rows.
        rows: u32,
        /// Columns.
        columns: u32,
        /// The range of each element.
        range: RangeWithLimit,
        /// What it is when left out, in words.
        default_words: &'static str,
    },
    /// A list of `min` to `max` objects of one kind (an HDR readout's exposures).
    List {
        /// The kind of each element.
        object: Object,
        /// Fewest elements.
        min: u32,
        /// Most elements.
        max: u32,
    },
    /// The format version: must be 1 (the validator words a newer one on its own).
    Version,
}

/// While which choice a key belongs (and is read, and shown).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum When {
    /// Always.
    Always,
    /// While the light object is of one of these kinds ([`LightKind::name`]).
    LightKind(&'static [&'static str]),
    /// While the choice key `key` of the same object has one of these values.
    Choice {
        /// The choice's key, in the same object (`kind` of a spectrum).
        key: &'static str,
        /// Its values for which this key belongs.
        values: &'static [&'static str],
    },
}

/// One scenario key.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Key {
    /// The object it is a key of.
    pub object: Object,
    /// Its dot path at the object's first place (`sensor.full_well_e`, `light.f_number`).
    pub path: &'static str,
    /// Its name within the object (the last part of the path).
    pub name: &'static str,
    /// What the validator checks.
    pub rule: Rule,
    /// Its unit.
    pub unit: Unit,
    /// The words of the form's label (`Full-well capacity`).
    pub label: &'static str,
    /// The quantity in words, as an axis or a readout names it (`exposure time`).
    pub quantity: &'static str,
    /// What it is, for the help text, without the rule (which [`Key::help`] adds).
    pub about: &'static str,
    /// Whether a sweep may vary it.
    pub sweep: bool,
    /// The form's section it is shown in.
    pub section: Section,
    /// The choice it belongs to.
    pub when: When,
    /// For a choice: each value with its words, in the order the form lists them (the
    /// default, or the usual one, first).
    pub options: &'static [(&'static str, &'static str)],
    /// The report figure that shows what the key is when it is left out and derived from
    /// another (`conversion_gain_uv_per_e` from the capacitance).
    pub derived: Option<&'static str>,
}

impl Key {
    /// A key at `path` of `object`, shown in `section`, checked by `rule`; the builder
    /// functions below fill in the rest.
    #[must_use]
    pub const fn new(object: Object, section: Section, path: &'static str, rule: Rule) -> Key {
        Key {
            object,
            path,
            name: last_part(path),
            rule,
            unit: Unit::NONE,
            label: "",
            quantity: "",
            about: "",
            sweep: false,
            section,
            when: When::Always,
            options: &[],
            derived: None,
        }
    }

    /// With this unit.
    #[must_use]
    pub const fn unit(mut self, unit: Unit) -> Key {
        self.unit = unit;
        self
    }

    /// With these words: the form's label, the quantity as an axis names it, what it is.
    #[must_use]
    pub const fn words(
        mut self,
        label: &'static str,
        quantity: &'static str,
        about: &'static str,
    ) -> Key {
        self.label = label;
        self.quantity = quantity;
        self.about = about;
        self
    }

    /// A sweep may vary it.
    #[must_use]
    pub const fn sweepable(mut self) -> Key {
        self.sweep = true;
        self
    }

    /// Belonging only while a choice is made.
    #[must_use]
    pub const fn when(mut self, when: When) -> Key {
        self.when = when;
        self
    }

    /// A choice's values with their words, as the form lists them.
    #[must_use]
    pub const fn options(mut self, options: &'static [(&'static str, &'static str)]) -> Key {
        self.options = options;
        self
    }

    /// Derived, when left out, as the report's figure at this path.
    #[must_use]
    pub const fn derived(mut self, report_path: &'static str) -> Key {
        self.derived = Some(report_path);
        self
    }

    /// Whether a sweep rounds it to whole numbers.
    #[must_use]
    pub const fn is_whole(&self) -> bool {
        matches!(self.rule, Rule::Whole { .. })
    }

    /// The help text: what the key is, then its presence and its rule in words, from the same
    /// [`Rule`] the validator checks.
    ///
    /// ```
    /// let help = engine::keys::FULL_WELL_E.help();
    /// assert!(help.ends_with("Required. Above 0; this calculator takes 1 to 10¹²."), "{help}");
    /// ```
    #[must_use]
    pub fn help(&self) -> String {
        let rule = self.rule_words();
        if rule.is_empty() {
            self.about.to_string()
        } else if self.about.is_empty() {
            rule
        } else {
            format!("{} {rule}", self.about)
        }
    }

    /// The presence and the rule in words, as sentences (`Required. Above 0; …`).
    #[must_use]
    pub fn rule_words(&self) -> String {
        words::rule(self)
    }

    /// Its dot path at every place of its object (`light.f_number`,
    /// `background_light.f_number`).
    pub fn paths(&self) -> impl Iterator<Item = String> + '_ {
        self.object.places().iter().map(move |at| {
            if at.is_empty() {
                self.name.to_string()
            } else {
                format!("{at}.{}", self.name)
            }
        })
    }
}

/// The catalogue, object by object (the sensor and its colour channels, a light, its spectrum,
/// the exposure, the conditions, colour processing, HDR, the detection task), each in the order the page's form
/// shows its keys.
pub const ALL: &[&[Key]] = &[
    scenario::HEAD,
    sensor::KEYS,
    colour::CHANNELS_KEYS,
    colour::CHANNEL_KEYS,
    light::KEYS,
    light::SPECTRUM_KEYS,
    scenario::EXPOSURE,
    scenario::CONDITIONS,
    colour::TOP_KEYS,
    colour::PROCESSING_KEYS,
    hdr::TOP_KEYS,
    hdr::HDR_KEYS,
    hdr::EXPOSURE_KEYS,
    hdr::LOW_GAIN_KEYS,
    detection::TOP_KEYS,
    detection::KEYS,
];

/// Every key of the catalogue, in the page's order within each object.
pub fn all() -> impl Iterator<Item = &'static Key> {
    ALL.iter().flat_map(|keys| keys.iter())
}

/// The entry of the key at this dot path (at any place of its object), if there is one.
#[must_use]
pub fn find(path: &str) -> Option<&'static Key> {
    all().find(|k| k.paths().any(|p| p == path))
}

/// A key a sweep may vary, as the sweep, the charts and CSV headers need it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Sweepable {
    /// Dot path (at the object's first place: a sweep varies the light, not the background).
    pub path: &'static str,
    /// Unit.
    pub unit: Unit,
    /// The quantity in words.
    pub quantity: &'static str,
    /// Whether its values are whole numbers (rounded at each point).
    pub whole: bool,
    /// The choice it belongs to (a light key belongs to some light kinds only).
    pub when: When,
}

/// The keys a sweep may vary, in catalogue order: a compile-time projection of the entries
/// marked [`Key::sweepable`].
pub static SWEEPABLE: [Sweepable; count_sweepable()] = sweepable_keys();

/// The sweepable key at this dot path.
#[must_use]
pub fn sweepable(path: &str) -> Option<&'static Sweepable> {
    SWEEPABLE.iter().find(|k| k.path == path)
}

impl Sweepable {
    /// Whether it is a key of a light of this kind ([`light_kind_name`]); keys of other
    /// objects belong to every light.
    #[must_use]
    pub fn belongs_to_light(&self, kind: &str) -> bool {
        match self.when {
            When::LightKind(kinds) => kinds.contains(&kind),
            _ => true,
        }
    }
}

/// The names of the keys that set a light's kind and amount (one per kind, [`LightKind::amount`]),
/// in catalogue order: the validator tells a light's kind by which of them is present.
pub const LIGHT_AMOUNTS: [&str; count_amounts()] = amount_names();

/// Each light kind's name, the path of its amount key and whether it has a spectrum: a
/// compile-time projection of [`LIGHT_KINDS`] without the choice's words (which only the page's
/// markup needs).
pub const LIGHT_KIND_AMOUNTS: [(&str, &str, bool); LIGHT_KINDS.len()] = kind_amounts();

/// The names of every key of a light object, in catalogue order.
pub const LIGHT_KEY_NAMES: [&str; light::KEYS.len()] = light_names();

// ---------------------------------------------------------------------------------------------
// Compile-time helpers. They run only in `const` initialisers, where an index out of range is a
// compile error, not a panic at run time.

/// The part of a dot path after its last dot.
const fn last_part(path: &'static str) -> &'static str {
    let bytes = path.as_bytes();
    let mut i = bytes.len();
    while i > 0 {
        #[allow(clippy::indexing_slicing)] // OK: i ≤ len − 1 here, and evaluated at compile time
        let b = bytes[i - 1];
        if b == b'.' {
            break;
        }
        i -= 1;
    }
    let (_, tail) = bytes.split_at(i);
    match std::str::from_utf8(tail) {
        Ok(s) => s,
        Err(_) => path,
    }
}

const fn same(a: &str, b: &str) -> bool {
    let (a, b) = (a.as_bytes(), b.as_bytes());
    if a.len() != b.len() {
        return false;
    }
    let mut i = 0;
    while i < a.len() {
        #[allow(clippy::indexing_slicing)] // OK: i < len of both, evaluated at compile time
        if a[i] != b[i] {
            return false;
        }
        i += 1;
    }
    true
}

const fn count_sweepable() -> usize {
    let mut n = 0;
    let mut g = 0;
    while g < ALL.len() {
        #[allow(clippy::indexing_slicing)] // OK: compile time, within bounds
        let keys = ALL[g];
        let mut i = 0;
        while i < keys.len() {
            #[allow(clippy::indexing_slicing)] // OK: compile time, within bounds
            if keys[i].sweep {
                n += 1;
            }
            i += 1;
        }
        g += 1;
    }
    n
}

#[allow(clippy::indexing_slicing)] // OK: compile time only; an index out of range fails the build
const fn sweepable_keys<const N: usize>() -> [Sweepable; N] {
    let mut out = [Sweepable {
        path: "",
        unit: Unit::NONE,
        quantity: "",
        whole: false,
        when: When::Always,
    }; N];
    let mut n = 0;
    let mut g = 0;
    while g < ALL.len() {
        let keys = ALL[g];
        let mut i = 0;
        while i < keys.len() {
            let k = &keys[i];
            if k.sweep {
                out[n] = Sweepable {
                    path: k.path,
                    unit: k.unit,
                    quantity: k.quantity,
                    whole: k.is_whole(),
                    when: k.when,
                };
                n += 1;
            }
            i += 1;
        }
        g += 1;
    }
    out
}

#[allow(clippy::indexing_slicing)] // OK: compile time only
const fn is_amount(name: &str) -> bool {
    let mut i = 0;
    while i < LIGHT_KINDS.len() {
        if same(last_part(LIGHT_KINDS[i].amount), name) {
            return true;
        }
        i += 1;
    }
    false
}

#[allow(clippy::indexing_slicing)] // OK: compile time only
const fn count_amounts() -> usize {
    let mut n = 0;
    let mut i = 0;
    while i < light::KEYS.len() {
        if is_amount(light::KEYS[i].name) {
            n += 1;
        }
        i += 1;
    }
    n
}

#[allow(clippy::indexing_slicing)] // OK: compile time only; an index out of range fails the build
const fn amount_names<const N: usize>() -> [&'static str; N] {
    let mut out = [""; N];
    let mut n = 0;
    let mut i = 0;
    while i < light::KEYS.len() {
        if is_amount(light::KEYS[i].name) {
            out[n] = light::KEYS[i].name;
            n += 1;
        }
        i += 1;
    }
    out
}

#[allow(clippy::indexing_slicing)] // OK: compile time only; an index out of range fails the build
const fn kind_amounts<const N: usize>() -> [(&'static str, &'static str, bool); N] {
    let mut out = [("", "", false); N];
    let mut i = 0;
    while i < N {
        let k = &LIGHT_KINDS[i];
        out[i] = (k.name, k.amount, k.spectrum);
        i += 1;
    }
    out
}

#[allow(clippy::indexing_slicing)] // OK: compile time only; an index out of range fails the build
const fn light_names<const N: usize>() -> [&'static str; N] {
    let mut out = [""; N];
    let mut i = 0;
    while i < N {
        out[i] = light::KEYS[i].name;
        i += 1;
    }
    out
}

#[cfg(test)]
mod tests;
