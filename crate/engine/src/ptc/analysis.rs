//! From stack statistics to a measured sensor: the photon transfer analysis.
//!
//! Input: one [`StackStats`] per stack (dark and flat, reduced by [`super::StackAccumulator`]).
//! Output: a [`Characterization`] whose `sensor` holds the SCENARIO.md keys that could be
//! measured and whose `fit` holds uncertainties, the points used and diagnostics. Frames never
//! reach this file; it does no I/O. Each step names its source in [`super::formulas`].

use std::fmt;

use serde::Serialize;

use super::fit::{fit_line, LineFit};
use super::formulas::{
    dark_current_e_per_s, dark_current_from_variance_e_per_s, dsnu_e, linearity_error_percent,
    prnu_percent, quantum_efficiency, read_noise_e, read_noise_upper_bound_e,
    saturation_capacity_e, QUANTIZATION_VARIANCE_DN2, SMALL_DARK_VARIANCE_DN2,
};
use super::stack::{FrameKind, StackStats};

/// Upper end of the gain fit, as a fraction of the saturation mean above dark.
///
/// # Source
/// EMVA 1288 Release 3.1 and 4.0 Linear: the fit runs from the dark level to 70 % of
/// saturation (REFERENCES.md §4 item 10, from memory).
pub const GAIN_FIT_MAX_FRACTION: f64 = 0.70;

/// The range of the linearity error, as fractions of the saturation mean above dark.
///
/// # Source
/// EMVA 1288 (REFERENCES.md §4 item 10, from memory): 5–95 % of saturation.
pub const LINEARITY_RANGE_FRACTION: (f64, f64) = (0.05, 0.95);

/// Where PRNU is measured, as a fraction of saturation.
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, PRNU at about 50 % of saturation (REFERENCES.md §4 item 11,
/// from memory).
pub const PRNU_FRACTION: f64 = 0.5;

/// Two exposure times closer than this (relative) are the same setting: camera interfaces
/// report times in µs or ns, so a relative 1e-6 separates any two distinct settings while
/// absorbing decimal rounding in a manifest (common practice, no source).
const SAME_EXPOSURE_RELATIVE: f64 = 1e-6;

/// A PRNU stack further than this from 50 % of saturation is flagged (common practice, no
/// source: 30–70 % keeps shot noise and nonlinearity both modest).
const PRNU_FRACTION_TOLERANCE: f64 = 0.2;

/// Why the frames cannot be analysed at all.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum AnalysisError {
    /// No dark stack: the dark level and dark variance are needed for every figure.
    NoDarkStack,
    /// Fewer than two flat stacks: the gain is a slope.
    TooFewFlatStacks {
        /// Flat stacks found.
        found: usize,
    },
    /// Stacks of different sizes (or regions of interest).
    SizeMismatch {
        /// Pixels per frame in the first stack.
        first: u64,
        /// Pixels per frame in a later stack.
        other: u64,
    },
    /// Fewer than two flat stacks are brighter than their dark.
    FlatsNotAboveDark {
        /// Flat stacks whose mean exceeds the dark mean.
        found: usize,
    },
    /// Fewer than two flat levels below 70 % of saturation.
    TooFewPointsInRange {
        /// Flat levels in the fit range.
        found: usize,
    },
    /// The variance–mean line could not be fitted (all means equal, or numbers out of range).
    GainFitFailed,
    /// The fitted gain is not positive.
    GainNotPositive {
        /// The fitted slope, DN/e⁻.
        slope: f64,
    },
}

impl fmt::Display for AnalysisError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            AnalysisError::NoDarkStack => write!(
                f,
                "no dark stack: take at least two dark frames (kind \"dark\") at one exposure time"
            ),
            AnalysisError::TooFewFlatStacks { found } => write!(
                f,
                "{found} flat stack(s): the gain is a slope, take flat pairs at two or more light \
                 levels"
            ),
            AnalysisError::SizeMismatch { first, other } => write!(
                f,
                "stacks differ in size: {first} pixels per frame in one, {other} in another"
            ),
            AnalysisError::FlatsNotAboveDark { found } => write!(
                f,
                "only {found} flat stack(s) are brighter than the dark frames: the gain needs \
                 two or more (check that flats and darks are not swapped)"
            ),
            AnalysisError::TooFewPointsInRange { found } => write!(
                f,
                "only {found} flat level(s) lie below {} % of saturation: the gain fit needs two \
                 or more; take levels at lower light",
                GAIN_FIT_MAX_FRACTION * 100.0
            ),
            AnalysisError::GainFitFailed => write!(
                f,
                "the variance against mean line cannot be fitted: the flat levels have the same \
                 mean"
            ),
            AnalysisError::GainNotPositive { slope } => write!(
                f,
                "the fitted system gain is {slope} DN/e⁻, not positive: the flat frames do not \
                 follow the photon transfer line (check that flats and darks are not swapped)"
            ),
        }
    }
}

