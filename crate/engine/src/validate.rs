//! Reading a scenario from JSON and checking every rule of the format, all problems at once.
//!
//! This is the only way to make a [`Scenario`]. It reports each problem with the key's dot path
//! (`sensor.full_well_e: must be > 0, got -5`); it never stops at the first. It computes no
//! noise figures. Unknown keys are problems, except keys starting with `x_`, which are ignored.

use std::fmt;

use serde_json::{Map, Value};

use crate::light::{Lens, Light, Response, SceneQuantity};
use crate::scenario::{BinningMode, Exposure, Readout, Scenario, Sensor};
use crate::spectrum::{QeCurve, Spectrum};

/// The format version this engine reads and writes.
pub const FORMAT_VERSION: u64 = 1;

/// Largest |(T − T_ref) / T_d| accepted, so that 2^x and everything multiplied by it stay finite.
/// 2^200 ≈ 1.6e60; with the other limits below every figure stays far from f64 overflow.
const MAX_DOUBLINGS: f64 = 200.0;

/// One broken rule, naming the key it concerns.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Problem {
    /// Dot path of the key (`sensor.full_well_e`), or `scenario` for the document as a whole.
    pub path: String,
    /// What is wrong, in lower case, naming the rule and the value found.
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.path, self.message)
    }
}

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
    match serde_json::from_str::<Value>(text) {
        Ok(v) => scenario_from_value(&v),
        Err(e) => Err(ScenarioError {
            problems: vec![Problem {
                path: "scenario".into(),
                message: format!(
                    "not valid JSON: {} (line {}, column {})",
                    json_error_kind(&e),
                    e.line(),
                    e.column()
                ),
            }],
        }),
    }
}

fn json_error_kind(e: &serde_json::Error) -> String {
    // serde_json's Display appends " at line L column C"; keep only the description.
    let s = e.to_string();
    match s.find(" at line ") {
        Some(i) => s.get(..i).unwrap_or(&s).to_string(),
        None => s,
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
        return Err(p.into_error());
    };
    let mut top = Fields::new("", map);

    // The version is checked first: a newer file gets one clear message, not a list of its keys.
    match top.get("version") {
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
            return Err(p.into_error());
        }
        Some(other) => p.push("version", format!("must be 1, got {}", show_value(other))),
    }

    let title = top.string(&mut p, "title");
    let sensor = top
        .object(&mut p, "sensor", true)
        .and_then(|mut f| sensor(&mut p, &mut f));
    let light = top
        .object(&mut p, "light", true)
        .and_then(|mut f| read_light(&mut p, &mut f));
    let background_light = top
        .object(&mut p, "background_light", false)
        .and_then(|mut f| read_light(&mut p, &mut f));
    let exposure = top
        .object(&mut p, "exposure", true)
        .and_then(|mut f| exposure(&mut p, &mut f));
    let temperature_c = top.number(
        &mut p,
        "temperature_c",
        Need::Default(25.0),
        Range::new().above(-273.15).at_most_limit(1000.0),
    );
    let snr_threshold = top.number(
        &mut p,
        "snr_threshold",
        Need::Default(1.0),
        Range::new()
            .above(0.0)
            .at_least_limit(1e-3)
            .at_most_limit(1e6),
    );
    top.finish(&mut p);

    // Rules that join keys, checked only where both sides were readable.
    if let Some(s) = &sensor {
        if let Some(l) = &light {
            check_light(&mut p, "light", l, s);
        }
        if let Some(b) = &background_light {
            check_light(&mut p, "background_light", b, s);
        }
    }
    if let (Some(s), Some(t)) = (&sensor, temperature_c) {
        let doublings = (t - s.dark_current_reference_c) / s.dark_current_doubling_c;
        if doublings.abs() > MAX_DOUBLINGS {
            p.push(
                "sensor.dark_current_doubling_c",
                format!(
                    "the dark current would double {} times between sensor.dark_current_reference_c \
                     and temperature_c; at most {MAX_DOUBLINGS} (this calculator's limit)",
                    show(doublings)
                ),
            );
        }
    }

    match (title, sensor, light, exposure, temperature_c, snr_threshold) {
        (title, Some(sensor), Some(light), Some(exposure), Some(temperature_c), Some(snr))
            if p.is_empty() =>
        {
            Ok(Scenario {
                title,
                sensor,
                light,
                background_light,
                exposure,
                temperature_c,
                snr_threshold: snr,
            })
        }
        _ => Err(p.into_error()),
    }
}

