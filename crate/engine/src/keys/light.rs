//! The catalogue's light keys (the same in `light` and `background_light`), the light kinds the
//! page offers, and the keys of a light's `spectrum`.
//!
//! Entries only; the validator's reading of them is `validate/light.rs`.

use super::{Key, Object, Presence, Range, RangeWithLimit, Rule, Section, Unit, When};
use crate::light::{Light, SceneQuantity};

/// One way of giving a light, as the page's light choice offers it. The kind of a light object
/// is told by which amount key it has (and, for irradiance, whether it has a spectrum).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LightKind {
    /// The choice's value (the amount key's name, or `irradiance_spectrum`).
    pub name: &'static str,
    /// The choice's words.
    pub label: &'static str,
    /// The dot path of the key that gives the light's amount (what a light view sweeps).
    pub amount: &'static str,
    /// Whether the light has a spectrum.
    pub spectrum: bool,
}

const fn kind(
    name: &'static str,
    label: &'static str,
    amount: &'static str,
    spectrum: bool,
) -> LightKind {
    LightKind {
        name,
        label,
        amount,
        spectrum,
    }
}

const FLUX: LightKind = kind(
    "photon_flux_per_um2_s",
    "photon flux at the sensor",
    "light.photon_flux_per_um2_s",
    false,
);
const IRRADIANCE: LightKind = kind(
    "irradiance_w_per_m2",
    "irradiance at one wavelength, at the sensor",
    "light.irradiance_w_per_m2",
    false,
);
const IRRADIANCE_SPECTRUM: LightKind = kind(
    "irradiance_spectrum",
    "irradiance with a spectrum, at the sensor",
    "light.irradiance_w_per_m2",
    true,
);
const ILLUMINANCE: LightKind = kind(
    "illuminance_lux",
    "illuminance (lux) at the sensor, with a spectrum",
    "light.illuminance_lux",
    true,
);
const PER_PIXEL: LightKind = kind(
    "photons_per_pixel",
    "photons per pixel per frame",
    "light.photons_per_pixel",
    false,
);
const SCENE_ILLUMINANCE: LightKind = kind(
    "scene_illuminance_lux",
    "scene lit at … lux, with reflectance, through a lens",
    "light.scene_illuminance_lux",
    true,
);
const SCENE_IRRADIANCE: LightKind = kind(
    "scene_irradiance_w_per_m2",
    "scene lit at … W/m², with reflectance, through a lens",
    "light.scene_irradiance_w_per_m2",
    true,
);
const SCENE_LUMINANCE: LightKind = kind(
    "scene_luminance_cd_per_m2",
    "scene luminance (cd/m²) through a lens",
    "light.scene_luminance_cd_per_m2",
    true,
);
const SCENE_RADIANCE: LightKind = kind(
    "scene_radiance_w_per_m2_sr",
    "scene radiance (W/(m²·sr)) through a lens",
    "light.scene_radiance_w_per_m2_sr",
    true,
);

/// The light kinds, in the order the page offers them: the three of format version 1, then this
/// implementation's additions (docs/scenario-format.md).
pub const LIGHT_KINDS: &[LightKind] = &[
    FLUX,
    IRRADIANCE,
    IRRADIANCE_SPECTRUM,
    ILLUMINANCE,
    PER_PIXEL,
    SCENE_ILLUMINANCE,
    SCENE_IRRADIANCE,
    SCENE_LUMINANCE,
    SCENE_RADIANCE,
];

/// The name of the kind of a checked light ([`LightKind::name`]).
#[must_use]
pub fn light_kind_name(light: &Light) -> &'static str {
    match light {
        Light::PhotonFlux { .. } => "photon_flux_per_um2_s",
        Light::Irradiance { .. } => "irradiance_w_per_m2",
        Light::SpectralIrradiance { .. } => "irradiance_spectrum",
        Light::PhotonsPerPixel { .. } => "photons_per_pixel",
        Light::Illuminance { .. } => "illuminance_lux",
        Light::Scene { quantity, .. } => match quantity {
            SceneQuantity::Illuminance { .. } => "scene_illuminance_lux",
            SceneQuantity::Irradiance { .. } => "scene_irradiance_w_per_m2",
            SceneQuantity::Luminance { .. } => "scene_luminance_cd_per_m2",
            SceneQuantity::Radiance { .. } => "scene_radiance_w_per_m2_sr",
        },
    }
}

