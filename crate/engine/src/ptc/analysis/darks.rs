//! The dark reference at a flat's exposure time (averaged, or from lines fitted over the dark
//! stacks' exposure times), and the sampling uncertainties of temporal and spatial variances.

use super::super::fit::{fit_line, LineFit};
use super::super::stack::StackStats;
use super::same_time;

/// Dark reference at one exposure time.
#[derive(Clone, Copy)]
pub(super) struct DarkRef {
    pub(super) mean_dn: f64,
    pub(super) variance_dn2: f64,
    pub(super) variance_uncertainty_dn2: f64,
    pub(super) spatial_dn2: f64,
    pub(super) spatial_uncertainty_dn2: f64,
    pub(super) exposure_time_s: f64,
    pub(super) matched: bool,
}

/// Sampling standard uncertainty of a pair-difference variance: for Gaussian noise
/// Var(σ̂²) = 2σ⁴/n per pair, so u = σ²·√(2/(n·P)) (derived here from the variance of a
/// sample variance; common statistics, no single source).
pub(super) fn variance_uncertainty(s: &StackStats) -> f64 {
    let n = s.pixels as f64 * f64::from(s.pairs.max(1));
    s.temporal_variance_dn2.abs() * (2.0 / n).sqrt()
}

/// Sampling standard uncertainty of a temporally corrected spatial variance: the raw sample
/// variance over n pixels carries s²·√(2/(n − 1)), the subtracted σ²/L carries u(σ²)/L
/// (derived here as for [`variance_uncertainty`]).
pub(super) fn spatial_uncertainty(s: &StackStats) -> f64 {
    let n = (s.pixels as f64 - 1.0).max(1.0);
    let raw = s.spatial_variance_raw_dn2.abs() * (2.0 / n).sqrt();
    raw.hypot(variance_uncertainty(s) / f64::from(s.spec.frames.max(1)))
}

/// A non-uniformity counts as resolved when its spatial variance exceeds this many standard
/// uncertainties: below that it cannot be told from the sampling noise of the temporal
/// correction (3σ: common practice, no source).
pub(super) const RESOLVED_SIGMAS: f64 = 3.0;

pub(super) struct Darks<'a> {
    pub(super) stacks: Vec<&'a StackStats>,
    pub(super) mean_line: Option<LineFit>,
    pub(super) variance_line: Option<LineFit>,
}

impl<'a> Darks<'a> {
    pub(super) fn new(stacks: Vec<&'a StackStats>) -> Self {
        let t: Vec<f64> = stacks.iter().map(|s| s.spec.exposure_time_s).collect();
        let distinct = t.iter().any(|a| t.iter().any(|b| !same_time(*a, *b)));
        let (mean_line, variance_line) = if distinct {
            let m: Vec<f64> = stacks.iter().map(|s| s.mean_dn).collect();
            let v: Vec<f64> = stacks.iter().map(|s| s.temporal_variance_dn2).collect();
            let uv: Vec<f64> = stacks.iter().map(|s| variance_uncertainty(s)).collect();
            (fit_line(&t, &m, &[]), fit_line(&t, &v, &uv))
        } else {
            (None, None)
        };
        Darks {
            stacks,
            mean_line,
            variance_line,
        }
    }

    pub(super) fn shortest_time(&self) -> f64 {
        self.stacks
            .iter()
            .map(|s| s.spec.exposure_time_s)
            .fold(f64::INFINITY, f64::min)
    }

    /// The dark at exposure `t`: the stacks taken at `t` averaged; else the dark lines
    /// evaluated at `t` (spatial part from the nearest stack); else the nearest stack.
    pub(super) fn at(&self, t: f64) -> DarkRef {
        let same: Vec<&&StackStats> = self
            .stacks
            .iter()
            .filter(|s| same_time(s.spec.exposure_time_s, t))
            .collect();
        if !same.is_empty() {
            let k = same.len() as f64;
            let u2: f64 = same.iter().map(|s| variance_uncertainty(s).powi(2)).sum();
            return DarkRef {
                mean_dn: same.iter().map(|s| s.mean_dn).sum::<f64>() / k,
                variance_dn2: same.iter().map(|s| s.temporal_variance_dn2).sum::<f64>() / k,
                variance_uncertainty_dn2: u2.sqrt() / k,
                spatial_dn2: same.iter().map(|s| s.spatial_variance_dn2).sum::<f64>() / k,
                spatial_uncertainty_dn2: same
                    .iter()
                    .map(|s| spatial_uncertainty(s).powi(2))
                    .sum::<f64>()
                    .sqrt()
                    / k,
                exposure_time_s: t,
                matched: true,
            };
        }
        let nearest = self.stacks.iter().copied().min_by(|a, b| {
            (a.spec.exposure_time_s - t)
                .abs()
                .total_cmp(&(b.spec.exposure_time_s - t).abs())
        });
        let Some(nearest) = nearest else {
            // Unreachable: the analysis checks for a dark stack first.
            return DarkRef {
                mean_dn: 0.0,
                variance_dn2: 0.0,
                variance_uncertainty_dn2: 0.0,
                spatial_dn2: 0.0,
                spatial_uncertainty_dn2: 0.0,
                exposure_time_s: t,
                matched: false,
            };
        };
        match (&self.mean_line, &self.variance_line) {
            (Some(m), Some(v)) => DarkRef {
                mean_dn: m.intercept + m.slope * t,
                variance_dn2: v.intercept + v.slope * t,
                variance_uncertainty_dn2: variance_uncertainty(nearest),
                spatial_dn2: nearest.spatial_variance_dn2,
                spatial_uncertainty_dn2: spatial_uncertainty(nearest),
                exposure_time_s: t,
                matched: true,
            },
            _ => DarkRef {
                mean_dn: nearest.mean_dn,
                variance_dn2: nearest.temporal_variance_dn2,
                variance_uncertainty_dn2: variance_uncertainty(nearest),
                spatial_dn2: nearest.spatial_variance_dn2,
                spatial_uncertainty_dn2: spatial_uncertainty(nearest),
                exposure_time_s: nearest.spec.exposure_time_s,
                matched: false,
            },
        }
    }
}
