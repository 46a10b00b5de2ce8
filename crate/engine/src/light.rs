//! Light as engineers state it, resolved to what the model needs: photons at the sensor.
//!
//! A checked light (photon flux, monochromatic or spectral irradiance, illuminance with a
//! spectrum, or a scene seen through a lens) becomes a [`ResolvedLight`]: the photon flux over
//! the sensor's response band, the photon-weighted quantum efficiency, and the factors that
//! turn photons back into the user's own units. No parsing and no noise model here.

use serde::Serialize;

use crate::photon;
use crate::spectrum::{self, QeCurve, Spectrum};

/// The scene-side quantity of a [`Light::Scene`] light.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum SceneQuantity {
    /// Illuminance on a Lambertian object of the given reflectance, lux.
    Illuminance {
        /// Scene illuminance, lx.
        lux: f64,
        /// Diffuse reflectance ρ, 0..1.
        reflectance: f64,
    },
    /// Irradiance on a Lambertian object, W/m² within the sensor's band.
    Irradiance {
        /// Scene irradiance, W/m².
        w_per_m2: f64,
        /// Diffuse reflectance ρ, 0..1.
        reflectance: f64,
    },
    /// The object's luminance, cd/m².
    Luminance {
        /// Luminance, cd/m².
        cd_per_m2: f64,
    },
    /// The object's radiance, W m⁻² sr⁻¹ within the sensor's band.
    Radiance {
        /// Radiance, W m⁻² sr⁻¹.
        w_per_m2_sr: f64,
    },
}

/// The lens between scene and sensor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Lens {
    /// f-number N (≥ 0.5).
    pub f_number: f64,
    /// Transmission T, 0..1.
    pub transmission: f64,
    /// Magnification |m| (0 for a distant scene).
    pub magnification: f64,
    /// Field angle θ of the pixel off the axis, degrees (cos⁴ fall-off).
    pub field_angle_deg: f64,
}

impl Lens {
    /// Sensor-plane illuminance per unit scene luminance (lx per cd/m², or W/m² per W/m²/sr).
    ///
    /// # Formula
    /// ```text
    /// E_sensor = π · L · T · cos⁴θ / (4 N² (1 + |m|)²)
    /// ```
    /// N·(1 + |m|) is the working f-number; the pupil magnification is taken as 1. For a
    /// Lambertian object L = ρ·E_scene/π, so E_sensor = ρ·E_scene·T·cos⁴θ / (4N²(1 + |m|)²).
    ///
    /// # Source
    /// The camera equation in its aplanatic (sine-condition) form, REFERENCES.md §6 (from
    /// memory: Ray, *Applied Photographic Optics*; Slater, *Remote Sensing*); worked values
    /// there: 1000 lx, ρ = 0.18, T = 0.9, f/2.8 → 5.1658 lx.
    ///
    /// ```
    /// let lens = engine::light::Lens { f_number: 2.8, transmission: 0.9, magnification: 0.0, field_angle_deg: 0.0 };
    /// let e = 0.18 * 1000.0 / std::f64::consts::PI * lens.sensor_per_luminance();
    /// assert!((e - 5.1658).abs() < 5e-4); // REFERENCES.md §6, 5 significant digits
    /// ```
    #[must_use]
    pub fn sensor_per_luminance(&self) -> f64 {
        let cos = self.field_angle_deg.to_radians().cos();
        let working = self.f_number * (1.0 + self.magnification.abs());
        std::f64::consts::PI * self.transmission * cos.powi(4) / (4.0 * working * working)
    }
}

