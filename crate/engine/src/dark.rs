//! Dark current at a temperature: the doubling-interval rule, or the band-gap law of
//! depletion-region generation with silicon's band gap by Varshni's form.
//!
//! Ratios only (the dark current at a temperature against the reference temperature); the
//! dark current itself is the scenario's. The diffusion-current law (T³·exp(−E_g/kT)) is not
//! offered: near room temperature the depletion law is the one image sensors follow (the
//! usual 6–7 °C doubling lies between the two; REFERENCES.md §7).

use crate::constants::{BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C, ZERO_CELSIUS_K};

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

/// A parameter set of Varshni's form for silicon's band gap, E_g(T) = E_g(0) − α·T²/(T + β).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Varshni {
    /// Band gap at 0 K, eV.
    pub gap_at_0k_ev: f64,
    /// α, eV/K.
    pub alpha_ev_per_k: f64,
    /// β, K.
    pub beta_k: f64,
}

/// Set (a) of REFERENCES.md §7: E_g(0) = 1.1557 eV, α = 7.021e-4 eV/K, β = 1108 K; the set of
/// Janesick's dark-current formula and, from memory, Varshni's own fit for silicon
/// (Y. P. Varshni, Physica 34, 149, 1967).
pub const VARSHNI_1967: Varshni = Varshni {
    gap_at_0k_ev: 1.1557,
    alpha_ev_per_k: 7.021e-4,
    beta_k: 1108.0,
};

/// Set (b) of REFERENCES.md §7: E_g(0) = 1.17 eV, α = 4.73e-4 eV/K, β = 636 K (textbook
/// parameters, attributed to Thurmond, J. Electrochem. Soc. 122:1133, 1975, from memory).
pub const THURMOND_1975: Varshni = Varshni {
    gap_at_0k_ev: 1.17,
    alpha_ev_per_k: 4.73e-4,
    beta_k: 636.0,
};

/// Set (c) of REFERENCES.md §7: E_g(0) = 1.169 eV, α = 4.9e-4 eV/K, β = 655 K (Sze & Ng,
/// *Physics of Semiconductor Devices*, 3rd ed., 2007, Fig. 6 p. 16, read second-hand).
pub const SZE_NG_2007: Varshni = Varshni {
    gap_at_0k_ev: 1.169,
    alpha_ev_per_k: 4.9e-4,
    beta_k: 655.0,
};

impl Varshni {
    /// Silicon's band gap at a temperature, eV.
    ///
    /// # Formula
    /// ```text
    /// E_g(T) = E_g(0) − α·T² / (T + β)
    /// ```
    /// T: temperature, K.
    ///
    /// # Source
    /// Y. P. Varshni, Physica 34, 149 (1967); parameter sets and check values REFERENCES.md §7.
    ///
    /// ```
    /// use engine::dark::{VARSHNI_1967, THURMOND_1975, SZE_NG_2007};
    /// // REFERENCES.md §7, E_g at 300 K: (a) 1.11082, (b) 1.12452, (c) 1.12282 eV.
    /// assert!((VARSHNI_1967.band_gap_ev(300.0) - 1.11082).abs() < 5e-6);
    /// assert!((THURMOND_1975.band_gap_ev(300.0) - 1.12452).abs() < 5e-6);
    /// assert!((SZE_NG_2007.band_gap_ev(300.0) - 1.12282).abs() < 5e-6);
    /// ```
    #[must_use]
    pub fn band_gap_ev(&self, temperature_k: f64) -> f64 {
        self.gap_at_0k_ev
            - self.alpha_ev_per_k * temperature_k * temperature_k / (temperature_k + self.beta_k)
    }
}

/// Factor by which dark current changes from the reference temperature to `temperature_c`,
/// by the band-gap law of depletion-region generation current.
///
/// # Formula
/// ```text
/// I(T) / I_ref = (T / T_ref)^1.5 · exp(E_g(T_ref) / (2 k T_ref) − E_g(T) / (2 k T))
/// ```
/// T, T_ref: absolute temperatures, K; E_g(T): silicon's band gap by Varshni's form, eV;
/// k: Boltzmann's constant in eV/K (k/q, CODATA 2018 exact values).
///
/// # Source
/// Depletion-region generation current ∝ n_i ∝ T^1.5·exp(−E_g/2kT): Sze & Ng, *Physics of
/// Semiconductor Devices*, 3rd ed. (Wiley 2007), ch. 2 (from memory); the same law in
/// Janesick's dark-current figure of merit (*Scientific CCDs*, 2001, from memory). Check values
/// REFERENCES.md §7, D_R/D_R(300 K) with set (a): 0.09071 at 273.15 K, 5.839 at 323.15 K.
///
/// ```
/// use engine::dark::{bandgap_factor, VARSHNI_1967};
/// // REFERENCES.md §7: D_R(273.15 K)/D_R(300 K) = 0.09071 with set (a).
/// let f = bandgap_factor(0.0, 26.85, &VARSHNI_1967);
/// assert!((f / 0.09071 - 1.0).abs() < 5e-4);
/// ```
#[must_use]
pub fn bandgap_factor(temperature_c: f64, reference_c: f64, gap: &Varshni) -> f64 {
    let k_ev_per_k = BOLTZMANN_J_PER_K / ELEMENTARY_CHARGE_C;
    let t = temperature_c + ZERO_CELSIUS_K;
    let t_ref = reference_c + ZERO_CELSIUS_K;
    let exponent = gap.band_gap_ev(t_ref) / (2.0 * k_ev_per_k * t_ref)
        - gap.band_gap_ev(t) / (2.0 * k_ev_per_k * t);
    (t / t_ref).powf(1.5) * exponent.exp()
}

/// The temperature rise that doubles the dark current at a temperature, by the band-gap law:
/// ln 2 / (d ln I / dT), K.
///
/// # Formula
/// ```text
/// d ln I / dT = 1.5 / T + (E_g(T) − T·E_g'(T)) / (2 k T²),   E_g'(T) = −α·T·(T + 2β) / (T + β)²
/// ```
///
/// # Source
/// Derived from [`bandgap_factor`]'s law; check values REFERENCES.md §7, "doubling interval
/// implied by the physics", depletion model with set (a): 8.475 K at 300 K, 5.239 K at 233.15 K.
///
/// ```
/// use engine::dark::{bandgap_doubling_k, VARSHNI_1967};
/// // REFERENCES.md §7: 8.475 K at 300 K (set (a), depletion model).
/// assert!((bandgap_doubling_k(26.85, &VARSHNI_1967) - 8.475).abs() < 5e-4);
/// ```
#[must_use]
pub fn bandgap_doubling_k(temperature_c: f64, gap: &Varshni) -> f64 {
    let k_ev_per_k = BOLTZMANN_J_PER_K / ELEMENTARY_CHARGE_C;
    let t = temperature_c + ZERO_CELSIUS_K;
    let (a, b) = (gap.alpha_ev_per_k, gap.beta_k);
    let slope_ev_per_k = -a * t * (t + 2.0 * b) / ((t + b) * (t + b));
    let dln = 1.5 / t + (gap.band_gap_ev(t) - t * slope_ev_per_k) / (2.0 * k_ev_per_k * t * t);
    std::f64::consts::LN_2 / dln
}
