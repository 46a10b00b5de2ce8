//! Sweeps: one numeric scenario key varied over a range, the report's figures along it.
//!
//! The base scenario and both ends of the range are validated as whole scenarios (every rule
//! on a key is an interval, so the points between two valid ends are valid too); the points
//! between are set on the checked type directly, so a 1000-point sweep costs 1000 evaluations,
//! not 1000 validations. Also the regime boundaries of the SNR-against-signal view, and CSV
//! text (RFC 4180). No I/O and no plotting here.

use crate::decimal::Plain;
use serde::Serialize;
use serde_json::Value;

use crate::keys::{self, LIGHT_AMOUNTS, SWEEPABLE};
use crate::model::{evaluate_parts, resolve_lights, Figures};
use crate::report::Report;
use crate::scenario::{Light, Scenario};
use crate::validate::{scenario_from_value, Problem, ScenarioError};

/// Most points one sweep may have: far more than a plot can show, and a bound on the work.
pub const MAX_POINTS: u32 = 100_000;

/// How the points are spaced between the ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Spacing {
    /// Equal steps.
    Linear,
    /// Equal ratios (both ends must be > 0).
    Log,
}

/// What to sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepRequest {
    /// Dot path of the key, one of [`keys::SWEEPABLE`] (the catalogue's keys a sweep may vary).
    pub key: String,
    /// First value.
    pub from: f64,
    /// Last value.
    pub to: f64,
    /// Number of points, 2 ..= [`MAX_POINTS`].
    pub points: u32,
    /// Spacing of the points.
    pub spacing: Spacing,
}

/// One point of a sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepPoint {
    /// The key's value at this point (rounded for whole-number keys).
    pub value: f64,
    /// The report at this point.
    pub report: Report,
}

/// Signals (e⁻ per output pixel) where the dominant noise changes, for the SNR-against-signal
/// view; `None` where a region does not exist.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Regimes {
    /// Photon shot variance equals the signal-independent floor σ0² (read, reset,
    /// quantization, dark shot): below it the output is read-noise limited.
    pub read_to_shot_signal_e: f64,
    /// PRNU variance equals photon shot variance: above it the output is fixed-pattern
    /// limited. `None` without PRNU.
    pub shot_to_prnu_signal_e: Option<f64>,
    /// The output pixel's capacity b²(L − d); `None` when dark charge fills the pixel.
    pub saturation_signal_e: Option<f64>,
}

/// A computed sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sweep {
    /// The key varied.
    pub key: String,
    /// Its unit, as CSV headers write it.
    pub unit: &'static str,
    /// Spacing used.
    pub spacing: Spacing,
    /// The points, in order from `from` to `to`.
    pub points: Vec<SweepPoint>,
    /// Regime boundaries of the base scenario (they do not depend on the light).
    pub regimes: Regimes,
}

/// Vary one key of a scenario (given as JSON) and evaluate every point.
///
/// # Errors
/// The base scenario's problems, or problems with the request (unknown key, a key of another
/// light kind, non-finite or out-of-range ends, log spacing through zero, too few or too many
/// points), each naming the key or the request field.
pub fn sweep(base: &Value, request: &SweepRequest) -> Result<Sweep, ScenarioError> {
    run(base, request, Figures::All)
}

/// [`sweep`] without the exact detection figures (null at every point; the contrast detection
/// probability is kept when `contrast`): what the page's curves need, at a fraction of the
/// cost (measured natively, 1000 points of the scene demo: 23.6 ms with every figure, 2.0–3.4
/// ms with the CDP, 0.44–0.46 ms without).
///
/// # Errors
/// As [`sweep`].
pub fn sweep_without_detection(
    base: &Value,
    request: &SweepRequest,
    contrast: bool,
) -> Result<Sweep, ScenarioError> {
    run(
        base,
        request,
        if contrast {
            Figures::Contrast
        } else {
            Figures::Snr
        },
    )
}

