//! Contrast detection probability (CDP): how likely a measured Weber contrast between two
//! patches lies within a confidence interval of the true one, from the patches' noise.
//!
//! Pure functions of two Gaussian measured values (mean and variance in electrons each);
//! the light level, sensor and averaging are the caller's (see [`PixelNoise`]). Knows nothing
//! of thresholds (`neyman_pearson`).
//!
//! # Definition implemented
//! Two patches of true signals I₁ (target) and I₂ (reference, > 0) have the Weber contrast
//! C = (I₁ − I₂)/I₂. One measurement gives X₁, X₂ (independent normals with the patches'
//! means and variances) and the measured contrast Ĉ = (X₁ − X₂)/X₂. The CDP is
//! ```text
//! CDP = P( |Ĉ − C| ≤ ε·|C| ),   ε = 0.5 by default
//! ```
//! This follows Geese, Seger & Paolillo, "Detection Probabilities: Performance Prediction for
//! Sensors of Autonomous Vehicles", IS&T Electronic Imaging 2018 (Autonomous Vehicles and
//! Machines), and IEEE 2020-2024 (published from P2020), which define CDP as the probability
//! that the contrast measured between pixels of the two patches lies within a confidence
//! interval around the true contrast, with ε = 50 % as their usual choice. The definition's
//! wording, the Weber form and ε = 50 % are from memory (the paper and the standard were not
//! re-read); the standard also names other contrast definitions, and in practice the
//! distribution is taken over pixel pairs of one frame, so fixed-pattern noise counts
//! (see [`PixelNoise`]).
//!
//! One pixel pair is the default reading (each X the value of one pixel); for patch means of
//! n pixels each, divide the variances by n ([`Patch::averaged`]).

use super::normal;

/// The usual confidence interval ε of the CDP: ±50 % of the true contrast (Geese et al. 2018;
/// from memory).
pub const DEFAULT_CONFIDENCE_INTERVAL: f64 = 0.5;

/// One measured value: its mean and variance in electrons.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Patch {
    /// Mean signal [e⁻], dark mean subtracted (as a black-level correction does).
    pub mean_e: f64,
    /// Variance of one measured value [e⁻²]: temporal and, for pixel pairs, fixed-pattern.
    pub variance_e2: f64,
}

impl Patch {
    /// The patch mean of `pixels` independent pixels: the same mean, variance / n.
    ///
    /// ```
    /// use engine::detection::contrast::Patch;
    /// let p = Patch { mean_e: 100.0, variance_e2: 120.0 }.averaged(4);
    /// assert_eq!(p.variance_e2, 30.0);
    /// ```
    #[must_use]
    pub fn averaged(self, pixels: u32) -> Self {
        let n = f64::from(pixels.max(1));
        Self {
            mean_e: self.mean_e,
            variance_e2: self.variance_e2 / n,
        }
    }
}

/// The model's noise of one pixel, as a function of its signal.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PixelNoise {
    /// Mean dark charge [e⁻] (its shot noise counts; its mean is subtracted).
    pub dark_e: f64,
    /// Read, reset and quantization variance together [e⁻²].
    pub read_variance_e2: f64,
    /// Dark-signal non-uniformity [e⁻ rms] (pixel to pixel).
    pub dsnu_e: f64,
    /// Photo-response non-uniformity as a fraction of the signal (pixel to pixel).
    pub prnu_fraction: f64,
}

impl PixelNoise {
    /// The measured value of one pixel with signal `signal_e`.
    ///
    /// # Formula
    /// ```text
    /// variance = s + d + σ_r² + DSNU² + (PRNU·s)²
    /// ```
    ///
    /// # Source
    /// The EMVA 1288 linear model's variances (REFERENCES.md §4), temporal plus spatial.
    ///
    /// ```
    /// use engine::detection::contrast::PixelNoise;
    /// let n = PixelNoise { dark_e: 1.0, read_variance_e2: 4.0, dsnu_e: 1.0, prnu_fraction: 0.01 };
    /// let p = n.patch(100.0).unwrap();
    /// assert!((p.variance_e2 - 107.0).abs() < 1e-12);
    /// ```
    #[must_use]
    pub fn patch(&self, signal_e: f64) -> Option<Patch> {
        let ok = signal_e >= 0.0
            && self.dark_e >= 0.0
            && self.read_variance_e2 >= 0.0
            && self.dsnu_e >= 0.0
            && self.prnu_fraction >= 0.0;
        let prnu = self.prnu_fraction * signal_e;
        let variance = signal_e
            + self.dark_e
            + self.read_variance_e2
            + self.dsnu_e * self.dsnu_e
            + prnu * prnu;
        (ok && variance.is_finite() && signal_e.is_finite()).then_some(Patch {
            mean_e: signal_e,
            variance_e2: variance,
        })
    }
}

