//! The report: every figure the model gives for a scenario, and the warnings a user must see.
//!
//! Plain data with `serde::Serialize`; a figure that does not exist is `None` (JSON `null`).
//! Nothing is computed here.

use serde::ser::SerializeMap;
use serde::{Serialize, Serializer};

pub use crate::light::LightSummary;

/// A figure in each unit the light was given in, by the unit's key (`illuminance_lux`,
/// `irradiance_w_per_m2`, …), in the keys' order, each key once: written as a JSON object.
///
/// A sorted list rather than a `BTreeMap`: the same order and JSON, and about 2 KB less of the
/// self-contained page once packed (a B-tree's code for one more key and value type).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LightUnits(Vec<(&'static str, f64)>);

impl LightUnits {
    /// No units.
    #[must_use]
    pub fn new() -> Self {
        Self::default()
    }

    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    #[must_use]
    pub fn len(&self) -> usize {
        self.0.len()
    }

    /// The figure in `unit`, if the light was given in it.
    #[must_use]
    pub fn get(&self, unit: &str) -> Option<f64> {
        self.0.iter().find(|(k, _)| *k == unit).map(|(_, v)| *v)
    }

    /// The figures in the keys' order.
    pub fn values(&self) -> impl Iterator<Item = f64> + '_ {
        self.0.iter().map(|(_, v)| *v)
    }

    /// The units and figures in the keys' order.
    pub fn iter(&self) -> impl Iterator<Item = (&'static str, f64)> + '_ {
        self.0.iter().copied()
    }
}

impl FromIterator<(&'static str, f64)> for LightUnits {
    /// In the keys' order; of a key given twice, the last value (as a map's insert keeps).
    fn from_iter<I: IntoIterator<Item = (&'static str, f64)>>(items: I) -> Self {
        let mut v: Vec<(&'static str, f64)> = Vec::new();
        for (k, x) in items {
            match v.iter_mut().find(|(key, _)| *key == k) {
                Some(slot) => slot.1 = x,
                None => v.push((k, x)),
            }
        }
        crate::small_sort::sort_by(&mut v, |a, b| a.0.cmp(b.0));
        LightUnits(v)
    }
}

impl std::ops::Index<&str> for LightUnits {
    type Output = f64;
    /// The figure in `unit`; NaN where the light was not given in it (`get` tells which).
    fn index(&self, unit: &str) -> &f64 {
        self.0
            .iter()
            .find(|(k, _)| *k == unit)
            .map_or(&f64::NAN, |(_, v)| v)
    }
}

impl Serialize for LightUnits {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            map.serialize_entry(k, v)?;
        }
        map.end()
    }
}

/// The noise budget of one output pixel after averaging, one entry per source, rms.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct NoiseParts {
    /// Photon (signal) shot noise.
    pub photon_shot: f64,
    /// Dark-current shot noise.
    pub dark_shot: f64,
    /// Shot noise of the background light (zero without one).
    pub background_shot: f64,
    /// Read noise.
    pub read: f64,
    /// Reset (kTC) noise left by the readout.
    pub reset: f64,
    /// Quantization noise.
    pub quantization: f64,
    /// All temporal parts together.
    pub temporal: f64,
    /// Dark signal non-uniformity (fixed pattern).
    pub dsnu: f64,
    /// Photo-response non-uniformity (fixed pattern).
    pub prnu: f64,
    /// Temporal and fixed-pattern parts together.
    pub total: f64,
}

impl NoiseParts {
    /// Every entry multiplied by `factor` (a unit conversion).
    #[must_use]
    pub fn scaled(&self, factor: f64) -> NoiseParts {
        NoiseParts {
            photon_shot: self.photon_shot * factor,
            dark_shot: self.dark_shot * factor,
            background_shot: self.background_shot * factor,
            read: self.read * factor,
            reset: self.reset * factor,
            quantization: self.quantization * factor,
            temporal: self.temporal * factor,
            dsnu: self.dsnu * factor,
            prnu: self.prnu * factor,
            total: self.total * factor,
        }
    }

