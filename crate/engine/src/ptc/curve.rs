//! Plot-ready series of a characterization: the photon transfer curve (temporal noise against
//! signal above dark, with the fitted model) and the variance-against-mean fit with residuals.
//!
//! Pure arithmetic on an existing [`Characterization`]; it fits nothing anew and knows nothing
//! of SVG, screens or pixels (the page scales these numbers to its drawing). Deserialize is for
//! the page, which gets these series from the frame worker as JSON.

use serde::{Deserialize, Serialize};

use super::{Characterization, FitReport, FrameKind};

/// One flat stack as a point of the plots.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvePoint {
    /// Mean above dark μ_y − μ_y.dark, DN.
    pub signal_dn: f64,
    /// Temporal noise σ_y (square root of the pair variance), DN.
    pub noise_dn: f64,
    /// Variance above dark σ_y² − σ²_y.dark, DN².
    pub variance_above_dark_dn2: f64,
    /// Standard uncertainty of the variance, DN².
    pub variance_uncertainty_dn2: f64,
    /// Whether the gain fit used this point.
    pub used_in_fit: bool,
    /// Residual of the gain fit at this point, DN² (points the fit used only).
    pub residual_dn2: Option<f64>,
}

/// The series for the two plots.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurveSeries {
    /// Flat stacks with a positive signal above dark, in the order of the fit report.
    pub points: Vec<CurvePoint>,
    /// Temporal noise of the dark stack used for read noise, DN (the curve's floor).
    pub dark_noise_dn: f64,
    /// The fitted model σ_y = √(σ²_y.dark + a + K·s) sampled at signals s spread evenly on a
    /// log scale across the points, as (signal DN, noise DN); samples where the model is not
    /// positive are left out.
    pub model: Vec<(f64, f64)>,
    /// The fitted line a + K·s at the lowest and highest signal the fit used, (DN, DN²).
    pub fit_line: Vec<(f64, f64)>,
}

/// The plot series of a characterization, with `samples` points on the model curve (at least 2).
///
/// # Formula
/// Model: σ_y(s) = √(σ²_y.dark + a + K·s), with s the mean above dark in DN, K the fitted slope
/// (DN/e⁻), a the fitted intercept (DN²) and σ²_y.dark the dark variance used for read noise.
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, section 4 (the linear model, σ_y² = K²σ_d² + σ_q² + K(μ_y −
/// μ_y.dark)); the curve is the same line the gain fit found, drawn on log-log axes.
///
/// ```
/// // Source: common practice, no source: a curve through the origin with K = 0.5 DN/e⁻ and a
/// // dark variance of 4 DN² has σ_y = √(4 + 0.5·s); at s = 1000 DN that is √504 DN.
/// let s = 1000.0_f64;
/// assert!(((4.0 + 0.5 * s).sqrt() - 504f64.sqrt()).abs() < 1e-12);
/// ```
/// Read from JSON (pairs as two-element lists) without serde's derived `Deserialize`, the page's
/// reading of the worker's answer: in the wasm a derived deserializer links the error text of a
/// float where none was expected, and with it core's float formatting (crate::decimal).
/// `None` where any field is missing or of the wrong type.
#[must_use]
pub fn curve_series_from_json(v: &serde_json::Value) -> Option<CurveSeries> {
    use serde_json::Value;
    let num = |v: &Value, k: &str| v.get(k).and_then(Value::as_f64);
    let points = v
        .get("points")?
        .as_array()?
        .iter()
        .map(|p| {
            Some(CurvePoint {
                signal_dn: num(p, "signal_dn")?,
                noise_dn: num(p, "noise_dn")?,
                variance_above_dark_dn2: num(p, "variance_above_dark_dn2")?,
                variance_uncertainty_dn2: num(p, "variance_uncertainty_dn2")?,
                used_in_fit: p.get("used_in_fit")?.as_bool()?,
                residual_dn2: match p.get("residual_dn2") {
                    None | Some(Value::Null) => None,
                    Some(r) => Some(r.as_f64()?),
                },
            })
        })
        .collect::<Option<Vec<_>>>()?;
    Some(CurveSeries {
        points,
        dark_noise_dn: num(v, "dark_noise_dn")?,
        model: pairs_from_json(v.get("model")?)?,
        fit_line: pairs_from_json(v.get("fit_line")?)?,
    })
}

/// A list of [x, y] number pairs, as serde writes `Vec<(f64, f64)>`.
pub(crate) fn pairs_from_json(v: &serde_json::Value) -> Option<Vec<(f64, f64)>> {
    v.as_array()?
        .iter()
        .map(|p| match p.as_array()?.as_slice() {
            [x, y] => Some((x.as_f64()?, y.as_f64()?)),
            _ => None,
        })
        .collect()
}

#[must_use]
pub fn curve_series(c: &Characterization, samples: usize) -> CurveSeries {
    curve_series_of_fit(&c.fit, samples)
}

/// As [`curve_series`], for one fit (a colour channel's).
#[must_use]
pub fn curve_series_of_fit(fit: &FitReport, samples: usize) -> CurveSeries {
    let line = &fit.system_gain.line;
    let mut residuals = line.residuals.iter();
    let mut points = Vec::new();
    for p in fit.points.iter().filter(|p| p.kind == FrameKind::Flat) {
        let (Some(s), Some(v)) = (p.mean_above_dark_dn, p.variance_above_dark_dn2) else {
            continue;
        };
        // The fit's residuals come in the order of the points it used.
        let residual = if p.used_in_gain_fit {
            residuals.next().copied()
        } else {
            None
        };
        if s > 0.0 && p.temporal_variance_dn2 > 0.0 {
            points.push(CurvePoint {
                signal_dn: s,
                noise_dn: p.temporal_variance_dn2.sqrt(),
                variance_above_dark_dn2: v,
                variance_uncertainty_dn2: p.temporal_variance_uncertainty_dn2,
                used_in_fit: p.used_in_gain_fit,
                residual_dn2: residual,
            });
        }
    }
    let dark_var = fit.read_noise.dark_variance_dn2;
    let lo = points
        .iter()
        .map(|p| p.signal_dn)
        .fold(f64::INFINITY, f64::min);
    let hi = points.iter().map(|p| p.signal_dn).fold(0.0, f64::max);
    let mut model = Vec::new();
    if lo.is_finite() && hi > lo {
        let n = samples.max(2);
        let (l0, l1) = (lo.ln(), hi.ln());
        for i in 0..n {
            #[allow(clippy::cast_precision_loss)] // sample counts are small
            let s = (l0 + (l1 - l0) * i as f64 / (n - 1) as f64).exp();
            let var = dark_var + line.intercept + line.slope * s;
            if var > 0.0 {
                model.push((s, var.sqrt()));
            }
        }
    }
    let used = points.iter().filter(|p| p.used_in_fit).map(|p| p.signal_dn);
    let (ulo, uhi) = used.fold((f64::INFINITY, 0.0_f64), |(a, b), s| (a.min(s), b.max(s)));
    let fit_line = if ulo.is_finite() {
        vec![
            (ulo, line.intercept + line.slope * ulo),
            (uhi, line.intercept + line.slope * uhi),
        ]
    } else {
        Vec::new()
    };
    CurveSeries {
        points,
        dark_noise_dn: dark_var.max(0.0).sqrt(),
        model,
        fit_line,
    }
}