fn sensor(p: &mut Problems, f: &mut Fields<'_>) -> Option<Sensor> {
    let positive = || Range::new().above(0.0);
    let pixel_pitch_um = f.number(
        p,
        "pixel_pitch_um",
        Need::Required,
        positive().at_least_limit(1e-3).at_most_limit(1e4),
    );
    // Required unless a QE curve covers the light; checked with the light (`check_light`).
    let quantum_efficiency = f.number(
        p,
        "quantum_efficiency",
        Need::Optional,
        positive().at_least_limit(1e-6).at_most(1.0),
    );
    let qe_curve = f.pairs(p, "quantum_efficiency_curve", Some(1.0));
    let band_default = qe_curve
        .as_ref()
        .and_then(|c| Some((c.first()?.0, c.last()?.0)))
        .unwrap_or(DEFAULT_BAND_NM);
    let response_from_nm = f.number(
        p,
        "response_from_nm",
        Need::Default(band_default.0),
        Range::new().above(0.0).at_most_limit(1e6),
    );
    let response_to_nm = f.number(
        p,
        "response_to_nm",
        Need::Default(band_default.1),
        Range::new().above(0.0).at_most_limit(1e6),
    );
    if let (Some(a), Some(b)) = (response_from_nm, response_to_nm) {
        if b <= a {
            p.push(
                &f.path_of("response_to_nm"),
                format!(
                    "must be above sensor.response_from_nm ({}), got {}",
                    show(a),
                    show(b)
                ),
            );
        }
    }
    let full_well_e = f.number(
        p,
        "full_well_e",
        Need::Required,
        positive().at_least_limit(1.0).at_most_limit(1e12),
    );
    let read_noise_e = f.number(
        p,
        "read_noise_e",
        Need::Required,
        Range::new().at_least(0.0).at_most_limit(1e6),
    );
    let capacitance = f.number(
        p,
        "sense_node_capacitance_ff",
        Need::Optional,
        positive().at_least_limit(1e-6).at_most_limit(1e9),
    );
    let gain_uv = f.number(
        p,
        "conversion_gain_uv_per_e",
        Need::Optional,
        positive().at_least_limit(1e-6).at_most_limit(1e9),
    );
    let readout = f
        .choice(p, "readout", &["cds", "dds", "single"], Some("cds"))
        .map(|s| match s {
            "dds" => Readout::Dds,
            "single" => Readout::Single,
            _ => Readout::Cds,
        });
    let dark_current_e_per_s = f.number(
        p,
        "dark_current_e_per_s",
        Need::Required,
        Range::new().at_least(0.0).at_most_limit(1e12),
    );
    let dark_current_reference_c = f.number(
        p,
        "dark_current_reference_c",
        Need::Default(25.0),
        Range::new().above(-273.15).at_most_limit(1000.0),
    );
    let dark_current_doubling_c = f.number(
        p,
        "dark_current_doubling_c",
        Need::Default(6.5),
        positive().at_most_limit(1e6),
    );
    let dsnu_e = f.number(
        p,
        "dsnu_e",
        Need::Default(0.0),
        Range::new().at_least(0.0).at_most_limit(1e9),
    );
    let prnu_percent = f.number(
        p,
        "prnu_percent",
        Need::Default(0.0),
        Range::new().at_least(0.0).at_most_limit(100.0),
    );
    let adc_bits = f.integer(p, "adc_bits", None, 1, 32);
    let system_gain_dn_per_e = f.number(
        p,
        "system_gain_dn_per_e",
        Need::Required,
        positive().at_least_limit(1e-9).at_most_limit(1e9),
    );
    let black_level_dn = f.number(
        p,
        "black_level_dn",
        Need::Default(0.0),
        Range::new().at_least(0.0),
    );
    let summing_well_e = f.number(
        p,
        "summing_well_e",
        Need::Optional,
        positive().at_least_limit(1.0).at_most_limit(1e15),
    );
    f.finish(p);

    if let (Some(bits), Some(black)) = (adc_bits, black_level_dn) {
        let full_scale = f64::from(bits).exp2() - 1.0;
        if black >= full_scale {
            p.push(
                &f.path_of("black_level_dn"),
                format!(
                    "must be below the ADC's full scale 2^adc_bits − 1 = {}, got {}",
                    show(full_scale),
                    show(black)
                ),
            );
        }
    }
    if let Some(r @ (Readout::Dds | Readout::Single)) = readout {
        if capacitance.is_none()
            && gain_uv.is_none()
            && !f.had_problem_at(p, "sense_node_capacitance_ff")
        {
            p.push(
                &f.path_of("sense_node_capacitance_ff"),
                format!(
                    "required when sensor.readout is \"{}\": reset noise needs the sense-node \
                     capacitance; give it, or sensor.conversion_gain_uv_per_e to derive it",
                    r.as_str()
                ),
            );
        }
    }

    Some(Sensor {
        pixel_pitch_um: pixel_pitch_um?,
        quantum_efficiency,
        quantum_efficiency_curve: qe_curve.map(|points| QeCurve { points }),
        response_band_nm: (response_from_nm?, response_to_nm?),
        full_well_e: full_well_e?,
        read_noise_e: read_noise_e?,
        sense_node_capacitance_ff: capacitance,
        conversion_gain_uv_per_e: gain_uv,
        readout: readout?,
        dark_current_e_per_s: dark_current_e_per_s?,
        dark_current_reference_c: dark_current_reference_c?,
        dark_current_doubling_c: dark_current_doubling_c?,
        dsnu_e: dsnu_e?,
        prnu_percent: prnu_percent?,
        adc_bits: adc_bits?,
        system_gain_dn_per_e: system_gain_dn_per_e?,
        black_level_dn: black_level_dn?,
        summing_well_e,
    })
}

/// The light kinds, each marked by one key: the three of format version 1, then this
/// implementation's additions (docs/scenario-format.md).
const LIGHT_KINDS: &[&str] = &[
    "photon_flux_per_um2_s",
    "irradiance_w_per_m2",
    "photons_per_pixel",
    "illuminance_lux",
    "scene_illuminance_lux",
    "scene_irradiance_w_per_m2",
    "scene_luminance_cd_per_m2",
    "scene_radiance_w_per_m2_sr",
];

/// Keys that go with a kind's marking key.
const LIGHT_COMPANIONS: &[&str] = &[
    "wavelength_nm",
    "spectrum",
    "reflectance",
    "f_number",
    "lens_transmission",
    "magnification",
    "field_angle_deg",
];

/// Smallest effective quantum efficiency accepted: the single value's lower limit, so that
/// photons per electron stay finite.
const MIN_EFFECTIVE_QE: f64 = 1e-6;

/// The band photons are counted over when neither it nor a QE curve is given: the visible
/// band over which REFERENCES.md §5 states photons per lux.
const DEFAULT_BAND_NM: (f64, f64) = (380.0, 780.0);

