//! Dark current at a temperature, by the doubling-interval rule.
//!
//! One formula; the physical (band-gap) models are not implemented here.

/// Factor by which dark current changes from the reference temperature to `temperature_c`.
///
/// # Formula
/// ```text
/// I(T) / I_ref = 2^((T − T_ref) / T_d)
/// ```
/// T, T_ref: temperatures (°C or K, only the difference matters); T_d: doubling interval (K).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, optional temperature dependence (from memory);
/// the 5–8 °C doubling rule is common practice. REFERENCES.md §7 table: T_d = 6 °C,
/// 40 °C against 20 °C → 10.08.
///
/// ```
/// let f = engine::dark::temperature_factor(40.0, 20.0, 6.0);
/// assert!((f - 10.08).abs() < 0.005); // REFERENCES.md §7, 4 significant digits
/// ```
#[must_use]
pub fn temperature_factor(temperature_c: f64, reference_c: f64, doubling_c: f64) -> f64 {
    ((temperature_c - reference_c) / doubling_c).exp2()
}
