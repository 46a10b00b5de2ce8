//! A simulated photon transfer series of the scenario's sensor: the plan (which dark and flat
//! frames, at which exposures), each frame as 16-bit PGM bytes, and the manifest that
//! `noise-budget characterize` (engine `ptc::parse_manifest` and `ptc::measure`) reads.
//!
//! # The plan
//! The sensor as the scenario sets it up (readout, temperature, black level, ADC), but
//! unbinned and unaveraged, since a photon transfer series measures the pixel; the scenario's
//! light and background play no part: the flats see a uniform lab light of constant photon
//! rate, and the levels are set by exposure time (EMVA 1288's second method). With L the
//! usable level of one pixel and I the dark current at the scenario's temperature:
//!
//! - the longest flat exposure t_max is the scenario's exposure, shortened to 0.1·L/I when the
//!   dark charge would fill more than a tenth of the pixel by then; the light's rate is chosen
//!   so that the pixel holds 1.2·L (photo and dark charge) at t_max;
//! - 16 levels log-spaced from a few electrons (L/2000, at least 3 e⁻, at most 0.02·L) to 70 %
//!   of L, where the standard's gain fit ends, then 14 levels from 75 % to 120 % of L, 2 % apart
//!   around L, so the variance peak that marks saturation is located to about 2 %;
//! - at each exposure a pair of darks and a pair of flats; and dark pairs at 4, 16 and 64 times
//!   t_max (those that keep the dark charge below a quarter of L) to measure dark current.
//!
//! Frame i of the series takes its temporal noise from stream i; all frames share the seed's
//! PRNU and DSNU maps (the same as a test-scene frame of that seed at binning 1).

use crate::decimal::Plain;
use std::fmt::Write as _;

use serde::Serialize;
use serde_json::json;

use super::chain::{Chain, NoiseKey};
use super::frame::chain_for;
use super::random::Stream;
use super::{Caution, FrameSize, SimulateError};
use crate::ptc::FrameKind;
use crate::scenario::{BinningMode, Scenario};

/// Frames per stack (a pair: the temporal variance comes from their difference).
pub const FRAMES_PER_STACK: u32 = 2;
/// Log-spaced flat levels from a few electrons to [`GAIN_RANGE_TOP`].
pub const LOG_LEVELS: u32 = 16;
/// Top of the log-spaced levels, as a fraction of the usable level L (EMVA 1288's gain fit
/// ends at 70 % of saturation, REFERENCES.md §4 item 10, from memory).
pub const GAIN_RANGE_TOP: f64 = 0.7;
/// Levels from there to past saturation, fractions of L: 2 % apart around L.
pub const NEAR_SATURATION: [f64; 14] = [
    0.75, 0.8, 0.85, 0.9, 0.93, 0.96, 0.98, 1.0, 1.02, 1.04, 1.07, 1.1, 1.15, 1.2,
];
/// The brightest level, a fraction of L.
const TOP_LEVEL: f64 = 1.2;
/// Dark charge at the longest flat exposure at most this fraction of L (else it is shortened).
pub const MAX_DARK_FILL_AT_LONGEST_FLAT: f64 = 0.1;
/// Long dark exposures, multiples of the longest flat exposure.
pub const LONG_DARK_MULTIPLES: [f64; 3] = [4.0, 16.0, 64.0];
/// Dark charge of a long dark at most this fraction of L.
pub const MAX_DARK_FILL_LONG_DARK: f64 = 0.25;
/// The lowest level's photo-charge: L / 2000, at least 3 e⁻ ("a few"), at most 2 % of L.
const LOWEST_FRACTION: f64 = 1.0 / 2000.0;
const FEW_ELECTRONS: f64 = 3.0;
const LOWEST_AT_MOST_FRACTION: f64 = 0.02;