fn read_light(p: &mut Problems, f: &mut Fields<'_>) -> Option<Light> {
    let present: Vec<&str> = LIGHT_KINDS.iter().copied().filter(|k| f.has(k)).collect();
    let kind = match present.as_slice() {
        [one] => Some(*one),
        [] => {
            // `wavelength_nm` alone is an incomplete irradiance, named as such.
            if f.has("wavelength_nm") {
                Some("irradiance_w_per_m2")
            } else {
                p.push(
                    &f.prefix(),
                    "give exactly one light kind: photon_flux_per_um2_s, irradiance_w_per_m2 \
                     (with wavelength_nm or a spectrum), photons_per_pixel, illuminance_lux, or a \
                     scene_… quantity with a lens; got none"
                        .into(),
                );
                None
            }
        }
        many => {
            p.push(
                &f.prefix(),
                format!("give exactly one light kind; got {}", many.join(" and ")),
            );
            None
        }
    };
    let non_negative = || Range::new().at_least(0.0);
    let light = match kind {
        Some("photon_flux_per_um2_s") => f
            .number(
                p,
                "photon_flux_per_um2_s",
                Need::Required,
                non_negative().at_most_limit(1e20),
            )
            .map(|v| Light::PhotonFlux {
                photon_flux_per_um2_s: v,
            }),
        Some("photons_per_pixel") => f
            .number(
                p,
                "photons_per_pixel",
                Need::Required,
                non_negative().at_most_limit(1e20),
            )
            .map(|v| Light::PhotonsPerPixel {
                photons_per_pixel: v,
            }),
        Some("irradiance_w_per_m2") => {
            let e = f.number(
                p,
                "irradiance_w_per_m2",
                Need::Required,
                non_negative().at_most_limit(1e9),
            );
            if f.has("spectrum") && f.has("wavelength_nm") {
                p.push(
                    &f.path_of("wavelength_nm"),
                    "give either wavelength_nm (monochromatic) or a spectrum, not both".into(),
                );
                f.mark_used("wavelength_nm");
                f.mark_used("spectrum");
                None
            } else if f.has("spectrum") {
                let s = spectrum(p, f);
                Some(Light::SpectralIrradiance {
                    irradiance_w_per_m2: e?,
                    spectrum: s?,
                })
            } else {
                let l = f.number_with(
                    p,
                    "wavelength_nm",
                    Need::Required,
                    Range::new().above(0.0).at_most_limit(1e6),
                    "required, missing: give wavelength_nm for monochromatic light, or a spectrum",
                );
                Some(Light::Irradiance {
                    irradiance_w_per_m2: e?,
                    wavelength_nm: l?,
                })
            }
        }
        Some("illuminance_lux") => {
            let e = f.number(
                p,
                "illuminance_lux",
                Need::Required,
                non_negative().at_most_limit(1e9),
            );
            let s = spectrum(p, f);
            Some(Light::Illuminance {
                illuminance_lux: e?,
                spectrum: s?,
            })
        }
        Some(scene_key) => {
            let limit = if scene_key == "scene_luminance_cd_per_m2" {
                1e12
            } else {
                1e9
            };
            let value = f.number(
                p,
                scene_key,
                Need::Required,
                non_negative().at_most_limit(limit),
            );
            let reflectance = if scene_key == "scene_illuminance_lux"
                || scene_key == "scene_irradiance_w_per_m2"
            {
                f.number(
                    p,
                    "reflectance",
                    Need::Required,
                    Range::new().at_least(0.0).at_most(1.0),
                )
            } else {
                Some(0.0)
            };
            let s = spectrum(p, f);
            let lens = lens(p, f);
            let (value, reflectance) = (value?, reflectance?);
            let quantity = match scene_key {
                "scene_illuminance_lux" => SceneQuantity::Illuminance {
                    lux: value,
                    reflectance,
                },
                "scene_irradiance_w_per_m2" => SceneQuantity::Irradiance {
                    w_per_m2: value,
                    reflectance,
                },
                "scene_luminance_cd_per_m2" => SceneQuantity::Luminance { cd_per_m2: value },
                _ => SceneQuantity::Radiance { w_per_m2_sr: value },
            };
            Some(Light::Scene {
                quantity,
                spectrum: s?,
                lens: lens?,
            })
        }
        None => {
            for k in LIGHT_KINDS.iter().chain(LIGHT_COMPANIONS) {
                f.mark_used(k);
            }
            None
        }
    };
    f.finish(p);
    light
}

fn lens(p: &mut Problems, f: &mut Fields<'_>) -> Option<Lens> {
    let f_number = f.number_with(
        p,
        "f_number",
        Need::Required,
        Range::new().at_least(0.5).at_most_limit(1e4),
        "required with a scene_… light: the lens f-number",
    );
    let transmission = f.number_with(
        p,
        "lens_transmission",
        Need::Required,
        Range::new().above(0.0).at_most(1.0),
        "required with a scene_… light: the lens transmission, 0 to 1 (typically 0.8 to 0.95)",
    );
    let magnification = f.number(
        p,
        "magnification",
        Need::Default(0.0),
        Range::new().at_least(0.0).at_most_limit(1e3),
    );
    let field_angle_deg = f.number(
        p,
        "field_angle_deg",
        Need::Default(0.0),
        Range::new().at_least(0.0).below(90.0),
    );
    Some(Lens {
        f_number: f_number?,
        transmission: transmission?,
        magnification: magnification?,
        field_angle_deg: field_angle_deg?,
    })
}

const SPECTRUM_KINDS: &[&str] = &[
    "cie_a",
    "cie_d65",
    "equal_energy",
    "blackbody",
    "monochromatic",
    "gaussian",
    "table",
];

/// The `spectrum` object of a light (required where this is called).
fn spectrum(p: &mut Problems, f: &mut Fields<'_>) -> Option<Spectrum> {
    let mut s = f.object(p, "spectrum", true)?;
    let kind = s.choice(p, "kind", SPECTRUM_KINDS, None);
    let spectrum = match kind? {
        "cie_a" => Some(Spectrum::CieA),
        "cie_d65" => Some(Spectrum::CieD65),
        "equal_energy" => Some(Spectrum::EqualEnergy),
        "blackbody" => s
            .number(
                p,
                "temperature_k",
                Need::Required,
                Range::new()
                    .above(0.0)
                    .at_least_limit(100.0)
                    .at_most_limit(1e5),
            )
            .map(|t| Spectrum::Blackbody { temperature_k: t }),
        "monochromatic" => s
            .number(
                p,
                "wavelength_nm",
                Need::Required,
                Range::new().above(0.0).at_most_limit(1e6),
            )
            .map(|l| Spectrum::Monochromatic { wavelength_nm: l }),
        "gaussian" => {
            let c = s.number(
                p,
                "centre_nm",
                Need::Required,
                Range::new().above(0.0).at_most_limit(1e6),
            );
            // Below 2 nm the 1 nm integration grid no longer resolves the band: use a line.
            let w = s.number_with(
                p,
                "fwhm_nm",
                Need::Required,
                Range::new()
                    .above(0.0)
                    .at_least_limit(2.0)
                    .at_most_limit(1e5),
                "required, missing: the band's full width at half maximum",
            );
            Some(Spectrum::Gaussian {
                centre_nm: c?,
                fwhm_nm: w?,
            })
        }
        _ => s
            .pairs(p, "points", None)
            .map(|points| Spectrum::Table { points })
            .or_else(|| {
                if !s.had_problem_at(p, "points") {
                    p.push(
                        &s.path_of("points"),
                        "required, missing: [[wavelength_nm, value], …]".into(),
                    );
                }
                None
            }),
    };
    s.finish(p);
    spectrum
}

