//! Photon counting: the miscount probabilities of rounding the output charge to the nearest
//! electron, the photon-number-resolving verdict, and the charge distributions to plot.
//!
//! Pure functions of the read noise σ (e⁻ rms) and mean charges; the distribution itself is
//! `poisson_gaussian`. Knows nothing of thresholds for detection (`neyman_pearson`).

use super::normal;
use super::poisson_gaussian::PoissonGaussian;

/// Read noise below which counting is accurate [e⁻ rms]: common practice (REFERENCES.md §8);
/// Fossum's 2013 target for quanta image sensors is below 0.15 e⁻ rms ([read], abstract).
pub const ACCURATE_COUNTING_E: f64 = 0.15;
/// Read noise below which the sensor resolves photon number [e⁻ rms]: common practice
/// (REFERENCES.md §8); Teranishi (2012) gives 0.3 e⁻ for electron counting ([read], abstract).
pub const PHOTON_NUMBER_RESOLVING_E: f64 = 0.3;
/// Upper end of "deep sub-electron read noise" [e⁻ rms]: common practice (REFERENCES.md §8).
pub const DEEP_SUB_ELECTRON_E: f64 = 0.5;

/// What a read noise allows, by the common-practice thresholds above.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum CountingVerdict {
    /// σ < 0.15 e⁻: counts are right more than 99.9 % of the time at every level.
    AccurateCounting,
    /// 0.15 ≤ σ < 0.3 e⁻: photon-number resolving; the peaks of the charge histogram are
    /// separate, but a few percent of counts are off by one.
    PhotonNumberResolving,
    /// 0.3 ≤ σ < 0.5 e⁻: deep sub-electron read noise, peaks merging; counting is unreliable.
    DeepSubElectron,
    /// σ ≥ 0.5 e⁻: not photon-number resolving; the Gaussian picture is usable for counts.
    NotResolving,
}

/// The verdict for a read noise σ [e⁻ rms]; `None` for σ negative or not finite.
///
/// ```
/// use engine::detection::counting::{verdict, CountingVerdict};
/// assert_eq!(verdict(0.27), Some(CountingVerdict::PhotonNumberResolving));
/// ```
#[must_use]
pub fn verdict(sigma_e: f64) -> Option<CountingVerdict> {
    if !(sigma_e >= 0.0) || !sigma_e.is_finite() {
        return None;
    }
    Some(if sigma_e < ACCURATE_COUNTING_E {
        CountingVerdict::AccurateCounting
    } else if sigma_e < PHOTON_NUMBER_RESOLVING_E {
        CountingVerdict::PhotonNumberResolving
    } else if sigma_e < DEEP_SUB_ELECTRON_E {
        CountingVerdict::DeepSubElectron
    } else {
        CountingVerdict::NotResolving
    })
}

/// Probability that rounding to the nearest electron miscounts an interior level n ≥ 1.
///
/// # Formula
/// ```text
/// P_err(n ≥ 1) = 2·Q(0.5/σ)
/// ```
/// (exact: the thresholds sit at n ± ½, and the probabilities beyond farther thresholds are
/// already inside these two tails).
///
/// # Source
/// REFERENCES.md §8, miscount table (E. R. Fossum, IEEE J-EDS 1(9), 2013, on bit-error rates).
///
/// ```
/// // REFERENCES.md §8: σ = 0.30 e⁻ → 9.558e-2.
/// let p = engine::detection::counting::miscount_interior(0.30).unwrap();
/// assert!((p / 9.558e-2 - 1.0).abs() < 5e-4);
/// ```
#[must_use]
pub fn miscount_interior(sigma_e: f64) -> Option<f64> {
    half_electron_tail(sigma_e).map(|q| 2.0 * q)
}

