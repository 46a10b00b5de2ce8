//! From stack statistics to a measured sensor: the photon transfer analysis.
//!
//! Input: one [`StackStats`] per stack (dark and flat, reduced by [`super::StackAccumulator`]).
//! Output: a [`Characterization`] whose `sensor` holds the SCENARIO.md keys that could be
//! measured and whose `fit` holds uncertainties, the points used and diagnostics. Frames never
//! reach this file; it does no I/O. Each step names its source in [`super::formulas`].

use std::fmt;

use serde::Serialize;

use super::cfa::{Cfa, CHANNEL_NAMES};
use super::depth::{sample_depth, SampleDepth};
use super::figures::{figures, Figure};
use super::fit::{fit_line, fit_line_weighted, LineFit};
use super::formulas::{
    dark_current_e_per_s, dark_current_from_variance_e_per_s, dsnu_e, linearity_error_percent,
    prnu_percent, quantum_efficiency, read_noise_e, read_noise_upper_bound_e,
    saturation_capacity_e, QUANTIZATION_VARIANCE_DN2, SMALL_DARK_VARIANCE_DN2,
};
use super::spatial::{HighNoise, Histogram, SpatialSummary, VarianceSplit};
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
    /// A stated bit depth does not fit the samples.
    DepthContradiction {
        /// The key or chunk that stated it.
        key: &'static str,
        /// The bits stated.
        bits: u8,
        /// What the samples show.
        found: String,
    },
    /// One colour channel could not be analysed.
    Channel {
        /// R, Gr, Gb or B.
        name: &'static str,
        /// Why.
        error: Box<AnalysisError>,
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
            AnalysisError::DepthContradiction { key, bits, found } => write!(
                f,
                "{key} says {bits}-bit samples, but {found}: correct or remove the statement"
            ),
            AnalysisError::Channel { name, error } => write!(f, "channel {name}: {error}"),
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
    /// ADC bits: the camera's native bits per sample, as stated (manifest, PNG sBIT, PGM maxval
    /// 2^b − 1, raw bits) or found in the samples (MSB-aligned data).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub adc_bits: Option<u8>,
    /// Dark offset at zero exposure, in the camera's native DN.
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
    /// How the line was fitted: least squares of the relative deviations (weights 1/μ²).
    pub fit: &'static str,
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

/// DSNU and PRNU split into row, column and pixel parts, and the defect pixels, from the
/// averaged dark and flat images (EMVA 1288 Release 4.0 Linear, spatial nonuniformity and defect
/// pixels; from memory, REFERENCES.md §4 item 11).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpatialFit {
    /// Frames averaged in the dark image (L: the temporal residual is σ²/L).
    pub dark_frames: u32,
    /// Exposure time of the dark image, s.
    pub dark_exposure_time_s: f64,
    /// Frames averaged in the flat image used for PRNU.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub flat_frames: Option<u32>,
    /// The dark image's variance split, temporal residual removed, DN².
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_split_dn2: Option<VarianceSplit>,
    /// The flat image's variance split, temporal residual removed, DN² (includes the dark's).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub flat_split_dn2: Option<VarianceSplit>,
    /// DSNU's row part, √s²_row.dark / K, e⁻ (a negative variance estimate shows as 0).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dsnu_row_e: Option<f64>,
    /// DSNU's column part, e⁻.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dsnu_column_e: Option<f64>,
    /// DSNU's pixel part, e⁻.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dsnu_pixel_e: Option<f64>,
    /// PRNU's row part, √(s²_row.50 − s²_row.dark) / (μ_y.50 − μ_y.dark), percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prnu_row_percent: Option<f64>,
    /// PRNU's column part, percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prnu_column_percent: Option<f64>,
    /// PRNU's pixel part, percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prnu_pixel_percent: Option<f64>,
    /// Pixels of the averaged dark image more than [`super::DEFECT_SIGMAS`] standard deviations above
    /// its mean.
    pub hot_pixels: u64,
    /// That threshold, DN above the dark mean.
    pub hot_threshold_dn: f64,
    /// Pixels of the averaged flat image more than [`super::DEFECT_SIGMAS`] standard deviations below
    /// its mean.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_pixels: Option<u64>,
    /// That threshold, percent of the mean above dark.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_threshold_percent: Option<f64>,
    /// Dark pixels whose temporal variance is above [`super::HIGH_NOISE_FACTOR`] times the
    /// channel's (with 8 or more dark frames).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub high_noise_pixels: Option<u64>,
    /// Histogram of the averaged dark image's deviations from its mean, DN (plot with a
    /// logarithmic count axis).
    pub dark_histogram_dn: Histogram,
    /// Histogram of the averaged flat image's deviations from its mean, percent of the mean
    /// above dark.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub flat_histogram_percent: Option<Histogram>,
    /// Histogram of each dark pixel's temporal variance over the channel's.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub high_noise_histogram: Option<Histogram>,
    /// The averaged dark image's profiles and spectrograms, native DN (for plots and CSV).
    #[serde(skip)]
    pub dark_image: SpatialSummary,
    /// The same for the flat image used for PRNU.
    #[serde(skip)]
    pub flat_image: Option<SpatialSummary>,
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
    /// Row/column/pixel parts of DSNU and PRNU, and defect pixels (absent for the pooled green
    /// of a colour sensor, whose pixels are not a grid).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub spatial: Option<SpatialFit>,
    /// Conditions to show the user.
    pub diagnostics: Vec<Diagnostic>,
}

