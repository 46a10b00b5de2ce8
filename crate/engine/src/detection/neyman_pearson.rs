//! Neyman–Pearson detection on one output pixel: the threshold for a false-alarm
//! probability, the detection probability of a signal, the signal detected with a chosen
//! probability; their Gaussian approximations; false alarms over many pixels.
//!
//! Pure functions of electrons and probabilities; the distribution itself is
//! `poisson_gaussian`. Nothing here knows of scenarios or reports (see `detection::evaluate`).

use super::brent;
use super::normal;
use super::poisson;
use super::poisson_gaussian::PoissonGaussian;

/// Smallest probability (and largest complement) the solvers accept: 1e-15. The tails are
/// computed with absolute truncation error below 1e-27 (modules `poisson`,
/// `poisson_gaussian`), so at 1e-15 their relative error stays below 1e-12.
pub const MIN_PROBABILITY: f64 = 1e-15;

/// Relative tolerance of the solved threshold and signal: 1e-12 of the bracket's scale
/// (or 1e-12 e⁻ below 1 e⁻), far below the 4–5 digits the figures are shown to.
pub const SOLVE_REL_TOL: f64 = 1e-12;

/// Floor under a probability before its logarithm is taken (the solvers work on ln P, which
/// is nearly linear in the threshold in the tails).
const LN_FLOOR: f64 = 1e-300;

fn probability_ok(p: f64) -> bool {
    (MIN_PROBABILITY..=1.0 - MIN_PROBABILITY).contains(&p)
}

fn ln(p: f64) -> f64 {
    p.max(LN_FLOOR).ln()
}

/// The decision threshold on the output charge and the false-alarm probability it gives.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Threshold {
    /// τ [e⁻], dark included: declare "signal" when the charge exceeds it.
    pub threshold_e: f64,
    /// P(x > τ | no signal) at that τ. Equal to the requested probability (to 1e-12) when
    /// σ > 0; at σ = 0 the charge is a whole number and the largest achievable value not
    /// above the request is given.
    pub false_alarm_probability: f64,
}

/// The threshold τ with P(x > τ | signal 0) = p_fa for x = Poisson(dark) + Normal(0, σ²).
///
/// Returns `None` for p_fa outside [1e-15, 1 − 1e-15], a dark or σ out of the distribution's
/// range, or (never seen) a search that does not converge.
///
/// # Formula
/// ```text
/// P_FA(τ) = Σₙ Pois(n; d) · Q((τ − n)/σ) = p_fa          (σ > 0; solved for τ)
/// τ = min{ k ∈ ℕ : P(N > k) ≤ p_fa },  N ~ Poisson(d)     (σ = 0)
/// ```
/// Solved by Brent's method on ln P_FA within a proven bracket: τ_lo = σ·Q⁻¹(p_fa) (since
/// N ≥ 0, P_FA(τ_lo) ≥ p_fa) and τ_hi = d + a + σ·Q⁻¹(p_fa/2) with P(N > d + a) ≤ p_fa/2
/// from the Poisson's Bernstein bound (union bound: P_FA(τ_hi) ≤ p_fa); tolerance
/// [`SOLVE_REL_TOL`].
///
/// # Source
/// REFERENCES.md §8 (Neyman–Pearson detection rule; Kay, *Fundamentals of Statistical Signal
/// Processing, Vol. II: Detection Theory*, 1998, from memory).
///
/// ```
/// // REFERENCES.md §8: σ_r = 1 e⁻, d = 0.01 e⁻, P_FA = 1e-3 → τ = 3.1409 e⁻.
/// let t = engine::detection::neyman_pearson::threshold(0.01, 1.0, 1e-3).unwrap();
/// assert!((t.threshold_e - 3.1409).abs() < 5e-5);
/// ```
#[must_use]
pub fn threshold(dark_e: f64, sigma_e: f64, p_fa: f64) -> Option<Threshold> {
    if !probability_ok(p_fa) {
        return None;
    }
    let pg = PoissonGaussian::new(dark_e, sigma_e)?;
    if sigma_e == 0.0 {
        return discrete_threshold(dark_e, p_fa);
    }
    let l = (2.0 / p_fa).ln();
    let a = l / 3.0 + (l * l / 9.0 + 2.0 * l * dark_e).sqrt();
    // The root is exactly σ·Q⁻¹(p_fa) when d = 0; step a hair below so the bracket holds.
    let lo = sigma_e * (normal::inverse_survival(p_fa)? - 1e-6);
    let hi = (dark_e + a + sigma_e * normal::inverse_survival(0.5 * p_fa)?) * (1.0 + 1e-12) + 1e-12;
    let lnp = p_fa.ln();
    let ln_q = (-p_fa).ln_1p();
    let mut g = |tau: f64| {
        if p_fa <= 0.5 {
            ln(pg.survival(tau)) - lnp
        } else {
            ln_q - ln(pg.cdf(tau))
        }
    };
    let tol = SOLVE_REL_TOL * lo.abs().max(hi.abs()).max(1.0);
    let root = brent::find_root(&mut g, lo, hi, tol)?;
    root.converged.then(|| Threshold {
        threshold_e: root.x,
        false_alarm_probability: pg.survival(root.x),
    })
}

