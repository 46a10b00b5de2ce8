//! The report's detection figures: the scenario's output pixel handed to `crate::detection`
//! (threshold, detection signal and probability, false alarms per frame, photon counting, the
//! contrast detection probability) and the module's cautions turned into warnings.
//!
//! No formula of detection lives here: this file only says which charges and variances of the
//! model the module is given, and divides charges of the N-frame sum back to one frame.
//!
//! # Inputs from the model
//! At the output pixel (b × b pixels combined, as the model's report is):
//! ```text
//! s = signal_e (S),  d = D + B (dark and background-light charge: Poisson, not signal)
//! σ² = n·(σ_r² + σ_k² + σ_q²)   n = 1 for charge binning (one read of the summed charge),
//!                               n = b² for digital binning (b² reads summed)
//! ```
//! With N frames averaged the detection is made on the sum of the N frames, which is again
//! Poisson–Gaussian: Poisson(N·(s + d)) + Normal(0, N·σ²) (`crate::detection`, "Binned and
//! averaged outputs"). Thresholding the average at τ is thresholding the sum at N·τ, so every
//! probability is the sum's, and every charge (threshold, signals, read noise) is reported
//! per frame: the sum's ÷ N, in the units of the averaged output like the rest of the report.
//! Photon counting is a property of each frame's read, so its figures are one frame's
//! (σ² and s + d of a single frame).
//!
//! The contrast detection probability compares one output pixel of a target patch (signal
//! S·(1 + C)) with one of a reference patch (signal S), each with the model's full noise at
//! its signal, temporal and fixed-pattern (`OutputNoise::at(..).total()`: with b = N = 1 and no
//! background this is `contrast::PixelNoise::patch`'s s + d + σ² + DSNU² + (PRNU·s)²).
//!
//! For a colour sensor these are the green channel's figures, for an HDR readout the first
//! readout's, as the rest of the report's top level.

use super::{sig, warn};
use crate::detection::{self, contrast, counting, DetectionCaution, DetectionInputs};
use crate::output_noise::OutputNoise;
use crate::report::{DetectionReport, Report, WarningCode};
use crate::scenario::Scenario;

/// The detection figures before they are computed (every figure `None`): what a readout
/// other than the scenario's own carries while the model builds it.
pub(crate) fn empty(sc: &Scenario) -> DetectionReport {
    DetectionReport {
        threshold_e: None,
        false_alarm_probability_achieved: None,
        signal_e: None,
        signal_e_gaussian: None,
        threshold_e_gaussian: None,
        detection_probability: None,
        detection_probability_gaussian: None,
        frame_false_alarm_probability: None,
        pixel_false_alarm_for_frame: None,
        read_noise_e: None,
        counting: None,
        contrast_detection_probability: None,
        contrast: sc.detection.contrast,
        contrast_interval: sc.detection.contrast_interval,
    }
}

/// What `crate::detection::evaluate` is given for the scenario: the sum of the N frames of
/// the output pixel whose noise is `noise` and whose signal is `signal_e` (one frame).
fn summed_inputs(sc: &Scenario, noise: &OutputNoise, signal_e: f64) -> DetectionInputs {
    let frames = noise.frames;
    let task = &sc.detection;
    DetectionInputs {
        signal_e: frames * signal_e,
        dark_e: frames * (noise.dark_e + noise.background_e),
        read_variance_e2: frames * noise.reads * noise.per_read_e2(),
        false_alarm_probability: task.false_alarm_probability,
        detection_probability: task.detection_probability,
        pixels: u64::from(task.pixels),
    }
}

/// The contrast detection probability of the scenario's output pixel at `signal` [e⁻]: a
/// target patch at signal·(1 + C) against a reference at the signal, each with the model's
/// full noise at its signal; `None` without signal.
fn contrast_probability(sc: &Scenario, noise: &OutputNoise, signal: f64) -> Option<f64> {
    let task = &sc.detection;
    let patch = |s: f64| contrast::Patch {
        mean_e: s,
        variance_e2: noise.at(s).total(),
    };
    (signal > 0.0)
        .then(|| {
            contrast::contrast_detection_probability(
                patch(signal * (1.0 + task.contrast)),
                patch(signal),
                task.contrast_interval,
            )
        })
        .flatten()
        .filter(|p| p.is_finite())
}

/// Only the contrast detection probability in `report.detection` (the rest stays null): what
/// the curves need to draw it against light level, at a small part of the exact tails' cost.
pub(crate) fn add_contrast(sc: &Scenario, noise: &OutputNoise, report: &mut Report) {
    report.detection.contrast_detection_probability =
        contrast_probability(sc, noise, report.signal_e);
}