/// One colour channel of a Bayer sensor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChannelResult {
    /// R, Gr, Gb or B.
    pub name: &'static str,
    /// The channel's measured sensor keys (the same keys as the top-level `sensor`).
    pub sensor: MeasuredSensor,
    /// The channel's fit.
    pub fit: FitReport,
    /// Its mean above dark over the green channels' (pooled), at the green PRNU level.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub relative_response: Option<f64>,
    /// The channel's figures as one list.
    pub figures: Vec<Figure>,
}

/// What the colour channels say together.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColourSummary {
    /// What the top-level `sensor` and `fit` hold.
    pub top_level: &'static str,
    /// (μ_Gr − μ_Gb) / mean of the two, above dark, at the green PRNU level, percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub green_mismatch_percent: Option<f64>,
    /// Its standard uncertainty from the two channels' spatial scatter, percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub green_mismatch_uncertainty_percent: Option<f64>,
}

/// The result: the measured sensor section and its fit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Characterization {
    /// The colour filter layout analysed.
    pub cfa: Cfa,
    /// The sample depth: every DN figure is in the camera's native DN.
    pub sample_depth: SampleDepth,
    /// SCENARIO.md `sensor` keys that were measured (for a Bayer sensor: its green pixels).
    pub sensor: MeasuredSensor,
    /// Uncertainties, points and diagnostics.
    pub fit: FitReport,
    /// For a Bayer sensor, each channel (R, Gr, Gb, B).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub channels: Vec<ChannelResult>,
    /// For a Bayer sensor, the channels together.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub colour: Option<ColourSummary>,
    /// Every measured figure as one list (name, unit, value, uncertainty, clause), for tables.
    pub figures: Vec<Figure>,
}

/// What the analysis needs besides the stacks.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct AnalysisOptions {
    /// The colour filter layout.
    pub cfa: Cfa,
    /// The camera's bits per sample as the manifest states them.
    pub significant_bits: Option<u8>,
}

