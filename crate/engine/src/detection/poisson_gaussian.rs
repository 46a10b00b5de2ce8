//! The output pixel's charge as Poisson plus Gaussian: survival, distribution function and
//! density, with proven truncation bounds, from μ = 0 to ~1e7 e⁻ and σ = 0 to ~1e6 e⁻.
//!
//! x = N + R, N ~ Poisson(μ) (signal and dark electrons), R ~ Normal(0, σ²) (read, reset and
//! quantization noise together). Pure functions of (μ, σ, x); no thresholds or signals here
//! (see `neyman_pearson`).
//!
//! Two exact methods, chosen per call by cost:
//! - **direct**: Σₙ P(N = n)·Q((τ − n)/σ) over the integers within ±k·σ of τ (k =
//!   [`GAUSS_WINDOW`]), plus the Poisson tail above that window in closed form by a bounded
//!   tail sum; error ≤ Q(k) + Poisson window and tail-stop bounds (module `poisson`);
//! - **contour**: the inversion integral along a vertical line through the saddle point,
//!   summed by the trapezoidal rule, whose error is exactly a sum of aliased tail
//!   probabilities and is bounded in closed form (see [`contour_tail`]); used when σ and √μ are
//!   both large, where the direct sum would need tens of thousands of terms.

use super::normal;
use super::poisson::{self, Bounded};

/// Half-width of the Gaussian window in units of σ: integers n with |τ − n| > k·σ contribute
/// Q((τ − n)/σ) ≤ Q(11) = 1.9e-28 (or its complement), so the dropped mass is at most that,
/// far below the smallest probability solved for (1e-15).
pub const GAUSS_WINDOW: f64 = 11.0;

/// Q(GAUSS_WINDOW) = Q(11), the bound on what the Gaussian window leaves out
/// (mpmath.ncdf(-11) = 1.9106595744986e-28).
const GAUSS_WINDOW_TAIL: f64 = 1.910_659_574_498_6e-28;

/// Largest mean charge accepted [e⁻]: beyond 1e9 the f64 spacing of the charge axis
/// (1.2e-7 e⁻) approaches the precision the figures are quoted to, and no output pixel
/// holds so much (common practice, no source).
pub const MAX_MEAN_E: f64 = 1e9;

/// Largest Gaussian noise accepted [e⁻ rms] (same reasoning as [`MAX_MEAN_E`]).
pub const MAX_SIGMA_E: f64 = 1e9;

/// Direct cost (in erfc-equivalents) above which the contour method is tried instead: a
/// direct term costs one erfc (~20 ns), a contour node a complex exponential (~40 ns), and
/// the contour needs ~30–300 nodes plus a saddle-point solve, so past ~600 it is cheaper.
const DIRECT_COST_LIMIT: f64 = 600.0;

/// The distribution of x = Poisson(μ) + Normal(0, σ²), in electrons.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoissonGaussian {
    mean_e: f64,
    sigma_e: f64,
}

impl PoissonGaussian {
    /// The distribution for a Poisson mean `mean_e` (signal + dark, e⁻) and Gaussian standard
    /// deviation `sigma_e` (e⁻ rms).
    ///
    /// Returns `None` unless 0 ≤ mean_e ≤ [`MAX_MEAN_E`] and 0 ≤ sigma_e ≤ [`MAX_SIGMA_E`].
    #[must_use]
    pub fn new(mean_e: f64, sigma_e: f64) -> Option<Self> {
        let ok = (0.0..=MAX_MEAN_E).contains(&mean_e) && (0.0..=MAX_SIGMA_E).contains(&sigma_e);
        ok.then_some(Self { mean_e, sigma_e })
    }

    /// The Poisson mean μ [e⁻].
    #[must_use]
    pub fn mean_e(&self) -> f64 {
        self.mean_e
    }

    /// The Gaussian standard deviation σ [e⁻ rms].
    #[must_use]
    pub fn sigma_e(&self) -> f64 {
        self.sigma_e
    }

    /// P(x > τ), with the bound on its truncation error.
    ///
    /// # Formula
    /// ```text
    /// P(x > τ) = Σₙ Pois(n; μ) · Q((τ − n)/σ)           σ > 0
    /// P(x > τ) = P(N ≥ ⌊τ⌋ + 1)                       σ = 0 (x is a whole number)
    /// ```
    ///
    /// # Source
    /// REFERENCES.md §8 (Neyman–Pearson formulation; the Poisson–Gaussian model of
    /// Hendrickson, arXiv:2311.14839, and Foi et al., IEEE TIP 17(10), 2008).
    ///
    /// ```
    /// use engine::detection::poisson_gaussian::PoissonGaussian;
    /// // REFERENCES.md §8: σ_r = 1 e⁻, d = 0.01 e⁻: P(x > 3.1409) = 1e-3 (τ to 4 decimals).
    /// let dark = PoissonGaussian::new(0.01, 1.0).unwrap();
    /// let p = dark.survival(3.1409);
    /// assert!((p / 1e-3 - 1.0).abs() < 1e-4);
    /// ```
    #[must_use]
    pub fn survival_bounded(&self, tau: f64) -> Bounded {
        self.tail(tau, Side::Above)
    }