    /// The entries as (report key, value) pairs, sources first, sums last.
    #[must_use]
    pub fn entries(&self) -> [(&'static str, f64); 10] {
        [
            ("photon_shot", self.photon_shot),
            ("dark_shot", self.dark_shot),
            ("background_shot", self.background_shot),
            ("read", self.read),
            ("reset", self.reset),
            ("quantization", self.quantization),
            ("temporal", self.temporal),
            ("dsnu", self.dsnu),
            ("prnu", self.prnu),
            ("total", self.total),
        ]
    }
}

/// Each source's share of the total variance (0..1); the shares of the eight sources sum to 1.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct VarianceShare {
    /// Photon shot noise.
    pub photon_shot: f64,
    /// Dark shot noise.
    pub dark_shot: f64,
    /// Background-light shot noise.
    pub background_shot: f64,
    /// Read noise.
    pub read: f64,
    /// Reset noise.
    pub reset: f64,
    /// Quantization noise.
    pub quantization: f64,
    /// DSNU.
    pub dsnu: f64,
    /// PRNU.
    pub prnu: f64,
}

/// Signal-to-noise ratios of one output pixel.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Snr {
    /// Signal over temporal noise.
    pub temporal: f64,
    /// Signal over temporal and fixed-pattern noise.
    pub total: f64,
    /// 20·log10 of the temporal SNR; `None` when the SNR is zero.
    pub temporal_db: Option<f64>,
    /// 20·log10 of the total SNR; `None` when the SNR is zero.
    pub total_db: Option<f64>,
}

/// What sets the usable level of a pixel.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitedBy {
    /// The full-well capacity.
    FullWell,
    /// The ADC's full scale above the black level (divided by b² for `charge` binning).
    Adc,
    /// The summing node of `charge` binning (`sensor.summing_well_e`, divided by b²).
    SummingWell,
}

/// Saturation of one physical pixel.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Saturation {
    /// Usable level L, e⁻.
    pub level_e: f64,
    /// Signal capacity L − d, e⁻ (negative when dark charge alone exceeds L).
    pub capacity_e: f64,
    /// (s + d) / L.
    pub fill_fraction: f64,
    /// Whether s + d > L.
    pub saturated: bool,
    /// What sets L.
    pub limited_by: LimitedBy,
    /// The light that fills the capacity, in each unit the light was given in; empty when
    /// the capacity is ≤ 0 or the light is given per pixel.
    pub light_units: LightUnits,
}

/// The smallest signal that reaches the SNR threshold.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MinDetectable {
    /// Per output pixel, temporal noise only, e⁻.
    pub signal_e: f64,
    /// Per output pixel, temporal and fixed-pattern noise, e⁻; `None` when PRNU forbids it.
    pub signal_e_total: Option<f64>,
    /// The temporal minimum as photons per physical pixel.
    pub photons_per_pixel: f64,
    /// The temporal minimum as photon flux at the sensor; `None` for light given per pixel.
    pub photon_flux_per_um2_s: Option<f64>,
    /// The temporal minimum in each unit the light was given in (`illuminance_lux`,
    /// `scene_illuminance_lux`, `irradiance_w_per_m2`, …).
    pub light_units: LightUnits,
}

/// Dynamic range of one output pixel.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DynamicRange {
    /// Capacity over the temporal minimum detectable signal; `None` when the capacity is ≤ 0.
    pub ratio: Option<f64>,
    /// 20·log10 of the ratio.
    pub db: Option<f64>,
    /// log2 of the ratio.
    pub stops: Option<f64>,
}

/// A condition the user must see, with a stable code.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Warning {
    /// Stable identifier; see [`WarningCode`].
    pub code: WarningCode,
    /// A plain sentence with the figures that triggered it.
    pub message: String,
    /// Report keys (dot paths) this warning is about, so a page can show it beside them.
    pub concerns: Vec<&'static str>,
}