/// Probability that rounding miscounts level 0 (counts cannot go below zero, so only the
/// upper threshold at ½ can be crossed).
///
/// # Formula
/// ```text
/// P_err(0) = Q(0.5/σ)
/// ```
///
/// # Source
/// REFERENCES.md §8, miscount table.
///
/// ```
/// // REFERENCES.md §8: σ = 0.15 e⁻ → 4.291e-4.
/// let p = engine::detection::counting::miscount_zero(0.15).unwrap();
/// assert!((p / 4.291e-4 - 1.0).abs() < 5e-4);
/// ```
#[must_use]
pub fn miscount_zero(sigma_e: f64) -> Option<f64> {
    half_electron_tail(sigma_e)
}

/// The miscount probability averaged over a Poisson of mean H (quanta exposure, e⁻).
///
/// # Formula
/// ```text
/// P̄_err(H) = e^{−H}·Q(0.5/σ) + (1 − e^{−H})·2Q(0.5/σ) = 2Q − e^{−H}·Q
/// ```
///
/// # Source
/// REFERENCES.md §8, miscount table (average at H = 1).
///
/// ```
/// // REFERENCES.md §8: σ = 0.50 e⁻, H = 1 → 0.2589.
/// let p = engine::detection::counting::miscount_average(0.50, 1.0).unwrap();
/// assert!((p / 0.2589 - 1.0).abs() < 5e-4);
/// ```
#[must_use]
pub fn miscount_average(sigma_e: f64, mean_e: f64) -> Option<f64> {
    if !(mean_e >= 0.0) || !mean_e.is_finite() {
        return None;
    }
    half_electron_tail(sigma_e).map(|q| 2.0 * q - (-mean_e).exp() * q)
}

fn half_electron_tail(sigma_e: f64) -> Option<f64> {
    if !(sigma_e >= 0.0) || !sigma_e.is_finite() {
        return None;
    }
    if sigma_e == 0.0 {
        return Some(0.0);
    }
    Some(normal::survival(0.5 / sigma_e))
}

/// The counting figures of one read noise and exposure.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct CountingFigures {
    /// Miscount probability of an interior level, 2Q(0.5/σ).
    pub miscount_interior: f64,
    /// Miscount probability of level 0, Q(0.5/σ).
    pub miscount_zero: f64,
    /// Miscount probability averaged over Poisson(H).
    pub miscount_average: f64,
    /// The verdict by the common-practice thresholds.
    pub verdict: CountingVerdict,
}

/// All counting figures at read noise σ and mean charge H (signal + dark, e⁻).
///
/// ```
/// // REFERENCES.md §8: σ = 0.25 e⁻, H = 1 → interior 4.550e-2, zero 2.275e-2, average 3.713e-2.
/// let f = engine::detection::counting::figures(0.25, 1.0).unwrap();
/// assert!((f.miscount_interior / 4.550e-2 - 1.0).abs() < 5e-4);
/// assert!((f.miscount_zero / 2.275e-2 - 1.0).abs() < 5e-4);
/// assert!((f.miscount_average / 3.713e-2 - 1.0).abs() < 5e-4);
/// ```
#[must_use]
pub fn figures(sigma_e: f64, mean_e: f64) -> Option<CountingFigures> {
    Some(CountingFigures {
        miscount_interior: miscount_interior(sigma_e)?,
        miscount_zero: miscount_zero(sigma_e)?,
        miscount_average: miscount_average(sigma_e, mean_e)?,
        verdict: verdict(sigma_e)?,
    })
}

/// Points the charge axis of [`charge_distribution`] may have: enough for σ/5 steps over
/// ~200 e⁻ of range, little enough to draw at once.
pub const MAX_PLOT_POINTS: usize = 4001;

/// The distributions of the output charge without and with the signal, for a plot.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ChargeDistribution {
    /// The charge axis [e⁻]; evenly spaced, or the whole numbers when σ = 0.
    pub charge_e: Vec<f64>,
    /// The density [1/e⁻] of the dark-only charge at each point (probability at each whole
    /// number when σ = 0).
    pub dark: Vec<f64>,
    /// The same with the signal added.
    pub signal: Vec<f64>,
    /// True when the values are probabilities of whole numbers (σ = 0), not densities.
    pub discrete: bool,
    /// True when the axis steps are fine enough (≤ σ/4) and σ < ½ e⁻, so the separate
    /// electron peaks show.
    pub peaks_resolved: bool,
}

