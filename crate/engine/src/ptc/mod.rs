//! Photon transfer analysis (EMVA 1288's linear model) of measured dark and flat frames.
//!
//! Streaming by design: a [`StackAccumulator`] takes the frames of one stack one at a time and
//! keeps only integer sums (plus one held frame, and a per-pixel sum for stacks longer than two),
//! so a page or a command can feed files as they are read. [`analyse`] turns the stacks'
//! statistics into a measured `sensor` section and its fit. No file I/O and no decoding here
//! (see [`crate::frames`]); no planning either (that is [`crate::model`]).
//!
//! Code map: `pair.rs` the exact integer pass over a frame pair (the hot loop); `stack.rs` one
//! stack; `fit.rs` straight-line fits with uncertainties; `formulas.rs` the standard's
//! closed-form steps with their sources; `analysis/` the method, step by step; `manifest.rs`
//! which files form which stacks; `measurement.rs` the measurement, given one file at a time;
//! `curve.rs` plot-ready series of a result.

mod analysis;
mod cfa;
mod curve;
mod depth;
mod export;
mod fft;
mod figures;
mod fit;
mod formulas;
mod manifest;
mod measurement;
mod pair;
mod region;
mod spatial;
mod stack;
#[cfg(all(feature = "threads", not(target_arch = "wasm32")))]
mod threads;

pub use analysis::{
    analyse, analyse_with, AnalysisError, AnalysisOptions, ChannelResult, Characterization,
    ColourSummary, DarkCurrentFit, Diagnostic, FitReport, GainFit, LinearityFit, MeasuredSensor,
    NonUniformityFit, PtcPoint, ReadNoiseFit, ResponsivityFit, SaturationFit, SpatialFit,
    DEFECT_RULE, GAIN_FIT_MAX_FRACTION, LINEARITY_FIT, LINEARITY_RANGE_FRACTION, PRNU_FRACTION,
};
pub use cfa::{Cfa, CFA_NAMES, CHANNEL_NAMES};
pub use curve::{
    curve_series, curve_series_from_json, curve_series_of_fit, CurvePoint, CurveSeries,
};
pub use depth::{sample_depth, DepthContradiction, DepthSource, SampleDepth};
pub use export::{spatial_csv, spatial_series, spatial_series_from_json, SpatialSeries};
pub use figures::Figure;
pub use fit::{fit_line, fit_line_weighted, LineFit};
pub use formulas::{
    dark_current_e_per_s, dark_current_from_variance_e_per_s, dsnu_e, linearity_error_percent,
    prnu_percent, quantum_efficiency, read_noise_e, read_noise_upper_bound_e,
    saturation_capacity_e, QUANTIZATION_VARIANCE_DN2, SMALL_DARK_VARIANCE_DN2,
};
pub use manifest::{parse_manifest, FrameEntry, Manifest, Problem, MANIFEST_VERSION};
pub use measurement::{measure, measure_buffered, Failure, Measurement, ReadInto};
pub use pair::{pair_sums, PairSums};
pub use spatial::{
    split_variance, HighNoise, Histogram, SpatialSummary, VarianceSplit, DEFECT_SIGMAS,
    HIGH_NOISE_FACTOR, HIGH_NOISE_MIN_PAIRS, HISTOGRAM_BINS, SPECTROGRAM_MAX_LINES,
};
pub use stack::{
    spatial_variance_corrected_dn2, FrameKind, GroupStats, Roi, SampleInfo, StackAccumulator,
    StackBuffers, StackError, StackSpec, StackStats, FRAMES_SUMMED_AT_ONCE, MAX_FRAMES_PER_STACK,
};
