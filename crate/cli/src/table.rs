//! The readable noise-budget table printed by `noise-budget eval --table`.
//!
//! Formatting only: every number comes from the engine's report, and every unit and light
//! quantity's words from the engine's key catalogue (`engine::keys`); nothing is computed here
//! beyond rounding for display.

use std::fmt::Write as _;

use engine::keys;
use engine::report::Report;
use engine::scenario::Scenario;

/// Rows of the noise table: report key and the label people read.
const SOURCES: &[(&str, &str)] = &[
    ("photon_shot", "photon shot"),
    ("dark_shot", "dark shot"),
    ("background_shot", "background"),
    ("read", "read"),
    ("reset", "reset (kTC)"),
    ("quantization", "quantization"),
    ("temporal", "= temporal"),
    ("dsnu", "DSNU"),
    ("prnu", "PRNU"),
    ("total", "= total"),
];

/// Render the report for people, with the scenario's key settings above it.
pub fn render(scenario: &Scenario, r: &Report) -> String {
    let mut o = String::new();
    let s = scenario.sensor();
    let x = scenario.exposure();
    let k = scenario.snr_threshold();
    let _ = writeln!(o, "{}", scenario.title().unwrap_or("noise budget"));
    let _ = writeln!(
        o,
        "  {} µm pixel, QE {}, K {} DN/e⁻, {} readout, {} s exposure, {} frame(s) averaged, \
         {b}×{b} {} binning, {} °C",
        num(s.pixel_pitch_um),
        num(r.light.effective_quantum_efficiency),
        num(s.system_gain_dn_per_e),
        s.readout.as_str(),
        num(x.time_s),
        x.frames_averaged,
        x.binning_mode.as_str(),
        num(scenario.temperature_c()),
        b = x.binning,
    );
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "signal        {:>10} e⁻  {:>10} DN   ({} photons per pixel)",
        num(r.signal_e),
        num(r.signal_dn),
        num(r.photons_per_pixel)
    );
    let _ = writeln!(o, "dark charge   {:>10} e⁻", num(r.dark_e));
    if r.background_e > 0.0 {
        let _ = writeln!(
            o,
            "background    {:>10} e⁻  (not signal)",
            num(r.background_e)
        );
    }
    let l = &r.light;
    if let Some(band) = l.band_nm {
        let _ = writeln!(
            o,
            "light         {} spectrum, photons counted over {}–{} nm in steps of at most {} nm",
            l.spectrum.unwrap_or("—"),
            num(band[0]),
            num(band[1]),
            num(l.step_nm.unwrap_or(1.0))
        );
    }
    if let Some(f) = l.photon_flux_per_um2_s {
        let mut at_sensor = format!("{} {}", num(f), keys::PHOTON_FLUX_PER_UM2_S.unit.shown);
        if let Some(lux) = l.sensor_illuminance_lux {
            at_sensor.push_str(&format!(
                ", {} {}",
                num(lux),
                keys::ILLUMINANCE_LUX.unit.shown
            ));
        }
        if let Some(w) = l.sensor_irradiance_w_per_m2 {
            at_sensor.push_str(&format!(
                ", {} {}",
                num(w),
                keys::IRRADIANCE_W_PER_M2.unit.shown
            ));
        }
        let _ = writeln!(o, "at the sensor {at_sensor}");
    }
    if let Some(eq) = l.camera_equation {
        let _ = writeln!(o, "camera eq.    {eq}");
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "noise per output pixel, rms");
    let _ = writeln!(
        o,
        "  {:<14} {:>10} {:>10} {:>10}",
        "source", "e⁻", "DN", "variance"
    );
    let e = r.noise_e.entries();
    let dn = r.noise_dn.entries();
    let share = [
        Some(r.variance_share.photon_shot),
        Some(r.variance_share.dark_shot),
        Some(r.variance_share.background_shot),
        Some(r.variance_share.read),
        Some(r.variance_share.reset),
        Some(r.variance_share.quantization),
        None,
        Some(r.variance_share.dsnu),
        Some(r.variance_share.prnu),
        None,
    ];
    for (((key, label), (_, ve)), ((_, vdn), sh)) in SOURCES
        .iter()
        .zip(e.iter())
        .zip(dn.iter().zip(share.iter()))
    {
        let sh = match (sh, *key) {
            (Some(f), _) => format!("{:.1} %", f * 100.0),
            (None, "temporal") => {
                let t = r.variance_share.photon_shot
                    + r.variance_share.dark_shot
                    + r.variance_share.background_shot
                    + r.variance_share.read
                    + r.variance_share.reset
                    + r.variance_share.quantization;
                format!("{:.1} %", t * 100.0)
            }
            (None, _) => "100 %".to_string(),
        };
        let _ = writeln!(
            o,
            "  {label:<14} {:>10} {:>10} {sh:>10}",
            num(*ve),
            num(*vdn)
        );
    }
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "SNR           temporal {} ({})   total {} ({})",
        num(r.snr.temporal),
        db(r.snr.temporal_db),
        num(r.snr.total),
        db(r.snr.total_db)
    );
    let md = &r.min_detectable;
    let _ = writeln!(
        o,
        "minimum detectable at SNR {}: {} e⁻ temporal, {} e⁻ with fixed pattern",
        num(k),
        num(md.signal_e),
        opt(md.signal_e_total, "")
    );
    let _ = writeln!(
        o,
        "              = {} photons per pixel{}",
        num(md.photons_per_pixel),
        md.photon_flux_per_um2_s
            .map(|f| format!(
                ", {} {} at the sensor",
                num(f),
                keys::PHOTON_FLUX_PER_UM2_S.unit.shown
            ))
            .unwrap_or_default()
    );
    if !md.light_units.is_empty() {
        let _ = writeln!(o, "              = {}", units_line(&md.light_units));
    }
    let sat = &r.saturation;
    let _ = writeln!(
        o,
        "saturation    level {} e⁻ (set by {}), capacity {} e⁻, fill {:.1} %{}",
        num(sat.level_e),
        match sat.limited_by {
            engine::report::LimitedBy::FullWell => "full well",
            engine::report::LimitedBy::Adc => "ADC range",
            engine::report::LimitedBy::SummingWell => "summing well",
        },
        num(sat.capacity_e),
        sat.fill_fraction * 100.0,
        if sat.saturated { ", SATURATED" } else { "" }
    );
    if !sat.light_units.is_empty() {
        let _ = writeln!(
            o,
            "              saturates at {}",
            units_line(&sat.light_units)
        );
    }
    let dr = &r.dynamic_range;
    let _ = writeln!(
        o,
        "dynamic range {} ({}, {} stops)   max SNR {}",
        opt(dr.ratio, ""),
        db(dr.db),
        opt(dr.stops, ""),
        opt(r.max_snr, "")
    );
    let _ = writeln!(
        o,
        "exposure for SNR {}: {}",
        num(k),
        r.exposure_for_threshold_s
            .map(|t| format!("{} s", num(t)))
            .unwrap_or_else(|| "does not apply (light given per pixel, or no light)".into())
    );
    if !r.warnings.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "warnings");
        for w in &r.warnings {
            let _ = writeln!(o, "  [{}] {}", w.code.as_str(), w.message);
        }
    }
    o
}

