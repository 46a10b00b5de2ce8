//! The version-1 model: a checked [`Scenario`] in, a [`Report`] out, exactly as SCENARIO.md says.
//!
//! Infallible: validation already guaranteed every input is in range, so each figure is a
//! plain number, or `None` where it genuinely does not exist. No parsing, no I/O, no formatting
//! of numbers for people (the warnings' sentences excepted).

use crate::constants::ZERO_CELSIUS_K;
use crate::report::{
    DynamicRange, LimitedBy, MinDetectable, NoiseParts, Report, Saturation, Snr, VarianceShare,
    Warning, WarningCode,
};
use crate::roots::positive_root;

use crate::light::{self, ResolvedLight, Response};
use crate::output_noise::OutputNoise;
use crate::scenario::{BinningMode, DarkCurrentLaw, Exposure, Scenario, Sensor};

mod detection;
mod extras;
use crate::spectrum::Spectrum;
use crate::{dark, quantization, sense_node};

/// Read noise below this (e⁻ rms, reset included) is the sub-electron regime where the
/// Gaussian SNR picture is a poor guide. Common practice ("deep sub-electron read noise",
/// REFERENCES.md §8), no single source.
pub const SUB_ELECTRON_READ_NOISE_E: f64 = 0.5;

/// Dark temporal variance in DN² below which EMVA 1288 Release 4 Linear reports only an upper
/// bound for the dark noise, because the 1/12 DN² quantization model is unreliable
/// (REFERENCES.md §3, from memory).
pub const EMVA_MIN_DARK_VARIANCE_DN2: f64 = 0.24;

/// Compute the report for a validated scenario.
///
/// # Formula
/// See SCENARIO.md, "The model"; each step below names the symbol it computes.
///
/// ```
/// let text = r#"{"version":1,"sensor":{"pixel_pitch_um":3.45,"quantum_efficiency":0.6,
///   "full_well_e":10000,"read_noise_e":2.5,"dark_current_e_per_s":0,"adc_bits":16,
///   "system_gain_dn_per_e":0.25},"light":{"photons_per_pixel":1000},"exposure":{"time_s":0.01}}"#;
/// let report = engine::evaluate(&engine::validate::scenario_from_json(text).unwrap());
/// // EMVA 1288 worked example of REFERENCES.md §4: μp = 1000 → SNR 24.34.
/// assert!((report.snr.temporal - 24.34).abs() < 0.005);
/// ```
#[must_use]
pub fn evaluate(sc: &Scenario) -> Report {
    evaluate_with(sc, &resolve_lights(sc))
}

/// The scenario's light and background light resolved to photons at the sensor: the spectral
/// integrals, which do not depend on the exposure, the pixel or the readout. A sweep that
/// varies none of the light's keys resolves once and reuses them. For a colour sensor, the
/// lights are resolved for each channel's response (R, G, B), and the scenario's own figures
/// are the green channel's.
#[derive(Debug, Clone, PartialEq)]
pub struct Lights {
    light: ResolvedLight,
    background: Option<ResolvedLight>,
    /// Per colour channel (R, G, B), the light and background light; empty for mono.
    channels: Vec<(ResolvedLight, Option<ResolvedLight>)>,
}

impl Lights {
    /// The same lights with the (signal) light at another amount (see
    /// [`ResolvedLight::at_amount`]).
    #[must_use]
    pub fn with_light_amount(&self, amount: f64) -> Lights {
        Lights {
            light: self.light.at_amount(amount),
            background: self.background.clone(),
            channels: self
                .channels
                .iter()
                .map(|(l, b)| (l.at_amount(amount), b.clone()))
                .collect(),
        }
    }
}

/// Index of the green channel in [`CHANNEL_NAMES`]: a colour sensor's own figures are its.
const GREEN: usize = 1;

