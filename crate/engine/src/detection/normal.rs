//! The standard normal distribution: density φ, survival Q, distribution Φ and their inverses.
//!
//! Pure functions on `f64`, accurate to a few units in the last place in the tails the
//! detection figures use (|z| ≲ 37). Knows nothing of sensors; no other distribution here.

use std::f64::consts::{FRAC_1_SQRT_2, FRAC_2_SQRT_PI};

/// 1/√(2π).
const FRAC_1_SQRT_2PI: f64 = 0.398_942_280_401_432_7;

/// The part of 1/√2 that `FRAC_1_SQRT_2` (a rounded `f64`) leaves out:
/// 1/√2 − fl(1/√2) = −4.8336466567264565e-17 (computed with mpmath at 40 digits).
const FRAC_1_SQRT_2_LOW: f64 = -4.833_646_656_726_456_5e-17;

/// The standard normal density φ(z).
///
/// # Formula
/// ```text
/// φ(z) = exp(−z²/2) / √(2π)
/// ```
///
/// # Source
/// The normal density; any statistics text (e.g. NIST/SEMATECH e-Handbook §1.3.6.6.1).
///
/// ```
/// // φ(0) = 1/√(2π) = 0.3989422804014327 (scipy.stats.norm.pdf(0)).
/// let v = engine::detection::normal::density(0.0);
/// assert!((v - 0.398_942_280_401_432_7).abs() < 1e-16);
/// ```
#[must_use]
pub fn density(z: f64) -> f64 {
    FRAC_1_SQRT_2PI * (-0.5 * z * z).exp()
}

/// The standard normal survival function Q(z) = P(Z > z).
///
/// # Formula
/// ```text
/// Q(z) = ½ · erfc(z/√2)
/// ```
/// `erfc` is the `libm` crate's (a port of FreeBSD's msun, error below 1 ulp). The argument
/// z/√2 is itself rounded; its exact rounding error δ (from a fused multiply-add and the
/// constant's own low part) is put back to first order, erfc(x + δ) ≈ erfc(x) − (2/√π)e^{−x²}δ,
/// which keeps the relative error near 1e-16 where the plain formula loses z²·1e-16
/// (7e-15 at z = 8).
///
/// # Source
/// Abramowitz & Stegun, *Handbook of Mathematical Functions* (1964), 26.2.29 (Q in terms of
/// erfc); the correction is first-order Taylor, derived here.
///
/// ```
/// // Q(8) = 6.220960574271784e-16 (mpmath.ncdf(-8) at 40 digits; scipy's norm.sf(8) is
/// // 7e-15 lower because it does not correct the rounded argument).
/// let q = engine::detection::normal::survival(8.0);
/// assert!((q / 6.220_960_574_271_784e-16 - 1.0).abs() < 1e-15);
/// ```
#[must_use]
pub fn survival(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    let x = z * FRAC_1_SQRT_2;
    let dx = z.mul_add(FRAC_1_SQRT_2, -x) + z * FRAC_1_SQRT_2_LOW;
    let e = libm::erfc(x);
    if dx == 0.0 || !x.is_finite() {
        return 0.5 * e;
    }
    0.5 * (e - FRAC_2_SQRT_PI * (-x * x).exp() * dx)
}

/// The standard normal distribution function Φ(z) = P(Z ≤ z) = Q(−z).
///
/// # Formula
/// ```text
/// Φ(z) = Q(−z) = ½ · erfc(−z/√2)
/// ```
///
/// # Source
/// Abramowitz & Stegun (1964), 26.2.29; see [`survival`].
///
/// ```
/// // Φ(−3) = 1.3498980316300946e-3 (scipy.stats.norm.cdf(-3)).
/// let p = engine::detection::normal::cdf(-3.0);
/// assert!((p / 1.349_898_031_630_094_6e-3 - 1.0).abs() < 1e-15);
/// ```
#[must_use]
pub fn cdf(z: f64) -> f64 {
    survival(-z)
}