/// One frame of the series.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SeriesFrame {
    /// File name, relative to the manifest.
    pub path: String,
    /// Dark or flat.
    pub kind: FrameKind,
    /// Exposure time, s.
    pub exposure_time_s: f64,
    /// Mean photons per pixel (flats).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub photons_per_pixel: Option<f64>,
    /// Mean photo-electrons per pixel.
    pub signal_e: f64,
    /// Mean dark electrons per pixel.
    pub dark_e: f64,
}

/// The sensor figures the series was made with, under the names `characterize` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExpectedSensor {
    /// K, DN/e⁻.
    pub system_gain_dn_per_e: f64,
    /// √(σ_r² + σ_k²), e⁻ rms: read noise and the readout's reset noise, which a dark frame
    /// cannot tell apart.
    pub read_noise_e: f64,
    /// The usable level L of one pixel (full well, or the ADC's range above black), e⁻. The
    /// standard's saturation capacity (the mean at the variance peak) comes out a little below.
    pub full_well_e: f64,
    /// Dark current at the scenario's temperature, e⁻/s.
    pub dark_current_e_per_s: f64,
    /// DSNU, e⁻ rms.
    pub dsnu_e: f64,
    /// PRNU, %.
    pub prnu_percent: f64,
    /// Electrons per photon of the flat field (the scenario light's effective QE).
    pub quantum_efficiency: f64,
    /// Black level, DN.
    pub black_level_dn: f64,
    /// ADC resolution, bits.
    pub adc_bits: u32,
}

/// A planned series: cheap to make; each frame is rendered on demand.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SeriesPlan {
    /// Pixels across.
    pub width: u32,
    /// Pixels down.
    pub height: u32,
    /// The seed.
    pub seed: u64,
    /// The frames, in manifest order.
    pub frames: Vec<SeriesFrame>,
    /// The figures `characterize` should recover.
    pub expected: ExpectedSensor,
    /// The longest flat exposure, s.
    pub longest_flat_exposure_s: f64,
    /// Conditions under which `characterize` will not recover everything.
    pub cautions: Vec<Caution>,
    #[serde(skip)]
    chain: Chain,
    #[serde(skip)]
    title: Option<String>,
}

/// A whole series in memory: each file's name and bytes, and the manifest's text.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// The plan.
    pub plan: SeriesPlan,
    /// (file name, PGM bytes), in manifest order.
    pub files: Vec<(String, Vec<u8>)>,
    /// `manifest.json`'s text.
    pub manifest_json: String,
}

