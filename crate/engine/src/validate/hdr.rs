//! The `hdr` object: the kind of HDR readout, its stitching rule, and its shorter exposures or
//! its low gain, each key read with its catalogue rule (`keys::hdr`). Defaults that come from
//! the sensor (an exposure's read noise and full well) are filled in here.

use super::{key, ReadKey};
use crate::input::{Fields, Problems};
use crate::keys;
use crate::scenario::{Hdr, HdrExposure, HdrReadouts, LowGain, Sensor};

pub(super) fn hdr(p: &mut Problems, f: &mut Fields<'_>, sensor: Option<&Sensor>) -> Option<Hdr> {
    use keys::{BLEND_FRACTION, EXPOSURES, HDR_KIND, LOW_GAIN, SWITCH_FRACTION};
    let kind = f.choice_key(p, key!(HDR_KIND));
    let switch_fraction = f.number_key(p, key!(SWITCH_FRACTION));
    let blend_fraction = f.number_key(p, key!(BLEND_FRACTION));
    let wrong_kind = |p: &mut Problems, f: &mut Fields<'_>, key: &str, kind: &str| {
        if f.has(key) {
            f.mark_used(key);
            p.push(
                &f.path_of(key),
                format!("used only when hdr.kind is \"{kind}\""),
            );
        }
    };
    let readouts = match kind {
        Some("exposures") => {
            wrong_kind(p, f, LOW_GAIN.name, "dual_gain");
            match f.list_key(p, key!(EXPOSURES)) {
                Some(list) => {
                    let n = list.len();
                    let read: Vec<Option<HdrExposure>> = list
                        .into_iter()
                        .map(|mut e| exposure(p, &mut e, sensor))
                        .collect();
                    let all: Option<Vec<HdrExposure>> = read.into_iter().collect();
                    all.filter(|v| v.len() == n).map(HdrReadouts::Exposures)
                }
                None => {
                    if !f.had_problem_at(p, EXPOSURES.name) {
                        p.push(
                            &f.path_of(const { EXPOSURES.name }),
                            "required when hdr.kind is \"exposures\": list the shorter exposures"
                                .into(),
                        );
                    }
                    None
                }
            }
        }
        Some(_) => {
            wrong_kind(p, f, EXPOSURES.name, "exposures");
            f.object_key(p, key!(LOW_GAIN))
                .and_then(|mut g| low_gain(p, &mut g))
                .map(HdrReadouts::DualGain)
        }
        None => {
            // The kind is missing or wrong (already a problem): read the rest for its own
            // problems, then give up.
            for key in [const { EXPOSURES.name }, LOW_GAIN.name] {
                f.mark_used(key);
            }
            None
        }
    };
    f.finish(p);
    Some(Hdr {
        readouts: readouts?,
        switch_fraction: switch_fraction?,
        blend_fraction: blend_fraction?,
    })
}

fn exposure(p: &mut Problems, f: &mut Fields<'_>, sensor: Option<&Sensor>) -> Option<HdrExposure> {
    use keys::{EXPOSURE_FULL_WELL_E, EXPOSURE_RATIO, EXPOSURE_READ_NOISE_E};
    let ratio = f.number_key(p, key!(EXPOSURE_RATIO));
    let read_noise = f.number_key_or(
        p,
        key!(EXPOSURE_READ_NOISE_E),
        sensor.map_or(f64::NAN, |s| s.read_noise_e),
    );
    let full_well = f.number_key_or(
        p,
        key!(EXPOSURE_FULL_WELL_E),
        sensor.map_or(f64::NAN, |s| s.full_well_e),
    );
    f.finish(p);
    // A sensor that failed to read leaves NaN defaults: no exposure then (its problems are named).
    Some(HdrExposure {
        ratio: ratio?,
        read_noise_e: read_noise.filter(|x| !x.is_nan())?,
        full_well_e: full_well.filter(|x| !x.is_nan())?,
    })
}

fn low_gain(p: &mut Problems, f: &mut Fields<'_>) -> Option<LowGain> {
    use keys::{
        LOW_GAIN_CONVERSION_GAIN_UV_PER_E as CG, LOW_GAIN_FULL_WELL_E as FW,
        LOW_GAIN_READ_NOISE_E as READ, LOW_GAIN_SYSTEM_GAIN_DN_PER_E as K,
    };
    let system_gain = f.number_key(p, key!(K));
    let read_noise = f.number_key(p, key!(READ));
    let full_well = f.number_key(p, key!(FW));
    let conversion_gain = if f.has(const { CG.name }) {
        f.number_key(p, key!(CG))
    } else {
        f.mark_used(const { CG.name });
        None
    };
    let cg_failed = f.had_problem_at(p, CG.name);
    f.finish(p);
    if cg_failed {
        return None;
    }
    Some(LowGain {
        system_gain_dn_per_e: system_gain?,
        read_noise_e: read_noise?,
        full_well_e: full_well?,
        conversion_gain_uv_per_e: conversion_gain,
    })
}