/// Rules joining the light (or background light, at `prefix`) with the sensor's response.
fn check_light(p: &mut Problems, prefix: &str, light: &Light, sensor: &Sensor) {
    let band = sensor.response_band_nm;
    let spectrum = match light {
        Light::SpectralIrradiance { spectrum, .. }
        | Light::Illuminance { spectrum, .. }
        | Light::Scene { spectrum, .. } => Some(spectrum),
        _ => None,
    };
    let has_curve = sensor.quantum_efficiency_curve.is_some();
    if let (Some(curve), Light::Irradiance { wavelength_nm, .. }) =
        (&sensor.quantum_efficiency_curve, light)
    {
        if curve.at(*wavelength_nm) < MIN_EFFECTIVE_QE {
            p.push(
                &format!("{prefix}.wavelength_nm"),
                format!(
                    "sensor.quantum_efficiency_curve is zero at {} nm: this sensor does not see this light",
                    show(*wavelength_nm)
                ),
            );
        }
    }
    let curve_usable =
        has_curve && (spectrum.is_some() || matches!(light, Light::Irradiance { .. }));
    if sensor.quantum_efficiency.is_none() && !curve_usable {
        let why = if has_curve {
            format!(
                "required: {prefix} has no spectrum or wavelength to weight sensor.quantum_efficiency_curve with"
            )
        } else {
            "required, missing: give it, or sensor.quantum_efficiency_curve".to_string()
        };
        if !p.0.iter().any(|q| q.path == "sensor.quantum_efficiency") {
            p.push("sensor.quantum_efficiency", why);
        }
    }
    let Some(spectrum) = spectrum else { return };
    if let Some((lo, hi)) = spectrum.defined_range_nm() {
        if band.0 < lo || band.1 > hi {
            p.push(
                "sensor.response_to_nm",
                format!(
                    "{prefix}.spectrum {} is tabulated from {} to {} nm, but the sensor's response band \
                     {}–{} nm goes beyond it; narrow sensor.response_from_nm/response_to_nm, or for daylight \
                     in the near infrared use a blackbody near 5800 K as a stand-in",
                    spectrum.kind(),
                    show(lo),
                    show(hi),
                    show(band.0),
                    show(band.1)
                ),
            );
            return;
        }
    }
    if let Spectrum::Monochromatic { wavelength_nm } = spectrum {
        if !(band.0..=band.1).contains(wavelength_nm) {
            p.push(
                &format!("{prefix}.spectrum.wavelength_nm"),
                format!(
                    "{} nm is outside the sensor's response band {}–{} nm \
                     (sensor.response_from_nm, sensor.response_to_nm)",
                    show(*wavelength_nm),
                    show(band.0),
                    show(band.1)
                ),
            );
            return;
        }
    }
    let photometric = matches!(
        light,
        Light::Illuminance { .. }
            | Light::Scene {
                quantity: SceneQuantity::Illuminance { .. } | SceneQuantity::Luminance { .. },
                ..
            }
    );
    if let Some(curve) = &sensor.quantum_efficiency_curve {
        let response = Response {
            quantum_efficiency: None,
            curve: Some(curve),
            band_nm: band,
        };
        let photons = crate::spectrum::photons_per_unit(spectrum, band);
        let electrons =
            crate::spectrum::electrons_per_unit(spectrum, band, |nm| response.qe_at(nm));
        if photons > 0.0 && electrons / photons < MIN_EFFECTIVE_QE {
            p.push(
                "sensor.quantum_efficiency_curve",
                format!(
                    "is zero (below {}) wherever {prefix}.spectrum has photons within the response band: \
                     this sensor does not see this light",
                    show(MIN_EFFECTIVE_QE)
                ),
            );
            return;
        }
    }
    if photometric && crate::spectrum::lux_per_unit(spectrum) <= 0.0 {
        p.push(
            &format!("{prefix}.spectrum"),
            "has no visible light (it is zero wherever V(λ) is not, 360–830 nm), so the light cannot \
             be given in lux or cd/m²; give it in W/m² instead"
                .into(),
        );
    } else if !photometric && spectrum.integrate(band, |_| 1.0) <= 0.0 {
        p.push(
            &format!("{prefix}.spectrum"),
            format!(
                "has no power within the sensor's response band {}–{} nm, so its W/m² cannot be placed",
                show(band.0),
                show(band.1)
            ),
        );
    }
}

fn exposure(p: &mut Problems, f: &mut Fields<'_>) -> Option<Exposure> {
    let time_s = f.number(
        p,
        "time_s",
        Need::Required,
        Range::new()
            .above(0.0)
            .at_least_limit(1e-12)
            .at_most_limit(1e6),
    );
    let frames = f.integer(p, "frames_averaged", Some(1), 1, 1_000_000);
    let binning = f.integer(p, "binning", Some(1), 1, 1000);
    let mode = f
        .choice(p, "binning_mode", &["charge", "digital"], Some("digital"))
        .map(|s| {
            if s == "charge" {
                BinningMode::Charge
            } else {
                BinningMode::Digital
            }
        });
    f.finish(p);
    Some(Exposure {
        time_s: time_s?,
        frames_averaged: frames?,
        binning: binning?,
        binning_mode: mode?,
    })
}

// ---------------------------------------------------------------------------------------------
// The reader: typed access to one JSON object, remembering which keys were read.

#[derive(Default)]
struct Problems(Vec<Problem>);

impl Problems {
    fn push(&mut self, path: &str, message: String) {
        self.0.push(Problem {
            path: path.to_string(),
            message,
        });
    }
    fn is_empty(&self) -> bool {
        self.0.is_empty()
    }
    fn into_error(self) -> ScenarioError {
        ScenarioError { problems: self.0 }
    }
}

/// Whether a key must be there, may be absent, or takes a default.
#[derive(Clone, Copy)]
enum Need {
    Required,
    Optional,
    Default(f64),
}

/// The allowed range of a number: the format's rule, then this calculator's limits.
#[derive(Clone, Copy, Default)]
struct Range {
    /// (bound, inclusive): the format's rule.
    min: Option<(f64, bool)>,
    max: Option<(f64, bool)>,
}

