//! The sense node: conversion gain from capacitance (V = Q/C) and reset (kTC) noise.
//!
//! Formulas only, on plain numbers in the units their names carry; no scenario logic.

use crate::constants::{BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C};

/// Femtofarads per farad.
const FF_PER_F: f64 = 1e15;
/// Microvolts per volt.
const UV_PER_V: f64 = 1e6;

/// Conversion gain at the sense node, in µV per electron, for a capacitance in fF.
///
/// # Formula
/// ```text
/// CG = q / C
/// ```
/// q: elementary charge (C); C: sense-node capacitance (F). Unity buffer gain.
///
/// # Source
/// V = Q/C; REFERENCES.md §2 (check value 80.11 µV/e⁻ at 2 fF); Janesick, *Photon Transfer*
/// (SPIE PM170, 2007), from memory.
///
/// ```
/// let cg = engine::sense_node::conversion_gain_uv_per_e(2.0);
/// assert!((cg - 80.11).abs() < 0.005); // REFERENCES.md §2 table, 4 significant digits
/// ```
#[must_use]
pub fn conversion_gain_uv_per_e(capacitance_ff: f64) -> f64 {
    ELEMENTARY_CHARGE_C / (capacitance_ff / FF_PER_F) * UV_PER_V
}

/// Sense-node capacitance in fF that gives a conversion gain in µV per electron (unity buffer).
///
/// # Formula
/// ```text
/// C = q / CG
/// ```
///
/// # Source
/// Inverse of [`conversion_gain_uv_per_e`]; SCENARIO.md ("derived as q / conversion gain").
///
/// ```
/// let c = engine::sense_node::capacitance_ff(160.2176634);
/// assert!((c - 1.0).abs() < 1e-12); // q / (1 fF) = 160.2176634 µV, exact by definition of q
/// ```
#[must_use]
pub fn capacitance_ff(conversion_gain_uv_per_e: f64) -> f64 {
    ELEMENTARY_CHARGE_C / (conversion_gain_uv_per_e / UV_PER_V) * FF_PER_F
}

/// Reset (kTC) noise variance of one reset, in electrons², for a capacitance in fF.
///
/// # Formula
/// ```text
/// σ_k² = k·T·C / q²
/// ```
/// k: Boltzmann constant (J/K); T: temperature (K); C: capacitance (F); q: elementary charge (C).
/// The voltage variance kT/C does not depend on the switch resistance.
///
/// # Source
/// A. El Gamal, Stanford EE 392B lecture notes 6, "Temporal Noise" (the kT/C derivation);
/// REFERENCES.md §2 table: √(kTC)/q = 17.96 e⁻ at 2 fF and 300 K.
///
/// ```
/// let v = engine::sense_node::reset_variance_e2(2.0, 300.0);
/// assert!((v.sqrt() - 17.96).abs() < 0.005); // REFERENCES.md §2, 4 significant digits
/// ```
#[must_use]
pub fn reset_variance_e2(capacitance_ff: f64, temperature_k: f64) -> f64 {
    let c_f = capacitance_ff / FF_PER_F;
    BOLTZMANN_J_PER_K * temperature_k * c_f / (ELEMENTARY_CHARGE_C * ELEMENTARY_CHARGE_C)
}
