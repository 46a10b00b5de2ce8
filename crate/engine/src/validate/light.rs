//! A light object (`light`, `background_light`): its kind told by its amount key, each key read
//! with its catalogue rule (`keys::light`), its lens and spectrum; then the rules that join the
//! light with the sensor's response (QE, response band, visible light for photometric units).

use super::{key, ReadKey};
use crate::input::{show, Fields, Problems};
use crate::keys::{self, LIGHT_AMOUNTS, LIGHT_KEY_NAMES};
use crate::light::{Lens, Light, Response, SceneQuantity};
use crate::scenario::Sensor;
use crate::spectrum::Spectrum;

/// Smallest effective quantum efficiency accepted: the single value's lower limit, so that
/// photons per electron stay finite.
const MIN_EFFECTIVE_QE: f64 = 1e-6;

pub(super) fn read_light(p: &mut Problems, f: &mut Fields<'_>) -> Option<Light> {
    use keys::{
        ILLUMINANCE_LUX, IRRADIANCE_W_PER_M2, PHOTONS_PER_PIXEL, PHOTON_FLUX_PER_UM2_S,
        REFLECTANCE, SCENE_ILLUMINANCE_LUX, SCENE_IRRADIANCE_W_PER_M2, SCENE_LUMINANCE_CD_PER_M2,
        SPECTRUM, WAVELENGTH_NM,
    };
    let present: Vec<&str> = LIGHT_AMOUNTS.iter().copied().filter(|k| f.has(k)).collect();
    let kind = match present.as_slice() {
        [one] => Some(*one),
        [] => {
            // `wavelength_nm` alone is an incomplete irradiance, named as such.
            if f.has(const { WAVELENGTH_NM.name }) {
                Some(const { IRRADIANCE_W_PER_M2.name })
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
    let Some(kind) = kind else {
        // No kind to read: every key of a light is known, none is judged.
        for k in LIGHT_AMOUNTS.iter().chain(LIGHT_KEY_NAMES.iter()) {
            f.mark_used(k);
        }
        f.finish(p);
        return None;
    };
    let light = if kind == const { PHOTON_FLUX_PER_UM2_S.name } {
        f.number_key(p, (kind, const { PHOTON_FLUX_PER_UM2_S.rule }))
            .map(|v| Light::PhotonFlux {
                photon_flux_per_um2_s: v,
            })
    } else if kind == const { PHOTONS_PER_PIXEL.name } {
        f.number_key(p, (kind, const { PHOTONS_PER_PIXEL.rule }))
            .map(|v| Light::PhotonsPerPixel {
                photons_per_pixel: v,
            })
    } else if kind == const { IRRADIANCE_W_PER_M2.name } {
        let e = f.number_key(p, (kind, const { IRRADIANCE_W_PER_M2.rule }));
        if f.has(const { SPECTRUM.name }) && f.has(const { WAVELENGTH_NM.name }) {
            p.push(
                &f.path_of(const { WAVELENGTH_NM.name }),
                "give either wavelength_nm (monochromatic) or a spectrum, not both".into(),
            );
            f.mark_used(const { WAVELENGTH_NM.name });
            f.mark_used(const { SPECTRUM.name });
            None
        } else if f.has(const { SPECTRUM.name }) {
            let s = spectrum(p, f);
            Some(Light::SpectralIrradiance {
                irradiance_w_per_m2: e?,
                spectrum: s?,
            })
        } else {
            let l = f.number_key(p, key!(WAVELENGTH_NM));
            Some(Light::Irradiance {
                irradiance_w_per_m2: e?,
                wavelength_nm: l?,
            })
        }
    } else if kind == const { ILLUMINANCE_LUX.name } {
        let e = f.number_key(p, (kind, const { ILLUMINANCE_LUX.rule }));
        let s = spectrum(p, f);
        Some(Light::Illuminance {
            illuminance_lux: e?,
            spectrum: s?,
        })
    } else {
        // A scene quantity through a lens (the four kinds left).
        let amount = if kind == const { SCENE_ILLUMINANCE_LUX.name } {
            const { SCENE_ILLUMINANCE_LUX.rule }
        } else if kind == const { SCENE_IRRADIANCE_W_PER_M2.name } {
            const { SCENE_IRRADIANCE_W_PER_M2.rule }
        } else if kind == const { SCENE_LUMINANCE_CD_PER_M2.name } {
            const { SCENE_LUMINANCE_CD_PER_M2.rule }
        } else {
            const { keys::SCENE_RADIANCE_W_PER_M2_SR.rule }
        };
        let value = f.number_key(p, (kind, amount));
        let lit = kind == const { SCENE_ILLUMINANCE_LUX.name }
            || kind == const { SCENE_IRRADIANCE_W_PER_M2.name };
        let reflectance = if lit {
            f.number_key(p, key!(REFLECTANCE))
        } else {
            Some(0.0)
        };
        let s = spectrum(p, f);
        let lens = lens(p, f);
        let (value, reflectance) = (value?, reflectance?);
        let quantity = if kind == const { SCENE_ILLUMINANCE_LUX.name } {
            SceneQuantity::Illuminance {
                lux: value,
                reflectance,
            }
        } else if kind == const { SCENE_IRRADIANCE_W_PER_M2.name } {
            SceneQuantity::Irradiance {
                w_per_m2: value,
                reflectance,
            }
        } else if kind == const { SCENE_LUMINANCE_CD_PER_M2.name } {
            SceneQuantity::Luminance { cd_per_m2: value }
        } else {
            SceneQuantity::Radiance { w_per_m2_sr: value }
        };
        Some(Light::Scene {
            quantity,
            spectrum: s?,
            lens: lens?,
        })
    };
    f.finish(p);
    light
}

fn lens(p: &mut Problems, f: &mut Fields<'_>) -> Option<Lens> {
    use keys::{FIELD_ANGLE_DEG, F_NUMBER, LENS_TRANSMISSION, MAGNIFICATION};
    let f_number = f.number_key(p, key!(F_NUMBER));
    let transmission = f.number_key(p, key!(LENS_TRANSMISSION));
    let magnification = f.number_key(p, key!(MAGNIFICATION));
    let field_angle_deg = f.number_key(p, key!(FIELD_ANGLE_DEG));
    Some(Lens {
        f_number: f_number?,
        transmission: transmission?,
        magnification: magnification?,
        field_angle_deg: field_angle_deg?,
    })
}

/// The `spectrum` object of a light (required where this is called).
fn spectrum(p: &mut Problems, f: &mut Fields<'_>) -> Option<Spectrum> {
    use keys::{
        SPECTRUM, SPECTRUM_CENTRE_NM, SPECTRUM_FWHM_NM, SPECTRUM_KIND, SPECTRUM_POINTS,
        SPECTRUM_TEMPERATURE_K, SPECTRUM_WAVELENGTH_NM,
    };
    let mut s = f.object_key(p, key!(SPECTRUM))?;
    let kind = s.choice_key(p, key!(SPECTRUM_KIND));
    let spectrum = match kind? {
        "cie_a" => Some(Spectrum::CieA),
        "cie_d65" => Some(Spectrum::CieD65),
        "equal_energy" => Some(Spectrum::EqualEnergy),
        "blackbody" => s
            .number_key(p, key!(SPECTRUM_TEMPERATURE_K))
            .map(|t| Spectrum::Blackbody { temperature_k: t }),
        "monochromatic" => s
            .number_key(p, key!(SPECTRUM_WAVELENGTH_NM))
            .map(|l| Spectrum::Monochromatic { wavelength_nm: l }),
        "gaussian" => {
            let c = s.number_key(p, key!(SPECTRUM_CENTRE_NM));
            let w = s.number_key(p, key!(SPECTRUM_FWHM_NM));
            Some(Spectrum::Gaussian {
                centre_nm: c?,
                fwhm_nm: w?,
            })
        }
        _ => s
            .pairs_key(p, key!(SPECTRUM_POINTS))
            .map(|points| Spectrum::Table { points }),
    };
    s.finish(p);
    spectrum
}

/// One response the light must reach: the sensor's own QE (at `sensor`), or a colour
/// channel's (at `sensor.channels.R` …).
struct QeSource<'a> {
    /// Where its keys are (`sensor`, `sensor.channels.G`).
    at: String,
    quantum_efficiency: Option<f64>,
    curve: Option<&'a crate::spectrum::QeCurve>,
}

/// The responses of a sensor: its own, or each colour channel's.
fn qe_sources(sensor: &Sensor) -> Vec<QeSource<'_>> {
    match &sensor.colour {
        None => vec![QeSource {
            at: "sensor".into(),
            quantum_efficiency: sensor.quantum_efficiency,
            curve: sensor.quantum_efficiency_curve.as_ref(),
        }],
        Some(c) => crate::scenario::CHANNEL_NAMES
            .iter()
            .zip(&c.channels)
            .map(|(name, ch)| QeSource {
                at: format!("sensor.channels.{name}"),
                quantum_efficiency: ch.quantum_efficiency,
                curve: ch.quantum_efficiency_curve.as_ref(),
            })
            .collect(),
    }
}

/// Rules joining the light (or background light, at `prefix`) with the sensor's response.
pub(super) fn check_light(p: &mut Problems, prefix: &str, light: &Light, sensor: &Sensor) {
    let band = sensor.response_band_nm;
    let spectrum = light.spectrum();
    let sources = qe_sources(sensor);
    for src in &sources {
        check_presence(p, prefix, light, src);
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
    for src in &sources {
        let Some(curve) = src.curve else { continue };
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
                &format!("{}.quantum_efficiency_curve", src.at),
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

/// A response must have a QE value, or a curve the light can weight (a spectrum or a
/// wavelength) that is not zero at a monochromatic light's wavelength.
fn check_presence(p: &mut Problems, prefix: &str, light: &Light, src: &QeSource<'_>) {
    let at = &src.at;
    if let (Some(curve), Light::Irradiance { wavelength_nm, .. }) = (src.curve, light) {
        if curve.at(*wavelength_nm) < MIN_EFFECTIVE_QE {
            p.push(
                &format!("{prefix}.wavelength_nm"),
                format!(
                    "{at}.quantum_efficiency_curve is zero at {} nm: this sensor does not see this light",
                    show(*wavelength_nm)
                ),
            );
        }
    }
    let has_curve = src.curve.is_some();
    let curve_usable =
        has_curve && (light.spectrum().is_some() || matches!(light, Light::Irradiance { .. }));
    if src.quantum_efficiency.is_none() && !curve_usable {
        let why = if has_curve {
            format!(
                "required: {prefix} has no spectrum or wavelength to weight {at}.quantum_efficiency_curve with"
            )
        } else {
            format!("required, missing: give it, or {at}.quantum_efficiency_curve")
        };
        let path = format!("{at}.quantum_efficiency");
        if !p.has_problem_at(&path) {
            p.push(&path, why);
        }
    }
}
