//! The Poisson distribution of the collected charge: probabilities, tail sums with proven
//! truncation bounds, and the windows outside which the mass is provably negligible.
//!
//! Pure functions on `f64`; the mean is in electrons. Knows nothing of read noise (that is
//! `poisson_gaussian`) nor of thresholds (`neyman_pearson`).

use super::poisson_gaussian::Side;
use std::f64::consts::PI;

/// Natural log of the target for the mass left out of a Poisson window, ln(1/ε) with
/// ε = e⁻⁶⁴ ≈ 1.6e-28 per side: far below the smallest tail probability the detection
/// figures solve for (1e-15), so truncation changes such a probability by at most 1e-13
/// relative.
pub const WINDOW_LN_INV_EPS: f64 = 64.0;

/// Mean [e⁻] from which the tails are taken from the gamma contour (`contour::gamma_tail`,
/// ~100 nodes) instead of summed (~9√μ terms): at 1e5 the sum needs ~3000 terms.
pub const FAST_MEAN: f64 = 1e5;

/// Relative size of the neglected remainder at which a tail sum stops: below the f64
/// rounding unit, so stopping is invisible in the result.
const TAIL_STOP_REL: f64 = 1e-17;

/// Stirling's-series error ln(n!) − ln(√(2πn)·(n/e)ⁿ) for n = 0..=15 (n = 0 unused), computed
/// with mpmath at 50 digits from the definition.
#[allow(clippy::excessive_precision)] // as computed
const STIRLING_ERROR_TABLE: [f64; 16] = [
    0.0,
    0.081_061_466_795_327_258_22,
    0.041_340_695_955_409_294_094,
    0.027_677_925_684_998_339_149,
    0.020_790_672_103_765_093_112,
    0.016_644_691_189_821_192_163,
    0.013_876_128_823_070_747_999,
    0.011_896_709_945_891_770_095,
    0.010_411_265_261_972_096_497,
    0.009_255_462_182_712_732_917_7,
    0.008_330_563_433_362_871_256_5,
    0.007_573_675_487_951_840_795,
    0.006_942_840_107_209_529_865_7,
    0.006_408_994_188_004_207_068_4,
    0.005_951_370_112_758_847_735_6,
    0.005_554_733_551_962_801_371,
];

/// Stirling's-series error δ(n) = ln(n!) − ln(√(2πn)(n/e)ⁿ), n ≥ 1.
///
/// # Formula
/// ```text
/// δ(n) = 1/(12n) − 1/(360n³) + 1/(1260n⁵) − 1/(1680n⁷) + 1/(1188n⁹) − …   (n > 15)
/// ```
/// Table of exact values for n ≤ 15. For n > 15 the first omitted term, 691/(360360 n¹¹), is
/// below 2e-16 of δ(n).
///
/// # Source
/// C. Loader, "Fast and Accurate Computation of Binomial Probabilities" (2000), `stirlerr`;
/// the series is Stirling's (Abramowitz & Stegun 6.1.41).
fn stirling_error(n: f64) -> f64 {
    if n <= 15.0 {
        // OK because n is a whole number in 1..=15 here; `get` keeps it panic-free anyway.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let i = n as usize;
        return STIRLING_ERROR_TABLE.get(i).copied().unwrap_or(0.0);
    }
    const S0: f64 = 1.0 / 12.0;
    const S1: f64 = 1.0 / 360.0;
    const S2: f64 = 1.0 / 1260.0;
    const S3: f64 = 1.0 / 1680.0;
    const S4: f64 = 1.0 / 1188.0;
    let nn = n * n;
    (S0 - (S1 - (S2 - (S3 - S4 / nn) / nn) / nn) / nn) / n
}

