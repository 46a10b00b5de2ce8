//! What a colour filter array and an HDR readout add to a report: each colour channel's noise
//! budget and the output colours after white balance and the colour matrix; the HDR readouts,
//! their combined SNR, transitions and dynamic range.
//!
//! Each channel and each readout is the version-1 model of `pixel` with its own response,
//! exposure time, read noise or gain; the combining is `crate::colour` and `crate::hdr`. No
//! formula of the pixel is written here.

use super::{db, pixel, warn, Lights, GREEN};
use crate::colour;
use crate::hdr::{self, Readout, Sharing, Stitch};
use crate::report::{
    ChannelFigures, ColourFigures, DynamicRange, HdrFigures, HdrReadoutFigures, HdrTransition,
    OutputColour, Report, Snr, WarningCode,
};
use crate::scenario::{Hdr, HdrReadouts, Scenario, CHANNEL_NAMES};

/// A dip at an HDR switch at or above this is flagged: the SNR halves across it (6.02 dB).
/// Common practice, no source.
pub const DEEP_DIP_DB: f64 = 6.0;

fn snr(signal: f64, noise_temporal: f64, noise_total: f64) -> Snr {
    let ratio = |n: f64| {
        if n > 0.0 && signal > 0.0 {
            signal / n
        } else {
            0.0
        }
    };
    let (temporal, total) = (ratio(noise_temporal), ratio(noise_total));
    Snr {
        temporal,
        total,
        temporal_db: db(temporal),
        total_db: db(total),
    }
}

/// Each channel's budget and the output colours.
///
/// One output colour pixel is one 2 × 2 Bayer quad: R and B are one sample each, G the mean
/// of the two green samples (half their variance). White balance and the colour matrix then
/// act on (R, G, B) as `crate::colour` describes, temporal and total noise separately.
pub(super) fn add_colour(sc: &Scenario, lights: &Lights, report: &mut Report) {
    let mut channels = Vec::with_capacity(3);
    for (name, (light, background)) in CHANNEL_NAMES.iter().zip(&lights.channels) {
        let p = pixel(sc, &sc.sensor, &sc.exposure, light, background.as_ref());
        let r = p.report;
        channels.push(ChannelFigures {
            name,
            quantum_efficiency: light.effective_qe,
            signal_e: r.signal_e,
            signal_dn: r.signal_dn,
            noise_e: r.noise_e,
            snr: r.snr,
            fill_fraction: r.saturation.fill_fraction,
            saturated: r.saturation.saturated,
            min_detectable_e: r.min_detectable.signal_e,
        });
    }
    let (Some(r), Some(g), Some(b)) = (channels.first(), channels.get(GREEN), channels.get(2))
    else {
        return;
    };
    let greens = 2.0; // samples averaged into the output's G
    let means = [r.signal_e, g.signal_e, b.signal_e];
    let var = |c: &ChannelFigures, which: fn(&crate::report::NoiseParts) -> f64, samples: f64| {
        which(&c.noise_e).powi(2) / samples
    };
    let temporal = [
        var(r, |n| n.temporal, 1.0),
        var(g, |n| n.temporal, greens),
        var(b, |n| n.temporal, 1.0),
    ];
    let total = [
        var(r, |n| n.total, 1.0),
        var(g, |n| n.total, greens),
        var(b, |n| n.total, 1.0),
    ];
    let proc = &sc.processing;
    let (out_t, y_t) = colour::outputs(
        means,
        &colour::raw_covariance(temporal, proc.correlation),
        proc,
    );
    let (out_tot, y_tot) = colour::outputs(
        means,
        &colour::raw_covariance(total, proc.correlation),
        proc,
    );
    let output =
        |name: &'static str, t: &colour::OutputChannel, tot: &colour::OutputChannel| OutputColour {
            name,
            signal_e: t.mean_e,
            noise_e: t.noise_e,
            noise_e_total: tot.noise_e,
            snr: snr(t.mean_e, t.noise_e, tot.noise_e),
            noise_gain: t.noise_gain,
        };
    let outputs = CHANNEL_NAMES
        .iter()
        .zip(out_t.iter().zip(&out_tot))
        .map(|(name, (t, tot))| output(name, t, tot))
        .collect();
    let saturated: Vec<&str> = channels
        .iter()
        .filter(|c| c.saturated && c.name != "G")
        .map(|c| c.name)
        .collect();
    if !saturated.is_empty() {
        warn(
            &mut report.warnings,
            WarningCode::ChannelSaturated,
            &["channels", "colour.outputs"],
            format!(
                "The {} channel{} saturate{} at this light although the green channel's figures \
                 may not show it: its colour is clipped and the colour figures assume a linear \
                 response.",
                saturated.join(" and "),
                if saturated.len() > 1 { "s" } else { "" },
                if saturated.len() > 1 { "" } else { "s" },
            ),
        );
    }
    report.colour = Some(ColourFigures {
        white_balance: proc.white_balance,
        outputs,
        luminance: output("Y", &y_t, &y_tot),
    });
    report.channels = Some(channels);
}