/// Values in the units the light was given in, each with the quantity's words and unit from the
/// key catalogue, e.g. "0.02 lx (illuminance at the sensor), 0.8 lx (illuminance on the scene)".
fn units_line(units: &std::collections::BTreeMap<&'static str, f64>) -> String {
    units
        .iter()
        .map(|(k, v)| match keys::find(&format!("light.{k}")) {
            Some(key) => format!("{} {} ({})", num(*v), key.unit.shown, key.quantity),
            None => format!("{k} {}", num(*v)),
        })
        .collect::<Vec<_>>()
        .join(", ")
}

fn db(v: Option<f64>) -> String {
    v.map_or_else(|| "— dB".to_string(), |d| format!("{d:.2} dB"))
}

fn opt(v: Option<f64>, unit: &str) -> String {
    v.map_or_else(|| "—".to_string(), |x| format!("{}{unit}", num(x)))
}

/// A number for people: 4 significant digits, exponent form for very large or small values.
fn num(x: f64) -> String {
    let a = x.abs();
    if a == 0.0 {
        return "0".into();
    }
    if !(1e-3..1e7).contains(&a) {
        return format!("{x:.3e}");
    }
    // OK because a is within [1e-3, 1e7): the count is between 0 and 6.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let decimals = (3.0 - a.log10().floor()).max(0.0) as usize;
    let t = format!("{x:.decimals$}");
    if t.contains('.') {
        t.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        t
    }
}
