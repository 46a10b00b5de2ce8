//! The checked scenario: one planned measurement (sensor, readout, light, exposure, conditions).
//!
//! A [`Scenario`] can only be made by [`crate::validate`], so every value in it obeys the rules of
//! the format; the model computes from it without failing. This file parses nothing itself.

/// How the pixel's reset level is sampled (`sensor.readout`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Readout {
    /// Correlated double sampling: reset noise cancelled (pinned photodiode with transfer gate).
    Cds,
    /// Delta (uncorrelated) double sampling: two independent resets, variance 2kT/C.
    Dds,
    /// One sample against a fixed reference: variance kT/C.
    Single,
}

impl Readout {
    /// The format's name for this readout.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            Readout::Cds => "cds",
            Readout::Dds => "dds",
            Readout::Single => "single",
        }
    }

    /// How many independent reset (kTC) variances this readout leaves in the signal.
    #[must_use]
    pub fn reset_variance_multiple(self) -> f64 {
        match self {
            Readout::Cds => 0.0,
            Readout::Dds => 2.0,
            Readout::Single => 1.0,
        }
    }
}

/// Where binned pixels are summed (`exposure.binning_mode`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum BinningMode {
    /// Charge summed before the read, read once.
    Charge,
    /// Each pixel read, then the values summed.
    Digital,
}

impl BinningMode {
    /// The format's name for this mode.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            BinningMode::Charge => "charge",
            BinningMode::Digital => "digital",
        }
    }
}

pub use crate::colour::Processing;
use crate::dark::Varshni;
pub use crate::light::Light;
use crate::spectrum::QeCurve;

/// How the dark current changes with temperature (`sensor.dark_current_law`).
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum DarkCurrentLaw {
    /// Doubles every `sensor.dark_current_doubling_c` degrees.
    Doubling,
    /// Depletion-region generation, T^1.5·exp(−E_g(T)/2kT), with these band-gap parameters.
    Bandgap(Varshni),
}

impl DarkCurrentLaw {
    /// The format's name for this law.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            DarkCurrentLaw::Doubling => "doubling",
            DarkCurrentLaw::Bandgap(_) => "bandgap",
        }
    }
}

/// The arrangement of a Bayer colour filter array, named by its top-left 2 × 2 block.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum BayerPattern {
    /// R G / G B.
    Rggb,
    /// B G / G R.
    Bggr,
    /// G R / B G.
    Grbg,
    /// G B / R G.
    Gbrg,
}

impl BayerPattern {
    /// The format's name for this pattern.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            BayerPattern::Rggb => "RGGB",
            BayerPattern::Bggr => "BGGR",
            BayerPattern::Grbg => "GRBG",
            BayerPattern::Gbrg => "GBRG",
        }
    }
}

/// One colour channel's response: a QE value, a QE curve, or both (the curve for light with
/// a spectrum).
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelResponse {
    /// Quantum efficiency through the channel's filter, one value.
    pub quantum_efficiency: Option<f64>,
    /// Quantum efficiency against wavelength, filter included.
    pub quantum_efficiency_curve: Option<QeCurve>,
}

/// A colour filter array over the pixels and its three channels.
#[derive(Debug, Clone, PartialEq)]
pub struct ColourFilter {
    /// The Bayer arrangement.
    pub pattern: BayerPattern,
    /// R, G and B, in that order.
    pub channels: [ChannelResponse; 3],
}

/// The names of the colour channels, in the order of [`ColourFilter::channels`].
pub const CHANNEL_NAMES: [&str; 3] = ["R", "G", "B"];

/// One shorter exposure of a multi-exposure HDR readout.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HdrExposure {
    /// How many times shorter than the exposure before it, ≥ 1.
    pub ratio: f64,
    /// Read noise of its read, e⁻ rms.
    pub read_noise_e: f64,
    /// Full well during it, e⁻.
    pub full_well_e: f64,
}

/// The low conversion gain of a dual-gain readout.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LowGain {
    /// System gain K at the low gain, DN/e⁻.
    pub system_gain_dn_per_e: f64,
    /// Read noise of the low-gain read, e⁻ rms.
    pub read_noise_e: f64,
    /// Most charge the low-gain reading holds, e⁻.
    pub full_well_e: f64,
    /// Conversion gain at the low gain, µV/e⁻, when given.
    pub conversion_gain_uv_per_e: Option<f64>,
}

/// How the HDR readouts differ.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum HdrReadouts {
    /// The exposure time, then 1 to 3 shorter exposures.
    Exposures(Vec<HdrExposure>),
    /// The same charge read at the sensor's (high) gain and at a low gain.
    DualGain(LowGain),
}

/// An HDR readout (`hdr`): several readouts stitched into one linear output.
#[derive(Debug, Clone, PartialEq)]
pub struct Hdr {
    /// The readouts after the first.
    pub readouts: HdrReadouts,
    /// The output leaves a readout at this fraction of its saturation, 0 < f ≤ 1.
    pub switch_fraction: f64,
    /// Blend width below each switch point, as a fraction of its level, 0 ≤ β < 1.
    pub blend_fraction: f64,
}