/// What one analysis of one set of pixels gives.
struct Single {
    sensor: MeasuredSensor,
    fit: FitReport,
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
pub fn analyse(stacks: &[StackStats]) -> Result<Characterization, AnalysisError> {
    analyse_with(stacks, AnalysisOptions::default())
}

/// Analyse the stacks of a photon transfer measurement of a sensor with the colour filter
/// layout and the bit depth stated in `options`.
///
/// First the sample step is found ([`super::depth::sample_depth`]) and every statistic is
/// converted to the camera's native DN. A mono sensor is then analysed as one set of pixels; a
/// Bayer sensor channel by channel (R, Gr, Gb, B), and its green pixels pooled for the
/// top-level `sensor` and `fit`.
///
/// # Errors
/// As [`analyse`]; also a stated depth that contradicts the samples, and a channel that cannot
/// be analysed (named).
pub fn analyse_with(
    stacks: &[StackStats],
    options: AnalysisOptions,
) -> Result<Characterization, AnalysisError> {
    let depth = sample_depth(stacks, options.significant_bits).map_err(|c| {
        AnalysisError::DepthContradiction {
            key: c.key,
            bits: c.stated_bits,
            found: c.found,
        }
    })?;
    let step = f64::from(depth.step_dn);
    let native: Vec<StackStats> = stacks.iter().map(|s| s.scaled(step)).collect();
    let mut common = Vec::new();
    if depth.step_dn > 1 {
        diag(
            &mut common,
            "native_depth_from_samples",
            format!(
                "every sample is a multiple of {}: {}-bit data at the top of {}-bit samples; \
                 every DN figure is in the camera's own DN (container DN / {})",
                depth.step_dn,
                depth.native_bits.unwrap_or(0),
                depth.container_bits,
                depth.step_dn
            ),
        );
    }
    if let Some(b) = depth.likely_lsb_bits {
        diag(
            &mut common,
            "likely_lsb_aligned",
            format!(
                "no sample exceeds {} = 2^{b} − 1: perhaps {b}-bit data at the bottom of \
                 {}-bit samples (the data alone cannot tell it from a series that never reached \
                 the top); state \"significant_bits\" in the manifest to report adc_bits",
                (1u32 << b) - 1,
                depth.container_bits
            ),
        );
    }
    let Some(phases) = options.cfa.phases() else {
        let mut one = analyse_one(&native)?;
        one.sensor.adc_bits = depth.native_bits;
        if let Some(d) = cfa_pattern_suspected(&native, &one) {
            common.push(d);
        }
        one.fit.diagnostics.splice(0..0, common);
        let figures = figures(&one.sensor, &one.fit, None);
        return Ok(Characterization {
            cfa: options.cfa,
            sample_depth: depth,
            sensor: one.sensor,
            fit: one.fit,
            channels: Vec::new(),
            colour: None,
            figures,
        });
    };
    let pick = |g: usize| -> Vec<StackStats> { native.iter().filter_map(|s| s.group(g)).collect() };
    // The greens sit on a diagonal: phases 0 and 3 (group 4) or 1 and 2 (group 5).
    let green_group = if phases.get(1).is_some_and(|p| *p == 0 || *p == 3) {
        4
    } else {
        5
    };
    let mut green = analyse_one(&pick(green_group))?;
    green.sensor.adc_bits = depth.native_bits;
    green.fit.spatial = None;
    let mut channels = Vec::new();
    for (name, phase) in CHANNEL_NAMES.iter().zip(phases) {
        let mut one = analyse_one(&pick(phase)).map_err(|e| AnalysisError::Channel {
            name,
            error: Box::new(e),
        })?;
        one.sensor.adc_bits = depth.native_bits;
        let figures = figures(&one.sensor, &one.fit, None);
        channels.push(ChannelResult {
            name,
            sensor: one.sensor,
            fit: one.fit,
            relative_response: None,
            figures,
        });
    }
    let colour = colour_summary(&native, &green, &mut channels, phases);
    diag(
        &mut common,
        "sensor_is_green",
        format!(
            "a {} colour sensor: the top-level sensor and fit are its green pixels (Gr and Gb \
             pooled); each channel's figures are under \"channels\"",
            options.cfa.as_str()
        ),
    );
    green.fit.diagnostics.splice(0..0, common);
    let figures = figures(&green.sensor, &green.fit, Some((&channels, &colour)));
    Ok(Characterization {
        cfa: options.cfa,
        sample_depth: depth,
        sensor: green.sensor,
        fit: green.fit,
        channels,
        colour: Some(colour),
        figures,
    })
}

/// The flat level the green channels' PRNU used: its mean above dark per phase.
fn level_means(native: &[StackStats], fit: &FitReport) -> Option<([f64; 4], [f64; 4], u64)> {
    let x = fit.nonuniformity.flat_mean_above_dark_dn?;
    let t_dark = fit.nonuniformity.dark_exposure_time_s;
    // The flat stack whose whole-group mean above its dark matches; the phases' means above the
    // same dark stack.
    let dark = native
        .iter()
        .find(|s| s.spec.kind == FrameKind::Dark && same_time(s.spec.exposure_time_s, t_dark))?;
    let flat = native
        .iter()
        .filter(|s| s.spec.kind == FrameKind::Flat)
        .min_by(|a, b| {
            let da = (a.mean_dn - dark.mean_dn - x).abs();
            let db = (b.mean_dn - dark.mean_dn - x).abs();
            da.total_cmp(&db)
        })?;
    let mut above = [0.0; 4];
    let mut spread = [0.0; 4];
    for p in 0..4 {
        let (Some(f), Some(d)) = (flat.groups.get(p), dark.groups.get(p)) else {
            return None;
        };
        if let (Some(a), Some(s)) = (above.get_mut(p), spread.get_mut(p)) {
            *a = f.mean_dn - d.mean_dn;
            *s = f.spatial_variance_raw_dn2.max(0.0);
        }
    }
    Some((above, spread, flat.groups.first().map_or(0, |g| g.pixels)))
}

fn colour_summary(
    native: &[StackStats],
    green: &Single,
    channels: &mut [ChannelResult],
    phases: [usize; 4],
) -> ColourSummary {
    let mut summary = ColourSummary {
        top_level: "the green pixels (Gr and Gb pooled): their means and temporal variances are \
                    the averages of the two green channels",
        green_mismatch_percent: None,
        green_mismatch_uncertainty_percent: None,
    };
    let Some((above, spread, n)) = level_means(native, &green.fit) else {
        return summary;
    };
    let [_, gr, gb, _] = phases;
    let (Some(&a), Some(&b)) = (above.get(gr), above.get(gb)) else {
        return summary;
    };
    let g = (a + b) / 2.0;
    if g > 0.0 {
        for (c, p) in channels.iter_mut().zip(phases) {
            c.relative_response = above.get(p).map(|v| v / g);
        }
        summary.green_mismatch_percent = Some((a - b) / g * 100.0);
        // u(mean) = s/√n per channel (spatial scatter of the averaged image), combined.
        let (Some(&sa), Some(&sb)) = (spread.get(gr), spread.get(gb)) else {
            return summary;
        };
        let n = (n.max(1)) as f64;
        summary.green_mismatch_uncertainty_percent = Some(((sa + sb) / n).sqrt() / g * 100.0);
    }
    summary
}

/// A 2×2-periodic pattern in a mono analysis's flat that stands well above the rest of its
/// PRNU: probably a colour sensor analysed as mono.
fn cfa_pattern_suspected(native: &[StackStats], one: &Single) -> Option<Diagnostic> {
    let (above, _, _) = level_means(native, &one.fit)?;
    let mean = above.iter().sum::<f64>() / 4.0;
    if mean <= 0.0 {
        return None;
    }
    let periodic_var = above.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / 4.0;
    let nu = &one.fit.nonuniformity;
    let excess = nu.flat_spatial_variance_dn2? - nu.dark_spatial_variance_dn2;
    let rest = (excess - periodic_var).max(0.0).sqrt() / mean;
    let periodic = periodic_var.sqrt() / mean;
    (periodic > CFA_PATTERN_RATIO * rest && periodic > CFA_PATTERN_MIN_FRACTION).then(|| {
        Diagnostic {
            code: "cfa_pattern_suspected",
            message: format!(
                "the flat's 2×2 cells repeat a pattern of {:.1} % rms (the four positions at \
                 {:.3}, {:.3}, {:.3}, {:.3} of their mean), well above the remaining PRNU of \
                 {:.2} %: a colour sensor? State \"cfa\" (RGGB, BGGR, GRBG or GBRG) in the \
                 manifest to analyse each channel",
                periodic * 100.0,
                above[0] / mean,
                above[1] / mean,
                above[2] / mean,
                above[3] / mean,
                rest * 100.0
            ),
        }
    })
}

/// A 2×2 pattern counts as "well above" the rest of the PRNU at three times its rms (common
/// practice, no source).
const CFA_PATTERN_RATIO: f64 = 3.0;

/// … and only when it is above 0.5 % of the signal, so that a sensor with almost no PRNU is not
/// flagged for a pattern nobody would see (common practice, no source).
const CFA_PATTERN_MIN_FRACTION: f64 = 0.005;

#[allow(clippy::too_many_lines)] // one method, read top to bottom in the standard's order
fn analyse_one(stacks: &[StackStats]) -> Result<Single, AnalysisError> {
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
        // Weights 1/μ²: the line that minimises the squared relative deviations, the
        // quantity LE is made of (see LINEARITY_FIT).
        let w: Vec<f64> = my.iter().map(|m| 1.0 / (m * m)).collect();
        let l = fit_line_weighted(&hx, &my, &w)?;
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
            fit: LINEARITY_FIT,
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
        adc_bits: None,
        black_level_dn: Some(black).filter(|b| *b >= 0.0),
    };

