//! Spectra of light sources, and the photometric, photon and electron integrals over them.
//!
//! Relative spectral power distributions (arbitrary scale, per nm): CIE illuminant A (its
//! defining formula), CIE D65 (its table), equal energy, a blackbody, a single line, a Gaussian
//! band, or a table of points. Integrals are trapezoids on a grid of at most 1 nm. No light
//! kinds or scenario logic here (that is `light.rs`).

use crate::constants::{BOLTZMANN_J_PER_K, PLANCK_J_S, SPEED_OF_LIGHT_M_PER_S};

/// The generated reference tables (build.rs, from `data/*.csv`).
#[allow(clippy::unreadable_literal, clippy::excessive_precision)]
mod tables {
    include!(concat!(env!("OUT_DIR"), "/cie_tables.rs"));
}

/// Maximum luminous efficacy K_m for photopic vision, lm/W.
///
/// # Source
/// SI definition of the candela (683 lm/W at 540 THz), SI Brochure 9th ed.; CIE 018:2019
/// (from memory); REFERENCES.md §1.
pub const LUMINOUS_EFFICACY_LM_PER_W: f64 = 683.0;

/// Largest integration step, nm (REFERENCES.md §5: the 1 nm trapezoid is the reference method).
pub const STEP_NM: f64 = 1.0;

/// The wavelengths over which V(λ) is tabulated, nm: the photometric integral's band.
pub const PHOTOMETRIC_BAND_NM: (f64, f64) = (360.0, 830.0);

/// Wavelengths over which the D65 table is defined, nm.
pub const D65_RANGE_NM: (f64, f64) = (300.0, 830.0);

/// Metres per nanometre.
const M_PER_NM: f64 = 1e-9;
/// Square micrometres per square metre.
const UM2_PER_M2: f64 = 1e12;

/// A relative spectral power distribution.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Spectrum {
    /// CIE standard illuminant A (tungsten, 2856 K), from its defining formula.
    CieA,
    /// CIE standard illuminant D65 (average daylight), from its table, 300–830 nm.
    CieD65,
    /// Equal power per nm at every wavelength (CIE illuminant E).
    EqualEnergy,
    /// Planck's law at a temperature.
    Blackbody {
        /// Temperature, K.
        temperature_k: f64,
    },
    /// All power at one wavelength (a laser line; a stand-in for a narrow source).
    Monochromatic {
        /// Wavelength, nm.
        wavelength_nm: f64,
    },
    /// A Gaussian band, a stand-in for an LED.
    Gaussian {
        /// Peak wavelength, nm.
        centre_nm: f64,
        /// Full width at half maximum, nm.
        fwhm_nm: f64,
    },
    /// Points given by the user: linear between them, zero outside.
    Table {
        /// (wavelength nm, relative power) with strictly increasing wavelengths.
        points: Vec<(f64, f64)>,
    },
}

impl Spectrum {
    /// The format's name for this spectrum kind.
    #[must_use]
    pub fn kind(&self) -> &'static str {
        match self {
            Spectrum::CieA => "cie_a",
            Spectrum::CieD65 => "cie_d65",
            Spectrum::EqualEnergy => "equal_energy",
            Spectrum::Blackbody { .. } => "blackbody",
            Spectrum::Monochromatic { .. } => "monochromatic",
            Spectrum::Gaussian { .. } => "gaussian",
            Spectrum::Table { .. } => "table",
        }
    }

    /// The wavelengths where this spectrum is defined, if not everywhere.
    #[must_use]
    pub fn defined_range_nm(&self) -> Option<(f64, f64)> {
        match self {
            Spectrum::CieD65 => Some(D65_RANGE_NM),
            _ => None,
        }
    }

    /// Relative power per nm at a wavelength (0 for a single line, whose power is integrated
    /// separately; 0 outside a table's or D65's range).
    #[must_use]
    pub fn power_at(&self, nm: f64) -> f64 {
        match self {
            Spectrum::CieA => cie_a(nm),
            Spectrum::CieD65 => d65(nm).unwrap_or(0.0),
            Spectrum::EqualEnergy => 1.0,
            Spectrum::Blackbody { temperature_k } => planck_relative(nm, *temperature_k),
            Spectrum::Monochromatic { .. } => 0.0,
            Spectrum::Gaussian { centre_nm, fwhm_nm } => {
                let x = (nm - centre_nm) / fwhm_nm;
                (-4.0 * std::f64::consts::LN_2 * x * x).exp()
            }
            Spectrum::Table { points } => interpolate(points, nm),
        }
    }

    /// ∫ S(λ)·f(λ) dλ over `band` (nm): trapezoid on an even grid of at most [`STEP_NM`];
    /// for a single line, f at the line if it lies in the band (unit power), else 0.
    #[must_use]
    pub fn integrate(&self, band: (f64, f64), f: impl Fn(f64) -> f64) -> f64 {
        let (a, b) = band;
        if let Spectrum::Monochromatic { wavelength_nm } = self {
            return if (a..=b).contains(wavelength_nm) {
                f(*wavelength_nm)
            } else {
                0.0
            };
        }
        trapezoid(a, b, |nm| self.power_at(nm) * f(nm))
    }
}