/// The checked light at the sensor, or at the scene through a lens. Open to new kinds.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Light {
    /// Photons per µm² per second at the sensor.
    PhotonFlux {
        /// Photon flux density, photons µm⁻² s⁻¹.
        photon_flux_per_um2_s: f64,
    },
    /// Monochromatic irradiance at the sensor.
    Irradiance {
        /// Irradiance, W/m².
        irradiance_w_per_m2: f64,
        /// Vacuum wavelength, nm.
        wavelength_nm: f64,
    },
    /// Photons per physical pixel per frame, independent of the exposure time.
    PhotonsPerPixel {
        /// Mean photons incident on one pixel in one frame.
        photons_per_pixel: f64,
    },
    /// Irradiance at the sensor with a spectrum: W/m² within the sensor's response band.
    SpectralIrradiance {
        /// Irradiance within the band, W/m².
        irradiance_w_per_m2: f64,
        /// Its relative spectrum.
        spectrum: Spectrum,
    },
    /// Illuminance at the sensor with a spectrum.
    Illuminance {
        /// Illuminance, lx.
        illuminance_lux: f64,
        /// Its relative spectrum.
        spectrum: Spectrum,
    },
    /// A scene quantity, through a lens, to the sensor plane.
    Scene {
        /// What is known at the scene.
        quantity: SceneQuantity,
        /// Its relative spectrum.
        spectrum: Spectrum,
        /// The lens.
        lens: Lens,
    },
}

impl Light {
    /// The spectrum of this light, for kinds that have one.
    #[must_use]
    pub fn spectrum(&self) -> Option<&Spectrum> {
        match self {
            Light::SpectralIrradiance { spectrum, .. }
            | Light::Illuminance { spectrum, .. }
            | Light::Scene { spectrum, .. } => Some(spectrum),
            _ => None,
        }
    }
}

/// How the sensor turns photons into electrons: one QE, or a curve, over a response band.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Response<'a> {
    /// The single quantum efficiency, when given.
    pub quantum_efficiency: Option<f64>,
    /// The QE curve, when given (it wins over the single value for light with a spectrum).
    pub curve: Option<&'a QeCurve>,
    /// Wavelengths the sensor responds to, nm (photons are counted over this band).
    pub band_nm: (f64, f64),
}

impl Response<'_> {
    /// QE at a wavelength: the curve if there is one, else the single value.
    #[must_use]
    pub fn qe_at(&self, nm: f64) -> f64 {
        match self.curve {
            Some(c) => c.at(nm),
            None => self.quantum_efficiency.unwrap_or(0.0),
        }
    }
}