impl Range {
    fn new() -> Self {
        Self::default()
    }
    fn above(mut self, v: f64) -> Self {
        self.min = Some((v, false));
        self
    }
    fn at_most(mut self, v: f64) -> Self {
        self.max = Some((v, true));
        self
    }
    fn below(mut self, v: f64) -> Self {
        self.max = Some((v, false));
        self
    }
    fn at_least(mut self, v: f64) -> Self {
        self.min = Some((v, true));
        self
    }
    /// A lower limit of this calculator, tighter than the format's rule; checked after it.
    fn at_least_limit(self, v: f64) -> RangeWithLimit {
        RangeWithLimit {
            rule: self,
            low_limit: Some(v),
            high_limit: None,
        }
    }
    fn at_most_limit(self, v: f64) -> RangeWithLimit {
        RangeWithLimit {
            rule: self,
            low_limit: None,
            high_limit: Some(v),
        }
    }
}

/// A format rule plus this calculator's own limits (which keep every figure finite).
#[derive(Clone, Copy)]
struct RangeWithLimit {
    rule: Range,
    low_limit: Option<f64>,
    high_limit: Option<f64>,
}

impl RangeWithLimit {
    fn at_most_limit(mut self, v: f64) -> Self {
        self.high_limit = Some(v);
        self
    }
    fn at_most(mut self, v: f64) -> Self {
        self.rule.max = Some((v, true));
        self
    }
}

impl From<Range> for RangeWithLimit {
    fn from(rule: Range) -> Self {
        RangeWithLimit {
            rule,
            low_limit: None,
            high_limit: None,
        }
    }
}

impl RangeWithLimit {
    /// The message for a value outside the range, or `None` when it is inside.
    fn check(&self, v: f64) -> Option<String> {
        if let Some((b, inclusive)) = self.rule.min {
            let ok = if inclusive { v >= b } else { v > b };
            if !ok {
                let op = if inclusive { "≥" } else { ">" };
                return Some(format!("must be {op} {}, got {}", show(b), show(v)));
            }
        }
        if let Some((b, inclusive)) = self.rule.max {
            let ok = if inclusive { v <= b } else { v < b };
            if !ok {
                let op = if inclusive { "≤" } else { "<" };
                return Some(format!("must be {op} {}, got {}", show(b), show(v)));
            }
        }
        if let Some(b) = self.low_limit {
            if v < b {
                return Some(format!(
                    "must be at least {} (this calculator's limit), got {}",
                    show(b),
                    show(v)
                ));
            }
        }
        if let Some(b) = self.high_limit {
            if v > b {
                return Some(format!(
                    "must be at most {} (this calculator's limit), got {}",
                    show(b),
                    show(v)
                ));
            }
        }
        None
    }
}

struct Fields<'v> {
    prefix: String,
    map: &'v Map<String, Value>,
    used: Vec<String>,
}

impl<'v> Fields<'v> {
    fn new(prefix: &str, map: &'v Map<String, Value>) -> Self {
        Fields {
            prefix: prefix.to_string(),
            map,
            used: Vec::new(),
        }
    }

    fn prefix(&self) -> String {
        if self.prefix.is_empty() {
            "scenario".to_string()
        } else {
            self.prefix.clone()
        }
    }