/// The quantile function Φ⁻¹(p): the z with Φ(z) = p, for 0 < p < 1.
///
/// Returns `None` for p outside (0, 1) or not finite.
///
/// # Formula
/// Wichura's algorithm AS 241 (`PPND16`): with q = p − ½, for |q| ≤ 0.425 a rational function
/// of r = 0.180625 − q² (degree 7/7); otherwise, with r = √(−ln min(p, 1 − p)), a rational
/// function of r − 1.6 (r ≤ 5) or of r − 5 (r > 5), each degree 7/7, sign from q. Relative
/// accuracy about 1e-16 as published.
///
/// # Source
/// M. J. Wichura, "Algorithm AS 241: The Percentage Points of the Normal Distribution",
/// *Applied Statistics* 37(3):477–484, 1988 (coefficients from memory, checked against
/// `scipy.special.ndtri` in the tests and in `tests/python/test_detection.py`).
///
/// ```
/// // Φ⁻¹(1e-3) = −3.090232306167813 (scipy.special.ndtri(1e-3)).
/// let z = engine::detection::normal::quantile(1e-3).unwrap();
/// assert!((z / -3.090_232_306_167_813 - 1.0).abs() < 1e-15);
/// ```
#[must_use]
#[allow(clippy::excessive_precision)] // the coefficients as published
pub fn quantile(p: f64) -> Option<f64> {
    if !(p > 0.0 && p < 1.0) {
        return None;
    }
    let q = p - 0.5;
    if q.abs() <= 0.425 {
        let r = 0.180_625 - q * q;
        let num = (((((((2.509_080_928_730_122_672_7e3 * r + 3.343_057_558_358_812_810_5e4)
            * r
            + 6.726_577_092_700_870_085_3e4)
            * r
            + 4.592_195_393_154_987_145_7e4)
            * r
            + 1.373_169_376_550_946_112_5e4)
            * r
            + 1.971_590_950_306_551_442_7e3)
            * r
            + 1.331_416_678_917_843_774_5e2)
            * r
            + 3.387_132_872_796_366_608_0)
            * q;
        let den = ((((((5.226_495_278_852_854_561_0e3 * r + 2.872_908_573_572_194_267_4e4) * r
            + 3.930_789_580_009_271_061_0e4)
            * r
            + 2.121_379_430_158_659_586_7e4)
            * r
            + 5.394_196_021_424_751_107_7e3)
            * r
            + 6.871_870_074_920_579_083_0e2)
            * r
            + 4.231_333_070_160_091_125_2e1)
            * r
            + 1.0;
        return Some(num / den);
    }
    let tail = if q < 0.0 { p } else { 1.0 - p };
    let mut r = (-tail.ln()).sqrt();
    let z = if r <= 5.0 {
        r -= 1.6;
        let num = ((((((7.745_450_142_783_414_076_4e-4 * r + 2.272_384_498_926_918_458_33e-2)
            * r
            + 2.417_807_251_774_506_117_7e-1)
            * r
            + 1.270_458_252_452_368_382_58)
            * r
            + 3.647_848_324_763_204_605_04)
            * r
            + 5.769_497_221_460_691_405_5)
            * r
            + 4.630_337_846_156_545_295_9)
            * r
            + 1.423_437_110_749_683_577_34;
        let den = ((((((1.050_750_071_644_416_843_24e-9 * r + 5.475_938_084_995_344_946e-4)
            * r
            + 1.519_866_656_361_645_719_66e-2)
            * r
            + 1.481_039_764_274_800_745_9e-1)
            * r
            + 6.897_673_349_851_000_045_5e-1)
            * r
            + 1.676_384_830_183_803_849_4)
            * r
            + 2.053_191_626_637_758_821_87)
            * r
            + 1.0;
        num / den
    } else {
        r -= 5.0;
        let num = ((((((2.010_334_399_292_288_132_65e-7 * r + 2.711_555_568_743_487_578_15e-5)
            * r
            + 1.242_660_947_388_078_438_6e-3)
            * r
            + 2.653_218_952_657_612_309_3e-2)
            * r
            + 2.965_605_718_285_048_912_3e-1)
            * r
            + 1.784_826_539_917_291_335_8)
            * r
            + 5.463_784_911_164_114_369_9)
            * r
            + 6.657_904_643_501_103_777_2;
        let den = ((((((2.044_263_103_389_939_785_64e-15 * r + 1.421_511_758_316_445_888_7e-7)
            * r
            + 1.846_318_317_510_054_681_8e-5)
            * r
            + 7.868_691_311_456_132_591e-4)
            * r
            + 1.487_536_129_085_061_485_25e-2)
            * r
            + 1.369_298_809_227_358_053_1e-1)
            * r
            + 5.998_322_065_558_879_376_9e-1)
            * r
            + 1.0;
        num / den
    };
    Some(if q < 0.0 { -z } else { z })
}