/// A light resolved to photons at the sensor.
#[derive(Debug, Clone, PartialEq)]
pub struct ResolvedLight {
    /// Photon flux at the sensor over the band, photons µm⁻² s⁻¹; `None` for light per pixel.
    pub photon_flux_per_um2_s: Option<f64>,
    /// Photons per pixel per frame, for light given that way.
    pub photons_per_pixel: Option<f64>,
    /// Electrons per photon, photon-weighted over the spectrum.
    pub effective_qe: f64,
    /// The report's description of the light.
    pub summary: LightSummary,
    /// For each unit the user gave the light in: (report key, photons µm⁻² s⁻¹ per unit).
    pub units: Vec<(&'static str, f64)>,
    /// Share of the spectrum's photons (300–1100 nm) outside the response band, where it can
    /// be computed (see `model`'s `light_outside_band` warning).
    pub outside_band_share: Option<f64>,
    /// What the figures are made of (for [`ResolvedLight::at_amount`]).
    basis: Basis,
}

impl ResolvedLight {
    /// The same light at another amount, in the unit its kind is given in (lux, W/m², scene
    /// lux, photons, …). The light is linear in its amount, so a sweep of the amount need not
    /// redo the spectral integrals; the arithmetic is the same as [`resolve`]'s, so the result
    /// is identical to resolving the changed light.
    #[must_use]
    pub fn at_amount(&self, amount: f64) -> ResolvedLight {
        let mut r = self.clone();
        match self.basis {
            Basis::Flux => {
                r.photon_flux_per_um2_s = Some(amount);
                r.summary.photon_flux_per_um2_s = Some(amount);
            }
            Basis::PerPixel => r.photons_per_pixel = Some(amount),
            Basis::Monochromatic { photons_per_watt } => {
                let flux = amount * photons_per_watt;
                r.photon_flux_per_um2_s = Some(flux);
                r.summary.photon_flux_per_um2_s = Some(flux);
                r.summary.sensor_irradiance_w_per_m2 = Some(amount);
            }
            Basis::Spectral {
                photons,
                lux,
                watts,
                unit_per_scale,
                sensor_per_user_unit,
            } => {
                let sensor_amount = match sensor_per_user_unit {
                    Some(per) => amount * per,
                    None => amount,
                };
                let k = sensor_amount / unit_per_scale;
                r.photon_flux_per_um2_s = Some(k * photons);
                r.summary.photon_flux_per_um2_s = Some(k * photons);
                r.summary.sensor_illuminance_lux = Some(k * lux);
                r.summary.sensor_irradiance_w_per_m2 = Some(k * watts);
            }
        }
        r
    }
}

/// What a resolved light's figures are made of, so that [`ResolvedLight::at_amount`] can
/// redo the last, linear step alone.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Basis {
    /// Photon flux given directly.
    Flux,
    /// Photons per pixel given directly.
    PerPixel,
    /// Monochromatic irradiance: photons µm⁻² s⁻¹ per W/m².
    Monochromatic { photons_per_watt: f64 },
    /// A spectrum's integrals per unit of its scale, the integral the amount is stated in, and
    /// for scene light the sensor-plane value per scene unit.
    Spectral {
        photons: f64,
        lux: f64,
        watts: f64,
        unit_per_scale: f64,
        sensor_per_user_unit: Option<f64>,
    },
}

/// What the report says about the light (the `light` section).
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct LightSummary {
    /// Photon flux at the sensor, photons µm⁻² s⁻¹ (over the band for spectral light).
    pub photon_flux_per_um2_s: Option<f64>,
    /// Electrons per incident photon, weighted by the photon spectrum.
    pub effective_quantum_efficiency: f64,
    /// The band photons are counted over, nm; `None` for light without a spectrum.
    pub band_nm: Option<[f64; 2]>,
    /// The largest integration step, nm; `None` without a spectrum.
    pub step_nm: Option<f64>,
    /// The spectrum's kind, when there is one.
    pub spectrum: Option<&'static str>,
    /// Illuminance at the sensor plane, lx (spectral light only).
    pub sensor_illuminance_lux: Option<f64>,
    /// Irradiance at the sensor plane within the band, W/m² (spectral or monochromatic light).
    pub sensor_irradiance_w_per_m2: Option<f64>,
    /// Sensor-plane value per unit scene luminance/radiance (the camera equation's factor).
    pub sensor_per_scene_luminance: Option<f64>,
    /// The form of the camera equation used, for scene light.
    pub camera_equation: Option<&'static str>,
}

/// The camera equation as the report states it.
pub const CAMERA_EQUATION: &str =
    "E_sensor = π·L·T·cos⁴θ / (4·N²·(1+|m|)²), L = ρ·E_scene/π (aplanatic form; REFERENCES.md §6)";