/// Resolve the scenario's lights (see [`Lights`]).
#[must_use]
pub fn resolve_lights(sc: &Scenario) -> Lights {
    let sensor = &sc.sensor;
    let resolve = |quantum_efficiency: Option<f64>, curve: Option<&crate::spectrum::QeCurve>| {
        let response = Response {
            quantum_efficiency,
            curve,
            band_nm: sensor.response_band_nm,
        };
        (
            light::resolve(&sc.light, &response),
            sc.background_light
                .as_ref()
                .map(|l| light::resolve(l, &response)),
        )
    };
    match &sensor.colour {
        None => {
            let (light, background) = resolve(
                sensor.quantum_efficiency,
                sensor.quantum_efficiency_curve.as_ref(),
            );
            Lights {
                light,
                background,
                channels: Vec::new(),
            }
        }
        Some(cfa) => {
            let channels: Vec<_> = cfa
                .channels
                .iter()
                .map(|c| resolve(c.quantum_efficiency, c.quantum_efficiency_curve.as_ref()))
                .collect();
            let (light, background) = match channels.get(GREEN) {
                Some(g) => g.clone(),
                None => resolve(None, None),
            };
            Lights {
                light,
                background,
                channels,
            }
        }
    }
}

/// [`evaluate`] with the lights already resolved for this scenario.
#[must_use]
pub fn evaluate_with(sc: &Scenario, lights: &Lights) -> Report {
    evaluate_parts(sc, lights, Figures::All)
}

/// Which detection figures an evaluation computes: the page's curves draw SNR, and the CDP
/// against light level only, while the exact detection figures (tails, thresholds, photon
/// counting) cost several times the rest of an evaluation and the CDP alone 4–8× it
/// (the `sweep` benchmark).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Figures {
    /// Every figure of the report.
    All,
    /// The detection object null but its contrast detection probability.
    Contrast,
    /// The detection object null.
    Snr,
}

/// [`evaluate_with`], with only the detection figures `figures` asks for.
#[must_use]
pub(crate) fn evaluate_parts(sc: &Scenario, lights: &Lights, figures: Figures) -> Report {
    let base = pixel(
        sc,
        &sc.sensor,
        &sc.exposure,
        &lights.light,
        lights.background.as_ref(),
    );
    let mut report = base.report;
    match figures {
        Figures::All => detection::add_detection(sc, &base.noise, &mut report),
        Figures::Contrast => detection::add_contrast(sc, &base.noise, &mut report),
        Figures::Snr => {}
    }
    if sc.sensor.colour.is_some() {
        extras::add_colour(sc, lights, &mut report);
    }
    if let Some(hdr) = &sc.hdr {
        extras::add_hdr(
            sc,
            hdr,
            lights,
            &base.noise,
            base.capacity_out_e,
            &mut report,
        );
    }
    report
}

/// One pixel evaluated: its report, its noise terms and its output-pixel capacity
/// b²(L − d − background), e⁻ (≤ 0 when the dark fills it).
pub(crate) struct Pixel {
    pub(crate) report: Report,
    pub(crate) noise: OutputNoise,
    pub(crate) capacity_out_e: f64,
}

