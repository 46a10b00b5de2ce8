//! Monte Carlo image simulation of a scenario's pixel: a frame of an invented test scene, and a
//! photon transfer series to measure. Pure and seeded: a scenario, a seed and a size always
//! give the same frame.
//!
//! Two entry points:
//!
//! - [`frame`]: the scenario's camera (binning, frame averaging, readout, temperature,
//!   background light) looking at the test scene of `scene.rs`, with each patch's SNR measured
//!   on the frame beside the model's closed form ([`crate::evaluate`] at the patch's light).
//! - [`series_plan`] / [`series`]: the scenario's sensor, unbinned, as dark and flat pairs
//!   whose photon transfer analysis ([`crate::ptc`]) recovers its figures (`series.rs`).
//!
//! Every constant of the chain comes from the model's own report of the scenario (signal,
//! dark and background charge per pixel, the read and reset variances, the saturation level),
//! so the simulation and the model can only differ where the model approximates: Poisson
//! against Gaussian at few electrons, quantization when the noise is below about half a DN,
//! clipping near saturation. How a pixel is simulated is in `chain.rs`; the random sources
//! and the generator in `random.rs`.
//!
//! # Determinism
//! Every draw comes from a stream whose state is made from the seed (no OS entropy), and every
//! transcendental function is `libm`'s pure-Rust one (rand_distr's too, through num-traits'
//! `libm` feature, when nothing else in the build switches it to std), so the same seed gives
//! the same frame natively and in wasm. The fixed patterns (PRNU, DSNU) depend only on the seed
//! and the physical pixel, not on the frame: every frame of a series, and every frame size,
//! shows the same sensor.
//!
//! # The test scene and how to show it
//! See `scene.rs` for the layout (patches a stop apart around the scenario's level, a ramp,
//! bars at 50 % and 10 % contrast). A frame's output values are DN: one read (summed over a
//! `digital` bin), averaged over the scenario's frames. To show it:
//!
//! - [`SceneFrame::display_8_bit`] maps it by a stated rule ([`DisplayMapping`]): linear from
//!   the dark level (black level plus dark and background charge) to the output at the
//!   saturation level, then a display gamma of 2.2. Show it at one frame pixel per screen pixel
//!   (CSS `image-rendering: pixelated` when enlarged) so noise is not smoothed away; a
//!   scaled-down view averages pixels and hides noise, and should say so.
//! - [`SceneFrame::to_16_bit`] keeps the values linear for files: multiplied by the largest
//!   power of two that fits 16 bits (16 for a 12-bit ADC).
//!
//! Label patches with [`Patch::measured`]'s SNR beside [`Patch::model`]'s `snr_total`: one
//! frame's spatial spread holds temporal and fixed-pattern noise, which is the model's total.
//!
//! # Cost
//! [`frame_reads`] tells the reads a frame needs (output pixels × b² × N); calls needing more
//! than [`MAX_READS`] are refused, so a page can pick a size that fits its time budget.

mod chain;
mod frame;
mod random;
pub mod scene;
mod series;

use std::fmt;

use serde::Serialize;

pub use frame::{
    DisplayMapping, Patch, PatchMeasured, PatchModel, ReferenceLevel, Samples16, SceneFrame,
    DISPLAY_GAMMA,
};
pub use series::{
    ExpectedSensor, Series, SeriesFrame, SeriesPlan, FRAMES_PER_STACK, GAIN_RANGE_TOP, LOG_LEVELS,
    LONG_DARK_MULTIPLES, MAX_DARK_FILL_AT_LONGEST_FLAT, MAX_DARK_FILL_LONG_DARK, NEAR_SATURATION,
};

use crate::scenario::Scenario;

/// Most reads (physical pixel reads of all averaged frames) one call simulates: 2²⁸, about
/// 10 s natively (a 12 MP frame needs 12 million). Beyond it a call is refused, not slowed.
pub const MAX_READS: u64 = 1 << 28;

/// Most output pixels of one frame: [`crate::frames::MAX_PIXELS`], as frames read from files.
pub const MAX_PIXELS: u64 = crate::frames::MAX_PIXELS;

/// PRNU above this fraction (20 %) makes gains 1 + p·z below zero possible at z < −5 (one
/// pixel in 3.5 million, the normal tail); the simulator sets them to zero and says so.
pub const PRNU_GAIN_CLIP_FRACTION: f64 = 0.2;

/// A frame size in output pixels.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct FrameSize {
    /// Pixels across.
    pub width: u32,
    /// Pixels down.
    pub height: u32,
}

impl FrameSize {
    /// A size with at least one pixel and at most [`MAX_PIXELS`].
    ///
    /// # Errors
    /// [`SimulateError::NoPixels`] or [`SimulateError::TooManyPixels`].
    pub fn new(width: u32, height: u32) -> Result<FrameSize, SimulateError> {
        if width == 0 || height == 0 {
            return Err(SimulateError::NoPixels { width, height });
        }
        if u64::from(width) * u64::from(height) > MAX_PIXELS {
            return Err(SimulateError::TooManyPixels { width, height });
        }
        Ok(FrameSize { width, height })
    }