fn run(base: &Value, request: &SweepRequest, figures: Figures) -> Result<Sweep, ScenarioError> {
    let scenario = scenario_from_value(base)?;
    let mut problems = Vec::new();
    let entry = keys::sweepable(&request.key);
    match entry {
        None => problems.push(problem(
            "sweep.key",
            format!(
                "\"{}\" is not a numeric scenario key; one of: {}",
                request.key,
                SWEEPABLE
                    .iter()
                    .map(|k| k.path)
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        )),
        Some(k) if !k.belongs_to_light(keys::light_kind_name(&scenario.light)) => {
            problems.push(problem(
                "sweep.key",
                format!(
                    "{} is not part of this scenario's light; sweep a key of the light kind it uses",
                    k.path
                ),
            ));
        }
        Some(_) => {}
    }
    if !request.from.is_finite() {
        problems.push(problem(
            "sweep.from",
            format!("must be a finite number, got {}", Plain(request.from)),
        ));
    }
    if !request.to.is_finite() {
        problems.push(problem(
            "sweep.to",
            format!("must be a finite number, got {}", Plain(request.to)),
        ));
    }
    if request.spacing == Spacing::Log && !(request.from > 0.0 && request.to > 0.0) {
        problems.push(problem(
            "sweep.from",
            format!(
                "log spacing needs both ends > 0, got {} and {}",
                Plain(request.from),
                Plain(request.to)
            ),
        ));
    }
    if !(2..=MAX_POINTS).contains(&request.points) {
        problems.push(problem(
            "sweep.points",
            format!(
                "must be a whole number from 2 to {MAX_POINTS}, got {}",
                request.points
            ),
        ));
    }
    let Some(&keys::Sweepable {
        path: key,
        unit,
        whole,
        ..
    }) = entry.filter(|_| problems.is_empty())
    else {
        return Err(ScenarioError::from_problems(problems));
    };
    // Both ends as whole scenarios: their problems name the key, prefixed by the end.
    for (end, value) in [("sweep.from", request.from), ("sweep.to", request.to)] {
        let value = if whole { value.round() } else { value };
        if let Err(e) = scenario_from_value(&with_key(base, key, value)) {
            problems.extend(
                e.problems()
                    .iter()
                    .map(|p| problem(end, format!("at {}: {p}", Plain(value)))),
            );
        }
    }
    // The one rule a range of ends cannot state: a contrast of 0 is refused (two patches of the
    // same signal), so a sweep may not cross it between two valid ends.
    if key == "detection.contrast" && request.from * request.to < 0.0 {
        problems.push(problem(
            "sweep.from",
            format!(
                "detection.contrast must not be 0, so a sweep of it may not cross 0: got {} to {}; sweep each sign on its own",
                Plain(request.from),
                Plain(request.to)
            ),
        ));
    }
    if !problems.is_empty() {
        return Err(ScenarioError::from_problems(problems));
    }
    let n = request.points;
    let mut points = Vec::with_capacity(usize::try_from(n).unwrap_or(0));
    let mut at = scenario.clone();
    // The light's spectral integrals depend only on the light and the sensor's QE and band,
    // and the light is linear in its amount: a sweep of the amount scales them.
    let base_lights = resolve_lights(&scenario);
    let amount_varies = key
        .strip_prefix("light.")
        .is_some_and(|name| LIGHT_AMOUNTS.contains(&name));
    let light_changes = key.starts_with("light.") || key == "sensor.quantum_efficiency";
    for i in 0..n {
        let f = f64::from(i) / f64::from(n - 1);
        let raw = match request.spacing {
            Spacing::Linear => request.from + (request.to - request.from) * f,
            Spacing::Log => {
                // In decades, so that points on whole decades come out as exact powers of ten.
                let (a, b) = (request.from.log10(), request.to.log10());
                10f64.powf(a + (b - a) * f)
            }
        };
        // The ends exactly as given (no rounding drift from log/pow).
        let raw = if i == 0 {
            request.from
        } else if i == n - 1 {
            request.to
        } else {
            raw
        };
        let value = if whole { raw.round() } else { raw };
        set(&mut at, key, value);
        let report = if amount_varies {
            evaluate_parts(&at, &base_lights.with_light_amount(value), figures)
        } else if light_changes {
            evaluate_parts(&at, &resolve_lights(&at), figures)
        } else {
            evaluate_parts(&at, &base_lights, figures)
        };
        points.push(SweepPoint { value, report });
    }
    Ok(Sweep {
        key: key.to_string(),
        unit: unit.csv,
        spacing: request.spacing,
        points,
        regimes: regimes(&scenario),
    })
}

/// Signals where the dominant noise of the output pixel changes (see [`Regimes`]).
///
/// # Formula
/// ```text
/// read → shot:  S/N = σ0²/N          ⇒ S = σ0² = D + n(σr² + σk² + σq²)
/// shot → PRNU:  (p·S)²/b² = S/N      ⇒ S = b² / (N p²)
/// ```
/// Symbols as in SCENARIO.md's model.
///
/// # Source
/// The three regions of the photon transfer curve (read-noise, shot-noise and fixed-pattern
/// limited): Janesick, *Photon Transfer* (SPIE PM170, 2007), ch. 2 (from memory); the
/// boundaries are where the variances of SCENARIO.md's model are equal (derived).
#[must_use]
#[allow(non_snake_case)] // symbols as in SCENARIO.md
pub fn regimes(sc: &Scenario) -> Regimes {
    // Noise figures only: the detection figures are not needed here.
    let r = evaluate_parts(sc, &resolve_lights(sc), Figures::Snr);
    let b2 = f64::from(sc.exposure.binning).powi(2);
    let N = f64::from(sc.exposure.frames_averaged);
    // σ0²/N is the temporal variance with the photon shot part taken out (one-frame σ0² / N).
    let floor = r.noise_e.temporal.powi(2) - r.noise_e.photon_shot.powi(2);
    let p = sc.sensor.prnu_percent / 100.0;
    let capacity = r.saturation.capacity_e;
    Regimes {
        read_to_shot_signal_e: floor * N,
        shot_to_prnu_signal_e: (p > 0.0).then(|| b2 / (N * p * p)),
        saturation_signal_e: (capacity > 0.0).then_some(b2 * capacity),
    }
}

/// Reads one figure from a report; `None` where it does not exist.
pub type Getter = fn(&Report) -> Option<f64>;

/// The report figures a sweep's CSV carries: column name (a report dot path), unit, getter.
pub const CSV_COLUMNS: &[(&str, &str, Getter)] = &[
    ("photons_per_pixel", "photons", |r| {
        Some(r.photons_per_pixel)
    }),
    ("signal_e", "e-", |r| Some(r.signal_e)),
    ("dark_e", "e-", |r| Some(r.dark_e)),
    ("background_e", "e-", |r| Some(r.background_e)),
    ("signal_dn", "DN", |r| Some(r.signal_dn)),
    ("noise_e.photon_shot", "e- rms", |r| {
        Some(r.noise_e.photon_shot)
    }),
    ("noise_e.dark_shot", "e- rms", |r| Some(r.noise_e.dark_shot)),
    ("noise_e.background_shot", "e- rms", |r| {
        Some(r.noise_e.background_shot)
    }),
    ("noise_e.read", "e- rms", |r| Some(r.noise_e.read)),
    ("noise_e.reset", "e- rms", |r| Some(r.noise_e.reset)),
    ("noise_e.quantization", "e- rms", |r| {
        Some(r.noise_e.quantization)
    }),
    ("noise_e.temporal", "e- rms", |r| Some(r.noise_e.temporal)),
    ("noise_e.dsnu", "e- rms", |r| Some(r.noise_e.dsnu)),
    ("noise_e.prnu", "e- rms", |r| Some(r.noise_e.prnu)),
    ("noise_e.total", "e- rms", |r| Some(r.noise_e.total)),
    ("snr.temporal", "ratio", |r| Some(r.snr.temporal)),
    ("snr.total", "ratio", |r| Some(r.snr.total)),
    ("snr.temporal_db", "dB", |r| r.snr.temporal_db),
    ("snr.total_db", "dB", |r| r.snr.total_db),
    ("saturation.fill_fraction", "fraction", |r| {
        Some(r.saturation.fill_fraction)
    }),
    ("min_detectable.signal_e", "e-", |r| {
        Some(r.min_detectable.signal_e)
    }),
    ("min_detectable.signal_e_total", "e-", |r| {
        r.min_detectable.signal_e_total
    }),
    ("min_detectable.photons_per_pixel", "photons", |r| {
        Some(r.min_detectable.photons_per_pixel)
    }),
    ("dynamic_range.db", "dB", |r| r.dynamic_range.db),
    ("max_snr", "ratio", |r| r.max_snr),
    ("exposure_for_threshold_s", "s", |r| {
        r.exposure_for_threshold_s
    }),
    ("variance_share.photon_shot", "fraction", |r| {
        Some(r.variance_share.photon_shot)
    }),
    ("variance_share.dark_shot", "fraction", |r| {
        Some(r.variance_share.dark_shot)
    }),
    ("variance_share.background_shot", "fraction", |r| {
        Some(r.variance_share.background_shot)
    }),
    ("variance_share.read", "fraction", |r| {
        Some(r.variance_share.read)
    }),
    ("variance_share.reset", "fraction", |r| {
        Some(r.variance_share.reset)
    }),
    ("variance_share.quantization", "fraction", |r| {
        Some(r.variance_share.quantization)
    }),
    ("variance_share.dsnu", "fraction", |r| {
        Some(r.variance_share.dsnu)
    }),
    ("variance_share.prnu", "fraction", |r| {
        Some(r.variance_share.prnu)
    }),
    // Colour channels and outputs, and the HDR output: empty for a scenario without them.
    // A list's element is named by its `name` (`channels.R` is the element named R).
    ("channels.R.snr.total_db", "dB", |r| channel_snr_db(r, 0)),
    ("channels.G.snr.total_db", "dB", |r| channel_snr_db(r, 1)),
    ("channels.B.snr.total_db", "dB", |r| channel_snr_db(r, 2)),
    ("colour.outputs.R.snr.total_db", "dB", |r| {
        output_snr_db(r, 0)
    }),
    ("colour.outputs.G.snr.total_db", "dB", |r| {
        output_snr_db(r, 1)
    }),
    ("colour.outputs.B.snr.total_db", "dB", |r| {
        output_snr_db(r, 2)
    }),
    ("colour.luminance.snr.temporal_db", "dB", |r| {
        r.colour.as_ref().and_then(|c| c.luminance.snr.temporal_db)
    }),
    ("colour.luminance.snr.total_db", "dB", |r| {
        r.colour.as_ref().and_then(|c| c.luminance.snr.total_db)
    }),
    ("hdr.snr.temporal_db", "dB", |r| {
        r.hdr.as_ref().and_then(|h| h.snr.temporal_db)
    }),
    ("hdr.snr.total_db", "dB", |r| {
        r.hdr.as_ref().and_then(|h| h.snr.total_db)
    }),
    ("hdr.readout_in_use", "index", |r| {
        r.hdr.as_ref().map(|h| h.readout_in_use as f64)
    }),
    ("hdr.dynamic_range.db", "dB", |r| {
        r.hdr.as_ref().and_then(|h| h.dynamic_range.db)
    }),
    // Detection (exact Poisson–Gaussian, for the scenario's `detection` task).
    ("detection.signal_e", "e-", |r| r.detection.signal_e),
    ("detection.detection_probability", "fraction", |r| {
        r.detection.detection_probability
    }),
    (
        "detection.contrast_detection_probability",
        "fraction",
        |r| r.detection.contrast_detection_probability,
    ),
];

fn channel_snr_db(r: &Report, i: usize) -> Option<f64> {
    r.channels.as_ref()?.get(i)?.snr.total_db
}

fn output_snr_db(r: &Report, i: usize) -> Option<f64> {
    r.colour.as_ref()?.outputs.get(i)?.snr.total_db
}

/// The sweep as CSV text (RFC 4180: CRLF line ends, a header row, fields quoted where needed).
///
/// The header names each column with its unit in brackets (`exposure.time_s [s]`); a figure
/// that does not exist is an empty field; `saturated` is `true`/`false`; `warnings` lists the
/// warning codes of the point, separated by spaces. Numbers are written in the shortest form
/// that reads back to the same double.
#[must_use]
pub fn to_csv(sweep: &Sweep) -> String {
    let mut header: Vec<String> = vec![format!("{} [{}]", sweep.key, sweep.unit)];
    header.extend(CSV_COLUMNS.iter().map(|(k, u, _)| format!("{k} [{u}]")));
    header.push("saturation.saturated [true/false]".into());
    header.push("warnings [codes]".into());
    let mut out = csv_row(&header);
    for p in &sweep.points {
        let mut row = vec![number(p.value)];
        row.extend(
            CSV_COLUMNS
                .iter()
                .map(|(_, _, get)| get(&p.report).map(number).unwrap_or_default()),
        );
        row.push(p.report.saturation.saturated.to_string());
        row.push(
            p.report
                .warnings
                .iter()
                .map(|w| w.code.as_str())
                .collect::<Vec<_>>()
                .join(" "),
        );
        out.push_str(&csv_row(&row));
    }
    out
}

pub(crate) fn csv_row(fields: &[String]) -> String {
    let mut line = fields
        .iter()
        .map(|f| {
            if f.contains([',', '"', '\r', '\n']) {
                format!("\"{}\"", f.replace('"', "\"\""))
            } else {
                f.clone()
            }
        })
        .collect::<Vec<_>>()
        .join(",");
    line.push_str("\r\n");
    line
}

fn number(x: f64) -> String {
    crate::decimal::Plain(x).to_string()
}

fn problem(path: &str, message: String) -> Problem {
    Problem {
        path: path.to_string(),
        message,
    }
}

/// A copy of the scenario JSON with `key` (a dot path) set to `value`.
pub(crate) fn with_key(base: &Value, key: &str, value: f64) -> Value {
    let mut v = base.clone();
    let mut cur = &mut v;
    let mut parts = key.split('.').peekable();
    while let Some(part) = parts.next() {
        let Some(obj) = cur.as_object_mut() else {
            break;
        };
        if parts.peek().is_none() {
            obj.insert(part.to_string(), Value::from(value));
            break;
        }
        cur = obj
            .entry(part.to_string())
            .or_insert_with(|| Value::Object(serde_json::Map::new()));
    }
    v
}

/// Set one key on a checked scenario. Only called with a key of [`keys::SWEEPABLE`] and a value
/// between two ends that validated, so the scenario stays valid.
fn set(sc: &mut Scenario, key: &str, v: f64) {
    let s = &mut sc.sensor;
    match key {
        "sensor.pixel_pitch_um" => s.pixel_pitch_um = v,
        "sensor.quantum_efficiency" => s.quantum_efficiency = Some(v),
        "sensor.full_well_e" => s.full_well_e = v,
        "sensor.read_noise_e" => s.read_noise_e = v,
        "sensor.sense_node_capacitance_ff" => s.sense_node_capacitance_ff = Some(v),
        "sensor.conversion_gain_uv_per_e" => s.conversion_gain_uv_per_e = Some(v),
        "sensor.dark_current_e_per_s" => s.dark_current_e_per_s = v,
        "sensor.dark_current_reference_c" => s.dark_current_reference_c = v,
        "sensor.dark_current_doubling_c" => s.dark_current_doubling_c = v,
        "sensor.dsnu_e" => s.dsnu_e = v,
        "sensor.dark_current_nonuniformity_percent" => s.dark_current_nonuniformity_percent = v,
        "sensor.prnu_percent" => s.prnu_percent = v,
        "sensor.adc_bits" => s.adc_bits = whole(v),
        "sensor.system_gain_dn_per_e" => s.system_gain_dn_per_e = v,
        "sensor.black_level_dn" => s.black_level_dn = v,
        "exposure.time_s" => sc.exposure.time_s = v,
        "exposure.frames_averaged" => sc.exposure.frames_averaged = whole(v),
        "exposure.binning" => sc.exposure.binning = whole(v),
        "temperature_c" => sc.temperature_c = v,
        "snr_threshold" => sc.snr_threshold = v,
        "detection.false_alarm_probability" => sc.detection.false_alarm_probability = v,
        "detection.detection_probability" => sc.detection.detection_probability = v,
        "detection.pixels" => sc.detection.pixels = whole(v),
        "detection.contrast" => sc.detection.contrast = v,
        "detection.contrast_interval" => sc.detection.contrast_interval = v,
        _ => set_light(&mut sc.light, key, v),
    }
}

fn set_light(light: &mut Light, key: &str, v: f64) {
    use crate::light::SceneQuantity as Q;
    match light {
        Light::PhotonFlux {
            photon_flux_per_um2_s,
        } => *photon_flux_per_um2_s = v,
        Light::Irradiance {
            irradiance_w_per_m2,
            wavelength_nm,
        } => {
            if key == "light.wavelength_nm" {
                *wavelength_nm = v;
            } else {
                *irradiance_w_per_m2 = v;
            }
        }
        Light::SpectralIrradiance {
            irradiance_w_per_m2,
            ..
        } => *irradiance_w_per_m2 = v,
        Light::PhotonsPerPixel { photons_per_pixel } => *photons_per_pixel = v,
        Light::Illuminance {
            illuminance_lux, ..
        } => *illuminance_lux = v,
        Light::Scene { quantity, lens, .. } => {
            if key == "light.f_number" {
                lens.f_number = v;
            } else {
                match quantity {
                    Q::Illuminance { lux, .. } => *lux = v,
                    Q::Irradiance { w_per_m2, .. } => *w_per_m2 = v,
                    Q::Luminance { cd_per_m2 } => *cd_per_m2 = v,
                    Q::Radiance { w_per_m2_sr } => *w_per_m2_sr = v,
                }
            }
        }
    }
}

/// A whole number between validated ends, as the checked type stores it.
fn whole(v: f64) -> u32 {
    // OK because v was rounded and lies between two ends that validated as whole numbers
    // within u32 range.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = v.round().max(1.0) as u32;
    n
}

#[cfg(test)]
#[allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]
mod tests;