/// σ = 0: the smallest whole τ with P(N > τ) ≤ p_fa, by adding probabilities downwards from
/// a whole number above the answer (no cancellation).
fn discrete_threshold(dark_e: f64, p_fa: f64) -> Option<Threshold> {
    if dark_e == 0.0 {
        // No charge at all: x = 0 always, and nothing exceeds τ = 0.
        return Some(Threshold {
            threshold_e: 0.0,
            false_alarm_probability: 0.0,
        });
    }
    let l = (1.0 / p_fa).ln();
    let a = l / 3.0 + (l * l / 9.0 + 2.0 * l * dark_e).sqrt();
    let mut k = (dark_e + a).ceil(); // P(N > k) ≤ p_fa by the Bernstein bound
    let mut above = poisson::upper_tail(k + 1.0, dark_e).value; // P(N > k)
    let mut p = poisson::probability_f(k, dark_e);
    // The loop runs at most k + 1 ≤ d + a + 1 times.
    while k > 0.0 {
        let next = above + p; // P(N > k − 1)
        if next > p_fa {
            break;
        }
        above = next;
        p *= k / dark_e;
        k -= 1.0;
    }
    Some(Threshold {
        threshold_e: k,
        false_alarm_probability: above,
    })
}

/// The detection probability P_D = P(x > τ) for a signal `signal_e` (dark excluded).
///
/// Returns `None` when the inputs are out of the distribution's range or τ is not finite.
///
/// # Formula
/// ```text
/// P_D(s) = Σₙ Pois(n; s + d) · Q((τ − n)/σ)
/// ```
///
/// # Source
/// REFERENCES.md §8 (Neyman–Pearson formulation).
///
/// ```
/// // REFERENCES.md §8: σ_r = 1, d = 0.01, τ = 3.1409: s = 3.2600 e⁻ is detected half the time.
/// use engine::detection::neyman_pearson::{threshold, detection_probability};
/// let tau = threshold(0.01, 1.0, 1e-3).unwrap().threshold_e;
/// let pd = detection_probability(3.2600, 0.01, 1.0, tau).unwrap();
/// assert!((pd - 0.5).abs() < 1e-4);
/// ```
#[must_use]
pub fn detection_probability(
    signal_e: f64,
    dark_e: f64,
    sigma_e: f64,
    threshold_e: f64,
) -> Option<f64> {
    if !(signal_e >= 0.0) || !threshold_e.is_finite() {
        return None;
    }
    let pg = PoissonGaussian::new(signal_e + dark_e, sigma_e)?;
    Some(pg.survival(threshold_e).clamp(0.0, 1.0))
}

