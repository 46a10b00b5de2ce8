//! Physical constants (CODATA 2018 exact values, SI 2019) used by the model.
//!
//! Only constants live here; nothing is computed from them in this file.

/// Boltzmann constant k, in joules per kelvin (exact since the 2019 SI redefinition).
///
/// # Source
/// CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021); SI Brochure, 9th ed.
pub const BOLTZMANN_J_PER_K: f64 = 1.380649e-23;

/// Elementary charge q, in coulombs (exact).
///
/// # Source
/// CODATA 2018; SI Brochure, 9th ed.
pub const ELEMENTARY_CHARGE_C: f64 = 1.602176634e-19;

/// Planck constant h, in joule seconds (exact).
///
/// # Source
/// CODATA 2018; SI Brochure, 9th ed.
pub const PLANCK_J_S: f64 = 6.62607015e-34;

/// Speed of light in vacuum c, in metres per second (exact).
///
/// # Source
/// CODATA 2018; SI Brochure, 9th ed.
pub const SPEED_OF_LIGHT_M_PER_S: f64 = 299_792_458.0;

/// Offset between the Celsius and kelvin scales (exact by definition).
///
/// # Source
/// SI Brochure, 9th ed., section 2.3.1.
pub const ZERO_CELSIUS_K: f64 = 273.15;