/// The charge distributions of dark-only and signal-plus-dark outputs on one axis, from a
/// little below zero to well above the signal (mean + 6 standard deviations; for σ = 0 the
/// whole numbers up to where less than 2.3e-16 of the mass is left), with up to
/// `points` points (2 ..= [`MAX_PLOT_POINTS`]; the step shrinks to σ/5 when σ < ½ e⁻ so that
/// the peaks show, within that limit).
///
/// Returns `None` for inputs out of the distribution's range.
///
/// # Formula
/// ```text
/// f(x) = Σₙ Pois(n; μ) · φ((x − n)/σ) / σ,   μ = d (dark) or s + d (signal)
/// ```
///
/// # Source
/// REFERENCES.md §8 (Poisson–Gaussian pixel model).
///
/// ```
/// let d = engine::detection::counting::charge_distribution(0.01, 2.0, 0.2, 400).unwrap();
/// assert!(d.peaks_resolved && !d.discrete);
/// assert_eq!(d.charge_e.len(), d.signal.len());
/// ```
#[must_use]
pub fn charge_distribution(
    dark_e: f64,
    signal_e: f64,
    sigma_e: f64,
    points: usize,
) -> Option<ChargeDistribution> {
    if !(signal_e >= 0.0) {
        return None;
    }
    let dark = PoissonGaussian::new(dark_e, sigma_e)?;
    let with = PoissonGaussian::new(dark_e + signal_e, sigma_e)?;
    let mu = dark_e + signal_e;
    let upper = mu + 6.0 * (mu + sigma_e * sigma_e).sqrt() + 1.0;
    if sigma_e == 0.0 {
        // Up to where the Poisson's upper tail is below e⁻³⁶ = 2.3e-16 (Bernstein bound).
        let (_, hi) = super::poisson::window(mu, 36.0);
        let top = hi.min(MAX_PLOT_POINTS as f64 - 1.0);
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)] // 0 ≤ top ≤ 4000
        let n_max = top as u64;
        let charge_e: Vec<f64> = (0..=n_max).map(|n| n as f64).collect();
        let dark_v = (0..=n_max).filter_map(|n| dark.mass(n)).collect();
        let sig_v = (0..=n_max).filter_map(|n| with.mass(n)).collect();
        return Some(ChargeDistribution {
            charge_e,
            dark: dark_v,
            signal: sig_v,
            discrete: true,
            peaks_resolved: true,
        });
    }
    let lower = -(6.0 * sigma_e).max(0.5);
    let mut n = points.clamp(2, MAX_PLOT_POINTS);
    if sigma_e < DEEP_SUB_ELECTRON_E {
        let wanted = ((upper - lower) / (sigma_e / 5.0)).ceil() + 1.0;
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)] // clamped below
        let w = wanted.min(MAX_PLOT_POINTS as f64) as usize;
        n = n.max(w);
    }
    #[allow(clippy::cast_precision_loss)] // n ≤ 4001
    let step = (upper - lower) / (n as f64 - 1.0);
    #[allow(clippy::cast_precision_loss)]
    let charge_e: Vec<f64> = (0..n).map(|i| lower + step * i as f64).collect();
    let dark_v = charge_e
        .iter()
        .map(|&x| dark.density(x).unwrap_or(0.0))
        .collect();
    let sig_v = charge_e
        .iter()
        .map(|&x| with.density(x).unwrap_or(0.0))
        .collect();
    Some(ChargeDistribution {
        charge_e,
        dark: dark_v,
        signal: sig_v,
        discrete: false,
        peaks_resolved: sigma_e < DEEP_SUB_ELECTRON_E && step <= 0.25 * sigma_e,
    })
}
