//! Quantization noise of a uniform ADC, referred to electrons through the system gain.
//!
//! One formula; no knowledge of scenarios.

/// Quantization noise variance in electrons² for a system gain K in DN per electron.
///
/// # Formula
/// ```text
/// σ_q² = 1 / (12 K²)      (σ_q = 1/(√12·K) e⁻; 1/12 DN² in the digital domain)
/// ```
/// K: system gain, DN/e⁻ (the EMVA 1288 convention; Janesick's e⁻/DN is 1/K).
///
/// # Source
/// W. R. Bennett, Bell Syst. Tech. J. 27:446–472, 1948 (uniform quantizer, Δ²/12), from memory;
/// EMVA 1288 Release 4.0 Linear, σ_q² = 1/12 DN² (from memory); REFERENCES.md §3 table.
///
/// ```
/// let s = engine::quantization::quantization_variance_e2(0.25).sqrt();
/// assert!((s - 1.155).abs() < 0.0005); // REFERENCES.md §3: K = 0.25 → 1.155 e⁻
/// ```
#[must_use]
pub fn quantization_variance_e2(system_gain_dn_per_e: f64) -> f64 {
    1.0 / (12.0 * system_gain_dn_per_e * system_gain_dn_per_e)
}