    /// P(x ≤ τ), with the bound on its truncation error (the mirror of
    /// [`survival_bounded`](Self::survival_bounded), summed directly so that small values keep
    /// their relative accuracy).
    ///
    /// # Formula
    /// ```text
    /// P(x ≤ τ) = Σₙ Pois(n; μ) · Φ((τ − n)/σ)           σ > 0
    /// P(x ≤ τ) = P(N ≤ ⌊τ⌋)                           σ = 0
    /// ```
    ///
    /// # Source
    /// REFERENCES.md §8; see [`survival_bounded`](Self::survival_bounded).
    ///
    /// ```
    /// use engine::detection::poisson_gaussian::PoissonGaussian;
    /// // μ = 0: the pure Gaussian, Φ(−3) = 1.3498980316300946e-3 (scipy.stats.norm.cdf(-3)).
    /// let g = PoissonGaussian::new(0.0, 2.0).unwrap();
    /// assert!((g.cdf(-6.0) / 1.349_898_031_630_094_6e-3 - 1.0).abs() < 1e-14);
    /// ```
    #[must_use]
    pub fn cdf_bounded(&self, tau: f64) -> Bounded {
        self.tail(tau, Side::AtOrBelow)
    }

    /// P(x > τ); see [`survival_bounded`](Self::survival_bounded).
    #[must_use]
    pub fn survival(&self, tau: f64) -> f64 {
        self.survival_bounded(tau).value
    }

    /// P(x ≤ τ); see [`cdf_bounded`](Self::cdf_bounded).
    #[must_use]
    pub fn cdf(&self, tau: f64) -> f64 {
        self.cdf_bounded(tau).value
    }

    /// The probability density of x at `x_e` [1/e⁻]; `None` when σ = 0 (x is then a whole
    /// number: see [`mass`](Self::mass)).
    ///
    /// # Formula
    /// ```text
    /// f(x) = Σₙ Pois(n; μ) · φ((x − n)/σ) / σ
    /// ```
    /// Terms farther than 11σ from x are left out (each ≤ φ(11)/σ times its mass).
    ///
    /// # Source
    /// The convolution of the Poisson with the normal density; REFERENCES.md §8.
    ///
    /// ```
    /// use engine::detection::poisson_gaussian::PoissonGaussian;
    /// // μ = 0, σ = 1: φ(0) = 0.3989422804014327.
    /// let g = PoissonGaussian::new(0.0, 1.0).unwrap();
    /// assert!((g.density(0.0).unwrap() - 0.398_942_280_401_432_7).abs() < 1e-16);
    /// ```
    #[must_use]
    pub fn density(&self, x_e: f64) -> Option<f64> {
        let s = self.sigma_e;
        if !(s > 0.0) || !x_e.is_finite() {
            return None;
        }
        let mu = self.mean_e;
        let (lo, hi) = poisson::window(mu, poisson::WINDOW_LN_INV_EPS);
        let a = (x_e - GAUSS_WINDOW * s).ceil().max(lo);
        let b = (x_e + GAUSS_WINDOW * s).floor().min(hi);
        if a > b {
            return Some(0.0);
        }
        if b - a + 1.0 > DIRECT_COST_LIMIT && s >= super::contour::MIN_SIGMA_E {
            if let Some(v) = super::contour::density(mu, s, x_e) {
                return Some(v);
            }
        }
        let mut p = poisson::probability_f(a, mu);
        let mut sum = 0.0;
        let mut n = a;
        while n <= b {
            sum += p * normal::density((x_e - n) / s);
            p *= mu / (n + 1.0);
            n += 1.0;
        }
        // Neglected: at most φ(11)/σ = 2.1e-27/σ per unit of Poisson mass.
        Some(sum / s)
    }

    /// The probability that x equals the whole number `n` when σ = 0 (pure Poisson); `None`
    /// when σ > 0 (x then has a density: see [`density`](Self::density)).
    ///
    /// # Formula
    /// ```text
    /// P(x = n) = e^{−μ} μⁿ / n!
    /// ```
    ///
    /// # Source
    /// The Poisson distribution; see `poisson::probability`.
    ///
    /// ```
    /// use engine::detection::poisson_gaussian::PoissonGaussian;
    /// // P(N = 3 | μ = 2) = 0.18044704431548356 (scipy.stats.poisson.pmf(3, 2)).
    /// let p = PoissonGaussian::new(2.0, 0.0).unwrap().mass(3).unwrap();
    /// assert!((p / 0.180_447_044_315_483_56 - 1.0).abs() < 1e-14);
    /// ```
    #[must_use]
    pub fn mass(&self, n: u64) -> Option<f64> {
        (self.sigma_e == 0.0).then(|| poisson::probability(n, self.mean_e))
    }