/// The signal s (dark excluded) detected with probability p_d at the threshold τ.
///
/// Returns `Some(0.0)` when even no signal exceeds τ with probability p_d (p_d ≤ P_FA), and
/// `None` for p_d outside [1e-15, 1 − 1e-15] or inputs out of range.
///
/// # Formula
/// ```text
/// Σₙ Pois(n; s + d) · Q((τ − n)/σ) = p_d     (solved for s ≥ 0)
/// ```
/// P_D rises with s (the Poisson family is stochastically increasing in its mean). Brent's
/// method on ln P_D within [0, s_hi], where s_hi + d = μ_hi makes P(x ≤ τ) ≤ 1 − p_d by
/// P(N ≤ m) + Q(z′) with m = τ + σz′, Q(z′) = (1 − p_d)/2 and the Poisson's lower-tail bound
/// exp(−(μ − m)²/2μ) ≤ (1 − p_d)/2; tolerance [`SOLVE_REL_TOL`].
///
/// # Source
/// REFERENCES.md §8 (Neyman–Pearson formulation; check values computed there with scipy's
/// brentq).
///
/// ```
/// // REFERENCES.md §8: σ_r = 1, d = 0.01, P_FA = 1e-3: s for P_D = 90 % is 6.5564 e⁻.
/// use engine::detection::neyman_pearson::{threshold, signal_for_detection};
/// let tau = threshold(0.01, 1.0, 1e-3).unwrap().threshold_e;
/// let s = signal_for_detection(0.01, 1.0, tau, 0.9).unwrap();
/// assert!((s - 6.5564).abs() < 5e-5);
/// ```
#[must_use]
pub fn signal_for_detection(dark_e: f64, sigma_e: f64, threshold_e: f64, p_d: f64) -> Option<f64> {
    if !probability_ok(p_d) || !threshold_e.is_finite() {
        return None;
    }
    let at = |s: f64| PoissonGaussian::new(s + dark_e, sigma_e);
    let none = at(0.0)?;
    let lnp = p_d.ln();
    let ln_q = (-p_d).ln_1p();
    let g = |pg: &PoissonGaussian| {
        if p_d <= 0.5 {
            ln(pg.survival(threshold_e)) - lnp
        } else {
            ln_q - ln(pg.cdf(threshold_e))
        }
    };
    let g0 = g(&none);
    if g0 >= 0.0 {
        return Some(0.0);
    }
    let (l, z) = if sigma_e > 0.0 {
        let q = 0.5 * (1.0 - p_d);
        ((1.0 / q).ln(), normal::inverse_survival(q)?)
    } else {
        ((1.0 / (1.0 - p_d)).ln(), 0.0)
    };
    let m = (threshold_e + sigma_e * z).max(0.0);
    let root_mu = 0.5 * ((2.0 * l).sqrt() + (2.0 * l + 4.0 * m).sqrt());
    let s_hi = ((root_mu * root_mu - dark_e) * (1.0 + 1e-12)).max(0.0) + 1e-12;
    let hi = at(s_hi)?;
    let mut f = |s: f64| at(s).map_or(f64::NAN, |pg| g(&pg));
    let tol = SOLVE_REL_TOL * s_hi.max(1.0);
    let root = brent::find_root_with(&mut f, 0.0, g0, s_hi, g(&hi), tol)?;
    root.converged.then_some(root.x.max(0.0))
}

/// The threshold of the Gaussian approximation: τ_G = d + z_FA·√(σ² + d).
///
/// Returns `None` for p_fa outside [1e-15, 1 − 1e-15] or a negative variance or dark.
///
/// # Formula
/// ```text
/// τ_G = d + Q⁻¹(p_fa) · √(σ_r² + d)
/// ```
/// (the dark charge Poisson, approximated by a normal of equal mean and variance).
///
/// # Source
/// REFERENCES.md §8, "Gaussian approximation, for comparison".
///
/// ```
/// // REFERENCES.md §8: σ_r = 1, d = 0.01, P_FA = 1e-3: τ Gauss = 3.1156 e⁻.
/// let t = engine::detection::neyman_pearson::gaussian_threshold(0.01, 1.0, 1e-3).unwrap();
/// assert!((t - 3.1156).abs() < 5e-5);
/// ```
#[must_use]
pub fn gaussian_threshold(dark_e: f64, read_variance_e2: f64, p_fa: f64) -> Option<f64> {
    if !probability_ok(p_fa) || !(dark_e >= 0.0) || !(read_variance_e2 >= 0.0) {
        return None;
    }
    let t = dark_e + normal::inverse_survival(p_fa)? * (read_variance_e2 + dark_e).sqrt();
    t.is_finite().then_some(t)
}

