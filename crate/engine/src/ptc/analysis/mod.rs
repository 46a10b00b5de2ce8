//! From stack statistics to a measured sensor: the photon transfer analysis.
//!
//! Input: one [`StackStats`] per stack (dark and flat, reduced by [`super::StackAccumulator`]).
//! Output: a [`Characterization`] whose `sensor` holds the SCENARIO.md keys that could be
//! measured and whose `fit` holds uncertainties, the points used and diagnostics. Frames never
//! reach these files; they do no I/O. Each step names its source in [`super::formulas`].
//!
//! Here: the errors, [`analyse_with`] (depth, then mono or per channel with the greens pooled).
//! `method.rs` the method for one set of pixels, step by step; `darks.rs` the dark reference and
//! the variances' sampling uncertainties; `spatial_fit.rs` the row/column/pixel parts and defect
//! pixels; `colour.rs` the channels' relative response and the 2×2 pattern check;
//! `results.rs` the result types.

use std::fmt;

use super::cfa::CHANNEL_NAMES;
use super::depth::sample_depth;
use super::figures::figures;
use super::stack::{StackSpec, StackStats};

mod colour;
mod darks;
mod method;
mod results;
mod spatial_fit;

use colour::{cfa_pattern_suspected, colour_summary};
use method::analyse_one;

pub use method::LINEARITY_FIT;
pub use results::{
    AnalysisOptions, ChannelResult, Characterization, ColourSummary, DarkCurrentFit, Diagnostic,
    FitReport, GainFit, LinearityFit, MeasuredSensor, NonUniformityFit, PtcPoint, ReadNoiseFit,
    ResponsivityFit, SaturationFit, SpatialFit,
};
pub use spatial_fit::DEFECT_RULE;

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
                crate::decimal::Plain(GAIN_FIT_MAX_FRACTION * 100.0)
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
                "the fitted system gain is {} DN/e⁻, not positive: the flat frames do not \
                 follow the photon transfer line (check that flats and darks are not swapped)",
                crate::decimal::Plain(*slope)
            ),
        }
    }
}

impl std::error::Error for AnalysisError {}

/// What one analysis of one set of pixels gives.
struct Single {
    sensor: MeasuredSensor,
    fit: FitReport,
    /// The conditions of the stacks whose spatial summaries the spatial report uses (the dark
    /// stack and the flat stack used for PRNU).
    spatial_from: Vec<StackSpec>,
}

fn same_time(a: f64, b: f64) -> bool {
    (a - b).abs() <= SAME_EXPOSURE_RELATIVE * a.abs().max(b.abs())
}

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
            spatial_from: one.spatial_from,
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
    let mut spatial_from: Vec<StackSpec> = Vec::new();
    for (name, phase) in CHANNEL_NAMES.iter().zip(phases) {
        let mut one = analyse_one(&pick(phase)).map_err(|e| AnalysisError::Channel {
            name,
            error: Box::new(e),
        })?;
        one.sensor.adc_bits = depth.native_bits;
        for spec in one.spatial_from.drain(..) {
            if !spatial_from.contains(&spec) {
                spatial_from.push(spec);
            }
        }
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
        spatial_from,
    })
}