/// The sensor and its readout (`sensor`), with defaults applied.
#[derive(Debug, Clone, PartialEq)]
pub struct Sensor {
    /// Pixel pitch, µm; the pixel area is pitch².
    pub pixel_pitch_um: f64,
    /// Effective quantum efficiency η, electrons per incident photon, when given as one value.
    pub quantum_efficiency: Option<f64>,
    /// Quantum efficiency against wavelength, when given (used for light with a spectrum).
    pub quantum_efficiency_curve: Option<QeCurve>,
    /// Wavelengths the sensor responds to, nm: photons of spectral light are counted here.
    pub response_band_nm: (f64, f64),
    /// Full-well capacity of one pixel, e⁻.
    pub full_well_e: f64,
    /// Temporal read noise of one read (no reset, quantization or dark shot noise), e⁻ rms.
    pub read_noise_e: f64,
    /// Sense-node capacitance, fF, when given.
    pub sense_node_capacitance_ff: Option<f64>,
    /// Output-referred conversion gain, µV/e⁻, when given.
    pub conversion_gain_uv_per_e: Option<f64>,
    /// How the reset level is sampled.
    pub readout: Readout,
    /// Mean dark current of one pixel at the reference temperature, e⁻/s.
    pub dark_current_e_per_s: f64,
    /// Temperature at which the dark current is given, °C.
    pub dark_current_reference_c: f64,
    /// Temperature rise that doubles the dark current, °C (the doubling law's).
    pub dark_current_doubling_c: f64,
    /// How the dark current changes with temperature.
    pub dark_current_law: DarkCurrentLaw,
    /// Spatial rms of the dark current, percent of its mean: DSNU that grows with the dark charge.
    pub dark_current_nonuniformity_percent: f64,
    /// A colour filter array, when the sensor is a colour sensor.
    pub colour: Option<ColourFilter>,
    /// Dark signal non-uniformity, spatial rms per pixel, e⁻.
    pub dsnu_e: f64,
    /// Photo-response non-uniformity, spatial rms, percent of signal.
    pub prnu_percent: f64,
    /// ADC resolution, bits.
    pub adc_bits: u32,
    /// System gain K, DN per electron.
    pub system_gain_dn_per_e: f64,
    /// Offset added before the ADC, DN.
    pub black_level_dn: f64,
    /// Capacity of the node where charge-binned charge is summed (a CCD summing well or
    /// output node, a shared floating diffusion), e⁻, when given; used only with `charge` binning.
    pub summing_well_e: Option<f64>,
}

/// The exposure (`exposure`), with defaults applied.
#[derive(Debug, Clone, PartialEq)]
pub struct Exposure {
    /// Integration time of one frame, s.
    pub time_s: f64,
    /// Number of frames averaged, N ≥ 1.
    pub frames_averaged: u32,
    /// Binning factor b: b × b pixels make one output pixel.
    pub binning: u32,
    /// Where the binned pixels are summed.
    pub binning_mode: BinningMode,
}

/// The detection task (`detection`), with defaults applied: what the detection figures of the
/// report ([`crate::report::DetectionReport`]) are computed for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Detection {
    /// False-alarm probability per pixel, p_fa, in (0, 1).
    pub false_alarm_probability: f64,
    /// Detection probability p_d for which the detection signal is found, in (0, 1).
    pub detection_probability: f64,
    /// Pixels M searched per frame, ≥ 1.
    pub pixels: u32,
    /// Weber contrast C of the target patch against the reference patch: non-zero, > −1.
    pub contrast: f64,
    /// Confidence interval ε of the contrast detection probability, in (0, 1].
    pub contrast_interval: f64,
}

/// A validated scenario. Made only by [`crate::validate::scenario_from_value`] and friends.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    pub(crate) title: Option<String>,
    pub(crate) sensor: Sensor,
    pub(crate) light: Light,
    pub(crate) background_light: Option<Light>,
    pub(crate) exposure: Exposure,
    pub(crate) temperature_c: f64,
    pub(crate) snr_threshold: f64,
    pub(crate) processing: Processing,
    pub(crate) hdr: Option<Hdr>,
    pub(crate) detection: Detection,
}

impl Scenario {
    /// The free-text title, if any.
    #[must_use]
    pub fn title(&self) -> Option<&str> {
        self.title.as_deref()
    }
    /// The sensor, with defaults applied.
    #[must_use]
    pub fn sensor(&self) -> &Sensor {
        &self.sensor
    }
    /// The light at the sensor.
    #[must_use]
    pub fn light(&self) -> &Light {
        &self.light
    }
    /// Light that adds photons and shot noise but is not signal (ambient, sky, stray), if any.
    #[must_use]
    pub fn background_light(&self) -> Option<&Light> {
        self.background_light.as_ref()
    }
    /// The exposure, with defaults applied.
    #[must_use]
    pub fn exposure(&self) -> &Exposure {
        &self.exposure
    }
    /// Sensor temperature, °C.
    #[must_use]
    pub fn temperature_c(&self) -> f64 {
        self.temperature_c
    }
    /// The SNR that counts as detected.
    #[must_use]
    pub fn snr_threshold(&self) -> f64 {
        self.snr_threshold
    }
    /// White balance and colour matrix (identity without a `processing` object).
    #[must_use]
    pub fn processing(&self) -> &Processing {
        &self.processing
    }
    /// The HDR readout, if any.
    #[must_use]
    pub fn hdr(&self) -> Option<&Hdr> {
        self.hdr.as_ref()
    }
    /// The detection task (the catalogue's defaults without a `detection` object).
    #[must_use]
    pub fn detection(&self) -> &Detection {
        &self.detection
    }
}