/// The signal detected with probability p_d at threshold τ in the Gaussian approximation.
///
/// Returns `Some(0.0)` when no signal already reaches p_d, and `None` for p_d outside
/// [1e-15, 1 − 1e-15] or negative inputs.
///
/// # Formula
/// ```text
/// (s + d − τ) / √(σ_r² + s + d) = z_D = Φ⁻¹(p_d)
/// ⇒ s + d = τ + z_D²/2 + z_D·√(τ + σ_r² + z_D²/4)
/// ```
/// (the root of the squared equation on the side of τ that the sign of z_D picks).
///
/// # Source
/// REFERENCES.md §8, "Gaussian approximation, for comparison"; solved by hand here.
///
/// ```
/// // REFERENCES.md §8: σ_r = 1, d = 0.01, τ_G = 3.1156: s90 Gauss = 6.6533 e⁻.
/// use engine::detection::neyman_pearson::{gaussian_threshold, gaussian_signal};
/// let tau = gaussian_threshold(0.01, 1.0, 1e-3).unwrap();
/// let s = gaussian_signal(0.01, 1.0, tau, 0.9).unwrap();
/// assert!((s - 6.6533).abs() < 5e-5);
/// ```
#[must_use]
pub fn gaussian_signal(
    dark_e: f64,
    read_variance_e2: f64,
    threshold_e: f64,
    p_d: f64,
) -> Option<f64> {
    if !probability_ok(p_d) || !(dark_e >= 0.0) || !(read_variance_e2 >= 0.0) {
        return None;
    }
    let z = normal::quantile(p_d)?;
    let inner = threshold_e + read_variance_e2 + 0.25 * z * z;
    if !(inner >= 0.0) {
        return None;
    }
    let total = threshold_e + 0.5 * z * z + z * inner.sqrt();
    let s = total - dark_e;
    if !s.is_finite() {
        return None;
    }
    Some(s.max(0.0))
}

/// The detection probability of a signal in the Gaussian approximation.
///
/// # Formula
/// ```text
/// P_D ≈ Φ((s + d − τ) / √(σ_r² + s + d))
/// ```
///
/// # Source
/// REFERENCES.md §8, "Gaussian approximation, for comparison".
///
/// ```
/// // At s + d = τ the Gaussian picture gives exactly one half.
/// let p = engine::detection::neyman_pearson::gaussian_detection_probability(3.0, 0.5, 1.0, 3.5);
/// assert_eq!(p, Some(0.5));
/// ```
#[must_use]
pub fn gaussian_detection_probability(
    signal_e: f64,
    dark_e: f64,
    read_variance_e2: f64,
    threshold_e: f64,
) -> Option<f64> {
    let var = read_variance_e2 + signal_e + dark_e;
    if !(signal_e >= 0.0 && dark_e >= 0.0 && read_variance_e2 >= 0.0 && var > 0.0) {
        return None;
    }
    let p = normal::cdf((signal_e + dark_e - threshold_e) / var.sqrt());
    p.is_finite().then_some(p)
}

/// The probability of at least one false alarm among M independent pixels.
///
/// Returns `None` unless 0 ≤ p ≤ 1 and M ≥ 1.
///
/// # Formula
/// ```text
/// P_frame = 1 − (1 − p)^M = −expm1(M · log1p(−p))
/// ```
/// (the expm1/log1p form keeps full relative accuracy when M·p is small, where the plain
/// form cancels to nothing).
///
/// # Source
/// Independent trials; e.g. Kay (1998), Vol. II, on the probability of at least one false
/// alarm (from memory); the stable form is Goldberg's (1991, "What every computer scientist
/// should know about floating-point arithmetic").
///
/// ```
/// // 1 − (1 − 1e-3)^1000 = 0.6323045752290359 (numpy: -np.expm1(1000*np.log1p(-1e-3))).
/// let p = engine::detection::neyman_pearson::frame_false_alarm(1e-3, 1000).unwrap();
/// assert!((p / 0.632_304_575_229_035_9 - 1.0).abs() < 1e-14);
/// ```
#[must_use]
pub fn frame_false_alarm(p_pixel: f64, pixels: u64) -> Option<f64> {
    if !(0.0..=1.0).contains(&p_pixel) || pixels == 0 {
        return None;
    }
    #[allow(clippy::cast_precision_loss)] // pixel counts below 2⁵³ are exact
    let m = pixels as f64;
    let p = -(m * (-p_pixel).ln_1p()).exp_m1();
    Some(p.clamp(0.0, 1.0))
}