/// The kind of a checked light (every checked light has one; `None` cannot happen, and
/// `keys/tests.rs` checks it for each kind).
#[must_use]
pub fn light_kind(light: &Light) -> Option<&'static LightKind> {
    let name = light_kind_name(light);
    LIGHT_KINDS.iter().find(|k| k.name == name)
}

/// The kinds whose light has a spectrum.
const WITH_SPECTRUM: &[&str] = &[
    "irradiance_spectrum",
    "illuminance_lux",
    "scene_illuminance_lux",
    "scene_irradiance_w_per_m2",
    "scene_luminance_cd_per_m2",
    "scene_radiance_w_per_m2_sr",
];
/// The kinds seen through a lens.
const THROUGH_A_LENS: &[&str] = &[
    "scene_illuminance_lux",
    "scene_irradiance_w_per_m2",
    "scene_luminance_cd_per_m2",
    "scene_radiance_w_per_m2_sr",
];

const fn light(path: &'static str, rule: Rule, kinds: &'static [&'static str]) -> Key {
    Key::new(Object::Light, Section::Light, path, rule).when(When::LightKind(kinds))
}

const fn required(range: RangeWithLimit) -> Rule {
    Rule::Number {
        presence: Presence::Required,
        range,
    }
}

const fn amount(limit: f64) -> Rule {
    required(Range::new().at_least(0.0).at_most_limit(limit))
}

/// Photon flux at the sensor.
pub const PHOTON_FLUX_PER_UM2_S: Key = light(
    "light.photon_flux_per_um2_s",
    amount(1e20),
    &["photon_flux_per_um2_s"],
)
.unit(Unit::new("photons/(µm²·s)", "photons/µm²/s"))
.words(
    "Photon flux",
    "photon flux at the sensor",
    "Photons arriving per square micrometre of sensor per second.",
)
.sweepable();

/// Irradiance at the sensor.
pub const IRRADIANCE_W_PER_M2: Key = light(
    "light.irradiance_w_per_m2",
    amount(1e9),
    &["irradiance_w_per_m2", "irradiance_spectrum"],
)
.unit(Unit::same("W/m²"))
.words(
    "Irradiance",
    "irradiance at the sensor",
    "Optical power per area at the sensor; with a spectrum, the power within the sensor’s \
     response band.",
)
.sweepable();

/// The wavelength of monochromatic light.
pub const WAVELENGTH_NM: Key = light(
    "light.wavelength_nm",
    Rule::Number {
        presence: Presence::RequiredSaying(
            "required, missing: give wavelength_nm for monochromatic light, or a spectrum",
        ),
        // The lower limit keeps one photon's energy hc/λ, and so the figures in W/m², finite:
        // at 2e-308 nm min_detectable.light_units overflowed to infinity (found by the
        // property test `mutated_scenarios_never_panic_and_name_keys`). 1 pm is far below any
        // light a silicon sensor's QE model describes (common practice, no source).
        range: Range::new()
            .above(0.0)
            .at_least_limit(1e-3)
            .at_most_limit(1e6),
    },
    &["irradiance_w_per_m2"],
)
.unit(Unit::same("nm"))
.words(
    "Wavelength",
    "wavelength",
    "Vacuum wavelength of that light; it sets the energy of one photon.",
)
.sweepable();

/// Photons per pixel per frame.
pub const PHOTONS_PER_PIXEL: Key = light(
    "light.photons_per_pixel",
    amount(1e20),
    &["photons_per_pixel"],
)
.unit(Unit::new("photons/frame", "photons"))
.words(
    "Photons per pixel",
    "photons per pixel",
    "Mean photons arriving on one pixel in one frame, whatever the exposure time.",
)
.sweepable();

/// Illuminance at the sensor.
pub const ILLUMINANCE_LUX: Key = light("light.illuminance_lux", amount(1e9), &["illuminance_lux"])
    .unit(Unit::same("lx"))
    .words(
        "Illuminance at the sensor",
        "illuminance at the sensor",
        "Lux on the sensor surface (CIE photopic V(λ), 683 lm/W); the spectrum below turns it \
         into photons.",
    )
    .sweepable();

/// Illuminance on the scene.
pub const SCENE_ILLUMINANCE_LUX: Key = light(
    "light.scene_illuminance_lux",
    amount(1e9),
    &["scene_illuminance_lux"],
)
.unit(Unit::same("lx"))
.words(
    "Illuminance on the scene",
    "illuminance on the scene",
    "Lux falling on the object the camera looks at.",
)
.sweepable();

/// Irradiance on the scene.
pub const SCENE_IRRADIANCE_W_PER_M2: Key = light(
    "light.scene_irradiance_w_per_m2",
    amount(1e9),
    &["scene_irradiance_w_per_m2"],
)
.unit(Unit::same("W/m²"))
.words(
    "Irradiance on the scene",
    "irradiance on the scene",
    "Optical power per area falling on the object, within the sensor’s response band.",
)
.sweepable();

/// The scene's luminance.
pub const SCENE_LUMINANCE_CD_PER_M2: Key = light(
    "light.scene_luminance_cd_per_m2",
    amount(1e12),
    &["scene_luminance_cd_per_m2"],
)
.unit(Unit::same("cd/m²"))
.words(
    "Scene luminance",
    "scene luminance",
    "Luminance of the object as the camera sees it.",
)
.sweepable();

/// The scene's radiance.
pub const SCENE_RADIANCE_W_PER_M2_SR: Key = light(
    "light.scene_radiance_w_per_m2_sr",
    amount(1e9),
    &["scene_radiance_w_per_m2_sr"],
)
.unit(Unit::new("W/(m²·sr)", "W/m²/sr"))
.words(
    "Scene radiance",
    "scene radiance",
    "Radiance of the object, within the sensor’s response band.",
)
.sweepable();

/// The scene's reflectance.
pub const REFLECTANCE: Key = light(
    "light.reflectance",
    required(Range::new().at_least(0.0).at_most(1.0).unlimited()),
    &["scene_illuminance_lux", "scene_irradiance_w_per_m2"],
)
.unit(Unit::new("", "1"))
.words(
    "Reflectance",
    "reflectance",
    "Diffuse (Lambertian) reflectance of the object: 0.18 for mid grey, about 0.9 for white \
     paper.",
);

/// The light's spectrum (an object of the keys below).
pub const SPECTRUM: Key = light(
    "light.spectrum",
    Rule::Object {
        object: Object::Spectrum,
        required: true,
    },
    WITH_SPECTRUM,
)
.words(
    "Spectrum",
    "spectrum",
    "The shape of the light’s spectral power; its level comes from the amount above.",
);

/// The lens f-number.
pub const F_NUMBER: Key = light(
    "light.f_number",
    Rule::Number {
        presence: Presence::RequiredSaying("required with a scene_… light: the lens f-number"),
        range: Range::new().at_least(0.5).at_most_limit(1e4),
    },
    THROUGH_A_LENS,
)
.unit(Unit::new("f/…", "1"))
.words(
    "Lens f-number",
    "f-number",
    "Focal length over entrance pupil diameter, N.",
)
.sweepable();

/// The lens transmission.
pub const LENS_TRANSMISSION: Key = light(
    "light.lens_transmission",
    Rule::Number {
        presence: Presence::RequiredSaying(
            "required with a scene_… light: the lens transmission, 0 to 1 (typically 0.8 to 0.95)",
        ),
        range: Range::new().above(0.0).at_most(1.0).unlimited(),
    },
    THROUGH_A_LENS,
)
.unit(Unit::new("", "1"))
.words(
    "Lens transmission",
    "lens transmission",
    "Fraction of the light the lens passes, typically 0.8 to 0.95.",
);

/// The magnification.
pub const MAGNIFICATION: Key = light(
    "light.magnification",
    Rule::Number {
        presence: Presence::Default(0.0),
        range: Range::new().at_least(0.0).at_most_limit(1e3),
    },
    THROUGH_A_LENS,
)
.unit(Unit::new("|m|", "1"))
.words(
    "Magnification",
    "magnification",
    "Image size over object size; 0 for a distant scene.",
);

/// The field angle.
pub const FIELD_ANGLE_DEG: Key = light(
    "light.field_angle_deg",
    Rule::Number {
        presence: Presence::Default(0.0),
        range: Range::new().at_least(0.0).below(90.0).unlimited(),
    },
    THROUGH_A_LENS,
)
.unit(Unit::same("°"))
.words(
    "Field angle",
    "field angle",
    "Angle off the lens axis of the pixel considered: light falls off as cos⁴.",
);

/// A light's keys in the order the page shows them.
pub(super) const KEYS: &[Key] = &[
    PHOTON_FLUX_PER_UM2_S,
    IRRADIANCE_W_PER_M2,
    WAVELENGTH_NM,
    PHOTONS_PER_PIXEL,
    ILLUMINANCE_LUX,
    SCENE_ILLUMINANCE_LUX,
    SCENE_IRRADIANCE_W_PER_M2,
    SCENE_LUMINANCE_CD_PER_M2,
    SCENE_RADIANCE_W_PER_M2_SR,
    REFLECTANCE,
    SPECTRUM,
    F_NUMBER,
    LENS_TRANSMISSION,
    MAGNIFICATION,
    FIELD_ANGLE_DEG,
];

const fn spectrum(path: &'static str, rule: Rule, kinds: &'static [&'static str]) -> Key {
    Key::new(Object::Spectrum, Section::Light, path, rule).when(When::Choice {
        key: "kind",
        values: kinds,
    })
}

/// The spectrum's kind.
pub const SPECTRUM_KIND: Key = Key::new(
    Object::Spectrum,
    Section::Light,
    "light.spectrum.kind",
    Rule::Choice {
        values: &[
            "cie_a",
            "cie_d65",
            "equal_energy",
            "blackbody",
            "monochromatic",
            "gaussian",
            "table",
        ],
        default: None,
    },
)
.words(
    "Spectrum",
    "spectrum",
    "The shape of the light’s spectral power; its level comes from the amount above.",
)
.options(&[
    ("cie_d65", "CIE D65 daylight (table)"),
    ("cie_a", "CIE illuminant A, tungsten (formula)"),
    ("equal_energy", "equal energy"),
    ("blackbody", "blackbody at a temperature"),
    ("gaussian", "Gaussian band, like an LED"),
    ("monochromatic", "one wavelength"),
    ("table", "pasted wavelength/value pairs"),
]);

/// A blackbody's temperature.
pub const SPECTRUM_TEMPERATURE_K: Key = spectrum(
    "light.spectrum.temperature_k",
    required(
        Range::new()
            .above(0.0)
            .at_least_limit(100.0)
            .at_most_limit(1e5),
    ),
    &["blackbody"],
)
.unit(Unit::same("K"))
.words(
    "Temperature",
    "blackbody temperature",
    "Temperature of the blackbody (Planck’s law).",
);

/// The one wavelength of a monochromatic spectrum.
pub const SPECTRUM_WAVELENGTH_NM: Key = spectrum(
    "light.spectrum.wavelength_nm",
    required(Range::new().above(0.0).at_most_limit(1e6)),
    &["monochromatic"],
)
.unit(Unit::same("nm"))
.words(
    "Wavelength",
    "wavelength",
    "The one wavelength of the light; it must lie in the sensor’s response band.",
);

/// A Gaussian band's centre.
pub const SPECTRUM_CENTRE_NM: Key = spectrum(
    "light.spectrum.centre_nm",
    required(Range::new().above(0.0).at_most_limit(1e6)),
    &["gaussian"],
)
.unit(Unit::same("nm"))
.words("Centre", "band centre", "Peak wavelength of the band.");

/// A Gaussian band's width. Below 2 nm the 1 nm integration grid no longer resolves the band:
/// a line (`monochromatic`) is the right kind then.
pub const SPECTRUM_FWHM_NM: Key = spectrum(
    "light.spectrum.fwhm_nm",
    Rule::Number {
        presence: Presence::RequiredSaying(
            "required, missing: the band's full width at half maximum",
        ),
        range: Range::new()
            .above(0.0)
            .at_least_limit(2.0)
            .at_most_limit(1e5),
    },
    &["gaussian"],
)
.unit(Unit::same("nm"))
.words("Width (FWHM)", "band width", "Full width at half maximum.");

/// A table of points.
pub const SPECTRUM_POINTS: Key = spectrum(
    "light.spectrum.points",
    Rule::Pairs {
        max_value: None,
        presence: Presence::RequiredSaying("required, missing: [[wavelength_nm, value], …]"),
    },
    &["table"],
)
.unit(Unit::new("nm, relative power", "nm, 1"))
.words(
    "Spectrum points",
    "spectrum points",
    "One pair a line: wavelength in nm, then relative power, separated by a tab, comma, \
     semicolon or spaces (paste two spreadsheet columns). Linear between points, zero outside.",
);

/// A spectrum's keys in the order the page shows them.
pub(super) const SPECTRUM_KEYS: &[Key] = &[
    SPECTRUM_KIND,
    SPECTRUM_TEMPERATURE_K,
    SPECTRUM_WAVELENGTH_NM,
    SPECTRUM_CENTRE_NM,
    SPECTRUM_FWHM_NM,
    SPECTRUM_POINTS,
];