    let mut points: Vec<PtcPoint> = darks.stacks.iter().map(|s| point(s, None, false)).collect();
    points.sort_by(|a, b| a.exposure_time_s.total_cmp(&b.exposure_time_s));
    points.extend(
        pts.iter()
            .enumerate()
            .map(|(i, p)| point(p.s, Some((p.x, p.y)), in_range.contains(&i))),
    );

    // ---- row/column/pixel parts and defect pixels (EMVA 4.0 Linear, from memory) -----------
    let dark_stack = darks
        .stacks
        .iter()
        .copied()
        .find(|s| same_time(s.spec.exposure_time_s, dsnu_dark.exposure_time_s))
        .or_else(|| darks.stacks.first().copied());
    let spatial = dark_stack.and_then(|d| {
        spatial_fit(
            d,
            prnu_point.map(|p| p.s),
            prnu_point.map_or(0.0, |p| p.x),
            k,
            (dsnu.is_some(), prnu.is_some()),
            &mut diagnostics,
        )
    });

    Ok(Single {
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
            spatial,
            diagnostics,
        },
    })
}

/// How the linearity line is fitted.
///
/// # Source
/// EMVA 1288 Release 3.1 and 4.0 Linear, linearity: a straight line through the mean above
/// dark against the irradiation (here photons per pixel, else exposure time) over 5–95 % of
/// saturation, the relative deviations δ_i from it, LE = (max δ − min δ)/2 (REFERENCES.md §4
/// item 10). The standard's text was not available to re-read: the weighting is from memory
/// (a fit that minimises the relative deviations, i.e. weights 1/μ_i², which the LE then
/// measures); an unweighted fit lets the brightest points dominate and inflates δ at the dim
/// end.
pub const LINEARITY_FIT: &str =
    "weighted least squares, weights 1/μ² (the squared relative deviations minimised)";