/// The deviance term x·ln(x/m) + m − x, computed without cancellation near x = m.
///
/// # Formula
/// ```text
/// bd0(x, m) = x·ln(x/m) + m − x
///           = (x − m)·v + 2x·Σ_{j≥1} v^{2j+1}/(2j+1),   v = (x − m)/(x + m)
/// ```
/// (series used where |x − m| < 0.1(x + m); it then converges at least as fast as 0.01ʲ).
///
/// # Source
/// Loader (2000), `bd0`.
fn deviance(x: f64, m: f64) -> f64 {
    if (x - m).abs() < 0.1 * (x + m) {
        let v = (x - m) / (x + m);
        let v2 = v * v;
        let mut s = (x - m) * v;
        let mut ej = 2.0 * x * v;
        // |v| < 0.1, so each term is at most 1% of the previous: 40 terms exceed any need.
        for j in 1..40 {
            ej *= v2;
            let next = s + ej / f64::from(2 * j + 1);
            if next == s {
                break;
            }
            s = next;
        }
        return s;
    }
    x * (x / m).ln() + m - x
}

/// The Poisson probability P(N = n) for mean μ ≥ 0.
///
/// # Formula
/// ```text
/// P(N = n) = e^{−μ} μⁿ / n!
///          = exp(−δ(n) − bd0(n, μ)) / √(2πn)     (n ≥ 1; Loader's saddle-point form)
/// ```
/// with δ Stirling's-series error and bd0 the deviance term; accurate to a few ulp for any
/// n and μ (the plain form loses ~μ·1e-16 to cancellation in the exponent).
///
/// # Source
/// C. Loader, "Fast and Accurate Computation of Binomial Probabilities", 2000 (the algorithm
/// of R's `dpois`).
///
/// ```
/// // P(N = 3 | μ = 2) = 0.18044704431548356 (scipy.stats.poisson.pmf(3, 2)).
/// let p = engine::detection::poisson::probability(3, 2.0);
/// assert!((p / 0.180_447_044_315_483_56 - 1.0).abs() < 1e-14);
/// ```
#[must_use]
pub fn probability(n: u64, mean: f64) -> f64 {
    #[allow(clippy::cast_precision_loss)] // counts below 2⁵³ are exact
    let x = n as f64;
    probability_f(x, mean)
}

/// [`probability`] for a whole number held as `f64` (x ≥ 0).
pub(crate) fn probability_f(x: f64, mean: f64) -> f64 {
    if !(mean >= 0.0) || !(x >= 0.0) {
        return 0.0;
    }
    if mean == 0.0 {
        return if x == 0.0 { 1.0 } else { 0.0 };
    }
    if x == 0.0 {
        return (-mean).exp();
    }
    (-stirling_error(x) - deviance(x, mean)).exp() / (2.0 * PI * x).sqrt()
}

/// A whole-number window [lo, hi] of a Poisson(μ) outside which each side holds at most
/// e^{−L} of the mass.
///
/// # Formula
/// ```text
/// P(N ≥ μ + a) ≤ exp(−a² / (2(μ + a/3)))   ⇒  a_hi = L/3 + √(L²/9 + 2Lμ)
/// P(N ≤ μ − a) ≤ exp(−a² / (2μ))           ⇒  a_lo = √(2Lμ)
/// lo = max(0, ⌊μ − a_lo⌋),  hi = ⌈μ + a_hi⌉
/// ```
/// (Bernstein's form of the Chernoff bound for the Poisson; proven, not asymptotic.)
///
/// # Source
/// S. Boucheron, G. Lugosi, P. Massart, *Concentration Inequalities* (Oxford 2013), §2.2 and
/// §2.7–2.8 (Bennett and Bernstein inequalities; the Poisson's cumulant generating function
/// μ(eᵗ − 1 − t) is sub-gamma with variance factor μ and scale 1/3 on the right tail, and
/// sub-Gaussian with variance factor μ on the left); from memory.
///
/// ```
/// // μ = 1e4, L = 64: a_lo = √(1.28e6) = 1131.4, a_hi = 21.33 + √(455.1 + 1.28e6) = 1152.9.
/// let (lo, hi) = engine::detection::poisson::window(1e4, 64.0);
/// assert_eq!((lo, hi), (8868.0, 11153.0));
/// ```
#[must_use]
pub fn window(mean: f64, ln_inv_eps: f64) -> (f64, f64) {
    let mu = mean.max(0.0);
    let l = ln_inv_eps.max(0.0);
    let a_lo = (2.0 * l * mu).sqrt();
    let a_hi = l / 3.0 + (l * l / 9.0 + 2.0 * l * mu).sqrt();
    ((mu - a_lo).floor().max(0.0), (mu + a_hi).ceil())
}