/// Resolve a checked light against the sensor's response.
///
/// Validation has already made sure the spectrum has visible light where lux are given,
/// lies within its table's range over the band, and (for a line) falls inside the band.
#[must_use]
pub fn resolve(light: &Light, response: &Response<'_>) -> ResolvedLight {
    let scalar_qe = response.quantum_efficiency.unwrap_or(0.0);
    match light {
        Light::PhotonFlux {
            photon_flux_per_um2_s,
        } => ResolvedLight {
            photon_flux_per_um2_s: Some(*photon_flux_per_um2_s),
            photons_per_pixel: None,
            effective_qe: scalar_qe,
            summary: LightSummary {
                photon_flux_per_um2_s: Some(*photon_flux_per_um2_s),
                effective_quantum_efficiency: scalar_qe,
                ..LightSummary::default()
            },
            units: vec![("photon_flux_per_um2_s", 1.0)],
            outside_band_share: None,
            basis: Basis::Flux,
        },
        Light::PhotonsPerPixel { photons_per_pixel } => ResolvedLight {
            photon_flux_per_um2_s: None,
            photons_per_pixel: Some(*photons_per_pixel),
            effective_qe: scalar_qe,
            summary: LightSummary {
                effective_quantum_efficiency: scalar_qe,
                ..LightSummary::default()
            },
            units: vec![],
            outside_band_share: None,
            basis: Basis::PerPixel,
        },
        Light::Irradiance {
            irradiance_w_per_m2,
            wavelength_nm,
        } => {
            // The version-1 monochromatic kind: no band, exactly as SCENARIO.md computes it.
            let per_w = photon::photon_flux_per_um2_s(1.0, *wavelength_nm);
            let qe = if response.curve.is_some() {
                response.qe_at(*wavelength_nm)
            } else {
                scalar_qe
            };
            let flux = irradiance_w_per_m2 * per_w;
            ResolvedLight {
                photon_flux_per_um2_s: Some(flux),
                photons_per_pixel: None,
                effective_qe: qe,
                summary: LightSummary {
                    photon_flux_per_um2_s: Some(flux),
                    effective_quantum_efficiency: qe,
                    sensor_irradiance_w_per_m2: Some(*irradiance_w_per_m2),
                    ..LightSummary::default()
                },
                units: vec![("irradiance_w_per_m2", per_w)],
                outside_band_share: None,
                basis: Basis::Monochromatic {
                    photons_per_watt: per_w,
                },
            }
        }
        Light::SpectralIrradiance {
            irradiance_w_per_m2,
            spectrum,
        } => spectral(spectrum, response, *irradiance_w_per_m2, None, false, None),
        Light::Illuminance {
            illuminance_lux,
            spectrum,
        } => spectral(spectrum, response, *illuminance_lux, None, true, None),
        Light::Scene {
            quantity,
            spectrum,
            lens,
        } => {
            let per_luminance = lens.sensor_per_luminance();
            let pi = std::f64::consts::PI;
            // Sensor-plane value per unit of the scene quantity, and whether it is photometric.
            let (scene_value, per_scene_unit, photometric, key) = match *quantity {
                SceneQuantity::Illuminance { lux, reflectance } => (
                    lux,
                    reflectance / pi * per_luminance,
                    true,
                    "scene_illuminance_lux",
                ),
                SceneQuantity::Irradiance {
                    w_per_m2,
                    reflectance,
                } => (
                    w_per_m2,
                    reflectance / pi * per_luminance,
                    false,
                    "scene_irradiance_w_per_m2",
                ),
                SceneQuantity::Luminance { cd_per_m2 } => {
                    (cd_per_m2, per_luminance, true, "scene_luminance_cd_per_m2")
                }
                SceneQuantity::Radiance { w_per_m2_sr } => (
                    w_per_m2_sr,
                    per_luminance,
                    false,
                    "scene_radiance_w_per_m2_sr",
                ),
            };
            let mut r = spectral(
                spectrum,
                response,
                scene_value,
                Some(per_scene_unit),
                photometric,
                Some(per_luminance),
            );
            // Photons per scene unit = per sensor unit × sensor units per scene unit.
            let per_sensor_unit = r.units.first().map_or(0.0, |u| u.1);
            r.units.push((key, per_sensor_unit * per_scene_unit));
            r
        }
    }
}

/// The four integrals of a spectrum (per unit of its scale) that a spectral light needs.
struct Integrals {
    /// Photons µm⁻² s⁻¹ over the band.
    photons: f64,
    /// Photo-electrons µm⁻² s⁻¹ over the band.
    electrons: f64,
    /// Lux (over V(λ)'s table).
    lux: f64,
    /// W/m² over the band.
    watts: f64,
}

