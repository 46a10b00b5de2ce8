//! The photon transfer method's closed-form steps, one function each, with their sources.
//!
//! Plain numbers in, plain numbers out: the caller ([`super::analysis`]) checks that the inputs
//! exist and are in range (K > 0, a mean above dark > 0). No fitting and no frames here.

/// Quantization noise variance of an ideal ADC, in DN² (one step = 1 DN).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, σ_q² = 1/12 DN² (REFERENCES.md §3 and §4, from memory);
/// Bennett 1948 (from memory).
pub const QUANTIZATION_VARIANCE_DN2: f64 = 1.0 / 12.0;

/// Below this dark temporal variance the 1/12 quantization model is unreliable and only an
/// upper bound of the read noise is reported.
///
/// # Source
/// EMVA 1288 Release 4.0 Linear (REFERENCES.md §3, from memory): σ²_y.dark < 0.24 DN².
pub const SMALL_DARK_VARIANCE_DN2: f64 = 0.24;

/// Read noise (signal-independent temporal noise, quantization removed), in electrons.
///
/// # Formula
/// ```text
/// σ_d = √(σ²_y.dark − σ_q²) / K          σ_q² = 1/12 DN²
/// ```
/// σ²_y.dark: dark temporal variance (DN²); K: system gain (DN/e⁻), > 0.
/// When σ²_y.dark < 0.24 DN² use [`read_noise_upper_bound_e`] instead.
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, linear model σ_y² = K²σ_d² + σ_q² + K²σ_e² in the dark
/// (REFERENCES.md §4 item 3, from memory).
/// ```
/// let s = engine::ptc::read_noise_e(0.473958, 0.25);
/// assert!((s - 2.5).abs() < 1e-5); // REFERENCES.md §4 exact synthetic line: σ_d = 2.500000 e⁻
/// ```
#[must_use]
pub fn read_noise_e(dark_variance_dn2: f64, system_gain_dn_per_e: f64) -> f64 {
    (dark_variance_dn2 - QUANTIZATION_VARIANCE_DN2)
        .max(0.0)
        .sqrt()
        / system_gain_dn_per_e
}

/// The read noise bound reported when the dark variance is below 0.24 DN².
///
/// # Formula
/// ```text
/// σ_d < √(0.24 − 1/12) / K ≈ 0.40 / K
/// ```
/// # Source
/// EMVA 1288 Release 4.0 Linear (REFERENCES.md §3, from memory; 0.40 = √(0.24 − 1/12) = 0.3958).
/// ```
/// let b = engine::ptc::read_noise_upper_bound_e(1.0);
/// assert!((b - 0.3958).abs() < 5e-5); // REFERENCES.md §3: √(0.24 − 1/12) = 0.3958
/// ```
#[must_use]
pub fn read_noise_upper_bound_e(system_gain_dn_per_e: f64) -> f64 {
    (SMALL_DARK_VARIANCE_DN2 - QUANTIZATION_VARIANCE_DN2).sqrt() / system_gain_dn_per_e
}

/// Saturation capacity in electrons from the saturation mean above dark.
///
/// # Formula
/// ```text
/// μ_e.sat = (μ_y.sat − μ_y.dark) / K
/// ```
/// μ_y.sat: mean at which the temporal variance peaks (DN).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, saturation (REFERENCES.md §4 item 7, from memory) and the
/// linear model μ_y = μ_y.dark + K μ_e (item 2).
/// ```
/// let e = engine::ptc::saturation_capacity_e(2500.0, 0.25);
/// assert!((e - 10_000.0).abs() < 1e-9); // REFERENCES.md §4 worked example: μ_e.sat = 10 000 e⁻ at K = 0.25
/// ```
#[must_use]
pub fn saturation_capacity_e(saturation_above_dark_dn: f64, system_gain_dn_per_e: f64) -> f64 {
    saturation_above_dark_dn / system_gain_dn_per_e
}

/// Dark current in electrons per second from the slope of the dark mean against exposure time.
///
/// # Formula
/// ```text
/// μ_y.dark = K(μ_d,0 + μ_I t_exp)   ⇒   μ_I = (dμ_y.dark/dt_exp) / K
/// ```
/// # Source
/// EMVA 1288 Release 4.0 Linear, dark current (REFERENCES.md §4 item 12, from memory).
/// ```
/// let i = engine::ptc::dark_current_e_per_s(5.0, 0.25);
/// assert!((i - 20.0).abs() < 1e-12); // the formula itself (chosen numbers)
/// ```
#[must_use]
pub fn dark_current_e_per_s(dark_mean_slope_dn_per_s: f64, system_gain_dn_per_e: f64) -> f64 {
    dark_mean_slope_dn_per_s / system_gain_dn_per_e
}