/// P(X₁/X₂ ≤ w) for independent normals X₁ ~ N(θ₁, σ₁²), X₂ ~ N(θ₂, σ₂²), θ₂ > 0.
///
/// Returns `None` for θ₂ ≤ 0, negative or non-finite variances, or a non-finite w.
///
/// # Formula
/// With Y = X₁ − wX₂ ~ N(θ₁ − wθ₂, σ₁² + w²σ₂²) and v₀ = −θ₂/σ₂,
/// ```text
/// F(w) = P(Y ≤ 0, X₂ > 0) + P(Y ≥ 0, X₂ < 0)
///      = Φ(−m_Y/s_Y) + Φ(v₀) − 2·B,
/// B    = P(Y ≤ 0, X₂ < 0) = ∫_{−∞}^{v₀} φ(v) · Φ((w(θ₂ + σ₂v) − θ₁)/σ₁) dv
/// ```
/// B is skipped when Φ(v₀) < 1e-17 (its whole size), else integrated by 20-point
/// Gauss–Legendre on panels no wider than 3·min(1, σ₁/(|w|σ₂)) (three units of the inner
/// Φ's argument, or three of v) across the transition of the inner Φ (within ±9.5 of its
/// argument's zero), and in closed form (Φ of the ends) where the inner Φ is within 1.1e-21
/// of 0 or 1. Error bound (Trefethen, *Approximation Theory and Approximation Practice*,
/// 2013, Thm 19.3: (64/15)·M·ρ^(−40)/(ρ² − 1) per panel of half-width 1; on a panel of h
/// units |Im| ≤ (h/2)·(ρ − 1/ρ)/2 in both v and the argument, and |φ|, |Φ| ≤ e^{y²/2} off the
/// real axis, so M ≤ 0.4·e^{(3b/2)²}; ρ = 6 gives 1.1e-24 a panel, below 1e-23 over the at
/// most seven panels): below 1e-18 in all with the closed-form parts; exact in the limits
/// σ₁ = 0 and σ₂ = 0. Panels one unit wide (the earlier choice) cost three times the
/// evaluations for a bound far below any use.
///
/// # Source
/// D. V. Hinkley, "On the ratio of two correlated normal random variables", *Biometrika*
/// 56(3):635–639, 1969 (the exact distribution function of the ratio as bivariate normal
/// probabilities; his equation numbering from memory). The form above is re-derived here for
/// ρ = 0, with the bivariate term as a one-dimensional integral.
///
/// ```
/// use engine::detection::contrast::ratio_cdf;
/// // Symmetric case: X₁ and X₂ identical in law, so P(X₁/X₂ ≤ 1) = P(X₁ ≤ X₂) + tiny = ½
/// // (up to P(X₂ < 0) = Q(10), far below the tolerance).
/// let f = ratio_cdf(1.0, 10.0, 1.0, 10.0, 1.0).unwrap();
/// assert!((f - 0.5).abs() < 1e-15);
/// ```
#[must_use]
pub fn ratio_cdf(w: f64, theta1: f64, var1: f64, theta2: f64, var2: f64) -> Option<f64> {
    let ok = w.is_finite()
        && theta1.is_finite()
        && theta2.is_finite()
        && theta2 > 0.0
        && var1 >= 0.0
        && var2 >= 0.0
        && var1.is_finite()
        && var2.is_finite();
    if !ok {
        return None;
    }
    let s1 = var1.sqrt();
    let s2 = var2.sqrt();
    if s2 == 0.0 {
        // X₂ = θ₂ > 0: F = P(X₁ ≤ wθ₂).
        if s1 == 0.0 {
            return Some(if theta1 <= w * theta2 { 1.0 } else { 0.0 });
        }
        return Some(normal::cdf((w * theta2 - theta1) / s1));
    }
    let v0 = -theta2 / s2;
    let p_neg = normal::cdf(v0); // P(X₂ < 0)
    if s1 == 0.0 {
        return Some(ratio_cdf_exact_numerator(w, theta1, theta2, s2, p_neg));
    }
    let m_y = theta1 - w * theta2;
    let s_y = (var1 + w * w * var2).sqrt();
    let p_y = normal::cdf(-m_y / s_y);
    let b = if p_neg < 1e-17 {
        0.0
    } else {
        lower_orthant(v0, w * s2 / s1, (w * theta2 - theta1) / s1)
    };
    Some((p_y + p_neg - 2.0 * b).clamp(0.0, 1.0))
}