/// The spatial report from the dark stack and the flat stack used for PRNU.
fn spatial_fit(
    dark: &StackStats,
    flat: Option<&StackStats>,
    flat_above_dark_dn: f64,
    k: f64,
    (dsnu_resolved, prnu_resolved): (bool, bool),
    diagnostics: &mut Vec<Diagnostic>,
) -> Option<SpatialFit> {
    let d = dark.spatial.as_ref()?;
    let f = flat.and_then(|s| s.spatial.as_ref());
    let root = |v: f64| v.max(0.0).sqrt();
    let prnu_part = |fp: f64, dp: f64| {
        (flat_above_dark_dn > 0.0).then(|| root(fp - dp) / flat_above_dark_dn * 100.0)
    };
    let fs = f.and_then(|f| f.split);
    let ds = d.split;
    // The parts are reported only where the whole is resolved: a part of a DSNU or PRNU below
    // what the frames resolve would be sampling noise given a name.
    let both = ds.zip(fs).filter(|_| prnu_resolved);
    let dsr = ds.filter(|_| dsnu_resolved);
    let high: Option<&HighNoise> = d.high_noise.as_ref();
    if high.is_some_and(|h| h.count.is_none()) {
        diag(
            diagnostics,
            "high_noise_not_counted",
            format!(
                "high-noise pixels are counted with 8 or more dark frames in one stack ({} \
                 here): with fewer, a pixel's own temporal variance is too uncertain to tell a \
                 noisy pixel from chance",
                dark.spec.frames
            ),
        );
    }
    let percent = |h: &Histogram| Histogram {
        first_edge: h.first_edge / flat_above_dark_dn * 100.0,
        bin_width: h.bin_width / flat_above_dark_dn * 100.0,
        counts: h.counts.clone(),
    };
    Some(SpatialFit {
        dark_frames: dark.spec.frames,
        dark_exposure_time_s: dark.spec.exposure_time_s,
        flat_frames: flat.map(|s| s.spec.frames),
        dark_split_dn2: ds,
        flat_split_dn2: fs,
        dsnu_row_e: dsr.map(|s| root(s.row_dn2) / k),
        dsnu_column_e: dsr.map(|s| root(s.column_dn2) / k),
        dsnu_pixel_e: dsr.map(|s| root(s.pixel_dn2) / k),
        prnu_row_percent: both.and_then(|(d, f)| prnu_part(f.row_dn2, d.row_dn2)),
        prnu_column_percent: both.and_then(|(d, f)| prnu_part(f.column_dn2, d.column_dn2)),
        prnu_pixel_percent: both.and_then(|(d, f)| prnu_part(f.pixel_dn2, d.pixel_dn2)),
        hot_pixels: d.above_threshold,
        hot_threshold_dn: d.defect_threshold_dn,
        dark_pixels: f.map(|f| f.below_threshold),
        dark_threshold_percent: f
            .filter(|_| flat_above_dark_dn > 0.0)
            .map(|f| f.defect_threshold_dn / flat_above_dark_dn * 100.0),
        high_noise_pixels: high.and_then(|h| h.count),
        dark_histogram_dn: d.histogram.clone(),
        flat_histogram_percent: f
            .filter(|_| flat_above_dark_dn > 0.0)
            .map(|f| percent(&f.histogram)),
        high_noise_histogram: high.map(|h| h.histogram.clone()),
        dark_image: d.clone(),
        flat_image: f.cloned(),
    })
}

/// Defect thresholds as a reader sees them (for documentation and tables).
pub const DEFECT_RULE: &str = "beyond 6 standard deviations of the averaged image from its mean";

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