fn integrals(spectrum: &Spectrum, response: &Response<'_>) -> Integrals {
    let band = response.band_nm;
    Integrals {
        photons: spectrum::photons_per_unit(spectrum, band),
        electrons: spectrum::electrons_per_unit(spectrum, band, |nm| response.qe_at(nm)),
        lux: spectrum::lux_per_unit(spectrum),
        watts: spectrum.integrate(band, |_| 1.0),
    }
}

/// A spectral light given as `amount` of a photometric (lux) or radiometric (W/m² in the band)
/// quantity at the sensor.
fn spectral(
    spectrum: &Spectrum,
    response: &Response<'_>,
    user_amount: f64,
    sensor_per_user_unit: Option<f64>,
    photometric: bool,
    sensor_per_scene_luminance: Option<f64>,
) -> ResolvedLight {
    let band = response.band_nm;
    let i = integrals(spectrum, response);
    let amount = match sensor_per_user_unit {
        Some(per) => user_amount * per,
        None => user_amount,
    };
    let (unit_key, unit_per_scale) = if photometric {
        ("illuminance_lux", i.lux)
    } else {
        ("irradiance_w_per_m2", i.watts)
    };
    // Scale of the spectrum that gives `amount` (validation made unit_per_scale > 0).
    let k = amount / unit_per_scale;
    let flux = k * i.photons;
    let qe = if i.photons > 0.0 {
        i.electrons / i.photons
    } else {
        response.quantum_efficiency.unwrap_or(0.0)
    };
    ResolvedLight {
        photon_flux_per_um2_s: Some(flux),
        photons_per_pixel: None,
        effective_qe: qe,
        summary: LightSummary {
            photon_flux_per_um2_s: Some(flux),
            effective_quantum_efficiency: qe,
            band_nm: Some([band.0, band.1]),
            step_nm: Some(spectrum::STEP_NM),
            spectrum: Some(spectrum.kind()),
            sensor_illuminance_lux: Some(k * i.lux),
            sensor_irradiance_w_per_m2: Some(k * i.watts),
            sensor_per_scene_luminance,
            camera_equation: sensor_per_scene_luminance.map(|_| CAMERA_EQUATION),
        },
        units: vec![(unit_key, i.photons / unit_per_scale)],
        outside_band_share: share_outside_band(spectrum, band),
        basis: Basis::Spectral {
            photons: i.photons,
            lux: i.lux,
            watts: i.watts,
            unit_per_scale,
            sensor_per_user_unit,
        },
    }
}

/// The wavelengths a silicon sensor can respond to at all, nm (common practice, no source).
const SILICON_RANGE_NM: (f64, f64) = (300.0, 1100.0);

/// Share of the spectrum's photons (within the silicon range and where the spectrum is
/// defined) that falls outside `band`; `None` for spectra of unbounded extent or a line.
fn share_outside_band(spectrum: &Spectrum, band: (f64, f64)) -> Option<f64> {
    let (lo, hi) = match spectrum {
        Spectrum::Monochromatic { .. } | Spectrum::EqualEnergy => return None,
        Spectrum::Gaussian { centre_nm, fwhm_nm } => {
            (centre_nm - 3.0 * fwhm_nm, centre_nm + 3.0 * fwhm_nm)
        }
        Spectrum::Table { points } => (points.first()?.0, points.last()?.0),
        other => other.defined_range_nm().unwrap_or(SILICON_RANGE_NM),
    };
    let (lo, hi) = (lo.max(SILICON_RANGE_NM.0), hi.min(SILICON_RANGE_NM.1));
    let all = spectrum::photons_per_unit(spectrum, (lo, hi));
    let inside = spectrum::photons_per_unit(spectrum, (band.0.max(lo), band.1.min(hi)));
    (all > 0.0).then(|| ((all - inside) / all).max(0.0))
}