/// The stable warning codes. New codes may be added; existing ones keep their meaning.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(into = "&'static str")]
#[non_exhaustive]
pub enum WarningCode {
    /// The signal plus dark charge exceeds the usable level: the frame clips.
    Saturated,
    /// Dark charge alone fills the pixel: no signal capacity is left.
    DarkFillsPixel,
    /// The exposure for the threshold would saturate the pixel.
    ThresholdExposureBeyondSaturation,
    /// PRNU caps the total SNR below the threshold at any signal.
    ThresholdUnreachablePrnu,
    /// The signal needed for the threshold (temporal, or total) is beyond the pixel's capacity.
    ThresholdBeyondSaturation,
    /// The light is so faint that the exposure for the threshold cannot be represented.
    ThresholdExposureOutOfRange,
    /// Reset (kTC) noise is larger than the read noise.
    ResetNoiseDominates,
    /// Read noise below 0.5 e⁻: photon-counting regime, Gaussian SNR is a poor guide.
    SubElectronReadNoise,
    /// Quantization noise is larger than the analog read noise: one DN spans many electrons.
    QuantizationDominates,
    /// Dark noise below 0.5 DN: the 1/12 DN² quantization model is unreliable.
    DarkNoiseBelowHalfDn,
    /// Charge binning sums more charge than one pixel's full well.
    BinnedChargeExceedsFullWell,
    /// The conversion gain given is higher than q/C for the capacitance given.
    ConversionGainAboveSenseNode,
    /// No light: the signal is zero.
    NoLight,
    /// A noticeable part of the spectrum's photons falls outside the sensor's response band.
    LightOutsideBand,
    /// A line or near-infrared source: eye safety is not assessed here.
    EyeSafety,
    /// A colour channel saturates at the scenario's light (the green channel's figures may not show it).
    ChannelSaturated,
    /// At an HDR switch point the next readout is already saturated: the output clips there.
    HdrNextSaturatedAtSwitch,
    /// An HDR transition's SNR dip is large (6 dB or more).
    HdrDeepDip,
    /// The Gaussian detection figures differ from the exact ones by more than 10 %.
    DetectionGaussianMisleads,
    /// Read noise below 0.5 e⁻ at the detection: the charge comes in whole electrons and the
    /// detection figures move in steps.
    DetectionWholeElectrons,
    /// No Gaussian noise at the detection: the false-alarm probability asked for cannot be
    /// had exactly; the achieved one is lower.
    DetectionFalseAlarmNotExact,
    /// A false alarm somewhere in the frame is more likely than not.
    DetectionFrameFalseAlarmLikely,
}

impl WarningCode {
    /// The code as written in reports (`saturated`, `reset_noise_dominates`, …).
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            WarningCode::Saturated => "saturated",
            WarningCode::DarkFillsPixel => "dark_fills_pixel",
            WarningCode::ThresholdExposureBeyondSaturation => {
                "threshold_exposure_beyond_saturation"
            }
            WarningCode::ThresholdUnreachablePrnu => "threshold_unreachable_prnu",
            WarningCode::ThresholdBeyondSaturation => "threshold_beyond_saturation",
            WarningCode::ThresholdExposureOutOfRange => "threshold_exposure_out_of_range",
            WarningCode::ResetNoiseDominates => "reset_noise_dominates",
            WarningCode::SubElectronReadNoise => "sub_electron_read_noise",
            WarningCode::QuantizationDominates => "quantization_dominates",
            WarningCode::DarkNoiseBelowHalfDn => "dark_noise_below_half_dn",
            WarningCode::BinnedChargeExceedsFullWell => "binned_charge_exceeds_full_well",
            WarningCode::ConversionGainAboveSenseNode => "conversion_gain_above_sense_node",
            WarningCode::NoLight => "no_light",
            WarningCode::LightOutsideBand => "light_outside_band",
            WarningCode::EyeSafety => "eye_safety",
            WarningCode::ChannelSaturated => "channel_saturated",
            WarningCode::HdrNextSaturatedAtSwitch => "hdr_next_saturated_at_switch",
            WarningCode::HdrDeepDip => "hdr_deep_dip",
            WarningCode::DetectionGaussianMisleads => "detection_gaussian_misleads",
            WarningCode::DetectionWholeElectrons => "detection_whole_electrons",
            WarningCode::DetectionFalseAlarmNotExact => "detection_false_alarm_not_exact",
            WarningCode::DetectionFrameFalseAlarmLikely => "detection_frame_false_alarm_likely",
        }
    }
}