/// Trapezoid rule for ∫ g over [a, b] on an even grid of steps no longer than [`STEP_NM`].
fn trapezoid(a: f64, b: f64, g: impl Fn(f64) -> f64) -> f64 {
    if a.is_nan() || b.is_nan() || b <= a {
        return 0.0;
    }
    let steps = ((b - a) / STEP_NM).ceil().max(1.0);
    let h = (b - a) / steps;
    // OK because steps ≤ (1e6 nm band limit) / STEP_NM, far inside u32.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = steps as u32;
    let mut sum = 0.5 * (g(a) + g(b));
    for i in 1..n {
        sum += g(a + h * f64::from(i));
    }
    sum * h
}

/// Linear interpolation in (x, y) points with increasing x; 0 outside.
#[must_use]
pub fn interpolate(points: &[(f64, f64)], x: f64) -> f64 {
    let i = points.partition_point(|(px, _)| *px < x);
    match (i.checked_sub(1).and_then(|j| points.get(j)), points.get(i)) {
        (_, Some(&(x1, y1))) if x1 == x => y1,
        (Some(&(x0, y0)), Some(&(x1, y1))) => y0 + (y1 - y0) * (x - x0) / (x1 - x0),
        _ => 0.0,
    }
}

/// Value of a uniformly spaced table at `nm`, linear between rows; `None` outside.
fn table_at(start: f64, step: f64, values: &[f64], nm: f64) -> Option<f64> {
    let pos = (nm - start) / step;
    if pos.is_nan() || pos < 0.0 {
        return None;
    }
    // OK because pos ≥ 0 and is compared with the table length below.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let i = pos.floor() as usize;
    let frac = pos - pos.floor();
    let y0 = values.get(i).copied()?;
    if frac == 0.0 {
        return Some(y0);
    }
    let y1 = values.get(i + 1).copied()?;
    Some(y0 + (y1 - y0) * frac)
}

/// CIE 1924 photopic luminous efficiency V(λ), linear between the 1 nm rows; 0 outside
/// 360–830 nm.
///
/// # Source
/// CIE 018:2019 / ISO 23539:2005 (from memory); the table is colour-science 0.4.7's "CIE 1924
/// Photopic Standard Observer" (data/README.md), checked against it point by point.
///
/// ```
/// assert_eq!(engine::spectrum::v_lambda(555.0), 1.0); // REFERENCES.md §5 table
/// assert_eq!(engine::spectrum::v_lambda(550.0), 0.9949501); // 1 nm table value
/// ```
#[must_use]
pub fn v_lambda(nm: f64) -> f64 {
    table_at(tables::V_START_NM, tables::V_STEP_NM, &tables::V, nm).unwrap_or(0.0)
}

/// CIE D65 relative spectral power, linear between the 5 nm rows; `None` outside 300–830 nm.
///
/// # Source
/// CIE 15:2004 tables via colour-science 0.4.7 (300–780 nm) and luxpy (790–830 nm), as quoted in
/// REFERENCES.md §5; 100 at 560 nm by definition.
///
/// ```
/// assert_eq!(engine::spectrum::d65(560.0), Some(100.0));
/// assert_eq!(engine::spectrum::d65(450.0), Some(117.008)); // REFERENCES.md §5 table
/// ```
#[must_use]
pub fn d65(nm: f64) -> Option<f64> {
    table_at(tables::D65_START_NM, tables::D65_STEP_NM, &tables::D65, nm)
}

/// CIE standard illuminant A, relative spectral power (100 at 560 nm).
///
/// # Formula
/// ```text
/// S_A(λ) = 100 · (560/λ)⁵ · [exp(1.435e7 / (2848·560)) − 1] / [exp(1.435e7 / (2848·λ)) − 1]
/// ```
/// λ in nm. Planck's law at 2848 K with the old c₂ = 1.435e-2 m·K (2856 K with today's c₂).
///
/// # Source
/// CIE 15:2004, as implemented in colour-science's `sd_CIE_standard_illuminant_A`
/// (REFERENCES.md §5, which gives 165.02751 at 650 nm).
///
/// ```
/// let a = engine::spectrum::cie_a(650.0);
/// assert!((a - 165.02751).abs() < 5e-6); // REFERENCES.md §5, 8 significant digits
/// ```
#[must_use]
pub fn cie_a(nm: f64) -> f64 {
    const C: f64 = 1.435e7 / 2848.0;
    100.0 * (560.0 / nm).powi(5) * (C / 560.0).exp_m1() / (C / nm).exp_m1()
}