/// F(w) when X₁ = θ₁ exactly: Y = θ₁ − wX₂.
fn ratio_cdf_exact_numerator(w: f64, theta1: f64, theta2: f64, s2: f64, p_neg: f64) -> f64 {
    let at = |x: f64| normal::cdf((x - theta2) / s2); // P(X₂ ≤ x)
    let (p_y, b) = if w > 0.0 {
        let cut = theta1 / w; // Y ≤ 0 ⇔ X₂ ≥ cut
        (1.0 - at(cut), if cut < 0.0 { p_neg - at(cut) } else { 0.0 })
    } else if w < 0.0 {
        let cut = theta1 / w; // Y ≤ 0 ⇔ X₂ ≤ cut
        (at(cut), at(cut.min(0.0)))
    } else if theta1 <= 0.0 {
        (1.0, p_neg)
    } else {
        (0.0, 0.0)
    };
    (p_y + p_neg - 2.0 * b).clamp(0.0, 1.0)
}

/// Half-width, in units of the inner argument, of the transition of Φ(αv + β): beyond it
/// Φ is within Φ(−9.5) = 1.05e-21 of 0 or 1.
const TRANSITION: f64 = 9.5;

/// Widest Gauss–Legendre panel of [`lower_orthant`], in units of v and of the inner Φ's
/// argument (see the error bound of [`ratio_cdf`]).
const PANEL: f64 = 3.0;

/// Lower end of the integral below v₀: Φ(v₀ − 12) ≤ Φ(−12) = 1.8e-33 is left out.
const BELOW_V0: f64 = 12.0;

/// B = ∫_{−∞}^{v₀} φ(v)·Φ(αv + β) dv (see [`ratio_cdf`]).
fn lower_orthant(v0: f64, alpha: f64, beta: f64) -> f64 {
    lower_orthant_on(v0, alpha, beta, PANEL)
}

/// [`lower_orthant`] on panels at most `panel` units wide.
fn lower_orthant_on(v0: f64, alpha: f64, beta: f64, panel: f64) -> f64 {
    let start = v0 - BELOW_V0;
    if alpha == 0.0 {
        return normal::cdf(beta) * (normal::cdf(v0) - normal::cdf(start));
    }
    // The transition of the inner Φ, clipped to [start, v0].
    let centre = -beta / alpha;
    let half = TRANSITION / alpha.abs();
    // max then min, not f64::clamp: its check of the bounds would link a message that writes
    // them, and with it core's float formatting (crate::decimal); start < v0 here.
    let t_lo = (centre - half).max(start).min(v0);
    let t_hi = (centre + half).max(start).min(v0);
    let mut sum = 0.0;
    // Where the inner Φ is ≈ 1 (αv + β > 9.5): ∫ φ in closed form.
    if alpha > 0.0 {
        sum += normal::cdf(v0) - normal::cdf(t_hi); // v above the transition
    } else {
        sum += normal::cdf(t_lo) - normal::cdf(start); // v below it
    }
    if t_hi > t_lo {
        let width = panel.min(panel / alpha.abs());
        let panels = ((t_hi - t_lo) / width).ceil().max(1.0);
        let h = (t_hi - t_lo) / panels;
        let (nodes, weights) = gauss_legendre_20_cached();
        let mut i = 0.0;
        while i < panels {
            let a = t_lo + i * h;
            let mid = a + 0.5 * h;
            let mut panel = 0.0;
            for (x, wgt) in nodes.iter().zip(weights.iter()) {
                for v in [mid - 0.5 * h * x, mid + 0.5 * h * x] {
                    panel += wgt * normal::density(v) * normal::cdf(alpha * v + beta);
                }
            }
            sum += 0.5 * h * panel;
            i += 1.0;
        }
    }
    sum
}

/// [`gauss_legendre_20`], computed once (the Newton iterations cost more than the integral
/// they serve: measured, a 1000-point curve of CDPs took 8× the rest of its evaluations).
fn gauss_legendre_20_cached() -> &'static ([f64; 10], [f64; 10]) {
    static NODES: std::sync::OnceLock<([f64; 10], [f64; 10])> = std::sync::OnceLock::new();
    NODES.get_or_init(gauss_legendre_20)
}