impl From<WarningCode> for &'static str {
    fn from(c: WarningCode) -> Self {
        c.as_str()
    }
}

/// Every figure of the format-version-1 report. Extra keys beyond the format: `noise_dn`,
/// `noise_uv`, `variance_share`, `sense_node_capacitance_ff`,
/// `dark_current_at_temperature_e_per_s`, `background_e`, `light`, `noise_*.background_shot`,
/// `min_detectable.light_units`, `saturation.light_units`, `detection` (docs/scenario-format.md).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// Format version, 1.
    pub version: u64,
    /// Photons per physical pixel per frame.
    pub photons_per_pixel: f64,
    /// Signal S per output pixel, e⁻.
    pub signal_e: f64,
    /// Dark charge D per output pixel, e⁻.
    pub dark_e: f64,
    /// Background-light charge per output pixel, e⁻ (not signal; zero without one).
    pub background_e: f64,
    /// The light at the sensor: photon flux, effective QE, band, photometric values.
    pub light: LightSummary,
    /// K·S, DN above the black level.
    pub signal_dn: f64,
    /// Output-referred conversion gain, µV/e⁻ (given, or q/C); `None` when neither is known.
    pub conversion_gain_uv_per_e: Option<f64>,
    /// Sense-node capacitance, fF (given, or q/CG); `None` when neither is known.
    pub sense_node_capacitance_ff: Option<f64>,
    /// Dark current at the sensor temperature, e⁻/s per physical pixel.
    pub dark_current_at_temperature_e_per_s: f64,
    /// The noise budget in electrons rms.
    pub noise_e: NoiseParts,
    /// The noise budget in DN rms (× K).
    pub noise_dn: NoiseParts,
    /// The noise budget in µV rms at the output (× conversion gain); `None` without it.
    pub noise_uv: Option<NoiseParts>,
    /// Each source's share of the total variance.
    pub variance_share: VarianceShare,
    /// Signal-to-noise ratios.
    pub snr: Snr,
    /// Saturation of one physical pixel.
    pub saturation: Saturation,
    /// Minimum detectable signal.
    pub min_detectable: MinDetectable,
    /// Dynamic range; its figures are `None` when the capacity is ≤ 0.
    pub dynamic_range: DynamicRange,
    /// Temporal SNR at the capacity; `None` when the capacity is ≤ 0.
    pub max_snr: Option<f64>,
    /// Exposure time that reaches the threshold (temporal SNR), s.
    pub exposure_for_threshold_s: Option<f64>,
    /// The law that scaled the dark current to the temperature: `doubling` or `bandgap`.
    pub dark_current_law: &'static str,
    /// A colour sensor's channels R, G, B, each its own noise budget (absent for mono; the
    /// figures above are then the green channel's).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub channels: Option<Vec<ChannelFigures>>,
    /// A colour sensor's output colours after white balance and the colour matrix, and the
    /// luminance (absent for mono).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub colour: Option<ColourFigures>,
    /// The combined output of an HDR readout (absent without one; the figures above are then
    /// the first readout's).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub hdr: Option<HdrFigures>,
    /// Detection beyond the Gaussian picture at the output pixel (always present; its figures
    /// are `null` where they cannot be computed).
    pub detection: DetectionReport,
    /// Conditions the user must see.
    pub warnings: Vec<Warning>,
}

