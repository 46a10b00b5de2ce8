//! Reading a scenario from JSON and checking every rule of the format, all problems at once.
//!
//! This is the only way to make a [`Scenario`]. It reports each problem with the key's dot path
//! (`sensor.full_well_e: must be > 0, got -5`); it never stops at the first. It computes no
//! noise figures. Unknown keys are problems, except keys starting with `x_`, which are ignored.

use std::fmt;

use serde_json::Value;

pub use crate::input::Problem;
use crate::input::{self, show, show_value, type_name, Fields, Need, Problems, Range};

use crate::light::{Lens, Light, Response, SceneQuantity};
use crate::scenario::{BinningMode, Exposure, Readout, Scenario, Sensor};
use crate::spectrum::{QeCurve, Spectrum};

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
            return Err(ScenarioError::from_problems(p.into_problems()));
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
        _ => Err(ScenarioError::from_problems(p.into_problems())),
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
        if !p.has_problem_at("sensor.quantum_efficiency") {
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
            &["colour: unknown key; the keys here are background_light, exposure, light, sensor, \
               snr_threshold, temperature_c, title, version; keys of your own must start with \"x_\""],
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
