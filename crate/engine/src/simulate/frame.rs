//! The test-scene frame: the scenario's camera looking at the invented scene, and each patch's
//! SNR measured on the frame beside the model's closed form at the patch's light.
//!
//! No file format here (the CLI writes PNG or PGM from [`SceneFrame::to_16_bit`]), and no
//! drawing (the page maps [`SceneFrame::display_8_bit`] to a canvas).

use serde::Serialize;

use super::chain::{Chain, NoiseKey};
use super::random::Stream;
use super::scene::{Layout, Rect, PATCH_FACTORS};
use super::{Caution, FrameSize, PRNU_GAIN_CLIP_FRACTION};
use crate::model::{evaluate_with, resolve_lights};
use crate::report::Report;
use crate::scenario::Scenario;

/// How the reference level (light factor 1) was chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ReferenceLevel {
    /// The scenario's own signal.
    ScenarioSignal,
    /// The scenario has no light: the temporal minimum detectable signal instead.
    MinimumDetectable,
}

/// The model's figures at a patch's light (`engine::evaluate` of the scenario with the light
/// scaled by the patch's factor), per output pixel.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PatchModel {
    /// Signal S, e⁻.
    pub signal_e: f64,
    /// Temporal SNR.
    pub snr_temporal: f64,
    /// Total SNR (temporal and fixed-pattern noise): what one frame's spatial spread shows.
    pub snr_total: f64,
    /// Total noise, e⁻ rms.
    pub noise_total_e: f64,
    /// The mean output value the model expects, DN (black level, signal, dark, background).
    pub mean_dn: f64,
    /// Whether the model says the pixel saturates at this light.
    pub saturated: bool,
}

/// What the simulated frame shows in a patch's measured part.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PatchMeasured {
    /// Pixels measured.
    pub pixels: u64,
    /// Mean output value, DN.
    pub mean_dn: f64,
    /// Spatial standard deviation (n − 1), DN: temporal and fixed-pattern noise together.
    pub noise_dn: f64,
    /// Mean above the dark patch's mean, DN (the signal as a camera user measures it).
    pub signal_dn: f64,
    /// signal_dn / noise_dn; `None` for the dark patch and where the spread is zero (clipped).
    pub snr: Option<f64>,
    /// Standard uncertainty of `snr` from sampling: SNR·√(1/(2(n − 1)) + (σ²/n + σ₀²/n₀)/Ŝ²)
    /// (the variance of a sample variance for normal data, and of the two means; common
    /// statistics, no single source).
    pub snr_uncertainty: Option<f64>,
}

/// One patch: where it is, its light, the model's figures and the frame's.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Patch {
    /// The patch's whole cell.
    pub cell: Rect,
    /// The part measured (an eighth left out on each side).
    pub measured_rect: Rect,
    /// Light factor (multiple of the reference level).
    pub light_factor: f64,
    /// Mean signal electrons per physical pixel.
    pub signal_e_per_pixel: f64,
    /// The model at this light (`None` when the light cannot be scaled to it).
    pub model: Option<PatchModel>,
    /// The frame's statistics (`None` for a patch with no pixels, on a tiny frame).
    pub measured: Option<PatchMeasured>,
}

/// A stated mapping of output values to display brightness.
///
/// v = clamp((DN − dark) / (white − dark), 0, 1), shown as round(255 · v^(1/gamma)): linear
/// in light from the dark level (black level plus dark and background charge) to the output at
/// the saturation level, then encoded with a display gamma of 2.2 so shadows and their noise
/// show as a camera's picture would (the power law approximating sRGB, IEC 61966-2-1, from
/// memory).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DisplayMapping {
    /// Output value shown black, DN.
    pub dark_dn: f64,
    /// Output value shown white, DN.
    pub white_dn: f64,
    /// Display gamma.
    pub gamma: f64,
}

/// Display gamma of [`DisplayMapping`].
pub const DISPLAY_GAMMA: f64 = 2.2;