/// The inverse survival function Q⁻¹(p): the z with Q(z) = p, for 0 < p < 1.
///
/// Returns `None` for p outside (0, 1).
///
/// # Formula
/// ```text
/// Q⁻¹(p) = −Φ⁻¹(p)
/// ```
/// (exact by the symmetry of the normal; small p is handed to Φ⁻¹ unchanged, so no 1 − p is
/// formed where it would lose digits).
///
/// # Source
/// Wichura (1988), AS 241; see [`quantile`].
///
/// ```
/// // z_FA for P_FA = 1e-3 is 3.0902 (REFERENCES.md §8; scipy.special.ndtri(1 - 1e-3)).
/// let z = engine::detection::normal::inverse_survival(1e-3).unwrap();
/// assert!((z - 3.0902).abs() < 5e-5);
/// ```
#[must_use]
pub fn inverse_survival(p: f64) -> Option<f64> {
    quantile(p).map(|z| -z)
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)]
    use super::*;

    /// Relative tolerance for values computed by two accurate implementations: a few ulp.
    const ULPS: f64 = 2e-15;

    #[test]
    fn survival_matches_mpmath_deep_in_the_tail() {
        // (z, Q(z)) from mpmath.ncdf(-z) at 40 digits.
        for (z, want) in [
            (8.0, 6.220_960_574_271_784e-16),
            (20.0, 2.753_624_118_606_233_7e-89),
            (37.0, 5.725_571_222_524_577e-300),
            (3.0902, 1.000_108_783_207_071_9e-3),
        ] {
            let got = survival(z);
            assert!(
                (got / want - 1.0).abs() < ULPS,
                "Q({z}) = {got}, want {want}"
            );
        }
        assert_eq!(survival(0.0), 0.5);
        assert!(survival(f64::NAN).is_nan());
        assert_eq!(survival(f64::INFINITY), 0.0);
        assert_eq!(survival(f64::NEG_INFINITY), 1.0);
    }

    #[test]
    fn quantile_matches_scipy_ndtri() {
        // (p, scipy.special.ndtri(p)), scipy 1.17.1.
        for (p, want) in [
            (1e-300, -37.047_096_299_361_2),
            (1e-100, -21.273_453_560_965_322),
            (1e-20, -9.262_340_089_798_409),
            (1e-15, -7.941_345_326_170_998),
            (1e-12, -7.034_483_825_301_131),
            (1e-10, -6.361_340_902_404_056),
            (1e-6, -4.753_424_308_822_899),
            (0.02, -2.053_748_910_631_823),
            (0.1, -1.281_551_565_544_600_4),
            (0.3, -0.524_400_512_708_040_9),
            (0.7, 0.524_400_512_708_040_7),
            (0.975, 1.959_963_984_540_054),
            (0.999, 3.090_232_306_167_813),
        ] {
            let got = quantile(p).unwrap();
            assert!(
                (got / want - 1.0).abs() < ULPS,
                "ndtri({p}) = {got}, want {want}"
            );
        }
        assert_eq!(quantile(0.5), Some(0.0));
        assert_eq!(quantile(0.0), None);
        assert_eq!(quantile(1.0), None);
        assert_eq!(quantile(f64::NAN), None);
    }

    #[test]
    fn quantile_inverts_survival() {
        for k in 1..300 {
            let p = 10f64.powf(-f64::from(k) / 10.0);
            let z = inverse_survival(p).unwrap();
            let back = survival(z);
            // dQ/Q ≈ −z·dz in the tail, so a relative error e in z gives z²·e in Q; AS 241's
            // e is "about 1e-16" as published, and ~5e-16 is seen here, hence 1e-15.
            let tol = 1e-15 * (1.0 + z * z);
            assert!((back / p - 1.0).abs() < tol, "Q(Q⁻¹({p})) = {back}");
        }
    }
}