pub(crate) fn plan(sc: &Scenario, seed: u64, size: FrameSize) -> Result<SeriesPlan, SimulateError> {
    let bits = sc.sensor.adc_bits;
    if bits > 16 {
        return Err(SimulateError::AdcBitsAbove16 { bits });
    }
    // The sensor unbinned and unaveraged: the model's figures for one pixel and one read.
    let mut one = sc.clone();
    one.exposure.binning = 1;
    one.exposure.frames_averaged = 1;
    one.exposure.binning_mode = BinningMode::Digital;
    one.background_light = None;
    let report = crate::evaluate(&one);
    let mut chain = chain_for(&one, &report);
    chain.response.background_e = 0.0;
    let level = report.saturation.level_e;
    let dark_rate = report.dark_current_at_temperature_e_per_s;
    let qe = report.light.effective_quantum_efficiency;
    let mut cautions = Vec::new();

    let t_scenario = sc.exposure.time_s;
    let t_max = if dark_rate * t_scenario > MAX_DARK_FILL_AT_LONGEST_FLAT * level {
        let t = MAX_DARK_FILL_AT_LONGEST_FLAT * level / dark_rate;
        cautions.push(Caution::new(
            "exposure_shortened",
            format!(
                "dark charge would fill more than {} % of the pixel at the scenario's exposure \
                 of {} s: the series' longest flat exposure is {} s instead",
                Plain(MAX_DARK_FILL_AT_LONGEST_FLAT * 100.0),
                Plain(t_scenario),
                Plain(t)
            ),
        ));
        t
    } else {
        t_scenario
    };
    // Photo-electrons per second of the lab light: 1.2·L of photo and dark charge at t_max.
    let rate = (TOP_LEVEL * level - dark_rate * t_max) / t_max;
    let lowest_e = (level * LOWEST_FRACTION)
        .max(FEW_ELECTRONS)
        .min(LOWEST_AT_MOST_FRACTION * level);
    let q_min = lowest_e * (rate + dark_rate) / (rate * level);
    let mut fractions: Vec<f64> = (0..LOG_LEVELS)
        .map(|j| {
            let u = f64::from(j) / f64::from(LOG_LEVELS - 1);
            q_min * libm::pow(GAIN_RANGE_TOP / q_min, u)
        })
        .collect();
    fractions.extend(NEAR_SATURATION);

    let mut frames = Vec::new();
    let push_pair = |frames: &mut Vec<SeriesFrame>, kind: FrameKind, n: usize, t: f64| {
        for suffix in ["a", "b"] {
            let signal_e = match kind {
                FrameKind::Flat => rate * t,
                FrameKind::Dark => 0.0,
            };
            frames.push(SeriesFrame {
                path: format!("{}-{n:02}{suffix}.pgm", kind.as_str()),
                kind,
                exposure_time_s: t,
                photons_per_pixel: (kind == FrameKind::Flat && qe > 0.0).then(|| signal_e / qe),
                signal_e,
                dark_e: dark_rate * t,
            });
        }
    };
    for (n, q) in fractions.iter().enumerate() {
        let t = q * level / (rate + dark_rate);
        push_pair(&mut frames, FrameKind::Dark, n + 1, t);
        push_pair(&mut frames, FrameKind::Flat, n + 1, t);
    }
    let mut next = fractions.len() + 1;
    for m in LONG_DARK_MULTIPLES {
        let t = m * t_max;
        if dark_rate * t <= MAX_DARK_FILL_LONG_DARK * level {
            push_pair(&mut frames, FrameKind::Dark, next, t);
            next += 1;
        }
    }

    let k = sc.sensor.system_gain_dn_per_e;
    let dark_noise_dn = k * chain.readout.analog_noise_e.hypot(chain.response.dsnu_e);
    if sc.sensor.black_level_dn < 3.0 * dark_noise_dn {
        cautions.push(Caution::new(
            "darks_clip_at_zero",
            format!(
                "the black level of {} DN is less than 3 times the dark noise ({} DN rms): dark \
                 frames clip at 0 DN, so the measured dark level, read noise and DSNU are biased",
                Plain(sc.sensor.black_level_dn),
                Plain(dark_noise_dn)
            ),
        ));
    }
    if k * chain.readout.analog_noise_e < 0.5 {
        cautions.push(Caution::new(
            "dark_noise_below_half_dn",
            "the dark temporal noise is below 0.5 DN: characterize can state only an upper bound \
             for the read noise (EMVA 1288)"
                .into(),
        ));
    }
    if dark_rate <= 0.0 {
        cautions.push(Caution::new(
            "no_dark_current",
            "the dark current is zero: characterize reports none, or a value within its \
             uncertainty of zero"
                .into(),
        ));
    }
    if frames.iter().all(|f| f.photons_per_pixel.is_none()) {
        cautions.push(Caution::new(
            "no_photon_count",
            "the light's quantum efficiency is zero: the flats carry no photon count, so \
             characterize measures no quantum efficiency"
                .into(),
        ));
    }

    let expected = ExpectedSensor {
        system_gain_dn_per_e: k,
        read_noise_e: chain.readout.analog_noise_e,
        full_well_e: level,
        dark_current_e_per_s: dark_rate,
        dsnu_e: sc.sensor.dsnu_e,
        prnu_percent: sc.sensor.prnu_percent,
        quantum_efficiency: qe,
        black_level_dn: sc.sensor.black_level_dn,
        adc_bits: bits,
    };
    Ok(SeriesPlan {
        width: size.width,
        height: size.height,
        seed,
        frames,
        expected,
        longest_flat_exposure_s: t_max,
        cautions,
        chain,
        title: sc.title.clone(),
    })
}

