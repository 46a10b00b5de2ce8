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
        "  {} µm pixel, QE {}, K {} DN/e⁻, {} readout, {} exposure, {} frame(s) averaged, \
         {b}×{b} {} binning, {} °C",
        num(s.pixel_pitch_um),
        num(r.light.effective_quantum_efficiency),
        num(s.system_gain_dn_per_e),
        s.readout.as_str(),
        crate::human::seconds(x.time_s),
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
            .map(crate::human::seconds)
            .unwrap_or_else(|| "does not apply (light given per pixel, or no light)".into())
    );
    colour_block(&mut o, r);
    hdr_block(&mut o, r);
    detection_block(&mut o, scenario, r);
    if !r.warnings.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "warnings");
        for w in &r.warnings {
            let _ = writeln!(o, "  [{}] {}", w.code.as_str(), w.message);
        }
    }
    o
}

/// A colour sensor's channels and output colours (nothing for mono).
fn colour_block(o: &mut String, r: &Report) {
    let (Some(channels), Some(colour)) = (&r.channels, &r.colour) else {
        return;
    };
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "colour channels (figures above: G)   signal      noise temporal / total   SNR total"
    );
    for c in channels {
        let _ = writeln!(
            o,
            "  {:<3} QE {:<8} {:>10} e⁻  {:>10} / {:<10} e⁻  {}{}",
            c.name,
            num(c.quantum_efficiency),
            num(c.signal_e),
            num(c.noise_e.temporal),
            num(c.noise_e.total),
            db(c.snr.total_db),
            if c.saturated { ", SATURATED" } else { "" }
        );
    }
    let wb = colour.white_balance;
    let _ = writeln!(
        o,
        "output colours (white balance {} / {} / {}, then the colour matrix; one 2×2 quad each)",
        num(wb[0]),
        num(wb[1]),
        num(wb[2])
    );
    for c in colour
        .outputs
        .iter()
        .chain(std::iter::once(&colour.luminance))
    {
        let _ = writeln!(
            o,
            "  {:<3} {:>10} e⁻  noise {:>10} / {:<10} e⁻  SNR {} temporal, {} total{}",
            c.name,
            num(c.signal_e),
            num(c.noise_e),
            num(c.noise_e_total),
            db(c.snr.temporal_db),
            db(c.snr.total_db),
            c.noise_gain
                .map(|g| format!(", matrix noise gain {}", num(g)))
                .unwrap_or_default()
        );
    }
}

/// An HDR readout's combined output (nothing without one).
fn hdr_block(o: &mut String, r: &Report) {
    let Some(h) = &r.hdr else { return };
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "HDR output ({}; figures above: readout 1)   SNR here {} temporal, {} total (readout {}{})",
        h.kind.replace('_', " "),
        db(h.snr.temporal_db),
        db(h.snr.total_db),
        h.readout_in_use + 1,
        if h.saturated { ", SATURATED" } else { "" }
    );
    for (i, x) in h.readouts.iter().enumerate() {
        let _ = writeln!(
            o,
            "  readout {}: {}, ×{} scale, read noise {} e⁻, K {} DN/e⁻, capacity {} e⁻",
            i + 1,
            crate::human::seconds(x.exposure_time_s),
            num(x.scale),
            num(x.read_noise_e),
            num(x.system_gain_dn_per_e),
            num(x.capacity_e)
        );
    }
    for t in &h.transitions {
        let _ = writeln!(
            o,
            "  switch {}→{} at {} e⁻ ({} photons/pixel): SNR {} below, {} above, dip {:.2} dB{}",
            t.from + 1,
            t.to + 1,
            num(t.level_e),
            num(t.photons_per_pixel),
            db(t.snr_below_db),
            db(t.snr_above_db),
            t.dip_db,
            if t.next_saturated {
                ", NEXT READOUT SATURATED"
            } else {
                ""
            }
        );
    }
    let dr = &h.dynamic_range;
    let _ = writeln!(
        o,
        "  combined dynamic range {} ({}, {} stops)   max SNR {}",
        opt(dr.ratio, ""),
        db(dr.db),
        opt(dr.stops, ""),
        opt(h.max_snr, "")
    );
}

/// The detection figures (exact Poisson–Gaussian, and the Gaussian picture beside them).
fn detection_block(o: &mut String, scenario: &Scenario, r: &Report) {
    let task = scenario.detection();
    let d = &r.detection;
    let p = |v: Option<f64>| opt(v, "");
    let e = |v: Option<f64>| opt(v, " e⁻");
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "detection (false alarm {} per pixel, {} pixels per frame; exact, Gaussian in brackets)",
        num(task.false_alarm_probability),
        num(f64::from(task.pixels))
    );
    let _ = writeln!(
        o,
        "  threshold                 {} ({}), false alarm achieved {}",
        e(d.threshold_e),
        e(d.threshold_e_gaussian),
        p(d.false_alarm_probability_achieved)
    );
    let _ = writeln!(
        o,
        "  signal for p_d {:<10} {} ({})",
        num(task.detection_probability),
        e(d.signal_e),
        e(d.signal_e_gaussian)
    );
    let _ = writeln!(
        o,
        "  detection probability     {} ({}) at this signal",
        p(d.detection_probability),
        p(d.detection_probability_gaussian)
    );
    let _ = writeln!(
        o,
        "  false alarm per frame     {}; per pixel for {} per frame: {}",
        p(d.frame_false_alarm_probability),
        num(task.false_alarm_probability),
        p(d.pixel_false_alarm_for_frame)
    );
    let _ = writeln!(o, "  read noise (Gaussian)     {} rms", e(d.read_noise_e));
    if let Some(c) = &d.counting {
        let _ = writeln!(
            o,
            "  photon counting           miscount {} (interior), {} (zero), {} (average): {}",
            num(c.miscount_interior),
            num(c.miscount_zero),
            num(c.miscount_average),
            counting_words(c.verdict)
        );
    }
    let _ = writeln!(
        o,
        "  contrast detection prob.  {} (contrast {}, interval ±{} of it)",
        p(d.contrast_detection_probability),
        num(d.contrast),
        num(d.contrast_interval)
    );
}

fn counting_words(v: engine::detection::counting::CountingVerdict) -> &'static str {
    use engine::detection::counting::CountingVerdict as V;
    match v {
        V::AccurateCounting => "accurate counting",
        V::PhotonNumberResolving => "photon-number resolving",
        V::DeepSubElectron => "deep sub-electron, counting unreliable",
        V::NotResolving => "not photon-number resolving",
        _ => "—",
    }
}

/// Values in the units the light was given in, each with the quantity's words and unit from the
/// key catalogue, e.g. "0.02 lx (illuminance at the sensor), 0.8 lx (illuminance on the scene)".
fn units_line(units: &engine::report::LightUnits) -> String {
    units
        .iter()
        .map(|(k, v)| match keys::find(&format!("light.{k}")) {
            Some(key) => format!("{} {} ({})", num(v), key.unit.shown, key.quantity),
            None => format!("{k} {}", num(v)),
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

/// A number for people: 4 significant digits, never E-notation.
fn num(x: f64) -> String {
    crate::human::plain(x)
}