/// The version-1 model for one readout: `sensor` and `exposure` may differ from the
/// scenario's (an HDR readout's exposure time, read noise or gain), and `light` is resolved
/// for the response in question (the sensor's, or a colour channel's).
#[allow(non_snake_case)] // symbols as in SCENARIO.md
pub(crate) fn pixel(
    sc: &Scenario,
    sensor: &Sensor,
    exposure: &Exposure,
    light: &ResolvedLight,
    background: Option<&ResolvedLight>,
) -> Pixel {
    let t = exposure.time_s;
    let pitch2 = sensor.pixel_pitch_um * sensor.pixel_pitch_um;
    let b = f64::from(exposure.binning);
    let b2 = b * b;
    let N = f64::from(exposure.frames_averaged);
    let n = match exposure.binning_mode {
        BinningMode::Charge => 1.0,
        BinningMode::Digital => b2,
    };
    let k = sc.snr_threshold;
    let K = sensor.system_gain_dn_per_e;
    let T = sc.temperature_c + ZERO_CELSIUS_K;
    let p = sensor.prnu_percent / 100.0;

    // Light: photon flux Φ (photons µm⁻² s⁻¹) where the light kind has one, μp per pixel, and
    // the photon-weighted QE η (the single QE for light without a spectrum).
    let flux = light.photon_flux_per_um2_s;
    let eta = light.effective_qe;
    let mu_p = light
        .photons_per_pixel
        .unwrap_or_else(|| flux.unwrap_or(0.0) * pitch2 * t);

    // Background light: photons that are not signal. Its electrons per pixel per second (a
    // rate, for light given as flux) and per frame (for light given per pixel).
    let (bg_rate, bg_per_frame) = background.map_or((0.0, 0.0), |l| {
        let rate = l
            .photon_flux_per_um2_s
            .map_or(0.0, |f| l.effective_qe * f * pitch2);
        let fixed = l.photons_per_pixel.map_or(0.0, |ppp| l.effective_qe * ppp);
        (rate, fixed)
    });
    let bg = bg_rate * t + bg_per_frame;

    // Per physical pixel, one frame.
    let s = eta * mu_p;
    let dark_rate = sensor.dark_current_e_per_s
        * match sensor.dark_current_law {
            DarkCurrentLaw::Doubling => dark::temperature_factor(
                sc.temperature_c,
                sensor.dark_current_reference_c,
                sensor.dark_current_doubling_c,
            ),
            DarkCurrentLaw::Bandgap(gap) => {
                dark::bandgap_factor(sc.temperature_c, sensor.dark_current_reference_c, &gap)
            }
        };
    let d = dark_rate * t;
    // DSNU of one pixel: the fixed offset spread, and the dark current's own spread, which
    // grows with the dark charge: DSNU² = dsnu_e² + (p_d·d)².
    let dark_spread_e = sensor.dark_current_nonuniformity_percent / 100.0 * d;
    let dsnu_e2 = sensor.dsnu_e * sensor.dsnu_e + dark_spread_e * dark_spread_e;
    let capacitance_ff = sensor.sense_node_capacitance_ff.or(sensor
        .conversion_gain_uv_per_e
        .map(sense_node::capacitance_ff));
    let conversion_gain = sensor.conversion_gain_uv_per_e.or(sensor
        .sense_node_capacitance_ff
        .map(sense_node::conversion_gain_uv_per_e));
    let var_read = sensor.read_noise_e * sensor.read_noise_e;
    let var_reset = capacitance_ff.map_or(0.0, |c| {
        sensor.readout.reset_variance_multiple() * sense_node::reset_variance_e2(c, T)
    });
    let var_quant = quantization::quantization_variance_e2(K);
    let var_per_read = var_read + var_reset + var_quant;

    // Per output pixel: b × b pixels combined, N frames averaged.
    let S = b2 * s;
    let D = b2 * d;
    let B = b2 * bg;
    // PRNU scales all photo-charge, the background's too (zero without one, as in SCENARIO.md).
    let output_noise = OutputNoise {
        frames: N,
        reads: n,
        pixels: b2,
        dark_e: D,
        background_e: B,
        read_e2: var_read,
        reset_e2: var_reset,
        quantization_e2: var_quant,
        dsnu_e2,
        prnu: p,
    };
    let v = output_noise.at(S);
    let (v_shot, v_dark, v_background) = (v.photon_shot, v.dark_shot, v.background_shot);
    let (v_read, v_reset, v_quant) = (v.read, v.reset, v.quantization);
    let (v_dsnu, v_prnu) = (v.dsnu, v.prnu);
    let v_temporal = v.temporal();
    let v_total = v.total();

    let noise_e = NoiseParts {
        photon_shot: v_shot.sqrt(),
        dark_shot: v_dark.sqrt(),
        background_shot: v_background.sqrt(),
        read: v_read.sqrt(),
        reset: v_reset.sqrt(),
        quantization: v_quant.sqrt(),
        temporal: v_temporal.sqrt(),
        dsnu: v_dsnu.sqrt(),
        prnu: v_prnu.sqrt(),
        total: v_total.sqrt(),
    };
    let variance_share = VarianceShare {
        photon_shot: v_shot / v_total,
        dark_shot: v_dark / v_total,
        background_shot: v_background / v_total,
        read: v_read / v_total,
        reset: v_reset / v_total,
        quantization: v_quant / v_total,
        dsnu: v_dsnu / v_total,
        prnu: v_prnu / v_total,
    };
    let snr_temporal = S / v_temporal.sqrt();
    let snr_total = S / v_total.sqrt();
    let snr = Snr {
        temporal: snr_temporal,
        total: snr_total,
        temporal_db: db(snr_temporal),
        total_db: db(snr_total),
    };

    // Saturation, per physical pixel (SCENARIO.md, revision of 2026-12-02): with `charge`
    // binning the b² charges are summed and digitised once, so under uniform light each pixel
    // may contribute at most L_adc/b² (and summing_well_e/b²); ties go to the earlier term.
    let full_scale_dn = f64::from(sensor.adc_bits).exp2() - 1.0;
    let adc_level_e = (full_scale_dn - sensor.black_level_dn) / K;
    let summed_charge = exposure.binning_mode == BinningMode::Charge;
    let per_pixel_share = if summed_charge { b2 } else { 1.0 };
    let mut L = sensor.full_well_e;
    let mut limited_by = LimitedBy::FullWell;
    if adc_level_e / per_pixel_share < L {
        L = adc_level_e / per_pixel_share;
        limited_by = LimitedBy::Adc;
    }
    if let Some(well) = sensor.summing_well_e.filter(|_| summed_charge) {
        if well / b2 < L {
            L = well / b2;
            limited_by = LimitedBy::SummingWell;
        }
    }
    // Background charge occupies the well like dark charge (both zero-free in version 1).
    let capacity = L - d - bg;
    let per_unit_photons = |unit: f64| unit * pitch2 * t;
    let in_units = |photons_per_pixel: f64| -> crate::report::LightUnits {
        light
            .units
            .iter()
            .filter(|(_, per)| *per > 0.0)
            .map(|(k, per)| (*k, photons_per_pixel / per_unit_photons(*per)))
            .collect()
    };
    let saturation = Saturation {
        level_e: L,
        capacity_e: capacity,
        fill_fraction: (s + d + bg) / L,
        saturated: s + d + bg > L,
        limited_by,
        light_units: if capacity > 0.0 {
            in_units(capacity / eta)
        } else {
            crate::report::LightUnits::new()
        },
    };

    // Minimum detectable signal per output pixel (one-frame σ0², as SCENARIO.md defines it).
    let sigma0_sq = D + B + n * var_per_read;
    let k2 = k * k;
    // σ0² ≥ n/(12K²) > 0, so the temporal root always exists and is positive.
    let min_t = positive_root(N, k2, k2 * sigma0_sq).unwrap_or(f64::INFINITY);
    // With background B, PRNU acts on S + B: p²(S + B)²/b² adds 2p²B/b² to the linear term
    // and p²B²/b² to the constant (both zero in version 1).
    let prnu_coefficient = 1.0 - k2 * p * p / b2;
    let min_total = positive_root(
        prnu_coefficient,
        k2 / N + 2.0 * k2 * p * p * B / b2,
        k2 * (sigma0_sq / N + b2 * dsnu_e2 + p * p * B * B / b2),
    );
    let min_photons = min_t / (b2 * eta);
    let min_detectable = MinDetectable {
        signal_e: min_t,
        signal_e_total: min_total,
        photons_per_pixel: min_photons,
        photon_flux_per_um2_s: flux.map(|_| min_photons / (pitch2 * t)),
        light_units: in_units(min_photons),
    };

    // Dynamic range and maximum SNR at the output pixel's capacity b²(L − d).
    let capacity_out = (capacity > 0.0).then_some(b2 * capacity);
    let dr = capacity_out.map(|c| c / min_t);
    let dynamic_range = DynamicRange {
        ratio: dr,
        db: dr.and_then(db),
        stops: dr.map(f64::log2),
    };
    let max_snr = capacity_out.map(|c| c / ((c + D + B + n * var_per_read) / N).sqrt());

    // Exposure for the threshold: N·a²·t² − k²(a + r)·t − k²·σ0r² = 0. Solved for the signal
    // u = a·t instead (N·u² − k²(1 + r/a)·u − k²·σ0r² = 0), so that a faint light's a² cannot
    // underflow; t = u / a.
    let rate_signal = flux.map(|phi| b2 * eta * phi * pitch2).filter(|a| *a > 0.0);
    // Background light given as a rate adds to r; given per frame, to the constant term.
    let rate_dark = b2 * (dark_rate + bg_rate);
    let exposure_for_threshold_s = rate_signal.and_then(|a| {
        positive_root(
            N,
            k2 * (1.0 + rate_dark / a),
            k2 * (n * var_per_read + b2 * bg_per_frame),
        )
        .map(|u| u / a)
        .filter(|t| t.is_finite())
    });

    let mut warnings = Vec::new();
    let w = &mut warnings;
    if S == 0.0 {
        warn(
            w,
            WarningCode::NoLight,
            &["signal_e", "snr.temporal", "snr.total"],
            "No light reaches the pixel: the signal and the SNR are zero.".into(),
        );
    }
    if saturation.saturated {
        warn(w, WarningCode::Saturated, &["saturation.fill_fraction", "snr.temporal", "snr.total"],
            format!(
                "The pixel saturates: signal{} and dark charge add up to {} e⁻, above the usable level \
                 of {} e⁻ (set by the {}). The figures assume a linear response; the real frame clips.",
                if bg > 0.0 { ", background" } else { "" }, sig(s + d + bg), sig(L),
                limited_by_words(limited_by)));
    }
    if capacity <= 0.0 {
        warn(w, WarningCode::DarkFillsPixel, &["saturation.capacity_e", "dynamic_range.ratio", "max_snr"],
            format!(
                "Dark charge alone ({} e⁻) fills the usable level of {} e⁻: no signal capacity is \
                 left, so dynamic range and maximum SNR do not exist. Shorten the exposure or cool the sensor.",
                sig(d), sig(L)));
    }
    if let (Some(a), Some(te)) = (rate_signal, exposure_for_threshold_s) {
        let per_pixel = (a / b2 + dark_rate + bg_rate) * te + bg_per_frame;
        if per_pixel > L {
            warn(w, WarningCode::ThresholdExposureBeyondSaturation, &["exposure_for_threshold_s"],
                format!(
                    "Reaching SNR {} needs {} s, but by then each pixel holds {} e⁻, above its usable \
                     level of {} e⁻: the threshold cannot be reached in one frame at this light level.",
                    sig(k), sig(te), sig(per_pixel), sig(L)));
        }
    }
    if rate_signal.is_some() && exposure_for_threshold_s.is_none() {
        warn(w, WarningCode::ThresholdExposureOutOfRange, &["exposure_for_threshold_s"],
            "The light is so faint that the exposure for the threshold is beyond any representable time.".into());
    }
    if min_total.is_none() {
        warn(
            w,
            WarningCode::ThresholdUnreachablePrnu,
            &["min_detectable.signal_e_total", "snr.total"],
            format!(
                "PRNU of {} % caps the total SNR at {} for any signal, below the threshold {}: \
                 no signal is detectable against the fixed pattern.",
                sig(sensor.prnu_percent),
                sig(b / p),
                sig(k)
            ),
        );
    }
    if let Some(c) = capacity_out {
        if min_t > c {
            warn(
                w,
                WarningCode::ThresholdBeyondSaturation,
                &["min_detectable.signal_e"],
                format!(
                    "The signal needed for SNR {} ({} e⁻) is more than the pixel can hold ({} e⁻).",
                    sig(k),
                    sig(min_t),
                    sig(c)
                ),
            );
        } else if let Some(mt) = min_total.filter(|mt| *mt > c) {
            warn(
                w,
                WarningCode::ThresholdBeyondSaturation,
                &["min_detectable.signal_e_total"],
                format!(
                    "With fixed-pattern noise, the signal needed for SNR {} ({} e⁻) is more than \
                     the pixel can hold ({} e⁻).",
                    sig(k),
                    sig(mt),
                    sig(c)
                ),
            );
        }
    }
    if var_reset > var_read {
        warn(w, WarningCode::ResetNoiseDominates, &["noise_e.reset", "noise_e.read"],
            format!(
                "Reset (kTC) noise of {} e⁻ per read exceeds the read noise of {} e⁻: the {} readout \
                 does not cancel it. Correlated double sampling of a pinned-photodiode pixel would.",
                sig(var_reset.sqrt()), sig(sensor.read_noise_e), sensor.readout.as_str()));
    }
    let analog_read_e = (var_read + var_reset).sqrt();
    if analog_read_e < SUB_ELECTRON_READ_NOISE_E {
        warn(
            w,
            WarningCode::SubElectronReadNoise,
            &["noise_e.read", "min_detectable.signal_e"],
            format!(
                "Read noise of {} e⁻ is below 0.5 e⁻: single electrons are nearly resolved, the \
                 noise is far from Gaussian, and SNR-based detection limits are a poor guide. \
                 Use photon-counting statistics for decisions here.",
                sig(analog_read_e)
            ),
        );
    }
    if var_quant > var_read + var_reset {
        warn(
            w,
            WarningCode::QuantizationDominates,
            &["noise_e.quantization", "noise_e.read"],
            format!(
                "Quantization noise of {} e⁻ exceeds the read noise of {} e⁻: one DN spans {} e⁻. \
                 Raise the system gain to resolve the read noise.",
                sig(var_quant.sqrt()),
                sig(analog_read_e),
                sig(1.0 / K)
            ),
        );
    }
    let dark_variance_dn2 = K * K * (var_read + var_reset + d) + 1.0 / 12.0;
    if dark_variance_dn2 < EMVA_MIN_DARK_VARIANCE_DN2 {
        warn(w, WarningCode::DarkNoiseBelowHalfDn, &["noise_e.quantization"],
            format!(
                "The dark noise is {} DN rms, below about 0.5 DN: the 1/12 DN² quantization model \
                 is unreliable there (EMVA 1288), so the quantization and read noise figures are estimates.",
                sig(dark_variance_dn2.sqrt())));
    }
    if exposure.binning_mode == BinningMode::Charge
        && exposure.binning > 1
        && sensor.summing_well_e.is_none()
        && b2 * (s + d) > sensor.full_well_e
    {
        warn(
            w,
            WarningCode::BinnedChargeExceedsFullWell,
            &["signal_e", "saturation.fill_fraction"],
            format!(
                "Charge binning sums {} e⁻, more than one pixel's full well of {} e⁻: whether the \
                 summing node holds it depends on the sensor; give sensor.summing_well_e to have \
                 the model check it.",
                sig(b2 * (s + d)),
                sig(sensor.full_well_e)
            ),
        );
    }
    let all_lights = std::iter::once(("light", &sc.light, Some(light))).chain(
        sc.background_light
            .iter()
            .map(|b| ("background_light", b, background)),
    );
    for (which, l, resolved) in all_lights {
        let Some(spectrum) = l.spectrum() else {
            continue;
        };
        if let Some(outside) = resolved.and_then(|r| r.outside_band_share) {
            if outside > LIGHT_OUTSIDE_BAND_SHARE {
                warn(
                    w,
                    WarningCode::LightOutsideBand,
                    &["light.photon_flux_per_um2_s", "signal_e"],
                    format!(
                        "{} % of the photons of {which}'s {} spectrum between 300 and 1100 nm fall \
                         outside the sensor's response band {}–{} nm and are not counted. A sensor \
                         without an IR-cut filter collects them: widen sensor.response_to_nm or \
                         give a QE curve.",
                        sig(outside * 100.0), spectrum.kind(), sig(sensor.response_band_nm.0),
                        sig(sensor.response_band_nm.1)),
                );
            }
        }
        let line_or_nir = match spectrum {
            Spectrum::Monochromatic { .. } => true,
            Spectrum::Gaussian { centre_nm, .. } => *centre_nm > 700.0,
            _ => false,
        };
        if line_or_nir {
            warn(
                w,
                WarningCode::EyeSafety,
                &["light.photon_flux_per_um2_s"],
                format!(
                    "{which} is a line or near-infrared source: such sources can harm eyes without \
                     looking bright. This calculator does not assess eye safety; check the source \
                     against IEC 60825-1 (lasers) or IEC 62471 (LEDs and lamps) before use."),
            );
        }
    }
    if let (Some(c), Some(cg)) = (
        sensor.sense_node_capacitance_ff,
        sensor.conversion_gain_uv_per_e,
    ) {
        let at_node = sense_node::conversion_gain_uv_per_e(c);
        if cg > at_node * (1.0 + 1e-9) {
            warn(w, WarningCode::ConversionGainAboveSenseNode, &["conversion_gain_uv_per_e"],
                format!(
                    "The conversion gain {} µV/e⁻ is higher than q/C = {} µV/e⁻ for {} fF: a source \
                     follower's gain is below 1, so one of the two values is likely wrong.",
                    sig(cg), sig(at_node), sig(c)));
        }
    }

    let report = Report {
        version: 1,
        photons_per_pixel: mu_p,
        signal_e: S,
        dark_e: D,
        background_e: B,
        light: light.summary.clone(),
        signal_dn: K * S,
        conversion_gain_uv_per_e: conversion_gain,
        sense_node_capacitance_ff: capacitance_ff,
        dark_current_at_temperature_e_per_s: dark_rate,
        noise_e,
        noise_dn: noise_e.scaled(K),
        noise_uv: conversion_gain.map(|cg| noise_e.scaled(cg)),
        variance_share,
        snr,
        saturation,
        min_detectable,
        dynamic_range,
        max_snr,
        exposure_for_threshold_s,
        dark_current_law: sensor.dark_current_law.as_str(),
        channels: None,
        colour: None,
        hdr: None,
        detection: detection::empty(sc),
        warnings,
    };
    Pixel {
        report,
        noise: output_noise,
        capacity_out_e: b2 * capacity,
    }
}

