//! Straight-line least-squares fits with standard uncertainties, for the photon transfer method.
//!
//! Ordinary least squares y = a + b·x, with the textbook standard errors from the residuals
//! and, separately, the slope's uncertainty propagated from each point's own standard
//! uncertainty. Knows nothing about cameras.

use serde::Serialize;

/// A fitted line y = intercept + slope · x.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineFit {
    /// Slope b.
    pub slope: f64,
    /// Intercept a.
    pub intercept: f64,
    /// Standard uncertainty of the slope from the scatter of the residuals (n − 2 degrees of
    /// freedom); `None` with only two points.
    pub slope_uncertainty_from_residuals: Option<f64>,
    /// Standard uncertainty of the intercept from the residuals; `None` with only two points.
    pub intercept_uncertainty_from_residuals: Option<f64>,
    /// Standard uncertainty of the slope propagated from the points' own uncertainties of y.
    pub slope_uncertainty_from_points: Option<f64>,
    /// Residuals y − (a + b·x), in the order of the points.
    pub residuals: Vec<f64>,
    /// Number of points.
    pub points: usize,
}

impl LineFit {
    /// The slope's standard uncertainty: the larger of the residual and the propagated one
    /// (whichever is known); conservative when the model misfits or the scatter is unlucky.
    #[must_use]
    pub fn slope_uncertainty(&self) -> Option<f64> {
        match (
            self.slope_uncertainty_from_residuals,
            self.slope_uncertainty_from_points,
        ) {
            (Some(a), Some(b)) => Some(a.max(b)),
            (a, b) => a.or(b),
        }
    }
}

/// Fit y = a + b·x by ordinary least squares; `uy` are the standard uncertainties of y (same
/// length as the points, or empty).
///
/// # Formula
/// ```text
/// x̄ = Σx/n, ȳ = Σy/n, Sxx = Σ(x − x̄)², b = Σ(x − x̄)(y − ȳ)/Sxx, a = ȳ − b·x̄
/// s² = Σr² / (n − 2);  u(b) = s/√Sxx;  u(a) = s·√(1/n + x̄²/Sxx)
/// u_p(b)² = Σ((x − x̄)/Sxx)² u(y)²      (propagation, the y uncertainties independent)
/// ```
/// Centred sums keep the fit accurate when x carries a large offset.
///
/// # Source
/// Ordinary least squares and its standard errors (e.g. NIST/SEMATECH e-Handbook of Statistical
/// Methods, §4.1.4.1, from memory); propagation per the GUM (JCGM 100:2008, §5.1.2, from
/// memory). Applied to the photon transfer line as EMVA 1288 Release 4.0 Linear does
/// (REFERENCES.md §4 item 10, from memory).
///
/// Returns `None` for fewer than two points, any non-finite value, or all x equal.
///
/// ```
/// // REFERENCES.md §4 "Exact synthetic photon-transfer line" (derived): K = 0.25, intercept
/// // σ_y.dark² = 0.473958 DN² when fitted against μ_y − μ_y.dark.
/// let x = [0.0, 250.0, 500.0, 750.0, 1000.0, 1250.0, 1500.0, 1750.0];
/// let y: Vec<f64> = x.iter().map(|m| 0.473958 + 0.25 * m).collect();
/// let f = engine::ptc::fit_line(&x, &y, &[]).unwrap();
/// assert!((f.slope - 0.25).abs() < 1e-12 && (f.intercept - 0.473958).abs() < 1e-9);
/// ```
#[must_use]
pub fn fit_line(x: &[f64], y: &[f64], uy: &[f64]) -> Option<LineFit> {
    let n = x.len();
    if n < 2 || y.len() != n || (!uy.is_empty() && uy.len() != n) {
        return None;
    }
    if x.iter().chain(y).chain(uy).any(|v| !v.is_finite()) {
        return None;
    }
    let nf = n as f64;
    let xm = x.iter().sum::<f64>() / nf;
    let ym = y.iter().sum::<f64>() / nf;
    let sxx: f64 = x.iter().map(|v| (v - xm) * (v - xm)).sum();
    if sxx <= 0.0 || !sxx.is_finite() {
        return None;
    }
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - xm) * (b - ym)).sum();
    let slope = sxy / sxx;
    let intercept = ym - slope * xm;
    let residuals: Vec<f64> = x
        .iter()
        .zip(y)
        .map(|(a, b)| b - (intercept + slope * a))
        .collect();
    let (su, iu) = if n > 2 {
        let s2 = residuals.iter().map(|r| r * r).sum::<f64>() / (nf - 2.0);
        (
            Some((s2 / sxx).sqrt()),
            Some((s2 * (1.0 / nf + xm * xm / sxx)).sqrt()),
        )
    } else {
        (None, None)
    };
    let pu = if uy.is_empty() {
        None
    } else {
        let v: f64 = x
            .iter()
            .zip(uy)
            .map(|(a, u)| ((a - xm) / sxx).powi(2) * u * u)
            .sum();
        Some(v.sqrt())
    };
    let fit = LineFit {
        slope,
        intercept,
        slope_uncertainty_from_residuals: su,
        intercept_uncertainty_from_residuals: iu,
        slope_uncertainty_from_points: pu,
        residuals,
        points: n,
    };
    let finite = [slope, intercept].iter().all(|v| v.is_finite())
        && [su, iu, pu].iter().flatten().all(|v| v.is_finite());
    finite.then_some(fit)
}