/// A frame as 16-bit samples: `sample = round(DN × scale)`.
#[derive(Debug, Clone, PartialEq)]
pub struct Samples16 {
    /// Samples, row by row.
    pub samples: Vec<u16>,
    /// The power of two the output values were multiplied by: the largest that keeps the
    /// output's full scale within 65 535 (16 for a 12-bit ADC: its values left-aligned in 16
    /// bits, as 16-bit containers of 12-bit data usually hold them). Below 1 only when the
    /// output's range exceeds 16 bits, and then precision is lost.
    pub scale: f64,
    /// The scale as an exponent of two.
    pub scale_log2: i32,
    /// Whether every output value is held exactly (each value × scale a whole number). False
    /// when the output's range exceeds 16 bits, or when averaging makes finer steps than the
    /// scale can hold (e.g. 4 frames of a 16-bit ADC).
    pub exact: bool,
}

/// A simulated frame of the test scene.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SceneFrame {
    /// Output pixels across (after binning).
    pub width: u32,
    /// Output pixels down.
    pub height: u32,
    /// The seed.
    pub seed: u64,
    /// Output values, DN, row by row: one read's DN (summed over a `digital` bin), averaged
    /// over the scenario's frames.
    #[serde(skip)]
    pub values_dn: Vec<f64>,
    /// The scene on this frame.
    pub layout: Layout,
    /// Signal electrons per physical pixel at light factor 1.
    pub reference_signal_e: f64,
    /// Where the reference level comes from.
    pub reference: ReferenceLevel,
    /// Black level of an output value, DN.
    pub output_black_dn: f64,
    /// Largest output value, DN.
    pub output_full_scale_dn: f64,
    /// The patches, in [`PATCH_FACTORS`] order (the dark one first).
    pub patches: Vec<Patch>,
    /// The display mapping [`SceneFrame::display_8_bit`] uses.
    pub display: DisplayMapping,
    /// Conditions under which the picture differs from the model, or how it was made.
    pub cautions: Vec<Caution>,
}

/// The chain of a scenario's camera as the model states it: every constant from the model's
/// own report of that scenario.
#[allow(non_snake_case)] // symbols as in SCENARIO.md
pub(crate) fn chain_for(sc: &Scenario, report: &Report) -> Chain {
    use super::chain::{Readout, Response, Well};
    use crate::scenario::BinningMode;
    let sensor = &sc.sensor;
    let exposure = &sc.exposure;
    let b = f64::from(exposure.binning);
    let b2 = b * b;
    let N = f64::from(exposure.frames_averaged);
    let n = match exposure.binning_mode {
        BinningMode::Charge => 1.0,
        BinningMode::Digital => b2,
    };
    // The report's reset noise is √(n·σ_k²/N); one read's variance is its square times N/n.
    let reset_variance_e2 = report.noise_e.reset * report.noise_e.reset * N / n;
    let read_variance_e2 = sensor.read_noise_e * sensor.read_noise_e;
    // OK because adc_bits is 1..=32 (validated).
    let full_scale = ((1u64 << sensor.adc_bits.min(32)) - 1) as f64;
    Chain {
        response: Response {
            background_e: report.background_e / b2,
            dark_e: report.dark_e / b2,
            prnu: sensor.prnu_percent / 100.0,
            dsnu_e: sensor.dsnu_e,
        },
        well: Well {
            full_well_e: sensor.full_well_e,
            summing_well_e: sensor
                .summing_well_e
                .filter(|_| exposure.binning_mode == BinningMode::Charge),
        },
        readout: Readout {
            analog_noise_e: (read_variance_e2 + reset_variance_e2).sqrt(),
            gain_dn_per_e: sensor.system_gain_dn_per_e,
            black_level_dn: sensor.black_level_dn,
            full_scale_dn: full_scale,
        },
        binning: exposure.binning,
        binning_mode: exposure.binning_mode,
        frames_averaged: exposure.frames_averaged,
    }
}

/// Mean and sample standard deviation of a rectangle of a frame (two passes, f64).
fn stats(values: &[f64], width: u32, r: Rect) -> Option<(u64, f64, f64)> {
    let n = r.pixels();
    if n == 0 {
        return None;
    }
    let rows = (r.y..r.y + r.height).filter_map(|y| {
        let start = usize::try_from(u64::from(y) * u64::from(width) + u64::from(r.x)).ok()?;
        values.get(start..start + r.width as usize)
    });
    let sum: f64 = rows.clone().flatten().sum();
    let mean = sum / n as f64;
    let ss: f64 = rows.flatten().map(|v| (v - mean) * (v - mean)).sum();
    let sd = if n > 1 {
        (ss / (n - 1) as f64).sqrt()
    } else {
        0.0
    };
    Some((n, mean, sd))
}