/// Share of photons outside the response band above which `light_outside_band` is raised:
/// 5 %, an everyday "noticeable" (common practice, no source).
pub const LIGHT_OUTSIDE_BAND_SHARE: f64 = 0.05;

fn warn(list: &mut Vec<Warning>, code: WarningCode, concerns: &[&'static str], message: String) {
    list.push(Warning {
        code,
        message,
        concerns: concerns.to_vec(),
    });
}

/// 20·log10 of a ratio; `None` for a ratio that is zero (no dB figure exists).
fn db(ratio: f64) -> Option<f64> {
    (ratio > 0.0).then(|| 20.0 * ratio.log10())
}

fn limited_by_words(l: LimitedBy) -> &'static str {
    match l {
        LimitedBy::FullWell => "full well",
        LimitedBy::Adc => "ADC full scale above the black level",
        LimitedBy::SummingWell => "summing node of the charge binning",
    }
}

/// A figure for a sentence: 4 significant digits, exponent form outside everyday magnitudes.
fn sig(x: f64) -> String {
    let a = x.abs();
    if a == 0.0 {
        return "0".into();
    }
    if !(1e-3..1e6).contains(&a) {
        return crate::decimal::ExpFixed(x, 3).to_string();
    }
    // OK because a is within [1e-3, 1e6): the digit count is between 0 and 6.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let decimals = (3.0 - a.log10().floor()).max(0.0) as usize;
    let text = crate::decimal::Fixed(x, decimals).to_string();
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}