    fn path_of(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            key.to_string()
        } else {
            format!("{}.{key}", self.prefix)
        }
    }

    fn has(&self, key: &str) -> bool {
        self.map.get(key).is_some_and(|v| !v.is_null())
    }

    fn mark_used(&mut self, key: &str) {
        self.used.push(key.to_string());
    }

    fn had_problem_at(&self, p: &Problems, key: &str) -> bool {
        let path = self.path_of(key);
        p.0.iter().any(|q| {
            q.path == path
                || q.path
                    .strip_prefix(path.as_str())
                    .is_some_and(|rest| rest.starts_with(['[', '.']))
        })
    }

    /// The value of `key`, marking it read; `null` counts as absent.
    fn get(&mut self, key: &str) -> Option<&'v Value> {
        self.mark_used(key);
        self.map.get(key).filter(|v| !v.is_null())
    }

    fn number(
        &mut self,
        p: &mut Problems,
        key: &str,
        need: Need,
        range: impl Into<RangeWithLimit>,
    ) -> Option<f64> {
        let path = self.path_of(key);
        let v = match (self.get(key), need) {
            (None, Need::Required) => {
                p.push(&path, "required, missing".into());
                return None;
            }
            (None, Need::Optional) => return None,
            (None, Need::Default(d)) => return Some(d),
            (Some(v), _) => v,
        };
        let Some(x) = v.as_f64().filter(|x| x.is_finite()) else {
            p.push(&path, format!("must be a number, got {}", show_value(v)));
            return None;
        };
        match range.into().check(x) {
            Some(msg) => {
                p.push(&path, msg);
                None
            }
            None => Some(x),
        }
    }

    /// As [`Fields::number`], with a message of its own for a missing required key.
    fn number_with(
        &mut self,
        p: &mut Problems,
        key: &str,
        need: Need,
        range: impl Into<RangeWithLimit>,
        missing: &str,
    ) -> Option<f64> {
        if matches!(need, Need::Required) && !self.has(key) {
            self.mark_used(key);
            p.push(&self.path_of(key), missing.to_string());
            return None;
        }
        self.number(p, key, need, range)
    }

    /// An optional list of `[wavelength_nm, value]` pairs: at least 2, at most 10 000, with
    /// wavelengths > 0 strictly increasing, values finite, ≥ 0, at most `max_value`, not all 0.
    fn pairs(
        &mut self,
        p: &mut Problems,
        key: &str,
        max_value: Option<f64>,
    ) -> Option<Vec<(f64, f64)>> {
        let path = self.path_of(key);
        let v = self.get(key)?;
        let Some(items) = v.as_array() else {
            p.push(
                &path,
                format!(
                    "must be a list of [wavelength_nm, value] pairs, got {}",
                    show_value(v)
                ),
            );
            return None;
        };
        if items.len() < 2 || items.len() > 10_000 {
            p.push(
                &path,
                format!("must have from 2 to 10000 points, got {}", items.len()),
            );
            return None;
        }
        let before = p.0.len();
        let mut out: Vec<(f64, f64)> = Vec::with_capacity(items.len());
        for (i, item) in items.iter().enumerate() {
            let here = format!("{path}[{i}]");
            let pair = item.as_array().filter(|a| a.len() == 2).and_then(|a| {
                let x = a.first()?.as_f64()?;
                let y = a.get(1)?.as_f64()?;
                Some((x, y))
            });
            let Some((nm, y)) = pair else {
                p.push(
                    &here,
                    format!(
                        "must be a pair [wavelength_nm, value] of numbers, got {}",
                        show_value(item)
                    ),
                );
                continue;
            };
            if !(nm > 0.0 && nm <= 1e6) {
                p.push(
                    &here,
                    format!(
                        "wavelength must be > 0 nm and at most 1e6, got {}",
                        show(nm)
                    ),
                );
                continue;
            }
            if let Some(&(prev, _)) = out.last() {
                if nm <= prev {
                    p.push(
                        &here,
                        format!(
                            "wavelengths must increase, got {} nm after {} nm",
                            show(nm),
                            show(prev)
                        ),
                    );
                    continue;
                }
            }
            if y < 0.0 || max_value.is_some_and(|m| y > m) {
                let rule =
                    max_value.map_or("≥ 0".to_string(), |m| format!("from 0 to {}", show(m)));
                p.push(&here, format!("value must be {rule}, got {}", show(y)));
                continue;
            }
            out.push((nm, y));
        }
        if p.0.len() > before {
            return None;
        }
        if out.iter().all(|(_, y)| *y == 0.0) {
            p.push(&path, "every value is 0".into());
            return None;
        }
        Some(out)
    }

    fn integer(
        &mut self,
        p: &mut Problems,
        key: &str,
        default: Option<u32>,
        min: u32,
        max: u32,
    ) -> Option<u32> {
        let path = self.path_of(key);
        let v = match (self.get(key), default) {
            (None, Some(d)) => return Some(d),
            (None, None) => {
                p.push(&path, "required, missing".into());
                return None;
            }
            (Some(v), _) => v,
        };
        let Some(x) = v.as_f64().filter(|x| x.is_finite()) else {
            p.push(
                &path,
                format!("must be a whole number, got {}", show_value(v)),
            );
            return None;
        };
        if x.fract() != 0.0 {
            p.push(&path, format!("must be a whole number, got {}", show(x)));
            return None;
        }
        if x < f64::from(min) || x > f64::from(max) {
            p.push(
                &path,
                format!(
                    "must be a whole number from {min} to {max}, got {}",
                    show(x)
                ),
            );
            return None;
        }
        // OK because x is whole and within [min, max] ⊂ u32.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        Some(x as u32)
    }

    fn choice(
        &mut self,
        p: &mut Problems,
        key: &str,
        allowed: &[&'static str],
        default: Option<&'static str>,
    ) -> Option<&'static str> {
        let path = self.path_of(key);
        let v = match (self.get(key), default) {
            (None, Some(d)) => return Some(d),
            (None, None) => {
                p.push(&path, "required, missing".into());
                return None;
            }
            (Some(v), _) => v,
        };
        let quoted: Vec<String> = allowed.iter().map(|a| format!("\"{a}\"")).collect();
        match v.as_str().and_then(|s| allowed.iter().find(|a| **a == s)) {
            Some(a) => Some(a),
            None => {
                p.push(
                    &path,
                    format!(
                        "must be one of {}, got {}",
                        quoted.join(", "),
                        show_value(v)
                    ),
                );
                None
            }
        }
    }

    fn string(&mut self, p: &mut Problems, key: &str) -> Option<String> {
        match self.get(key) {
            None => None,
            Some(Value::String(s)) => Some(s.clone()),
            Some(v) => {
                p.push(
                    &self.path_of(key),
                    format!("must be text, got {}", show_value(v)),
                );
                None
            }
        }
    }

    fn object(&mut self, p: &mut Problems, key: &str, required: bool) -> Option<Fields<'v>> {
        let path = self.path_of(key);
        match self.get(key) {
            None => {
                if required {
                    p.push(&path, "required, missing".into());
                }
                None
            }
            Some(Value::Object(m)) => Some(Fields::new(&path, m)),
            Some(v) => {
                p.push(&path, format!("must be an object, got {}", show_value(v)));
                None
            }
        }
    }

    /// Report every key that was not read, except extension keys starting with `x_`.
    fn finish(&self, p: &mut Problems) {
        for key in self.map.keys() {
            if key.starts_with("x_") || self.used.iter().any(|u| u == key) {
                continue;
            }
            let hint = self
                .used
                .iter()
                .find(|u| near_miss(u, key))
                .map(|u| format!(" (did you mean \"{u}\"?)"))
                .unwrap_or_default();
            p.push(
                &self.path_of(key),
                format!("unknown key{hint}; keys of your own must start with \"x_\""),
            );
        }
    }
}

/// Whether two key names differ only a little (a typo): same after dropping `_` and case,
/// or one edit apart.
fn near_miss(a: &str, b: &str) -> bool {
    let norm = |s: &str| s.to_ascii_lowercase().replace('_', "");
    if norm(a) == norm(b) {
        return true;
    }
    edit_distance(a, b) <= 2
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut cur = Vec::with_capacity(b.len() + 1);
        cur.push(i + 1);
        for (j, cb) in b.iter().enumerate() {
            let sub = prev.get(j).copied().unwrap_or(usize::MAX) + usize::from(ca != cb);
            let del = prev
                .get(j + 1)
                .copied()
                .unwrap_or(usize::MAX)
                .saturating_add(1);
            let ins = cur.get(j).copied().unwrap_or(usize::MAX).saturating_add(1);
            cur.push(sub.min(del).min(ins));
        }
        prev = cur;
    }
    prev.last().copied().unwrap_or(0)
}

/// A JSON value's type in words, for messages.
pub(crate) fn type_name(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true or false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

/// A value as it appears in a message: numbers and short text shown, the rest by type.
pub(crate) fn show_value(v: &Value) -> String {
    match v {
        Value::Number(n) => n.to_string(),
        Value::String(s) if s.chars().count() <= 40 => format!("\"{s}\""),
        Value::String(_) => "long text".into(),
        Value::Bool(b) => b.to_string(),
        other => type_name(other).into(),
    }
}

/// A number as it appears in a message: plain for everyday magnitudes, exponent otherwise.
fn show(x: f64) -> String {
    let a = x.abs();
    if a != 0.0 && !(1e-4..1e6).contains(&a) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used, clippy::indexing_slicing)]