/// A probability with a proven bound on its absolute error from truncation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bounded {
    /// The computed probability.
    pub value: f64,
    /// An upper bound on |value − exact| from truncated sums (rounding not included).
    pub error_bound: f64,
}

/// The upper tail P(N ≥ m) of a Poisson(μ), m a whole number ≥ 0.
///
/// # Formula
/// ```text
/// P(N ≥ m) = Σ_{n ≥ m} P(N = n),   P(N = n+1) = P(N = n)·μ/(n+1)
/// ```
/// Summed upwards from m when m > μ, stopping once the remainder, bounded by the geometric
/// series P(N = n)·r/(1 − r) with r = μ/(n + 1) < 1 (every later ratio is smaller), is
/// below 1e-17 of the sum, or past the window of [`window`] (remainder ≤ e⁻⁶⁴). When m ≤ μ
/// the tail is at least about ½ and is taken as 1 − P(N ≤ m − 1) without loss. From
/// μ ≥ [`FAST_MEAN`] it is P(Γ_m ≤ μ) by the bounded contour integral of
/// `contour::gamma_tail` (~100 steps instead of ~9√μ), the sum being the fallback.
///
/// # Source
/// The Poisson distribution; the remainder bound by comparison with a geometric series
/// (derived here).
///
/// ```
/// // P(N ≥ 5 | μ = 1) = 3.659846827343713e-3 (scipy.stats.poisson.sf(4, 1)).
/// let t = engine::detection::poisson::upper_tail(5.0, 1.0);
/// assert!((t.value / 3.659_846_827_343_713e-3 - 1.0).abs() < 1e-13);
/// ```
#[must_use]
pub fn upper_tail(m: f64, mean: f64) -> Bounded {
    let m = m.max(0.0).ceil();
    if mean >= FAST_MEAN && m > 0.0 {
        if let Some(t) = super::contour::gamma_tail(m, mean, Side::AtOrBelow) {
            return t;
        }
    }
    upper_tail_summed(m, mean)
}

/// [`upper_tail`] by the bounded sum whatever its length (for checks).
#[must_use]
pub fn upper_tail_summed(m: f64, mean: f64) -> Bounded {
    let m = m.max(0.0).ceil();
    if m == 0.0 {
        return Bounded {
            value: 1.0,
            error_bound: 0.0,
        };
    }
    if !(mean > 0.0) {
        return Bounded {
            value: 0.0,
            error_bound: 0.0,
        };
    }
    if m <= mean {
        let below = lower_tail(m - 1.0, mean);
        return Bounded {
            value: (1.0 - below.value).max(0.0),
            error_bound: below.error_bound,
        };
    }
    let (_, hi) = window(mean, WINDOW_LN_INV_EPS);
    let mut p = probability_f(m, mean);
    let mut sum = 0.0;
    let mut n = m;
    loop {
        sum += p;
        let r = mean / (n + 1.0);
        let rest = p * r / (1.0 - r);
        if rest <= TAIL_STOP_REL * sum || p == 0.0 {
            return Bounded {
                value: sum,
                error_bound: rest,
            };
        }
        if n >= hi {
            return Bounded {
                value: sum,
                error_bound: (-WINDOW_LN_INV_EPS).exp(),
            };
        }
        p *= r;
        n += 1.0;
    }
}

