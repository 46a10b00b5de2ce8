//! What the analysis gives: the measured sensor section, the fit report and its parts (gain,
//! read noise, saturation, dark current, non-uniformity, linearity, responsivity, spatial
//! parts), the per-channel results of a colour sensor, and the options the analysis takes.

use serde::Serialize;

use super::super::cfa::Cfa;
use super::super::depth::SampleDepth;
use super::super::figures::Figure;
use super::super::fit::LineFit;
use super::super::spatial::{Histogram, SpatialSummary, VarianceSplit};
use super::super::stack::{FrameKind, StackSpec};

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
    /// Pixels of the averaged dark image more than [`super::DEFECT_SIGMAS`](super::super::DEFECT_SIGMAS) standard deviations above
    /// its mean.
    pub hot_pixels: u64,
    /// That threshold, DN above the dark mean.
    pub hot_threshold_dn: f64,
    /// Pixels of the averaged flat image more than [`super::DEFECT_SIGMAS`](super::super::DEFECT_SIGMAS) standard deviations below
    /// its mean.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_pixels: Option<u64>,
    /// That threshold, percent of the mean above dark.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dark_threshold_percent: Option<f64>,
    /// Dark pixels whose temporal variance is above [`super::HIGH_NOISE_FACTOR`](super::super::HIGH_NOISE_FACTOR) times the
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
    /// The conditions of the stacks whose spatial summaries the spatial reports use (the dark
    /// and the PRNU flat stack, per channel for a colour sensor): what [`crate::ptc::measure`]
    /// reads again when it first left their summaries out. Not part of the output.
    #[serde(skip)]
    pub spatial_from: Vec<StackSpec>,
}

/// What the analysis needs besides the stacks.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct AnalysisOptions {
    /// The colour filter layout.
    pub cfa: Cfa,
    /// The camera's bits per sample as the manifest states them.
    pub significant_bits: Option<u8>,
}