/// The HDR readouts, the combined output at the scenario's light, its transitions and range.
pub(super) fn add_hdr(
    sc: &Scenario,
    hdr_in: &Hdr,
    lights: &Lights,
    first_noise: &crate::output_noise::OutputNoise,
    first_capacity_e: f64,
    report: &mut Report,
) {
    let mut readouts = vec![Readout {
        scale: 1.0,
        capacity_e: first_capacity_e,
        noise: *first_noise,
    }];
    let mut figures = vec![HdrReadoutFigures {
        exposure_time_s: sc.exposure.time_s,
        scale: 1.0,
        read_noise_e: sc.sensor.read_noise_e,
        system_gain_dn_per_e: sc.sensor.system_gain_dn_per_e,
        level_e: report.saturation.level_e,
        limited_by: report.saturation.limited_by,
        capacity_e: first_capacity_e,
        snr_temporal: 0.0,
    }];
    let mut add =
        |sensor: &crate::scenario::Sensor, exposure: &crate::scenario::Exposure, scale| {
            let p = pixel(
                sc,
                sensor,
                exposure,
                &lights.light,
                lights.background.as_ref(),
            );
            readouts.push(Readout {
                scale,
                capacity_e: p.capacity_out_e,
                noise: p.noise,
            });
            figures.push(HdrReadoutFigures {
                exposure_time_s: exposure.time_s,
                scale,
                read_noise_e: sensor.read_noise_e,
                system_gain_dn_per_e: sensor.system_gain_dn_per_e,
                level_e: p.report.saturation.level_e,
                limited_by: p.report.saturation.limited_by,
                capacity_e: p.capacity_out_e,
                snr_temporal: 0.0,
            });
        };
    let (kind, sharing) = match &hdr_in.readouts {
        HdrReadouts::Exposures(list) => {
            let mut scale = 1.0;
            for e in list {
                scale *= e.ratio;
                let mut sensor = sc.sensor.clone();
                sensor.read_noise_e = e.read_noise_e;
                sensor.full_well_e = e.full_well_e;
                let mut exposure = sc.exposure.clone();
                exposure.time_s = sc.exposure.time_s / scale;
                add(&sensor, &exposure, scale);
            }
            ("exposures", Sharing::SeparateExposures)
        }
        HdrReadouts::DualGain(low) => {
            let mut sensor = sc.sensor.clone();
            let ratio = low.system_gain_dn_per_e / sc.sensor.system_gain_dn_per_e;
            sensor.conversion_gain_uv_per_e = low
                .conversion_gain_uv_per_e
                .or(report.conversion_gain_uv_per_e.map(|cg| cg * ratio));
            // The capacitance follows from the low gain's conversion gain.
            sensor.sense_node_capacitance_ff = None;
            sensor.system_gain_dn_per_e = low.system_gain_dn_per_e;
            sensor.read_noise_e = low.read_noise_e;
            sensor.full_well_e = low.full_well_e;
            add(&sensor, &sc.exposure, 1.0);
            ("dual_gain", Sharing::SameCharge)
        }
    };
    let stitch = Stitch {
        switch_fraction: hdr_in.switch_fraction,
        blend_fraction: hdr_in.blend_fraction,
        sharing,
    };
    let level = report.signal_e;
    for (f, r) in figures.iter_mut().zip(&readouts) {
        let s = level / r.scale;
        f.snr_temporal = {
            let v = r.noise.at(s).temporal();
            if v > 0.0 {
                s / v.sqrt()
            } else {
                0.0
            }
        };
    }
    let here = hdr::combined_at(&readouts, &stitch, level);
    let md = &report.min_detectable;
    let per_electron = |x: f64| x / md.signal_e;
    let transitions: Vec<HdrTransition> = hdr::transitions(&readouts, &stitch)
        .into_iter()
        .map(|t| HdrTransition {
            from: t.from,
            to: t.from + 1,
            level_e: t.level_e,
            blend_start_e: t.blend_start_e,
            photons_per_pixel: md.photons_per_pixel * per_electron(t.level_e),
            light_units: md
                .light_units
                .iter()
                .map(|(k, v)| (k, v * per_electron(t.level_e)))
                .collect(),
            snr_below_db: db(t.snr_below),
            snr_above_db: db(t.snr_above),
            dip_db: t.dip_db,
            snr_total_below_db: db(t.snr_total_below),
            snr_total_above_db: db(t.snr_total_above),
            dip_db_total: t.dip_db_total,
            next_saturated: t.next_saturated,
        })
        .collect();
    let top = hdr::top_level_e(&readouts);
    let dr = hdr::dynamic_range(&readouts, md.signal_e);
    for t in &transitions {
        if t.next_saturated {
            warn(
                &mut report.warnings,
                WarningCode::HdrNextSaturatedAtSwitch,
                &["hdr.transitions"],
                format!(
                    "At the switch from readout {} to readout {}, the next readout is already \
                     saturated: the combined output clips there. Lower hdr.switch_fraction or \
                     the exposure ratio.",
                    t.from + 1,
                    t.to + 1
                ),
            );
        } else if t.dip_db >= DEEP_DIP_DB {
            warn(
                &mut report.warnings,
                WarningCode::HdrDeepDip,
                &["hdr.transitions"],
                format!(
                    "The SNR falls by {} dB where the output switches from readout {} to \
                     readout {}: details near that light level are noisier than below it.",
                    crate::decimal::Fixed(t.dip_db, 1),
                    t.from + 1,
                    t.to + 1
                ),
            );
        }
    }
    report.hdr = Some(HdrFigures {
        kind,
        readouts: figures,
        snr: Snr {
            temporal: here.snr_temporal,
            total: here.snr_total,
            temporal_db: db(here.snr_temporal),
            total_db: db(here.snr_total),
        },
        readout_in_use: here.readout,
        blend_weight: here.blend_weight,
        saturated: here.saturated,
        dynamic_range: DynamicRange {
            ratio: dr,
            db: dr.and_then(db),
            stops: dr.map(f64::log2),
        },
        max_snr: top.map(|t| hdr::combined_at(&readouts, &stitch, t).snr_temporal),
        top_level_e: top,
        transitions,
    });
}