/// The lower tail P(N ≤ m) of a Poisson(μ), m a whole number (P = 0 for m < 0).
///
/// # Formula
/// ```text
/// P(N ≤ m) = Σ_{n ≤ m} P(N = n),   P(N = n−1) = P(N = n)·n/μ
/// ```
/// Summed downwards from m when m < μ, stopping at n = 0 or once the remainder, bounded by
/// P(N = n)·r/(1 − r) with r = n/μ < 1, is below 1e-17 of the sum, or below the window of
/// [`window`] (remainder ≤ e⁻⁶⁴). When m ≥ μ it is 1 − P(N ≥ m + 1).
///
/// # Source
/// As [`upper_tail`].
///
/// ```
/// // P(N ≤ 2 | μ = 10) = 2.7693957155115775e-3 (scipy.stats.poisson.cdf(2, 10)).
/// let t = engine::detection::poisson::lower_tail(2.0, 10.0);
/// assert!((t.value / 2.769_395_715_511_577_5e-3 - 1.0).abs() < 1e-13);
/// ```
#[must_use]
pub fn lower_tail(m: f64, mean: f64) -> Bounded {
    let m = m.floor();
    if mean >= FAST_MEAN && m >= 0.0 {
        if let Some(t) = super::contour::gamma_tail(m + 1.0, mean, Side::Above) {
            return t;
        }
    }
    lower_tail_summed(m, mean)
}

/// [`lower_tail`] by the bounded sum whatever its length (for checks).
#[must_use]
pub fn lower_tail_summed(m: f64, mean: f64) -> Bounded {
    let m = m.floor();
    if m < 0.0 {
        return Bounded {
            value: 0.0,
            error_bound: 0.0,
        };
    }
    if !(mean > 0.0) {
        return Bounded {
            value: 1.0,
            error_bound: 0.0,
        };
    }
    if m >= mean {
        let above = upper_tail(m + 1.0, mean);
        return Bounded {
            value: (1.0 - above.value).max(0.0),
            error_bound: above.error_bound,
        };
    }
    let (lo, _) = window(mean, WINDOW_LN_INV_EPS);
    let mut p = probability_f(m, mean);
    let mut sum = 0.0;
    let mut n = m;
    loop {
        sum += p;
        if n <= 0.0 {
            return Bounded {
                value: sum,
                error_bound: 0.0,
            };
        }
        let r = n / mean;
        let rest = p * r / (1.0 - r);
        if rest <= TAIL_STOP_REL * sum || p == 0.0 {
            return Bounded {
                value: sum,
                error_bound: rest,
            };
        }
        if n <= lo {
            return Bounded {
                value: sum,
                error_bound: (-WINDOW_LN_INV_EPS).exp(),
            };
        }
        p *= r;
        n -= 1.0;
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)]
    use super::*;

    #[test]
    fn probabilities_match_scipy() {
        // e^{-μ}μⁿ/n! with mpmath at 40 digits (scipy 1.17.1's poisson.pmf(1e7, 1e7) is off by
        // 1.5e-9 relative, so it is not the reference here).
        for (n, mu, want) in [
            (0u64, 0.01, 0.990_049_833_749_168_05),
            (1, 0.01, 0.009_900_498_337_491_680_5),
            (10_000, 10_000.0, 0.003_989_389_558_962_825_6),
            (10_000_000, 10_000_000.0, 1.261_566_250_497_027_9e-4),
            (20, 1.5, 3.049_712_089_610_172_6e-16),
        ] {
            let got = probability(n, mu);
            assert!(
                (got / want - 1.0).abs() < 1e-13,
                "pmf({n}, {mu}) = {got}, want {want}"
            );
        }
        assert_eq!(probability(0, 0.0), 1.0);
        assert_eq!(probability(3, 0.0), 0.0);
    }

    #[test]
    fn tails_add_to_one_and_match_scipy() {
        for (m, mu, sf_want, tol) in [
            // (m, μ, P(N ≥ m), tolerance): the regularized lower incomplete gamma P(m, μ) with
            // mpmath at 40 digits; for μ = 1e7 (beyond mpmath's series) scipy.stats.poisson.sf,
            // whose own accuracy there is about 1e-9.
            (2.0, 0.01, 4.966_791_334_026_589e-5, 1e-12),
            (1_000_100.0, 1e6, 0.460_305_138_513_883_6, 1e-11),
            (10_005_000.0, 1e7, 5.695_025_679_746_335e-2, 1e-8),
        ] {
            let up = upper_tail(m, mu).value;
            let down = lower_tail(m - 1.0, mu).value;
            assert!(
                (up / sf_want - 1.0).abs() < tol,
                "P(N ≥ {m} | {mu}) = {up}, want {sf_want}"
            );
            assert!((up + down - 1.0).abs() < 1e-12);
        }
    }
}