/// Fill in `report.detection` for the scenario's output pixel and add the warnings.
pub(crate) fn add_detection(sc: &Scenario, noise: &OutputNoise, report: &mut Report) {
    let signal = report.signal_e;
    let inputs = summed_inputs(sc, noise, signal);
    let f = detection::evaluate(&inputs);
    let frames = noise.frames;
    let finite = |x: Option<f64>| x.filter(|v| v.is_finite());
    // The sum's charges as one frame's (the averaged output's).
    let per_frame = |x: Option<f64>| finite(x.map(|v| v / frames));
    let frame_sigma = (noise.reads * noise.per_read_e2()).sqrt();
    let counting = f
        .counting
        .and(counting::figures(
            frame_sigma,
            signal + noise.dark_e + noise.background_e,
        ))
        .filter(|c| {
            c.miscount_interior.is_finite()
                && c.miscount_zero.is_finite()
                && c.miscount_average.is_finite()
        });
    let task = &sc.detection;
    let cdp = contrast_probability(sc, noise, signal);
    report.detection = DetectionReport {
        threshold_e: per_frame(f.threshold_e),
        false_alarm_probability_achieved: finite(f.false_alarm_probability_achieved),
        signal_e: per_frame(f.signal_e),
        signal_e_gaussian: per_frame(f.signal_e_gaussian),
        threshold_e_gaussian: per_frame(f.threshold_e_gaussian),
        detection_probability: finite(f.detection_probability),
        detection_probability_gaussian: finite(f.detection_probability_gaussian),
        frame_false_alarm_probability: finite(f.frame_false_alarm_probability),
        pixel_false_alarm_for_frame: finite(f.pixel_false_alarm_for_frame),
        read_noise_e: per_frame(f.read_noise_e),
        counting,
        contrast_detection_probability: finite(cdp),
        contrast: task.contrast,
        contrast_interval: task.contrast_interval,
    };
    let d = &report.detection;
    let summed = if frames > 1.0 {
        format!(" (on the sum of the {} frames averaged)", sig(frames))
    } else {
        String::new()
    };
    let mut warnings = Vec::new();
    let w = &mut warnings;
    for caution in &f.cautions {
        match caution {
            DetectionCaution::GaussianMisleads => {
                if let (Some(exact), Some(gauss)) = (d.signal_e, d.signal_e_gaussian) {
                    warn(
                        w,
                        WarningCode::DetectionGaussianMisleads,
                        &[
                            "detection.signal_e_gaussian",
                            "detection.threshold_e_gaussian",
                            "detection.detection_probability_gaussian",
                        ],
                        format!(
                            "The Gaussian approximation puts the signal detected with probability \
                             {} at {} e⁻, the exact Poisson–Gaussian sum at {} e⁻: at so few \
                             electrons the charge is not Gaussian. Use the exact figures.",
                            sig(task.detection_probability),
                            sig(gauss),
                            sig(exact)
                        ),
                    );
                }
            }
            DetectionCaution::WholeElectrons => warn(
                w,
                WarningCode::DetectionWholeElectrons,
                &[
                    "detection.threshold_e",
                    "detection.signal_e",
                    "detection.signal_e_gaussian",
                ],
                format!(
                    "The read noise at the detection is {} e⁻ rms{summed}, below 0.5 e⁻: the charge \
                     comes in visible whole electrons, so the threshold sits between two of them \
                     and the detection figures move in steps as the settings change. A Gaussian \
                     picture (SNR, the Gaussian figures) misleads here.",
                    sig(inputs.read_variance_e2.sqrt())
                ),
            ),
            DetectionCaution::FalseAlarmNotExact => warn(
                w,
                WarningCode::DetectionFalseAlarmNotExact,
                &[
                    "detection.false_alarm_probability_achieved",
                    "detection.threshold_e",
                ],
                format!(
                    "Without Gaussian noise the charge is a whole number of electrons, so a \
                     false-alarm probability of {} per pixel cannot be had exactly: the \
                     threshold gives {}, the largest one possible below it.",
                    sig(task.false_alarm_probability),
                    d.false_alarm_probability_achieved
                        .map_or_else(|| "none".to_string(), sig)
                ),
            ),
            DetectionCaution::FrameFalseAlarmLikely => warn(
                w,
                WarningCode::DetectionFrameFalseAlarmLikely,
                &[
                    "detection.frame_false_alarm_probability",
                    "detection.pixel_false_alarm_for_frame",
                ],
                format!(
                    "A false-alarm probability of {} per pixel over {} pixels searched gives a \
                     false alarm somewhere in the frame with probability {}: more likely than \
                     not. For {} per frame, each pixel needs {}.",
                    sig(task.false_alarm_probability),
                    task.pixels,
                    d.frame_false_alarm_probability
                        .map_or_else(|| "—".to_string(), sig),
                    sig(task.false_alarm_probability),
                    d.pixel_false_alarm_for_frame
                        .map_or_else(|| "—".to_string(), sig)
                ),
            ),
        }
    }
    report.warnings.extend(warnings);
}