    /// P(x > τ) by the direct sum whatever its cost (for checks and benchmarks; the other
    /// methods choose the cheaper exact method themselves).
    #[must_use]
    pub fn survival_direct(&self, tau: f64) -> f64 {
        self.tail_direct(tau, Side::Above).value
    }

    /// Which method [`survival`](Self::survival) uses at `tau` (for checks and benchmarks).
    #[must_use]
    pub fn method_at(&self, tau: f64) -> Method {
        if self.direct_cost(tau) > DIRECT_COST_LIMIT
            && super::contour::tail(self.mean_e, self.sigma_e, tau, Side::Above).is_some()
        {
            Method::Contour
        } else {
            Method::Direct
        }
    }

    /// Rough cost of the direct sum in erfc-equivalents: the Gaussian-window terms plus the
    /// Poisson tail beyond it (~9√μ steps at a tenth of an erfc each, when μ is large).
    fn direct_cost(&self, tau: f64) -> f64 {
        let s = self.sigma_e;
        if s == 0.0 {
            return 0.0;
        }
        let (lo, hi) = poisson::window(self.mean_e, poisson::WINDOW_LN_INV_EPS);
        let a = (tau - GAUSS_WINDOW * s).ceil().max(lo);
        let b = (tau + GAUSS_WINDOW * s).floor().min(hi);
        let terms = (b - a + 1.0).max(0.0);
        terms + 0.9 * self.mean_e.sqrt()
    }

    fn tail(&self, tau: f64, side: Side) -> Bounded {
        if self.sigma_e >= super::contour::MIN_SIGMA_E
            && tau.is_finite()
            && self.direct_cost(tau) > DIRECT_COST_LIMIT
        {
            if let Some(t) = super::contour::tail(self.mean_e, self.sigma_e, tau, side) {
                return t;
            }
        }
        self.tail_direct(tau, side)
    }

    fn tail_direct(&self, tau: f64, side: Side) -> Bounded {
        let mu = self.mean_e;
        let s = self.sigma_e;
        if tau.is_nan() {
            return Bounded {
                value: f64::NAN,
                error_bound: 0.0,
            };
        }
        if s == 0.0 {
            // x is a whole number: x > τ ⇔ N ≥ ⌊τ⌋ + 1.
            let m = tau.floor();
            return match side {
                Side::Above => poisson::upper_tail(m + 1.0, mu),
                Side::AtOrBelow => poisson::lower_tail(m, mu),
            };
        }
        let (lo, hi) = poisson::window(mu, poisson::WINDOW_LN_INV_EPS);
        let a_g = (tau - GAUSS_WINDOW * s).ceil();
        let b_g = (tau + GAUSS_WINDOW * s).floor();
        let a = a_g.max(lo).max(0.0);
        let b = b_g.min(hi);
        // Terms inside the Gaussian window (and the Poisson window).
        let mut sum = 0.0;
        if a <= b {
            let mut p = poisson::probability_f(a, mu);
            let mut n = a;
            while n <= b {
                let z = (tau - n) / s;
                let w = match side {
                    Side::Above => normal::survival(z),
                    Side::AtOrBelow => normal::cdf(z),
                };
                sum += p * w;
                p *= mu / (n + 1.0);
                n += 1.0;
            }
        }
        // The Poisson mass beyond the window on the side where the weight is ~1.
        let beyond = match side {
            Side::Above => poisson::upper_tail(b_g + 1.0, mu),
            Side::AtOrBelow => poisson::lower_tail(a_g - 1.0, mu),
        };
        let window_cut = if a > a_g.max(0.0) || b < b_g {
            2.0 * (-poisson::WINDOW_LN_INV_EPS).exp()
        } else {
            0.0
        };
        Bounded {
            value: (sum + beyond.value).min(1.0),
            error_bound: GAUSS_WINDOW_TAIL + window_cut + beyond.error_bound,
        }
    }
}

/// The exact method a tail probability is computed by.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Method {
    /// The sum over the Gaussian window plus the Poisson tail beyond it.
    Direct,
    /// The trapezoidal rule on the inversion contour (module `contour`).
    Contour,
}

/// Which tail of the distribution a sum is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Side {
    /// P(x > τ).
    Above,
    /// P(x ≤ τ).
    AtOrBelow,
}