/// The detection figures of the output pixel (`crate::detection`), for the scenario's
/// `detection` task. With N frames averaged the detection is made on the sum of the N frames
/// (Poisson of N·(s + d), Gaussian variance N·σ²), and every charge below is per frame (the
/// sum's ÷ N, as the averaged output reads); probabilities are the sum's.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DetectionReport {
    /// Decision threshold τ on the charge [e⁻], dark included, for the per-pixel p_fa.
    pub threshold_e: Option<f64>,
    /// The false-alarm probability τ gives (= p_fa except without Gaussian noise).
    pub false_alarm_probability_achieved: Option<f64>,
    /// The signal [e⁻], dark excluded, detected with the required probability (exact).
    pub signal_e: Option<f64>,
    /// The same in the Gaussian approximation, at its own threshold [e⁻].
    pub signal_e_gaussian: Option<f64>,
    /// The Gaussian approximation's threshold [e⁻].
    pub threshold_e_gaussian: Option<f64>,
    /// Probability that the scenario's own signal exceeds τ (exact).
    pub detection_probability: Option<f64>,
    /// The same in the Gaussian approximation.
    pub detection_probability_gaussian: Option<f64>,
    /// Probability of at least one false alarm among the pixels searched in a frame,
    /// 1 − (1 − p_fa)^M.
    pub frame_false_alarm_probability: Option<f64>,
    /// The per-pixel p_fa that would make p_fa the per-frame probability over M pixels.
    pub pixel_false_alarm_for_frame: Option<f64>,
    /// The Gaussian (read, reset, quantization) noise of the output pixel [e⁻ rms].
    pub read_noise_e: Option<f64>,
    /// Photon-counting figures of one frame's read (absent where they cannot be computed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub counting: Option<crate::detection::counting::CountingFigures>,
    /// Probability that the measured Weber contrast of a target patch (signal × (1 + C))
    /// against a reference patch (the scenario's signal), one output pixel each with the
    /// model's temporal and fixed-pattern noise, lies within ±ε·|C| of C.
    pub contrast_detection_probability: Option<f64>,
    /// C, from `detection.contrast`.
    pub contrast: f64,
    /// ε, from `detection.contrast_interval`.
    pub contrast_interval: f64,
}

/// One colour channel of a colour sensor: its own noise budget at the scenario's light.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChannelFigures {
    /// `R`, `G` or `B`.
    pub name: &'static str,
    /// The channel's photon-weighted quantum efficiency for this light.
    pub quantum_efficiency: f64,
    /// Signal per output pixel, e⁻.
    pub signal_e: f64,
    /// K·S, DN above the black level.
    pub signal_dn: f64,
    /// Its noise budget, e⁻ rms.
    pub noise_e: NoiseParts,
    /// Its signal-to-noise ratios.
    pub snr: Snr,
    /// (s + d)/L of its pixels.
    pub fill_fraction: f64,
    /// Its pixels saturate.
    pub saturated: bool,
    /// Its temporal minimum detectable signal per output pixel, e⁻.
    pub min_detectable_e: f64,
}

/// One output colour (or the luminance) after white balance and the colour matrix.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutputColour {
    /// `R`, `G`, `B`, or `Y` for the luminance.
    pub name: &'static str,
    /// Its mean, in raw electrons through the gains and the matrix.
    pub signal_e: f64,
    /// Temporal noise, same units.
    pub noise_e: f64,
    /// Temporal and fixed-pattern noise, same units.
    pub noise_e_total: f64,
    /// Its signal-to-noise ratios (0 where the signal is 0 or below).
    pub snr: Snr,
    /// The matrix's noise gain on this channel (temporal noise after the matrix over that
    /// after white balance alone); `None` for the luminance.
    pub noise_gain: Option<f64>,
}

/// A colour sensor's output colours.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColourFigures {
    /// The white-balance gains used.
    pub white_balance: [f64; 3],
    /// Output R, G, B.
    pub outputs: Vec<OutputColour>,
    /// The luminance Y = 0.2126 R + 0.7152 G + 0.0722 B (ITU-R BT.709) of the outputs.
    pub luminance: OutputColour,
}

/// One readout of an HDR pixel.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HdrReadoutFigures {
    /// Its exposure time, s.
    pub exposure_time_s: f64,
    /// Electrons of the first readout per electron of this one.
    pub scale: f64,
    /// Its read noise, e⁻ rms.
    pub read_noise_e: f64,
    /// Its system gain, DN/e⁻.
    pub system_gain_dn_per_e: f64,
    /// Its usable level L per physical pixel, e⁻.
    pub level_e: f64,
    /// What sets that level.
    pub limited_by: LimitedBy,
    /// Its signal capacity per output pixel, b²(L − d − background), e⁻.
    pub capacity_e: f64,
    /// Its own temporal SNR at the scenario's light.
    pub snr_temporal: f64,
}