    fn pixels(self) -> u64 {
        u64::from(self.width) * u64::from(self.height)
    }
}

/// A condition the user should know about a simulated frame or series, with a stable code.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Caution {
    /// Stable identifier, snake case.
    pub code: &'static str,
    /// What it means, in lower case.
    pub message: String,
}

impl Caution {
    fn new(code: &'static str, message: String) -> Caution {
        Caution { code, message }
    }
}

/// Why a simulation was refused.
#[derive(Debug, Clone, PartialEq, Eq)]
#[non_exhaustive]
pub enum SimulateError {
    /// A size with no pixels.
    NoPixels {
        /// Pixels across.
        width: u32,
        /// Pixels down.
        height: u32,
    },
    /// More than [`MAX_PIXELS`] pixels.
    TooManyPixels {
        /// Pixels across.
        width: u32,
        /// Pixels down.
        height: u32,
    },
    /// More than [`MAX_READS`] reads.
    TooMuchWork {
        /// Reads needed (saturated at u64::MAX).
        reads: u64,
        /// Output pixels of the frame.
        pixels: u64,
        /// The binning factor b.
        binning: u32,
        /// Frames averaged.
        frames_averaged: u32,
    },
    /// A series is written as 16-bit PGM, which cannot hold more bits.
    AdcBitsAbove16 {
        /// The scenario's ADC resolution.
        bits: u32,
    },
}

impl fmt::Display for SimulateError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SimulateError::NoPixels { width, height } => {
                write!(f, "size: {width} × {height} has no pixels")
            }
            SimulateError::TooManyPixels { width, height } => write!(
                f,
                "size: {width} × {height} is more than {MAX_PIXELS} pixels (this simulator's \
                 limit)"
            ),
            SimulateError::TooMuchWork {
                reads,
                pixels,
                binning,
                frames_averaged,
            } => write!(
                f,
                "size: {pixels} output pixels × binning {binning}² × {frames_averaged} frames \
                 averaged need {reads} pixel reads, more than this simulator's limit of \
                 {MAX_READS}: choose a smaller size"
            ),
            SimulateError::AdcBitsAbove16 { bits } => write!(
                f,
                "sensor.adc_bits: a series is written as 16-bit PGM, which holds at most 16 \
                 bits, got {bits}"
            ),
        }
    }
}

impl std::error::Error for SimulateError {}

/// Pixel reads a test-scene frame of this scenario and size needs (output pixels × b² × N).
#[must_use]
pub fn frame_reads(sc: &Scenario, size: FrameSize) -> u64 {
    let b = u128::from(sc.exposure.binning);
    let reads = u128::from(size.pixels()) * b * b * u128::from(sc.exposure.frames_averaged);
    u64::try_from(reads).unwrap_or(u64::MAX)
}

/// Simulate one frame of the test scene as the scenario's camera takes it.
///
/// # Errors
/// [`SimulateError::TooMuchWork`] when it needs more than [`MAX_READS`] reads.
///
/// ```
/// use engine::simulate::{frame, FrameSize};
/// let sc = engine::validate::scenario_from_json(engine::demos::DEMOS[0].json).unwrap();
/// let f = frame(&sc, 1, FrameSize::new(96, 64).unwrap()).unwrap();
/// assert_eq!(f.values_dn.len(), 96 * 64);
/// assert_eq!(f.values_dn, frame(&sc, 1, FrameSize::new(96, 64).unwrap()).unwrap().values_dn);
/// ```
pub fn frame(sc: &Scenario, seed: u64, size: FrameSize) -> Result<SceneFrame, SimulateError> {
    let reads = frame_reads(sc, size);
    if reads > MAX_READS {
        return Err(SimulateError::TooMuchWork {
            reads,
            pixels: size.pixels(),
            binning: sc.exposure.binning,
            frames_averaged: sc.exposure.frames_averaged,
        });
    }
    Ok(frame::simulate(sc, seed, size))
}

/// Plan a photon transfer series of the scenario's sensor (see `series.rs`); frames are
/// rendered on demand with [`SeriesPlan::render_pgm`].
///
/// # Errors
/// [`SimulateError::AdcBitsAbove16`].
pub fn series_plan(sc: &Scenario, seed: u64, size: FrameSize) -> Result<SeriesPlan, SimulateError> {
    series::plan(sc, seed, size)
}

/// A whole photon transfer series in memory: PGM files and `manifest.json`'s text.
///
/// # Errors
/// As [`series_plan`].
///
/// ```
/// use engine::simulate::{series, FrameSize};
/// let sc = engine::validate::scenario_from_json(engine::demos::DEMOS[0].json).unwrap();
/// let s = series(&sc, 1, FrameSize::new(16, 16).unwrap()).unwrap();
/// let m = engine::ptc::parse_manifest(&s.manifest_json).unwrap();
/// assert_eq!(m.stacks.iter().map(Vec::len).sum::<usize>(), s.files.len());
/// ```
pub fn series(sc: &Scenario, seed: u64, size: FrameSize) -> Result<Series, SimulateError> {
    series::plan(sc, seed, size).map(SeriesPlan::render_all)
}