/// Fit y = a + b·x by weighted least squares, minimising Σ wᵢ(yᵢ − a − b·xᵢ)²; the residual
/// standard errors use n − 2 degrees of freedom, no point uncertainties.
///
/// # Formula
/// ```text
/// x̄ = Σwx/Σw, ȳ = Σwy/Σw, Sxx = Σw(x − x̄)², b = Σw(x − x̄)(y − ȳ)/Sxx, a = ȳ − b·x̄
/// s² = Σw r² / (n − 2);  u(b) = s/√Sxx;  u(a) = s·√(1/Σw + x̄²/Sxx)
/// ```
/// # Source
/// Weighted least squares (NIST/SEMATECH e-Handbook of Statistical Methods, §4.4.3.2, from
/// memory). Returns `None` as [`fit_line`] does, and for a weight that is not finite and > 0.
/// ```
/// // Equal weights give the ordinary fit: the textbook case of fit_line's tests.
/// let f = engine::ptc::fit_line_weighted(&[0.0, 1.0, 2.0, 3.0], &[0.0, 1.0, 1.0, 3.0], &[2.0; 4]).unwrap();
/// assert!((f.slope - 0.9).abs() < 1e-12 && (f.intercept + 0.1).abs() < 1e-12);
/// ```
#[must_use]
pub fn fit_line_weighted(x: &[f64], y: &[f64], w: &[f64]) -> Option<LineFit> {
    let n = x.len();
    if n < 2 || y.len() != n || w.len() != n {
        return None;
    }
    if x.iter().chain(y).any(|v| !v.is_finite()) || w.iter().any(|v| !(v.is_finite() && *v > 0.0)) {
        return None;
    }
    let sw: f64 = w.iter().sum();
    let xm = x.iter().zip(w).map(|(a, b)| a * b).sum::<f64>() / sw;
    let ym = y.iter().zip(w).map(|(a, b)| a * b).sum::<f64>() / sw;
    let sxx: f64 = x
        .iter()
        .zip(w)
        .map(|(v, wi)| wi * (v - xm) * (v - xm))
        .sum();
    if sxx <= 0.0 || !sxx.is_finite() {
        return None;
    }
    let sxy: f64 = x
        .iter()
        .zip(y)
        .zip(w)
        .map(|((a, b), wi)| wi * (a - xm) * (b - ym))
        .sum();
    let slope = sxy / sxx;
    let intercept = ym - slope * xm;
    let residuals: Vec<f64> = x
        .iter()
        .zip(y)
        .map(|(a, b)| b - (intercept + slope * a))
        .collect();
    let (su, iu) = if n > 2 {
        let s2 = residuals
            .iter()
            .zip(w)
            .map(|(r, wi)| wi * r * r)
            .sum::<f64>()
            / (n as f64 - 2.0);
        (
            Some((s2 / sxx).sqrt()),
            Some((s2 * (1.0 / sw + xm * xm / sxx)).sqrt()),
        )
    } else {
        (None, None)
    };
    let finite = [slope, intercept].iter().all(|v| v.is_finite())
        && [su, iu].iter().flatten().all(|v| v.is_finite());
    finite.then_some(LineFit {
        slope,
        intercept,
        slope_uncertainty_from_residuals: su,
        intercept_uncertainty_from_residuals: iu,
        slope_uncertainty_from_points: None,
        residuals,
        points: n,
    })
}

#[cfg(test)]
#[allow(clippy::unwrap_used)] // OK because a failing test should stop loudly
mod tests {
    use super::*;

    #[test]
    fn exact_line_has_zero_residual_uncertainty() {
        let f = fit_line(&[1.0, 2.0, 3.0], &[3.0, 5.0, 7.0], &[]).unwrap();
        assert!((f.slope - 2.0).abs() < 1e-15 && (f.intercept - 1.0).abs() < 1e-15);
        assert!(f.slope_uncertainty_from_residuals.unwrap() < 1e-15);
    }

    #[test]
    fn textbook_scatter() {
        // x = 0,1,2,3; y = 0,1,1,3 (chosen truth). By hand (derived here, the textbook OLS
        // formulas): Sxx = 5, Sxy = 4.5, b = 0.9, a = −0.1, residuals 0.1, 0.2, −0.7, 0.4,
        // s² = 0.70/2, u(b) = √(0.35/5) = 0.2646.
        let f = fit_line(&[0.0, 1.0, 2.0, 3.0], &[0.0, 1.0, 1.0, 3.0], &[]).unwrap();
        assert!((f.slope - 0.9).abs() < 1e-12);
        assert!((f.intercept - (-0.1)).abs() < 1e-12);
        let u = f.slope_uncertainty_from_residuals.unwrap();
        assert!((u - (0.35f64 / 5.0).sqrt()).abs() < 1e-12);
    }

    #[test]
    fn degenerate_inputs_give_none() {
        assert!(fit_line(&[1.0], &[1.0], &[]).is_none());
        assert!(fit_line(&[1.0, 1.0], &[1.0, 2.0], &[]).is_none());
        assert!(fit_line(&[1.0, f64::NAN], &[1.0, 2.0], &[]).is_none());
        assert!(fit_line(&[1.0, 2.0], &[1.0], &[]).is_none());
    }
}