impl std::error::Error for AnalysisError {}

/// The sensor keys of SCENARIO.md that the frames measured; absent keys were not measurable.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct MeasuredSensor {
    /// K, DN per electron.
    pub system_gain_dn_per_e: f64,
    /// Read noise, e⁻ rms (an upper bound when `fit.read_noise.upper_bound_only`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub read_noise_e: Option<f64>,
    /// Saturation capacity, e⁻ (present when the variance peaked inside the series).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub full_well_e: Option<f64>,
    /// Dark current, e⁻/s (dark stacks at two or more exposure times).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_current_e_per_s: Option<f64>,
    /// DSNU, e⁻ rms.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dsnu_e: Option<f64>,
    /// PRNU, percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prnu_percent: Option<f64>,
    /// Quantum efficiency (when photons per pixel were given).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantum_efficiency: Option<f64>,
    /// ADC bits, when every frame stated them (PGM maxval 2^b − 1, raw bits).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub adc_bits: Option<u8>,
    /// Dark offset at zero exposure, DN.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub black_level_dn: Option<f64>,
}

/// One stack as a point of the photon transfer curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PtcPoint {
    /// Dark or flat.
    pub kind: FrameKind,
    /// Exposure time, s.
    pub exposure_time_s: f64,
    /// The level label, if any.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub level: Option<String>,
    /// Photons per pixel, if given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub photons_per_pixel: Option<f64>,
    /// Frames in the stack.
    pub frames: u32,
    /// μ_y, DN.
    pub mean_dn: f64,
    /// σ_y², DN².
    pub temporal_variance_dn2: f64,
    /// s_y² with the temporal part removed, DN².
    pub spatial_variance_dn2: f64,
    /// μ_y − μ_y.dark, DN (flats only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mean_above_dark_dn: Option<f64>,
    /// σ_y² − σ²_y.dark, DN² (flats only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub variance_above_dark_dn2: Option<f64>,
    /// Standard uncertainty of σ_y² from sampling, σ_y²·√(2/(n·pairs)), DN².
    pub temporal_variance_uncertainty_dn2: f64,
    /// Whether the gain fit used this point.
    pub used_in_gain_fit: bool,
}

/// The gain fit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GainFit {
    /// K, DN/e⁻.
    pub value_dn_per_e: f64,
    /// Standard uncertainty of K (the larger of residual scatter and sampling), DN/e⁻.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub standard_uncertainty_dn_per_e: Option<f64>,
    /// Upper end of the fit range, mean above dark, DN.
    pub fit_max_mean_above_dark_dn: f64,
    /// The line σ_y² − σ²_y.dark = a + K(μ_y − μ_y.dark); a should be near 0.
    pub line: LineFit,
}

/// Read noise and how it was found.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReadNoiseFit {
    /// σ²_y.dark used (dark shot noise of the shortest dark removed when dark current is known),
    /// DN².
    pub dark_variance_dn2: f64,
    /// Exposure time of the dark stack used, s.
    pub dark_exposure_time_s: f64,
    /// σ_d, e⁻ (the bound when `upper_bound_only`).
    pub value_e: f64,
    /// Standard uncertainty of σ_d, e⁻ (absent for a bound).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub standard_uncertainty_e: Option<f64>,
    /// True when σ²_y.dark < 0.24 DN² and only σ_d < 0.40/K can be stated.
    pub upper_bound_only: bool,
}

/// Saturation as found from the variance peak.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SaturationFit {
    /// Whether the temporal variance peaked and then fell inside the series.
    pub found: bool,
    /// Mean above dark at the variance peak (or the highest level when not found), DN.
    pub mean_above_dark_dn: f64,
    /// Temporal variance at the peak, DN².
    pub peak_variance_dn2: f64,
    /// Saturation capacity μ_e.sat, e⁻, when found.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub capacity_e: Option<f64>,
    /// Its standard uncertainty from K's, e⁻.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub capacity_uncertainty_e: Option<f64>,
}