/// Simulate the test-scene frame (see [`super::frame`] for the public entry point).
#[allow(non_snake_case)] // symbols as in SCENARIO.md
pub(crate) fn simulate(sc: &Scenario, seed: u64, size: FrameSize) -> SceneFrame {
    let report = crate::evaluate(sc);
    let chain = chain_for(sc, &report);
    let b = f64::from(sc.exposure.binning);
    let b2 = b * b;
    let K = sc.sensor.system_gain_dn_per_e;
    let mut cautions = Vec::new();

    // The reference level: the scenario's signal, or its detection limit when it has no light.
    let (reference_signal_e, reference) = if report.signal_e > 0.0 {
        (report.signal_e / b2, ReferenceLevel::ScenarioSignal)
    } else {
        cautions.push(Caution::new(
            "reference_is_detection_limit",
            "the scenario has no light: the patches are scaled to its minimum detectable signal \
             (temporal) instead of its signal"
                .into(),
        ));
        (
            report.min_detectable.signal_e / b2,
            ReferenceLevel::MinimumDetectable,
        )
    };
    if chain.response.prnu > PRNU_GAIN_CLIP_FRACTION {
        cautions.push(Caution::new(
            "prnu_gain_clipped",
            format!(
                "PRNU of {} % makes some pixels' gain 1 + p·z negative; they are simulated with \
                 zero gain, so the frame's PRNU is a little below the model's",
                crate::decimal::Plain(sc.sensor.prnu_percent)
            ),
        ));
    }

    let read_dn = K * chain.readout.analog_noise_e;
    if read_dn < 0.5 {
        cautions.push(Caution::new(
            "quantization_regime",
            format!(
                "one read's noise is {} DN, below half a DN: quantization is not the \
                 1/12 DN² the model assumes, so dim patches' measured SNR can differ from the \
                 model's (the frame shows the real rounding)",
                crate::decimal::Fixed(read_dn, 3)
            ),
        ));
    }
    if chain.readout.analog_noise_e < crate::model::SUB_ELECTRON_READ_NOISE_E {
        cautions.push(Caution::new(
            "sub_electron_read_noise",
            "read noise below 0.5 e⁻: the frame counts electrons exactly (Poisson), while the \
             model's SNR is a Gaussian approximation; at a few electrons the two differ"
                .into(),
        ));
    }

    let layout = Layout::new(size.width, size.height);
    let width = size.width as usize;
    let mut values = vec![0.0; width * size.height as usize];
    let mut factors = Vec::with_capacity(width);
    let mut signal = Vec::with_capacity(width);
    let key = NoiseKey {
        seed,
        kind: Stream::SceneNoise,
        first_frame: 0,
    };
    for (y, row) in (0..size.height).zip(values.chunks_exact_mut(width.max(1))) {
        layout.row_factors(y, &mut factors);
        signal.clear();
        signal.extend(factors.iter().map(|f| f * reference_signal_e));
        chain.row(y, &signal, key, row);
    }

    // The model at each patch's light: the light's amount scaled so that its signal is the
    // patch's (the light is linear in its amount; `Lights::with_light_amount`).
    let lights = resolve_lights(sc);
    let per_unit_e = evaluate_with(sc, &lights.with_light_amount(1.0)).signal_e / b2;
    let black_out = chain.output_black_dn();
    let model_at = |factor: f64| -> Option<PatchModel> {
        let amount = factor * reference_signal_e / per_unit_e;
        if !(amount.is_finite() && per_unit_e > 0.0) {
            return None;
        }
        let r = evaluate_with(sc, &lights.with_light_amount(amount));
        Some(PatchModel {
            signal_e: r.signal_e,
            snr_temporal: r.snr.temporal,
            snr_total: r.snr.total,
            noise_total_e: r.noise_e.total,
            mean_dn: black_out + K * (r.signal_e + r.dark_e + r.background_e),
            saturated: r.saturation.saturated,
        })
        .filter(|m| m.signal_e.is_finite() && m.snr_total.is_finite())
    };
    let measured_stats: Vec<Option<(u64, f64, f64)>> = layout
        .patches
        .iter()
        .map(|cell| stats(&values, size.width, Layout::measured(*cell)))
        .collect();
    let dark = measured_stats.first().copied().flatten();
    let patches = layout
        .patches
        .iter()
        .zip(PATCH_FACTORS)
        .zip(&measured_stats)
        .enumerate()
        .map(|(i, ((cell, factor), st))| {
            let measured = st.map(|(n, mean, sd)| {
                let (n0, mean0, sd0) = dark.unwrap_or((n, mean, sd));
                let signal_dn = mean - mean0;
                let snr = (i > 0 && sd > 0.0).then(|| signal_dn / sd);
                let snr_uncertainty = snr.filter(|_| n > 1 && signal_dn != 0.0).map(|s| {
                    let rel2 = 1.0 / (2.0 * (n - 1) as f64)
                        + (sd * sd / n as f64 + sd0 * sd0 / n0 as f64) / (signal_dn * signal_dn);
                    s.abs() * rel2.sqrt()
                });
                PatchMeasured {
                    pixels: n,
                    mean_dn: mean,
                    noise_dn: sd,
                    signal_dn,
                    snr,
                    snr_uncertainty,
                }
            });
            Patch {
                cell: *cell,
                measured_rect: Layout::measured(*cell),
                light_factor: factor,
                signal_e_per_pixel: factor * reference_signal_e,
                model: model_at(factor),
                measured,
            }
        })
        .collect();

    let full_scale_out = chain.output_full_scale_dn();
    let dark_dn = black_out + K * (report.dark_e + report.background_e);
    let white_dn = (black_out + K * b2 * report.saturation.level_e).min(full_scale_out);
    SceneFrame {
        width: size.width,
        height: size.height,
        seed,
        values_dn: values,
        layout,
        reference_signal_e,
        reference,
        output_black_dn: black_out,
        output_full_scale_dn: full_scale_out,
        patches,
        display: DisplayMapping {
            dark_dn,
            white_dn: if white_dn > dark_dn {
                white_dn
            } else {
                full_scale_out.max(dark_dn + 1.0)
            },
            gamma: DISPLAY_GAMMA,
        },
        cautions,
    }
}