mod tests {
    //! Data-driven checks of the messages: one `check` helper, one line per case.

    use serde_json::{json, Value};

    fn valid() -> Value {
        json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
                "read_noise_e": 2.5, "dark_current_e_per_s": 1, "adc_bits": 12,
                "system_gain_dn_per_e": 0.25},
            "light": {"photon_flux_per_um2_s": 1000},
            "exposure": {"time_s": 0.01}
        })
    }

    /// Apply `edit` to a valid scenario and check the problems, rendered one a line.
    fn check(edit: impl FnOnce(&mut Value), expected: &[&str]) {
        let mut v = valid();
        edit(&mut v);
        let got: Vec<String> = match super::scenario_from_value(&v) {
            Ok(_) => vec![],
            Err(e) => e.problems().iter().map(ToString::to_string).collect(),
        };
        assert_eq!(got, expected, "for {v}");
    }

    #[test]
    fn a_valid_scenario_passes_with_defaults() {
        let s = super::scenario_from_value(&valid()).unwrap();
        assert_eq!(s.temperature_c, 25.0); // SCENARIO.md default
        assert_eq!(s.snr_threshold, 1.0);
        assert_eq!(s.sensor.dark_current_doubling_c, 6.5);
        assert_eq!(s.exposure.frames_averaged, 1);
    }

    #[test]
    fn rules_name_the_key_and_the_value() {
        check(
            |v| v["sensor"]["full_well_e"] = json!(-5),
            &["sensor.full_well_e: must be > 0, got -5"],
        );
        check(
            |v| v["sensor"]["summing_well_e"] = json!(0),
            &["sensor.summing_well_e: must be > 0, got 0"],
        );
        check(
            |v| v["sensor"]["quantum_efficiency"] = json!(1.2),
            &["sensor.quantum_efficiency: must be ≤ 1, got 1.2"],
        );
        check(
            |v| v["sensor"]["adc_bits"] = json!(12.5),
            &["sensor.adc_bits: must be a whole number, got 12.5"],
        );
        check(
            |v| v["sensor"]["adc_bits"] = json!(33),
            &["sensor.adc_bits: must be a whole number from 1 to 32, got 33"],
        );
        check(
            |v| v["sensor"]["readout"] = json!("ccd"),
            &["sensor.readout: must be one of \"cds\", \"dds\", \"single\", got \"ccd\""],
        );
        check(
            |v| v["exposure"]["time_s"] = json!("10 ms"),
            &["exposure.time_s: must be a number, got \"10 ms\""],
        );
        check(
            |v| v["temperature_c"] = json!(-300),
            &["temperature_c: must be > -273.15, got -300"],
        );
        check(
            |v| v["exposure"]["time_s"] = json!(1e7),
            &["exposure.time_s: must be at most 1e6 (this calculator's limit), got 1e7"],
        );
    }

    #[test]
    fn every_problem_is_reported_at_once() {
        check(
            |v| {
                v["sensor"]["full_well_e"] = json!(0);
                v["sensor"]["read_noise_e"] = json!(-1);
                v["exposure"]["binning"] = json!(0);
                v["snr_threshold"] = json!(0);
            },
            &[
                "sensor.full_well_e: must be > 0, got 0",
                "sensor.read_noise_e: must be ≥ 0, got -1",
                "exposure.binning: must be a whole number from 1 to 1000, got 0",
                "snr_threshold: must be > 0, got 0",
            ],
        );
    }

    #[test]
    fn unknown_keys_are_errors_except_x_keys() {
        check(
            |v| v["sensor"]["x_vendor_note"] = json!("kept and ignored"),
            &[],
        );
        check(|v| v["x_project"] = json!({"anything": [1, 2]}), &[]);
        check(
            |v| v["sensor"]["full_well"] = json!(1),
            &["sensor.full_well: unknown key (did you mean \"full_well_e\"?); keys of your own must start with \"x_\""],
        );
        check(
            |v| v["colour"] = json!("red"),
            &["colour: unknown key; keys of your own must start with \"x_\""],
        );
    }

    #[test]
    fn missing_required_keys_are_named() {
        check(
            |v| {
                v["sensor"].as_object_mut().unwrap().remove("read_noise_e");
                v.as_object_mut().unwrap().remove("exposure");
            },
            &[
                "sensor.read_noise_e: required, missing",
                "exposure: required, missing",
            ],
        );
    }

    #[test]
    fn versions_other_than_one() {
        check(
            |v| v["version"] = json!(2),
            &["version: this scenario is format version 2, newer than this calculator reads (version 1)"],
        );
        check(
            |v| v["version"] = json!("1"),
            &["version: must be 1, got \"1\""],
        );
        check(
            |v| {
                v.as_object_mut().unwrap().remove("version");
            },
            &["version: required: this calculator reads format version 1"],
        );
    }

    #[test]
    fn light_needs_exactly_one_kind() {
        check(
            |v| v["light"] = json!({}),
            &["light: give exactly one light kind: photon_flux_per_um2_s, irradiance_w_per_m2 (with wavelength_nm or a spectrum), photons_per_pixel, illuminance_lux, or a scene_… quantity with a lens; got none"],
        );
        check(
            |v| v["light"] = json!({"photon_flux_per_um2_s": 1, "photons_per_pixel": 5}),
            &["light: give exactly one light kind; got photon_flux_per_um2_s and photons_per_pixel"],
        );
        check(
            |v| v["light"] = json!({"irradiance_w_per_m2": 1}),
            &["light.wavelength_nm: required, missing: give wavelength_nm for monochromatic light, or a spectrum"],
        );
        check(
            |v| v["light"] = json!({"wavelength_nm": 550}),
            &["light.irradiance_w_per_m2: required, missing"],
        );
    }

    #[test]
    fn joined_rules() {
        check(
            |v| v["sensor"]["readout"] = json!("dds"),
            &["sensor.sense_node_capacitance_ff: required when sensor.readout is \"dds\": reset noise needs the sense-node capacitance; give it, or sensor.conversion_gain_uv_per_e to derive it"],
        );
        check(
            |v| {
                v["sensor"]["readout"] = json!("single");
                v["sensor"]["conversion_gain_uv_per_e"] = json!(60);
            },
            &[],
        );
        check(
            |v| v["sensor"]["black_level_dn"] = json!(4095),
            &["sensor.black_level_dn: must be below the ADC's full scale 2^adc_bits − 1 = 4095, got 4095"],
        );
        check(
            |v| {
                v["sensor"]["dark_current_doubling_c"] = json!(0.1);
                v["temperature_c"] = json!(100);
            },
            &["sensor.dark_current_doubling_c: the dark current would double 750 times between sensor.dark_current_reference_c and temperature_c; at most 200 (this calculator's limit)"],
        );
    }

    #[test]
    fn malformed_documents() {
        let e = super::scenario_from_json("{\"version\": 1,").unwrap_err();
        assert_eq!(e.problems().len(), 1);
        assert!(
            e.to_string()
                .starts_with("scenario: not valid JSON: EOF while parsing"),
            "{e}"
        );
        let e = super::scenario_from_json("[1, 2]").unwrap_err();
        assert_eq!(e.to_string(), "scenario: must be a JSON object, got a list");
        check(
            |v| v["sensor"] = json!(5),
            &["sensor: must be an object, got 5"],
        );
    }

    #[test]
    fn null_counts_as_absent() {
        check(
            |v| v["sensor"]["sense_node_capacitance_ff"] = Value::Null,
            &[],
        );
        check(
            |v| v["sensor"]["read_noise_e"] = Value::Null,
            &["sensor.read_noise_e: required, missing"],
        );
    }

    fn scene() -> Value {
        json!({"scene_illuminance_lux": 300, "reflectance": 0.2, "spectrum": {"kind": "cie_d65"},
               "f_number": 2.8, "lens_transmission": 0.9})
    }

    #[test]
    fn light_as_engineers_state_it() {
        check(|v| v["light"] = scene(), &[]);
        check(
            |v| v["light"] = json!({"illuminance_lux": 300, "spectrum": {"kind": "cie_a"}}),
            &[],
        );
        check(
            |v| v["light"] = json!({"irradiance_w_per_m2": 2, "spectrum": {"kind": "gaussian", "centre_nm": 530, "fwhm_nm": 30}}),
            &[],
        );
        check(
            |v| v["background_light"] = json!({"photon_flux_per_um2_s": 100}),
            &[],
        );
    }

    #[test]
    fn bad_light_names_the_field() {
        check(
            |v| {
                v["light"] = scene();
                v["light"]["reflectance"] = json!(1.3);
                v["light"]["f_number"] = json!(0.4);
            },
            &[
                "light.reflectance: must be ≤ 1, got 1.3",
                "light.f_number: must be ≥ 0.5, got 0.4",
            ],
        );
        check(
            |v| v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "monochromatic", "wavelength_nm": 900}}),
            &["light.spectrum.wavelength_nm: 900 nm is outside the sensor's response band 380–780 nm (sensor.response_from_nm, sensor.response_to_nm)"],
        );
        check(
            |v| {
                v["sensor"]["response_to_nm"] = json!(1000);
                v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "monochromatic", "wavelength_nm": 900}});
            },
            &["light.spectrum: has no visible light (it is zero wherever V(λ) is not, 360–830 nm), so the light cannot be given in lux or cd/m²; give it in W/m² instead"],
        );
        check(
            |v| {
                v["sensor"]["response_to_nm"] = json!(1000);
                v["light"] = scene();
            },
            &["sensor.response_to_nm: light.spectrum cie_d65 is tabulated from 300 to 830 nm, but the sensor's response band 380–1000 nm goes beyond it; narrow sensor.response_from_nm/response_to_nm, or for daylight in the near infrared use a blackbody near 5800 K as a stand-in"],
        );
        check(
            |v| v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "table", "points": [[400, 1], [390, 2], [500, -1], [600, "x"]]}}),
            &[
                "light.spectrum.points[1]: wavelengths must increase, got 390 nm after 400 nm",
                "light.spectrum.points[2]: value must be ≥ 0, got -1",
                "light.spectrum.points[3]: must be a pair [wavelength_nm, value] of numbers, got a list",
            ],
        );
        check(
            |v| v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "rainbow"}}),
            &["light.spectrum.kind: must be one of \"cie_a\", \"cie_d65\", \"equal_energy\", \"blackbody\", \"monochromatic\", \"gaussian\", \"table\", got \"rainbow\""],
        );
        check(
            |v| v["light"] = json!({"illuminance_lux": 10}),
            &["light.spectrum: required, missing"],
        );
        check(
            |v| {
                v["light"] = scene();
                v["light"].as_object_mut().unwrap().remove("lens_transmission");
            },
            &["light.lens_transmission: required with a scene_… light: the lens transmission, 0 to 1 (typically 0.8 to 0.95)"],
        );
    }

    #[test]
    fn qe_curves() {
        check(
            |v| {
                v["sensor"].as_object_mut().unwrap().remove("quantum_efficiency");
                v["sensor"]["quantum_efficiency_curve"] = json!([[400, 0.5], [700, 0.5]]);
            },
            &["sensor.quantum_efficiency: required: light has no spectrum or wavelength to weight sensor.quantum_efficiency_curve with"],
        );
        check(
            |v| {
                v["sensor"]["quantum_efficiency_curve"] = json!([[400, 0.5], [700, 1.5]]);
            },
            &["sensor.quantum_efficiency_curve[1]: value must be from 0 to 1, got 1.5"],
        );
        check(
            |v| {
                v["sensor"]["quantum_efficiency_curve"] = json!([[400, 0.5], [500, 0.0], [700, 0.0]]);
                v["light"] = json!({"irradiance_w_per_m2": 1, "wavelength_nm": 600});
            },
            &["light.wavelength_nm: sensor.quantum_efficiency_curve is zero at 600 nm: this sensor does not see this light"],
        );
    }

    #[test]
    fn numbers_beyond_double_precision_are_refused_as_json() {
        let e = super::scenario_from_json(r#"{"version": 1, "temperature_c": 1e999}"#).unwrap_err();
        assert!(
            e.to_string()
                .starts_with("scenario: not valid JSON: number out of range"),
            "{e}"
        );
    }
}