/// Dark current from the dark stacks.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DarkCurrentFit {
    /// μ_I from the slope of the dark mean, e⁻/s.
    pub value_e_per_s: f64,
    /// Its standard uncertainty, e⁻/s (absent with only two exposure times and no scatter).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub standard_uncertainty_e_per_s: Option<f64>,
    /// μ_I from the slope of the dark variance (second estimate), e⁻/s.
    pub from_variance_e_per_s: f64,
    /// The dark mean line μ_y.dark = a + b·t.
    pub mean_line: LineFit,
}

/// Non-uniformities.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NonUniformityFit {
    /// s²_y.dark (temporal part removed), DN².
    pub dark_spatial_variance_dn2: f64,
    /// Exposure time of the dark stack, s.
    pub dark_exposure_time_s: f64,
    /// s²_y.50 of the flat stack used for PRNU, DN².
    #[serde(skip_serializing_if = "Option::is_none")]
    pub flat_spatial_variance_dn2: Option<f64>,
    /// Mean above dark of that flat stack, DN.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub flat_mean_above_dark_dn: Option<f64>,
    /// Its fraction of saturation (of the highest level if saturation was not found).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub flat_fraction_of_saturation: Option<f64>,
    /// Standard uncertainty of DSNU, e⁻ (when resolved).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dsnu_uncertainty_e: Option<f64>,
    /// Standard uncertainty of PRNU, percent (when resolved).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prnu_uncertainty_percent: Option<f64>,
}

/// Linearity error.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LinearityFit {
    /// LE, percent.
    pub error_percent: f64,
    /// The independent variable: `photons_per_pixel` or `exposure_time_s`.
    pub abscissa: &'static str,
    /// Relative deviations δ_i of the points used, percent.
    pub deviations_percent: Vec<f64>,
    /// Points used (those between 5 % and 95 % of saturation).
    pub points_used: usize,
}

/// Responsivity R = ηK (when photons per pixel were given).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResponsivityFit {
    /// R, DN per photon.
    pub value_dn_per_photon: f64,
    /// Its standard uncertainty.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub standard_uncertainty_dn_per_photon: Option<f64>,
    /// η = R/K.
    pub quantum_efficiency: f64,
    /// η's standard uncertainty (R's and K's combined).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantum_efficiency_uncertainty: Option<f64>,
}

/// A condition the user should see, with a stable code.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Diagnostic {
    /// Stable identifier, snake case.
    pub code: &'static str,
    /// What it means, in lower case.
    pub message: String,
}

/// Everything about the fit behind the measured sensor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitReport {
    /// Pixels analysed per frame.
    pub pixels_per_frame: u64,
    /// The gain fit.
    pub system_gain: GainFit,
    /// Read noise.
    pub read_noise: ReadNoiseFit,
    /// Saturation.
    pub saturation: SaturationFit,
    /// Dark current, with dark stacks at two or more exposure times.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_current: Option<DarkCurrentFit>,
    /// DSNU and PRNU inputs.
    pub nonuniformity: NonUniformityFit,
    /// Linearity, when an independent variable exists.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub linearity: Option<LinearityFit>,
    /// Responsivity and quantum efficiency, when photons were given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub responsivity: Option<ResponsivityFit>,
    /// Every stack as a point, darks first, flats by mean.
    pub points: Vec<PtcPoint>,
    /// Conditions to show the user.
    pub diagnostics: Vec<Diagnostic>,
}

/// The result: the measured sensor section and its fit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Characterization {
    /// SCENARIO.md `sensor` keys that were measured.
    pub sensor: MeasuredSensor,
    /// Uncertainties, points and diagnostics.
    pub fit: FitReport,
}

/// Dark reference at one exposure time.
#[derive(Clone, Copy)]
struct DarkRef {
    mean_dn: f64,
    variance_dn2: f64,
    variance_uncertainty_dn2: f64,
    spatial_dn2: f64,
    spatial_uncertainty_dn2: f64,
    exposure_time_s: f64,
    matched: bool,
}

fn same_time(a: f64, b: f64) -> bool {
    (a - b).abs() <= SAME_EXPOSURE_RELATIVE * a.abs().max(b.abs())
}