/// Dark current from the slope of the dark temporal variance against exposure time (the second
/// estimate the standard describes; noisier than the mean's).
///
/// # Formula
/// ```text
/// σ²_y.dark = K²(σ²_d,0 + μ_I t_exp) + σ_q²   ⇒   μ_I = (dσ²_y.dark/dt_exp) / K²
/// ```
/// # Source
/// EMVA 1288 Release 4.0 Linear (REFERENCES.md §4 item 13, from memory).
/// ```
/// let i = engine::ptc::dark_current_from_variance_e_per_s(1.25, 0.25);
/// assert!((i - 20.0).abs() < 1e-12); // the formula itself (chosen numbers)
/// ```
#[must_use]
pub fn dark_current_from_variance_e_per_s(
    dark_variance_slope_dn2_per_s: f64,
    system_gain_dn_per_e: f64,
) -> f64 {
    dark_variance_slope_dn2_per_s / (system_gain_dn_per_e * system_gain_dn_per_e)
}

/// Dark signal non-uniformity in electrons.
///
/// # Formula
/// ```text
/// DSNU_1288 = s_y.dark / K
/// ```
/// s_y.dark²: spatial variance of the averaged dark frame with the temporal part removed (DN²).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, spatial nonuniformity (REFERENCES.md §4 item 11, from memory).
/// ```
/// let d = engine::ptc::dsnu_e(0.5 * 0.5, 0.25);
/// assert!((d - 2.0).abs() < 1e-12); // REFERENCES.md §4 DSNU/PRNU toy example: 2.000 e⁻
/// ```
#[must_use]
pub fn dsnu_e(dark_spatial_variance_dn2: f64, system_gain_dn_per_e: f64) -> f64 {
    dark_spatial_variance_dn2.max(0.0).sqrt() / system_gain_dn_per_e
}

/// Photo-response non-uniformity in percent of the signal.
///
/// # Formula
/// ```text
/// PRNU_1288 = √(s²_y.50 − s²_y.dark) / (μ_y.50 − μ_y.dark) · 100 %
/// ```
/// s²_y.50: spatial variance (temporal part removed) of the averaged frame near 50 % of
/// saturation; s²_y.dark: the same in the dark (DN²); μ_y.50 − μ_y.dark > 0 (DN).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, spatial nonuniformity (REFERENCES.md §4 item 11, from memory).
/// ```
/// let p = engine::ptc::prnu_percent(12.0 * 12.0, 0.5 * 0.5, 1000.0);
/// assert!((p - 1.199).abs() < 5e-4); // REFERENCES.md §4 DSNU/PRNU toy example: 1.199 %
/// ```
#[must_use]
pub fn prnu_percent(
    spatial_variance_50_dn2: f64,
    dark_spatial_variance_dn2: f64,
    mean_above_dark_dn: f64,
) -> f64 {
    (spatial_variance_50_dn2 - dark_spatial_variance_dn2)
        .max(0.0)
        .sqrt()
        / mean_above_dark_dn
        * 100.0
}

/// Total quantum efficiency from the responsivity and the system gain.
///
/// # Formula
/// ```text
/// R = d(μ_y − μ_y.dark)/dμ_p = ηK   ⇒   η = R / K
/// ```
/// # Source
/// EMVA 1288 Release 4.0 Linear, photon transfer method (REFERENCES.md §4 item 10, from memory).
/// ```
/// let qe = engine::ptc::quantum_efficiency(0.15, 0.25);
/// assert!((qe - 0.6).abs() < 1e-12); // REFERENCES.md §4 worked example: η = 0.6, K = 0.25
/// ```
#[must_use]
pub fn quantum_efficiency(responsivity_dn_per_photon: f64, system_gain_dn_per_e: f64) -> f64 {
    responsivity_dn_per_photon / system_gain_dn_per_e
}

/// Linearity error in percent from the relative deviations of the means from their fitted line.
///
/// # Formula
/// ```text
/// δ_i = (μ_i − (a + b·H_i)) / (a + b·H_i) · 100 %,   LE = (max δ − min δ) / 2
/// ```
/// over the points between 5 % and 95 % of saturation; H: photons per pixel or exposure time.
///
/// # Source
/// EMVA 1288 Release 3.1 / 4.0 Linear, linearity (REFERENCES.md §4 item 10, from memory).
/// Returns `None` for no deviations.
/// ```
/// let le = engine::ptc::linearity_error_percent(&[0.5, -0.25, 0.1]).unwrap();
/// assert!((le - 0.375).abs() < 1e-12); // the formula itself (chosen numbers)
/// ```
#[must_use]
pub fn linearity_error_percent(deviations_percent: &[f64]) -> Option<f64> {
    let max = deviations_percent.iter().copied().reduce(f64::max)?;
    let min = deviations_percent.iter().copied().reduce(f64::min)?;
    Some((max - min) / 2.0)
}