impl SeriesPlan {
    /// Frame `index`'s samples, row by row (`None` past the last frame).
    #[must_use]
    pub fn render_samples(&self, index: usize) -> Option<Vec<u16>> {
        let f = self.frames.get(index)?;
        let mut chain = self.chain;
        chain.response.dark_e = f.dark_e;
        let width = self.width as usize;
        let signal = vec![f.signal_e; width];
        let mut row = vec![0.0; width];
        let mut samples = Vec::with_capacity(width * self.height as usize);
        let key = NoiseKey {
            seed: self.seed,
            kind: Stream::SeriesNoise,
            first_frame: index as u64,
        };
        for y in 0..self.height {
            chain.row(y, &signal, key, &mut row);
            // OK because an unbinned, unaveraged read is an integer within 0 ..= 2^bits − 1
            // and bits ≤ 16 (checked by `plan`).
            #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
            samples.extend(row.iter().map(|v| *v as u16));
        }
        Some(samples)
    }

    /// Frame `index` as a binary PGM (P5) file, maxval 2^bits − 1 so `characterize` learns
    /// the ADC's resolution (`None` past the last frame).
    #[must_use]
    pub fn render_pgm(&self, index: usize) -> Option<Vec<u8>> {
        let samples = self.render_samples(index)?;
        Some(pgm(
            self.width,
            self.height,
            self.chain.readout.full_scale_dn,
            &samples,
        ))
    }

    /// The manifest (`characterize`'s format, version 1), with the expected figures and the
    /// seed under `x_` keys, which readers ignore.
    #[must_use]
    pub fn manifest_json(&self) -> String {
        let frames: Vec<serde_json::Value> = self
            .frames
            .iter()
            .map(|f| {
                let mut v = json!({
                    "path": f.path,
                    "kind": f.kind.as_str(),
                    "exposure_time_s": f.exposure_time_s,
                });
                if let (Some(p), Some(m)) = (f.photons_per_pixel, v.as_object_mut()) {
                    m.insert("photons_per_pixel".into(), json!(p));
                }
                v
            })
            .collect();
        let mut note = String::from(
            "simulated by noise-budget simulate: the scenario's sensor unbinned and unaveraged, \
             flats under a uniform light at levels set by exposure time",
        );
        if let Some(t) = &self.title {
            let _ = write!(note, "; scenario: {t}");
        }
        let manifest = json!({
            "version": 1,
            "x_simulated": {
                "note": note,
                "seed": self.seed,
                "width": self.width,
                "height": self.height,
            },
            "x_expected_sensor": self.expected,
            "frames": frames,
        });
        serde_json::to_string_pretty(&manifest).map_or_else(|_| String::new(), |s| s + "\n")
    }

    /// Every file in memory, with the manifest.
    #[must_use]
    pub fn render_all(self) -> Series {
        let files = (0..self.frames.len())
            .filter_map(|i| {
                let name = self.frames.get(i)?.path.clone();
                Some((name, self.render_pgm(i)?))
            })
            .collect();
        let manifest_json = self.manifest_json();
        Series {
            plan: self,
            files,
            manifest_json,
        }
    }
}

/// A binary PGM: `P5`, width, height, maxval, then samples (one byte each below 256, else two,
/// most significant first; Netpbm's pgm manual page, from memory).
fn pgm(width: u32, height: u32, maxval: f64, samples: &[u16]) -> Vec<u8> {
    let mut out = format!("P5\n{width} {height}\n{}\n", Plain(maxval)).into_bytes();
    if maxval < 256.0 {
        // OK because every sample is ≤ maxval < 256.
        #[allow(clippy::cast_possible_truncation)]
        out.extend(samples.iter().map(|s| *s as u8));
    } else {
        out.reserve(samples.len() * 2);
        for s in samples {
            out.extend_from_slice(&s.to_be_bytes());
        }
    }
    out
}