/// Sampling standard uncertainty of a pair-difference variance: for Gaussian noise
/// Var(σ̂²) = 2σ⁴/n per pair, so u = σ²·√(2/(n·P)) (derived here from the variance of a
/// sample variance; common statistics, no single source).
fn variance_uncertainty(s: &StackStats) -> f64 {
    let n = s.pixels as f64 * f64::from(s.pairs.max(1));
    s.temporal_variance_dn2.abs() * (2.0 / n).sqrt()
}

/// Sampling standard uncertainty of a temporally corrected spatial variance: the raw sample
/// variance over n pixels carries s²·√(2/(n − 1)), the subtracted σ²/L carries u(σ²)/L
/// (derived here as for [`variance_uncertainty`]).
fn spatial_uncertainty(s: &StackStats) -> f64 {
    let n = (s.pixels as f64 - 1.0).max(1.0);
    let raw = s.spatial_variance_raw_dn2.abs() * (2.0 / n).sqrt();
    raw.hypot(variance_uncertainty(s) / f64::from(s.spec.frames.max(1)))
}

/// A non-uniformity counts as resolved when its spatial variance exceeds this many standard
/// uncertainties: below that it cannot be told from the sampling noise of the temporal
/// correction (3σ: common practice, no source).
const RESOLVED_SIGMAS: f64 = 3.0;

struct Darks<'a> {
    stacks: Vec<&'a StackStats>,
    mean_line: Option<LineFit>,
    variance_line: Option<LineFit>,
}