impl SceneFrame {
    /// The output values as 16-bit samples, scaled by a power of two (see [`Samples16`]).
    #[must_use]
    pub fn to_16_bit(&self) -> Samples16 {
        let mut log2 = 0i32;
        let fits = |l: i32| self.output_full_scale_dn * 2f64.powi(l) <= 65_535.0;
        while !fits(log2) && log2 > -64 {
            log2 -= 1;
        }
        while fits(log2 + 1) && log2 < 64 {
            log2 += 1;
        }
        let scale = 2f64.powi(log2);
        let exact = self
            .values_dn
            .iter()
            .all(|v| (v * scale).fract() == 0.0 && v * scale <= 65_535.0);
        let samples = self
            .values_dn
            .iter()
            .map(|v| {
                // OK because v·scale is within 0..=65535 (v within 0..=full scale).
                #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
                let s = (v * scale + 0.5).floor().clamp(0.0, 65_535.0) as u16;
                s
            })
            .collect();
        Samples16 {
            samples,
            scale,
            scale_log2: log2,
            exact,
        }
    }

    /// The frame for a display, 8 bits per pixel, by [`SceneFrame::display`]'s mapping.
    #[must_use]
    pub fn display_8_bit(&self) -> Vec<u8> {
        let m = self.display;
        let span = m.white_dn - m.dark_dn;
        self.values_dn
            .iter()
            .map(|v| {
                let lin = ((v - m.dark_dn) / span).clamp(0.0, 1.0);
                // OK because the value is within 0..=255.
                #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
                let byte = (255.0 * libm::pow(lin, 1.0 / m.gamma) + 0.5).floor() as u8;
                byte
            })
            .collect()
    }
}