/// The per-pixel false-alarm probability that gives a chosen per-frame probability over M
/// pixels (the inverse of [`frame_false_alarm`]).
///
/// Returns `None` unless 0 ≤ P ≤ 1 and M ≥ 1.
///
/// # Formula
/// ```text
/// p = 1 − (1 − P_frame)^{1/M} = −expm1(log1p(−P_frame) / M)
/// ```
///
/// # Source
/// As [`frame_false_alarm`].
///
/// ```
/// // For 1e-3 per frame over 1e6 pixels: 1.000500333083033e-9 per pixel
/// // (numpy: -np.expm1(np.log1p(-1e-3)/1e6)).
/// let p = engine::detection::neyman_pearson::pixel_false_alarm_for_frame(1e-3, 1_000_000).unwrap();
/// assert!((p / 1.000_500_333_083_033e-9 - 1.0).abs() < 1e-14);
/// ```
#[must_use]
pub fn pixel_false_alarm_for_frame(p_frame: f64, pixels: u64) -> Option<f64> {
    if !(0.0..=1.0).contains(&p_frame) || pixels == 0 {
        return None;
    }
    #[allow(clippy::cast_precision_loss)] // pixel counts below 2⁵³ are exact
    let m = pixels as f64;
    let p = -((-p_frame).ln_1p() / m).exp_m1();
    Some(p.clamp(0.0, 1.0))
}

/// The signal whose SNR reaches k with a signal-independent noise variance σ² (dark shot
/// noise and read noise): Rose's criterion at k ≈ 5, the EMVA threshold at k = 1.
///
/// Returns `None` for k ≤ 0 or a negative variance.
///
/// # Formula
/// ```text
/// s / √(s + σ²) = k  ⇒  s = [k² + √(k⁴ + 4k²σ²)] / 2
/// ```
///
/// # Source
/// REFERENCES.md §8 (Rose criterion; A. Rose, JOSA 38(2):196, 1948; k = 5 from memory).
///
/// ```
/// // REFERENCES.md §8: σ² = σ_r² + d = 1.01 e⁻²: Rose k = 5 → 25.97 e⁻, SNR = 1 → 1.6225 e⁻.
/// use engine::detection::neyman_pearson::signal_for_snr;
/// assert!((signal_for_snr(5.0, 1.01).unwrap() - 25.97).abs() < 5e-3);
/// assert!((signal_for_snr(1.0, 1.01).unwrap() - 1.6225).abs() < 5e-5);
/// ```
#[must_use]
pub fn signal_for_snr(k: f64, noise_variance_e2: f64) -> Option<f64> {
    if !(k > 0.0) || !(noise_variance_e2 >= 0.0) {
        return None;
    }
    let k2 = k * k;
    crate::roots::positive_root(1.0, k2, k2 * noise_variance_e2)
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)]
    use super::*;

    #[test]
    fn discrete_threshold_is_the_smallest_whole_number() {
        // d = 0.01: P(N > 0) = 1 − e^{−0.01} = 9.95e-3 > 1e-3 ≥ P(N > 1) = 4.97e-5.
        let t = threshold(0.01, 0.0, 1e-3).unwrap();
        assert_eq!(t.threshold_e, 1.0);
        assert!((t.false_alarm_probability / 4.966_791_334_026_589e-5 - 1.0).abs() < 1e-12);
        // No dark at all: nothing exceeds 0.
        let t = threshold(0.0, 0.0, 1e-3).unwrap();
        assert_eq!((t.threshold_e, t.false_alarm_probability), (0.0, 0.0));
    }

    #[test]
    fn refuses_probabilities_outside_the_range() {
        assert!(threshold(0.01, 1.0, 0.0).is_none());
        assert!(threshold(0.01, 1.0, 1.0).is_none());
        assert!(threshold(0.01, 1.0, f64::NAN).is_none());
        assert!(signal_for_detection(0.01, 1.0, 3.0, 1e-16).is_none());
        assert!(frame_false_alarm(0.1, 0).is_none());
        assert!(pixel_false_alarm_for_frame(1.5, 3).is_none());
    }
}