/// The positive nodes and their weights of 20-point Gauss–Legendre quadrature on [−1, 1],
/// by Newton's method on P₂₀ from Tricomi's initial guesses (converged to machine precision
/// in ≤ 6 steps; checked against ∫ x¹⁸ = 2/19 in the tests).
fn gauss_legendre_20() -> ([f64; 10], [f64; 10]) {
    const N: usize = 20;
    let mut nodes = [0.0; 10];
    let mut weights = [0.0; 10];
    for (i, (x_out, w_out)) in nodes.iter_mut().zip(weights.iter_mut()).enumerate() {
        #[allow(clippy::cast_precision_loss)] // i < 10
        let k = i as f64 + 1.0;
        let nf = N as f64;
        let mut x = (std::f64::consts::PI * (k - 0.25) / (nf + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            // P_N(x) and P_N′(x) by the three-term recurrence.
            let (mut p0, mut p1) = (1.0, x);
            for j in 2..=N {
                #[allow(clippy::cast_precision_loss)]
                let jf = j as f64;
                let p2 = ((2.0 * jf - 1.0) * x * p1 - (jf - 1.0) * p0) / jf;
                p0 = p1;
                p1 = p2;
            }
            dp = nf * (x * p1 - p0) / (x * x - 1.0);
            let dx = p1 / dp;
            x -= dx;
            if dx.abs() < 1e-16 {
                break;
            }
        }
        *x_out = x;
        *w_out = 2.0 / ((1.0 - x * x) * dp * dp);
    }
    (nodes, weights)
}

/// The contrast detection probability of a target and a reference patch.
///
/// Returns `None` unless the reference mean is > 0, the target mean ≥ 0, the variances ≥ 0
/// and finite, and 0 < ε (finite). A contrast of 0 gives 0 (an interval of zero width)
/// unless there is no noise at all.
///
/// # Formula
/// ```text
/// C = (I₁ − I₂)/I₂,   CDP = F(1 + C + ε|C|) − F(1 + C − ε|C|)
/// ```
/// with F the exact distribution function of X₁/X₂ ([`ratio_cdf`]), since
/// Ĉ = X₁/X₂ − 1.
///
/// # Source
/// Geese, Seger & Paolillo, IS&T Electronic Imaging 2018; IEEE 2020-2024 (from memory: see the
/// module notes); Hinkley, Biometrika 56(3), 1969, for F.
///
/// ```
/// use engine::detection::contrast::{contrast_detection_probability, Patch};
/// // No noise on the reference: Ĉ = X₁/I₂ − 1 is normal with s.d. σ₁/I₂ = 0.05, C = 0.1,
/// // ε = 0.5: P(|Z| ≤ 0.05/0.05) = 2Φ(1) − 1 = 0.6826894921370859 (scipy.stats.norm).
/// let t = Patch { mean_e: 110.0, variance_e2: 25.0 };
/// let r = Patch { mean_e: 100.0, variance_e2: 0.0 };
/// let p = contrast_detection_probability(t, r, 0.5).unwrap();
/// assert!((p - 0.682_689_492_137_085_9).abs() < 1e-15);
/// ```
#[must_use]
pub fn contrast_detection_probability(
    target: Patch,
    reference: Patch,
    epsilon: f64,
) -> Option<f64> {
    if !(reference.mean_e > 0.0 && target.mean_e >= 0.0 && epsilon > 0.0 && epsilon.is_finite()) {
        return None;
    }
    let c = (target.mean_e - reference.mean_e) / reference.mean_e;
    let half = epsilon * c.abs();
    let f = |w: f64| {
        ratio_cdf(
            w,
            target.mean_e,
            target.variance_e2,
            reference.mean_e,
            reference.variance_e2,
        )
    };
    if half == 0.0 {
        let noiseless = target.variance_e2 == 0.0 && reference.variance_e2 == 0.0;
        return f(1.0).map(|_| if noiseless { 1.0 } else { 0.0 });
    }
    let hi = f(1.0 + c + half)?;
    let lo = f(1.0 + c - half)?;
    Some((hi - lo).clamp(0.0, 1.0))
}

/// The CDP at each of several reference-patch signals for a fixed Weber contrast, with the
/// pixels' noise from the model: the curve of CDP against light level.
///
/// `reference_signals_e` are the reference patch's signals [e⁻] (the light levels); the
/// target is at (1 + contrast) times each; `pixels` is 1 for pixel pairs, n for patch means.
/// Each point is `None` where [`contrast_detection_probability`] refuses it.
///
/// ```
/// use engine::detection::contrast::{contrast_curve, PixelNoise};
/// let noise = PixelNoise { dark_e: 0.5, read_variance_e2: 4.0, dsnu_e: 0.0, prnu_fraction: 0.0 };
/// let curve = contrast_curve(&[10.0, 100.0, 1000.0, 10000.0], 0.1, 0.5, &noise, 1);
/// let v: Vec<f64> = curve.iter().map(|p| p.unwrap()).collect();
/// assert!(v.windows(2).all(|w| w[0] < w[1])); // more light, more reliable contrast
/// ```
#[must_use]
pub fn contrast_curve(
    reference_signals_e: &[f64],
    contrast: f64,
    epsilon: f64,
    noise: &PixelNoise,
    pixels: u32,
) -> Vec<Option<f64>> {
    contrast_curve_with(reference_signals_e, epsilon, |s| {
        let target = noise.patch(s * (1.0 + contrast))?.averaged(pixels);
        let reference = noise.patch(s)?.averaged(pixels);
        Some((target, reference))
    })
}

/// The CDP at each light level, the patches given by a callback (target, reference) for the
/// level: for noise models other than [`PixelNoise`].
pub fn contrast_curve_with(
    levels: &[f64],
    epsilon: f64,
    mut patches: impl FnMut(f64) -> Option<(Patch, Patch)>,
) -> Vec<Option<f64>> {
    levels
        .iter()
        .map(|&level| {
            let (t, r) = patches(level)?;
            contrast_detection_probability(t, r, epsilon)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)]
    use super::*;

    #[test]
    fn gauss_legendre_is_exact_for_degree_39() {
        let (x, w) = gauss_legendre_20();
        let integral: f64 = x.iter().zip(&w).map(|(x, w)| 2.0 * w * x.powi(38)).sum();
        assert!((integral - 2.0 / 39.0).abs() < 1e-15, "{integral}");
        let total: f64 = w.iter().map(|w| 2.0 * w).sum();
        assert!((total - 2.0).abs() < 1e-15);
    }

    #[test]
    fn three_unit_panels_give_the_one_unit_panels_integral() {
        // Derived: the same integral by the rule on panels three times as narrow (the earlier
        // choice, whose bound is far smaller still), over the v₀, α and β the CDP reaches:
        // they agree to rounding (sums of a few hundred terms below 1).
        for v0 in [-9.0, -6.0, -3.5, -1.0, 0.0, 2.0] {
            for alpha in [-40.0, -3.0, -0.7, -0.05, 0.02, 0.3, 1.0, 2.5, 12.0, 300.0] {
                for beta in [-30.0, -8.0, -2.0, -0.3, 0.0, 0.5, 3.0, 9.0, 25.0] {
                    let fine = lower_orthant_on(v0, alpha, beta, 1.0);
                    let coarse = lower_orthant_on(v0, alpha, beta, PANEL);
                    assert!(
                        (fine - coarse).abs() < 1e-15,
                        "v0 {v0} α {alpha} β {beta}: {fine} vs {coarse}"
                    );
                }
            }
        }
    }

    #[test]
    fn ratio_cdf_limits_agree_with_the_general_formula() {
        // σ₁ → 0 through tiny values must approach the exact-numerator branch.
        for w in [-3.0, -0.2, 0.0, 0.4, 1.1, 5.0] {
            let exact = ratio_cdf(w, 2.0, 0.0, 1.0, 1.0).unwrap();
            let near = ratio_cdf(w, 2.0, 1e-16, 1.0, 1.0).unwrap();
            assert!((exact - near).abs() < 1e-6, "w {w}: {exact} vs {near}");
        }
    }

    #[test]
    fn ratio_cdf_rises_from_zero_to_one() {
        let mut last = 0.0;
        for i in -200..=200 {
            let w = f64::from(i) / 20.0;
            let f = ratio_cdf(w, 3.0, 1.0, 1.5, 1.0).unwrap();
            assert!(f >= last - 1e-15, "F({w}) = {f} below {last}");
            last = f;
        }
        assert!(last > 0.8);
    }
}