impl<'a> Darks<'a> {
    fn new(stacks: Vec<&'a StackStats>) -> Self {
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

    fn shortest_time(&self) -> f64 {
        self.stacks
            .iter()
            .map(|s| s.spec.exposure_time_s)
            .fold(f64::INFINITY, f64::min)
    }

    /// The dark at exposure `t`: the stacks taken at `t` averaged; else the dark lines
    /// evaluated at `t` (spatial part from the nearest stack); else the nearest stack.
    fn at(&self, t: f64) -> DarkRef {
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

/// The independent variable of the linearity fit: its name and how to read it from a stack.
type Abscissa = (&'static str, fn(&StackStats) -> f64);

fn diag(list: &mut Vec<Diagnostic>, code: &'static str, message: String) {
    list.push(Diagnostic { code, message });
}

/// Analyse the stacks of a photon transfer measurement.
///
/// # Errors
/// An [`AnalysisError`] when no figure can be derived: no dark stack, fewer than two flat
/// stacks (or fewer than two below 70 % of saturation), stacks of different sizes, or a gain
/// that does not come out positive. Anything less severe is a [`Diagnostic`].
#[allow(clippy::too_many_lines)] // one method, read top to bottom in the standard's order
pub fn analyse(stacks: &[StackStats]) -> Result<Characterization, AnalysisError> {
    let mut diagnostics = Vec::new();
    if let Some(first) = stacks.first() {
        if let Some(o) = stacks.iter().find(|s| s.pixels != first.pixels) {
            return Err(AnalysisError::SizeMismatch {
                first: first.pixels,
                other: o.pixels,
            });
        }
    }
    let darks = Darks::new(
        stacks
            .iter()
            .filter(|s| s.spec.kind == FrameKind::Dark)
            .collect(),
    );
    if darks.stacks.is_empty() {
        return Err(AnalysisError::NoDarkStack);
    }
    let flats: Vec<&StackStats> = stacks
        .iter()
        .filter(|s| s.spec.kind == FrameKind::Flat)
        .collect();
    if flats.len() < 2 {
        return Err(AnalysisError::TooFewFlatStacks { found: flats.len() });
    }

    // ---- photon transfer points: mean and variance above dark (EMVA item 10) ---------------
    struct Flat<'a> {
        s: &'a StackStats,
        dark: DarkRef,
        x: f64,
        y: f64,
        uy: f64,
    }
    let mut pts: Vec<Flat> = flats
        .iter()
        .map(|s| {
            let dark = darks.at(s.spec.exposure_time_s);
            let uy = variance_uncertainty(s).hypot(dark.variance_uncertainty_dn2);
            Flat {
                s,
                dark,
                x: s.mean_dn - dark.mean_dn,
                y: s.temporal_variance_dn2 - dark.variance_dn2,
                uy,
            }
        })
        .collect();
    pts.sort_by(|a, b| a.x.total_cmp(&b.x));
    let brighter = pts.iter().filter(|p| p.x > 0.0).count();
    if brighter < 2 {
        return Err(AnalysisError::FlatsNotAboveDark { found: brighter });
    }
    if brighter < pts.len() {
        diag(
            &mut diagnostics,
            "flat_not_above_dark",
            format!(
                "{} flat stack(s) are not brighter than the dark and are left out of the fits",
                pts.len() - brighter
            ),
        );
    }
    if let Some(p) = pts.iter().find(|p| !p.dark.matched) {
        diag(
            &mut diagnostics,
            "dark_exposure_mismatch",
            format!(
                "no dark stack at {} s (a flat's exposure time) and too few dark exposure times \
                 to interpolate: the dark at {} s was used",
                p.s.spec.exposure_time_s, p.dark.exposure_time_s
            ),
        );
    }

    // ---- saturation: where the variance peaks, then collapses (EMVA item 7) ----------------
    let peak = pts
        .iter()
        .enumerate()
        .max_by(|a, b| {
            a.1.s
                .temporal_variance_dn2
                .total_cmp(&b.1.s.temporal_variance_dn2)
        })
        .map_or(0, |(i, _)| i);
    // Found when a brighter level's variance falls clearly below the peak: by more than
    // three standard uncertainties of the peak variance (a dip within sampling noise between
    // two close levels is not a collapse; 3σ: common practice, no source).
    let found = pts.get(peak).is_some_and(|p| {
        let floor = p.s.temporal_variance_dn2 - 3.0 * variance_uncertainty(p.s);
        pts.iter()
            .skip(peak + 1)
            .any(|q| q.s.temporal_variance_dn2 < floor)
    });
    let (sat_x, sat_var) = pts
        .get(peak)
        .map_or((0.0, 0.0), |p| (p.x, p.s.temporal_variance_dn2));
    let reference_x = if found {
        sat_x
    } else {
        pts.last().map_or(0.0, |p| p.x)
    };
    if !found {
        diag(
            &mut diagnostics,
            "saturation_not_reached",
            "the temporal variance still rises at the brightest level: saturation (full well) \
             was not reached, so it is not reported and every level is used in the gain fit"
                .into(),
        );
    }

    // ---- gain: least squares over the linear range (EMVA item 10) --------------------------
    let fit_max = if found {
        GAIN_FIT_MAX_FRACTION * sat_x
    } else {
        f64::INFINITY
    };
    let in_range: Vec<usize> = pts
        .iter()
        .enumerate()
        .filter(|(i, p)| p.x > 0.0 && p.x <= fit_max && (!found || *i < peak))
        .map(|(i, _)| i)
        .collect();
    if in_range.len() < 2 {
        return Err(AnalysisError::TooFewPointsInRange {
            found: in_range.len(),
        });
    }
    let pick = |f: &dyn Fn(&Flat) -> f64| -> Vec<f64> {
        in_range.iter().filter_map(|i| pts.get(*i)).map(f).collect()
    };
    let (fx, fy, fu) = (pick(&|p| p.x), pick(&|p| p.y), pick(&|p| p.uy));
    let line = fit_line(&fx, &fy, &fu).ok_or(AnalysisError::GainFitFailed)?;
    let k = line.slope;
    if k <= 0.0 {
        return Err(AnalysisError::GainNotPositive { slope: k });
    }
    let u_k = line.slope_uncertainty();
    if in_range.len() == 2 {
        diag(
            &mut diagnostics,
            "gain_from_two_levels",
            "the gain comes from two levels only: its uncertainty is from sampling alone, the \
             line's straightness is not checked; take three or more levels"
                .into(),
        );
    }
    let fit_max_reported = if found {
        fit_max
    } else {
        pts.last().map_or(0.0, |p| p.x)
    };

    // ---- dark current from dark stacks at several exposure times (EMVA items 12, 13) -------
    let dark_current = match (&darks.mean_line, &darks.variance_line) {
        (Some(m), Some(v)) => {
            let value = dark_current_e_per_s(m.slope, k);
            let u = m
                .slope_uncertainty()
                .map(|us| (us / k).hypot(u_k.map_or(0.0, |uk| value * uk / k)));
            Some(DarkCurrentFit {
                value_e_per_s: value,
                standard_uncertainty_e_per_s: u,
                from_variance_e_per_s: dark_current_from_variance_e_per_s(v.slope, k),
                mean_line: m.clone(),
            })
        }
        _ => {
            diag(
                &mut diagnostics,
                "dark_current_not_measured",
                "all dark stacks have the same exposure time: dark current needs darks at two or \
                 more exposure times"
                    .into(),
            );
            None
        }
    };
    if let Some(d) = &dark_current {
        if d.value_e_per_s < 0.0 {
            diag(
                &mut diagnostics,
                "dark_current_negative",
                format!(
                    "the dark mean falls with exposure time ({} e⁻/s): dark current is below \
                     what these frames resolve and is not reported",
                    d.value_e_per_s
                ),
            );
        }
    }

    // ---- read noise from the dark variance, quantization removed (EMVA item 3) -------------
    let t0 = darks.shortest_time();
    let d0 = darks.at(t0);
    // The dark shot noise of the shortest dark, K·(dμ_dark/dt)·t, is removed when the dark mean
    // rises with time (item 13: σ²_y.dark = K²(σ²_d + μ_I t) + σ_q²).
    let dark_shot_dn2 = darks
        .mean_line
        .as_ref()
        .map_or(0.0, |m| (k * m.slope * t0).max(0.0));
    let v0 = d0.variance_dn2 - dark_shot_dn2;
    let read_noise = if v0 < SMALL_DARK_VARIANCE_DN2 {
        diag(
            &mut diagnostics,
            "read_noise_upper_bound",
            format!(
                "the dark temporal variance {v0:.4} DN² is below {SMALL_DARK_VARIANCE_DN2} DN²: \
                 quantization dominates and only the bound read noise < 0.40/K is reported \
                 (EMVA 1288)"
            ),
        );
        ReadNoiseFit {
            dark_variance_dn2: v0,
            dark_exposure_time_s: t0,
            value_e: read_noise_upper_bound_e(k),
            standard_uncertainty_e: None,
            upper_bound_only: true,
        }
    } else {
        let value = read_noise_e(v0, k);
        // ∂σ_d/∂v = 1/(2K√(v − 1/12)), ∂σ_d/∂K = −σ_d/K.
        let root = (v0 - QUANTIZATION_VARIANCE_DN2).sqrt();
        let from_v = d0.variance_uncertainty_dn2 / (2.0 * k * root);
        let u = from_v.hypot(u_k.map_or(0.0, |uk| value * uk / k));
        ReadNoiseFit {
            dark_variance_dn2: v0,
            dark_exposure_time_s: t0,
            value_e: value,
            standard_uncertainty_e: Some(u),
            upper_bound_only: false,
        }
    };

    // ---- saturation capacity --------------------------------------------------------------
    let capacity = (found && sat_x > 0.0).then(|| saturation_capacity_e(sat_x, k));
    let saturation = SaturationFit {
        found,
        mean_above_dark_dn: reference_x,
        peak_variance_dn2: sat_var,
        capacity_e: capacity,
        capacity_uncertainty_e: capacity.and_then(|c| u_k.map(|uk| c * uk / k)),
    };

    // ---- DSNU and PRNU from averaged frames, temporal part removed (EMVA item 11) ----------
    let mut nonuniformity_u: (Option<f64>, Option<f64>) = (None, None);
    let target = PRNU_FRACTION * reference_x;
    let prnu_point = pts
        .iter()
        .enumerate()
        .filter(|(i, p)| p.x > 0.0 && (!found || *i <= peak))
        .min_by(|a, b| (a.1.x - target).abs().total_cmp(&(b.1.x - target).abs()))
        .map(|(_, p)| p);
    let dsnu_dark = match prnu_point {
        Some(p)
            if p.dark.matched && same_time(p.dark.exposure_time_s, p.s.spec.exposure_time_s) =>
        {
            darks.at(p.s.spec.exposure_time_s)
        }
        _ => d0,
    };
    let dark_s2 = dsnu_dark.spatial_dn2;
    let dark_u2 = dsnu_dark.spatial_uncertainty_dn2;
    let dsnu = if dark_s2 > RESOLVED_SIGMAS * dark_u2 {
        let value = dsnu_e(dark_s2, k);
        // ∂DSNU/∂s² = 1/(2K√s²), ∂DSNU/∂K = −DSNU/K.
        nonuniformity_u.0 = Some(
            (dark_u2 / (2.0 * k * dark_s2.sqrt())).hypot(u_k.map_or(0.0, |uk| value * uk / k)),
        );
        Some(value)
    } else {
        diag(
            &mut diagnostics,
            "dsnu_not_resolved",
            format!(
                "the dark spatial variance with the temporal part removed is {dark_s2:.4} ± \
                 {dark_u2:.4} DN²: DSNU is below what these frames resolve (average more dark \
                 frames) and is not reported"
            ),
        );
        None
    };
    let mut nonuniformity = NonUniformityFit {
        dark_spatial_variance_dn2: dark_s2,
        dark_exposure_time_s: dsnu_dark.exposure_time_s,
        flat_spatial_variance_dn2: None,
        flat_mean_above_dark_dn: None,
        flat_fraction_of_saturation: None,
        dsnu_uncertainty_e: nonuniformity_u.0,
        prnu_uncertainty_percent: None,
    };
    let prnu = match prnu_point {
        None => {
            diag(
                &mut diagnostics,
                "prnu_not_measured",
                "no flat level lies above the dark level: PRNU is not measured".into(),
            );
            None
        }
        Some(p) => {
            let fraction = if reference_x > 0.0 {
                p.x / reference_x
            } else {
                0.0
            };
            nonuniformity.flat_spatial_variance_dn2 = Some(p.s.spatial_variance_dn2);
            nonuniformity.flat_mean_above_dark_dn = Some(p.x);
            nonuniformity.flat_fraction_of_saturation = Some(fraction);
            if (fraction - PRNU_FRACTION).abs() > PRNU_FRACTION_TOLERANCE {
                diag(
                    &mut diagnostics,
                    "prnu_level_far_from_half",
                    format!(
                        "PRNU was measured at {:.0} % of {}, the level closest to the 50 % the \
                         standard asks for",
                        fraction * 100.0,
                        if found {
                            "saturation"
                        } else {
                            "the brightest level"
                        }
                    ),
                );
            }
            let ds2 = p.dark.spatial_dn2;
            let excess = p.s.spatial_variance_dn2 - ds2;
            let u_excess = spatial_uncertainty(p.s).hypot(p.dark.spatial_uncertainty_dn2);
            if excess > RESOLVED_SIGMAS * u_excess {
                let value = prnu_percent(p.s.spatial_variance_dn2, ds2, p.x);
                // ∂PRNU/∂excess = 100/(2x√excess); the mean above dark is known far better.
                nonuniformity.prnu_uncertainty_percent =
                    Some(u_excess / (2.0 * p.x * excess.sqrt()) * 100.0);
                Some(value)
            } else {
                diag(
                    &mut diagnostics,
                    "prnu_not_resolved",
                    format!(
                        "the flat spatial variance exceeds the dark one by {excess:.4} ± \
                         {u_excess:.4} DN²: PRNU is below what these frames resolve and is not \
                         reported"
                    ),
                );
                None
            }
        }
    };
    diag(
        &mut diagnostics,
        "illumination_nonuniformity_included",
        "spatial variances are computed on the frames as taken: a non-uniform illumination \
         (vignetting, a gradient) counts as PRNU; use a region of interest to limit it"
            .into(),
    );

    // ---- linearity error over 5–95 % of saturation (EMVA, from memory) --------------------
    let all_photons = pts.iter().all(|p| p.s.spec.photons_per_pixel.is_some());
    let any_level = pts.iter().any(|p| p.s.spec.level.is_some());
    let abscissa: Option<Abscissa> = if all_photons {
        Some(("photons_per_pixel", |s| {
            s.spec.photons_per_pixel.unwrap_or(0.0)
        }))
    } else if !any_level {
        Some(("exposure_time_s", |s| s.spec.exposure_time_s))
    } else {
        None
    };
    let (lo, hi) = (
        LINEARITY_RANGE_FRACTION.0 * reference_x,
        LINEARITY_RANGE_FRACTION.1 * reference_x,
    );
    let linearity = abscissa.and_then(|(name, h)| {
        let used: Vec<&Flat> = pts
            .iter()
            .enumerate()
            .filter(|(i, p)| p.x >= lo && p.x <= hi && (!found || *i <= peak))
            .map(|(_, p)| p)
            .collect();
        let hx: Vec<f64> = used.iter().map(|p| h(p.s)).collect();
        let my: Vec<f64> = used.iter().map(|p| p.x).collect();
        if used.len() < 3 {
            return None;
        }
        let l = fit_line(&hx, &my, &[])?;
        let dev: Option<Vec<f64>> = hx
            .iter()
            .zip(&my)
            .map(|(xv, yv)| {
                let fitted = l.intercept + l.slope * xv;
                (fitted > 0.0).then(|| (yv - fitted) / fitted * 100.0)
            })
            .collect();
        let dev = dev?;
        Some(LinearityFit {
            error_percent: linearity_error_percent(&dev)?,
            abscissa: name,
            deviations_percent: dev,
            points_used: used.len(),
        })
    });
    if linearity.is_none() {
        diag(
            &mut diagnostics,
            "linearity_not_measured",
            "linearity needs three or more flat levels between 5 % and 95 % of saturation, with \
             photons per pixel given or levels set by exposure time alone"
                .into(),
        );
    }

    // ---- responsivity and quantum efficiency (EMVA item 10) --------------------------------
    let responsivity = {
        let mu_p: Option<Vec<f64>> = in_range
            .iter()
            .filter_map(|i| pts.get(*i))
            .map(|p| p.s.spec.photons_per_pixel)
            .collect();
        mu_p.and_then(|mu_p| fit_line(&mu_p, &fx, &[])).map(|l| {
            let r = l.slope;
            let qe = quantum_efficiency(r, k);
            let u_r = l.slope_uncertainty();
            let u_qe = u_r.map(|ur| qe * (ur / r).hypot(u_k.map_or(0.0, |uk| uk / k)));
            ResponsivityFit {
                value_dn_per_photon: r,
                standard_uncertainty_dn_per_photon: u_r,
                quantum_efficiency: qe,
                quantum_efficiency_uncertainty: u_qe,
            }
        })
    };
    if let Some(r) = &responsivity {
        let in_range = r.quantum_efficiency > 0.0 && r.quantum_efficiency <= 1.0;
        if !in_range {
            diag(
                &mut diagnostics,
                "quantum_efficiency_out_of_range",
                format!(
                    "the quantum efficiency comes out as {}, outside (0, 1]: check the photons \
                     per pixel; it is not reported",
                    r.quantum_efficiency
                ),
            );
        }
    }

    // ---- the sensor section -----------------------------------------------------------------
    let black = match &darks.mean_line {
        Some(m) => m.intercept,
        None => d0.mean_dn,
    };
    let bits = stacks.first().and_then(|s| s.significant_bits);
    let adc_bits = bits.filter(|b| stacks.iter().all(|s| s.significant_bits == Some(*b)));
    let sensor = MeasuredSensor {
        system_gain_dn_per_e: k,
        read_noise_e: Some(read_noise.value_e),
        full_well_e: capacity,
        dark_current_e_per_s: dark_current
            .as_ref()
            .map(|d| d.value_e_per_s)
            .filter(|v| *v >= 0.0),
        dsnu_e: dsnu,
        prnu_percent: prnu,
        quantum_efficiency: responsivity
            .as_ref()
            .map(|r| r.quantum_efficiency)
            .filter(|q| *q > 0.0 && *q <= 1.0),
        adc_bits,
        black_level_dn: Some(black).filter(|b| *b >= 0.0),
    };

    let mut points: Vec<PtcPoint> = darks.stacks.iter().map(|s| point(s, None, false)).collect();
    points.sort_by(|a, b| a.exposure_time_s.total_cmp(&b.exposure_time_s));
    points.extend(
        pts.iter()
            .enumerate()
            .map(|(i, p)| point(p.s, Some((p.x, p.y)), in_range.contains(&i))),
    );

    Ok(Characterization {
        sensor,
        fit: FitReport {
            pixels_per_frame: stacks.first().map_or(0, |s| s.pixels),
            system_gain: GainFit {
                value_dn_per_e: k,
                standard_uncertainty_dn_per_e: u_k,
                fit_max_mean_above_dark_dn: fit_max_reported,
                line,
            },
            read_noise,
            saturation,
            dark_current,
            nonuniformity,
            linearity,
            responsivity,
            points,
            diagnostics,
        },
    })
}

fn point(s: &StackStats, above: Option<(f64, f64)>, used: bool) -> PtcPoint {
    PtcPoint {
        kind: s.spec.kind,
        exposure_time_s: s.spec.exposure_time_s,
        level: s.spec.level.clone(),
        photons_per_pixel: s.spec.photons_per_pixel,
        frames: s.spec.frames,
        mean_dn: s.mean_dn,
        temporal_variance_dn2: s.temporal_variance_dn2,
        spatial_variance_dn2: s.spatial_variance_dn2,
        mean_above_dark_dn: above.map(|a| a.0),
        variance_above_dark_dn2: above.map(|a| a.1),
        temporal_variance_uncertainty_dn2: variance_uncertainty(s),
        used_in_gain_fit: used,
    }
}