/// Planck's law, relative spectral radiance per unit wavelength (arbitrary scale: 1 at 560 nm).
///
/// # Formula
/// ```text
/// L_λ ∝ λ⁻⁵ / (exp(c₂ / (λ T)) − 1),   c₂ = h·c / k = 1.438777e-2 m·K
/// ```
///
/// # Source
/// Planck's radiation law (any radiometry text, e.g. Wyszecki & Stiles, *Color Science*, 2000,
/// from memory); REFERENCES.md §5 compares it with illuminant A at 2856 K (164.99458 at 650 nm
/// when scaled to 100 at 560 nm).
///
/// ```
/// use engine::constants::*;
/// // REFERENCES.md §5 used c₂ = 1.4388e-2 m·K; the same exponent c₂/(λT) with CODATA's c₂
/// // needs T scaled by c₂(CODATA)/1.4388e-2.
/// let c2 = PLANCK_J_S * SPEED_OF_LIGHT_M_PER_S / BOLTZMANN_J_PER_K;
/// let p = 100.0 * engine::spectrum::planck_relative(650.0, 2856.0 * c2 / 1.4388e-2);
/// assert!((p - 164.99458).abs() < 5e-5); // REFERENCES.md §5, 8 significant digits
/// ```
#[must_use]
pub fn planck_relative(nm: f64, temperature_k: f64) -> f64 {
    let c2_m_k = PLANCK_J_S * SPEED_OF_LIGHT_M_PER_S / BOLTZMANN_J_PER_K;
    let c2_nm_k = c2_m_k / M_PER_NM;
    let at = |l: f64| l.powi(-5) / (c2_nm_k / (l * temperature_k)).exp_m1();
    at(nm) / at(560.0)
}

/// Photons per second per µm² per watt per m² at one wavelength: λ / (h·c), scaled.
fn photons_per_joule_um2(nm: f64) -> f64 {
    nm * M_PER_NM / (PLANCK_J_S * SPEED_OF_LIGHT_M_PER_S) / UM2_PER_M2
}

/// Illuminance (lux) per unit of the spectrum's scale, over [`PHOTOMETRIC_BAND_NM`].
///
/// # Formula
/// ```text
/// E_v = K_m · ∫ S(λ) V(λ) dλ       (K_m = 683 lm/W; S in W m⁻² nm⁻²)
/// ```
///
/// # Source
/// CIE photometry (CIE 018:2019, from memory); REFERENCES.md §5.
#[must_use]
pub fn lux_per_unit(spectrum: &Spectrum) -> f64 {
    LUMINOUS_EFFICACY_LM_PER_W * spectrum.integrate(PHOTOMETRIC_BAND_NM, v_lambda)
}

/// Photon flux (photons µm⁻² s⁻¹) per unit of the spectrum's scale, counted over `band_nm`.
///
/// # Formula
/// ```text
/// Φ_p = ∫ S(λ) · λ / (h·c) dλ
/// ```
///
/// # Source
/// Photon energy hc/λ (REFERENCES.md §5).
#[must_use]
pub fn photons_per_unit(spectrum: &Spectrum, band_nm: (f64, f64)) -> f64 {
    spectrum.integrate(band_nm, photons_per_joule_um2)
}

/// Photo-electrons (e⁻ µm⁻² s⁻¹) per unit of the spectrum's scale: ∫ QE(λ)·S(λ)·λ/(hc) dλ.
#[must_use]
pub fn electrons_per_unit(
    spectrum: &Spectrum,
    band_nm: (f64, f64),
    qe: impl Fn(f64) -> f64,
) -> f64 {
    spectrum.integrate(band_nm, |nm| qe(nm) * photons_per_joule_um2(nm))
}

/// Photons µm⁻² s⁻¹ per lux for a spectrum: photons counted over `band_nm`, lux over
/// `photometric_band_nm`. `None` when the spectrum has no visible light there.
///
/// # Formula
/// ```text
/// Φ_p / E_v = ∫_band S·λ/(hc) dλ / (K_m ∫_phot S·V dλ)
/// ```
///
/// # Source
/// REFERENCES.md §5 "Photons per lux" (1 nm trapezoid; 380–780 nm for both: A 21005,
/// D65 13887, E 16003).
///
/// ```
/// use engine::spectrum::{photons_per_lux, Spectrum};
/// let e = photons_per_lux(&Spectrum::EqualEnergy, (380.0, 780.0), (380.0, 780.0)).unwrap();
/// assert!((e / 16003.0 - 1.0).abs() < 5e-5); // REFERENCES.md §5, 5 significant digits
/// ```
#[must_use]
pub fn photons_per_lux(
    spectrum: &Spectrum,
    band_nm: (f64, f64),
    photometric_band_nm: (f64, f64),
) -> Option<f64> {
    let lux = LUMINOUS_EFFICACY_LM_PER_W * spectrum.integrate(photometric_band_nm, v_lambda);
    (lux > 0.0).then(|| photons_per_unit(spectrum, band_nm) / lux)
}

/// A quantum-efficiency curve: linear between points, zero outside.
#[derive(Debug, Clone, PartialEq)]
pub struct QeCurve {
    /// (wavelength nm, QE 0..1) with strictly increasing wavelengths.
    pub points: Vec<(f64, f64)>,
}

impl QeCurve {
    /// QE at a wavelength (0 outside the curve).
    #[must_use]
    pub fn at(&self, nm: f64) -> f64 {
        interpolate(&self.points, nm)
    }

    /// The wavelengths the curve spans, nm.
    #[must_use]
    pub fn span_nm(&self) -> Option<(f64, f64)> {
        Some((self.points.first()?.0, self.points.last()?.0))
    }
}
