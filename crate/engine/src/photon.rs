//! Photon flux from radiometric quantities (monochromatic light).
//!
//! Formulas only; spectra and photometry are not in this file.

use crate::constants::{PLANCK_J_S, SPEED_OF_LIGHT_M_PER_S};

/// Square micrometres per square metre.
const UM2_PER_M2: f64 = 1e12;
/// Metres per nanometre.
const M_PER_NM: f64 = 1e-9;

/// Energy of one photon in joules at a vacuum wavelength in nm.
///
/// # Formula
/// ```text
/// E_ph = h·c / λ
/// ```
///
/// # Source
/// Planck–Einstein relation; REFERENCES.md §5: 3.611720e-19 J at 550 nm.
///
/// ```
/// let e = engine::photon::photon_energy_j(550.0);
/// assert!((e / 3.611720e-19 - 1.0).abs() < 1e-6); // REFERENCES.md §5, 7 digits
/// ```
#[must_use]
pub fn photon_energy_j(wavelength_nm: f64) -> f64 {
    PLANCK_J_S * SPEED_OF_LIGHT_M_PER_S / (wavelength_nm * M_PER_NM)
}

/// Photon flux density in photons per µm² per second for monochromatic irradiance.
///
/// # Formula
/// ```text
/// Φ_p = E_e · λ / (h·c)        (per m² per s; divided by 10¹² for per µm²)
/// ```
/// E_e: irradiance, W/m²; λ: vacuum wavelength, m; h: Planck constant; c: speed of light.
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, eq. for μ_p = A·E·t·λ/(h·c) (from memory);
/// REFERENCES.md §5: 1 W/m² at 850 nm → 4.279e6 photons s⁻¹ µm⁻².
///
/// ```
/// let f = engine::photon::photon_flux_per_um2_s(1.0, 850.0);
/// assert!((f / 4.279e6 - 1.0).abs() < 2e-4); // REFERENCES.md §5, 4 significant digits
/// ```
#[must_use]
pub fn photon_flux_per_um2_s(irradiance_w_per_m2: f64, wavelength_nm: f64) -> f64 {
    irradiance_w_per_m2 / photon_energy_j(wavelength_nm) / UM2_PER_M2
}