/// One switch of the HDR output from a readout to the next.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HdrTransition {
    /// The readout left (index into `readouts`).
    pub from: usize,
    /// The readout taken.
    pub to: usize,
    /// The scene level at the switch, as signal of the first readout per output pixel, e⁻.
    pub level_e: f64,
    /// Where the blend below it starts, same units (= `level_e` for a hard switch).
    pub blend_start_e: f64,
    /// The switch level as photons per physical pixel in the first readout's exposure.
    pub photons_per_pixel: f64,
    /// The switch level in each unit the light was given in.
    pub light_units: LightUnits,
    /// Temporal SNR just below the transition, dB.
    pub snr_below_db: Option<f64>,
    /// The lowest temporal SNR from there to just above it, dB.
    pub snr_above_db: Option<f64>,
    /// The dip: `snr_below_db` − `snr_above_db`, dB.
    pub dip_db: f64,
    /// Total SNR just below, dB.
    pub snr_total_below_db: Option<f64>,
    /// The lowest total SNR above, dB.
    pub snr_total_above_db: Option<f64>,
    /// The dip of the total SNR, dB.
    pub dip_db_total: f64,
    /// The next readout is already saturated at the switch.
    pub next_saturated: bool,
}

/// The combined output of an HDR readout.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HdrFigures {
    /// `exposures` or `dual_gain`.
    pub kind: &'static str,
    /// Each readout, the first (the scenario's own) first.
    pub readouts: Vec<HdrReadoutFigures>,
    /// The combined output's SNR at the scenario's light.
    pub snr: Snr,
    /// The readout in use at the scenario's light.
    pub readout_in_use: usize,
    /// The next readout's weight in the blend at the scenario's light (0 outside a blend).
    pub blend_weight: f64,
    /// The last readout saturates at the scenario's light: the combined output clips.
    pub saturated: bool,
    /// The combined dynamic range: the last readout's top over the first readout's temporal
    /// minimum detectable signal.
    pub dynamic_range: DynamicRange,
    /// Temporal SNR of the combined output at its top.
    pub max_snr: Option<f64>,
    /// The highest scene level it holds, e⁻ of the first readout per output pixel.
    pub top_level_e: Option<f64>,
    /// Each switch between readouts.
    pub transitions: Vec<HdrTransition>,
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code
mod light_units_tests {
    use super::LightUnits;
    use std::collections::BTreeMap;

    // The reference is the standard library's BTreeMap, which the field was before: the same
    // order, the same last-value-wins for a repeated key, the same JSON (serde_json).
    #[test]
    fn light_units_are_a_btree_map_in_order_and_json() {
        let items = [
            ("scene_illuminance_lux", 3.0),
            ("illuminance_lux", 1.0),
            ("irradiance_w_per_m2", 2.0),
            ("illuminance_lux", 4.0),
        ];
        let ours: LightUnits = items.iter().copied().collect();
        let map: BTreeMap<&str, f64> = items.iter().copied().collect();
        assert_eq!(
            serde_json::to_string(&ours).unwrap(),
            serde_json::to_string(&map).unwrap()
        );
        assert_eq!(
            ours.iter().collect::<Vec<_>>(),
            map.iter().map(|(k, v)| (*k, *v)).collect::<Vec<_>>()
        );
        assert_eq!(ours.len(), 3);
        assert_eq!(ours.get("illuminance_lux"), Some(4.0));
        assert_eq!(ours["irradiance_w_per_m2"], 2.0);
        assert!(ours["luminance_cd_per_m2"].is_nan() && ours.get("luminance_cd_per_m2").is_none());
        assert!(LightUnits::new().is_empty());
        assert_eq!(serde_json::to_string(&LightUnits::new()).unwrap(), "{}");
    }
}
