//! The `sensor` object: each key read with its catalogue rule (`keys::sensor`), then the rules
//! that join keys of the sensor (the response band's ends, the black level against the ADC's
//! full scale, a capacitance for a readout that keeps reset noise).
//!
//! The rules joining the sensor with the light are in `light.rs`.

use super::{key, ReadKey};
use crate::dark;
use crate::input::{show, Fields, Problems};
use crate::keys::{self, Presence, Rule};
use crate::scenario::{DarkCurrentLaw, Readout, Sensor};
use crate::spectrum::QeCurve;

/// The response band when neither it nor a QE curve is given: the visible band over which
/// REFERENCES.md §5 states photons per lux (the catalogue's defaults of the band's keys).
const DEFAULT_BAND_NM: (f64, f64) = (
    fallback(keys::RESPONSE_FROM_NM.rule),
    fallback(keys::RESPONSE_TO_NM.rule),
);

/// The value a key defaulting from other keys takes when they give none.
const fn fallback(rule: Rule) -> f64 {
    match rule {
        Rule::Number {
            presence: Presence::DefaultFrom { value, .. } | Presence::Default(value),
            ..
        } => value,
        _ => 0.0,
    }
}

pub(super) fn read_sensor(p: &mut Problems, f: &mut Fields<'_>) -> Option<Sensor> {
    use keys::{
        ADC_BITS, BAND_GAP_PARAMETERS, BLACK_LEVEL_DN, CFA, CHANNELS, CONVERSION_GAIN_UV_PER_E,
        DARK_CURRENT_DOUBLING_C, DARK_CURRENT_E_PER_S, DARK_CURRENT_LAW,
        DARK_CURRENT_NONUNIFORMITY_PERCENT, DARK_CURRENT_REFERENCE_C, DSNU_E, FULL_WELL_E,
        PIXEL_PITCH_UM, PRNU_PERCENT, QUANTUM_EFFICIENCY, QUANTUM_EFFICIENCY_CURVE, READOUT,
        READ_NOISE_E, RESPONSE_FROM_NM, RESPONSE_TO_NM, SENSE_NODE_CAPACITANCE_FF, SUMMING_WELL_E,
        SYSTEM_GAIN_DN_PER_E,
    };
    let pixel_pitch_um = f.number_key(p, key!(PIXEL_PITCH_UM));
    // Required unless a QE curve covers the light; checked with the light (`check_light`).
    let quantum_efficiency = f.number_key(p, key!(QUANTUM_EFFICIENCY));
    let qe_curve = f.pairs_key(p, key!(QUANTUM_EFFICIENCY_CURVE));
    let band_default = qe_curve
        .as_ref()
        .and_then(|c| Some((c.first()?.0, c.last()?.0)))
        .unwrap_or(DEFAULT_BAND_NM);
    let response_from_nm = f.number_key_or(p, key!(RESPONSE_FROM_NM), band_default.0);
    let response_to_nm = f.number_key_or(p, key!(RESPONSE_TO_NM), band_default.1);
    if let (Some(a), Some(b)) = (response_from_nm, response_to_nm) {
        if b <= a {
            p.push(
                &f.path_of(const { RESPONSE_TO_NM.name }),
                format!(
                    "must be above sensor.response_from_nm ({}), got {}",
                    show(a),
                    show(b)
                ),
            );
        }
    }
    let full_well_e = f.number_key(p, key!(FULL_WELL_E));
    let read_noise_e = f.number_key(p, key!(READ_NOISE_E));
    let capacitance = f.number_key(p, key!(SENSE_NODE_CAPACITANCE_FF));
    let gain_uv = f.number_key(p, key!(CONVERSION_GAIN_UV_PER_E));
    let readout = f.choice_key(p, key!(READOUT)).map(|s| match s {
        "dds" => Readout::Dds,
        "single" => Readout::Single,
        _ => Readout::Cds,
    });
    let dark_current_e_per_s = f.number_key(p, key!(DARK_CURRENT_E_PER_S));
    let dark_current_reference_c = f.number_key(p, key!(DARK_CURRENT_REFERENCE_C));
    let dark_current_doubling_c = f.number_key(p, key!(DARK_CURRENT_DOUBLING_C));
    let law_name = f.choice_key(p, key!(DARK_CURRENT_LAW));
    let gap_given = f.has(const { BAND_GAP_PARAMETERS.name });
    let gap = f
        .choice_key(p, key!(BAND_GAP_PARAMETERS))
        .map(|name| match name {
            "thurmond_1975" => dark::THURMOND_1975,
            "sze_ng_2007" => dark::SZE_NG_2007,
            _ => dark::VARSHNI_1967,
        });
    let dark_current_law = match law_name {
        Some("bandgap") => {
            if f.has(const { DARK_CURRENT_DOUBLING_C.name }) {
                p.push(
                    &f.path_of(const { DARK_CURRENT_DOUBLING_C.name }),
                    "not used with the band-gap law: leave it out, or set \
                     sensor.dark_current_law to \"doubling\""
                        .into(),
                );
            }
            gap.map(DarkCurrentLaw::Bandgap)
        }
        Some(_) => {
            if gap_given {
                p.push(
                    &f.path_of(const { BAND_GAP_PARAMETERS.name }),
                    "used only with the band-gap law: set sensor.dark_current_law to \"bandgap\", \
                     or leave it out"
                        .into(),
                );
            }
            Some(DarkCurrentLaw::Doubling)
        }
        None => None,
    };
    let dsnu_e = f.number_key(p, key!(DSNU_E));
    let dark_nonuniformity = f.number_key(p, key!(DARK_CURRENT_NONUNIFORMITY_PERCENT));
    let cfa = f.choice_key(p, key!(CFA));
    let channels = f
        .object_key(p, key!(CHANNELS))
        .and_then(|mut c| super::colour::channels(p, &mut c));
    let channels_failed = f.had_problem_at(p, CHANNELS.name);
    let prnu_percent = f.number_key(p, key!(PRNU_PERCENT));
    let adc_bits = f.whole_key(p, key!(ADC_BITS));
    let system_gain_dn_per_e = f.number_key(p, key!(SYSTEM_GAIN_DN_PER_E));
    let black_level_dn = f.number_key(p, key!(BLACK_LEVEL_DN));
    let summing_well_e = f.number_key(p, key!(SUMMING_WELL_E));
    f.finish(p);

    if let (Some(bits), Some(black)) = (adc_bits, black_level_dn) {
        let full_scale = f64::from(bits).exp2() - 1.0;
        if black >= full_scale {
            p.push(
                &f.path_of(const { BLACK_LEVEL_DN.name }),
                format!(
                    "must be below the ADC's full scale 2^adc_bits − 1 = {}, got {}",
                    show(full_scale),
                    show(black)
                ),
            );
        }
    }
    if let Some(r @ (Readout::Dds | Readout::Single)) = readout {
        if capacitance.is_none()
            && gain_uv.is_none()
            && !f.had_problem_at(p, SENSE_NODE_CAPACITANCE_FF.name)
        {
            p.push(
                &f.path_of(const { SENSE_NODE_CAPACITANCE_FF.name }),
                format!(
                    "required when sensor.readout is \"{}\": reset noise needs the sense-node \
                     capacitance; give it, or sensor.conversion_gain_uv_per_e to derive it",
                    r.as_str()
                ),
            );
        }
    }

    let colour = match (cfa.and_then(super::colour::pattern), channels) {
        (Some(pattern), Some(channels)) => {
            Some(crate::scenario::ColourFilter { pattern, channels })
        }
        (Some(_), None) => {
            if !channels_failed {
                p.push(
                    &f.path_of(const { CHANNELS.name }),
                    "required with a Bayer pattern (sensor.cfa): give the quantum efficiency of \
                     R, G and B"
                        .into(),
                );
            }
            None
        }
        (None, Some(_)) => {
            if cfa.is_some() {
                p.push(
                    &f.path_of(const { CHANNELS.name }),
                    "only with a Bayer pattern: set sensor.cfa, or leave the channels out".into(),
                );
            }
            None
        }
        (None, None) => None,
    };
    let bayer = cfa.is_some_and(|c| c != "mono");
    if bayer {
        for (given, key) in [
            (quantum_efficiency.is_some(), QUANTUM_EFFICIENCY.name),
            (qe_curve.is_some(), QUANTUM_EFFICIENCY_CURVE.name),
        ] {
            if given {
                p.push(
                    &f.path_of(key),
                    "not used with a Bayer pattern: give each channel's in sensor.channels \
                     instead"
                        .into(),
                );
            }
        }
    }

    Some(Sensor {
        pixel_pitch_um: pixel_pitch_um?,
        quantum_efficiency,
        quantum_efficiency_curve: qe_curve.map(|points| QeCurve { points }),
        response_band_nm: (response_from_nm?, response_to_nm?),
        full_well_e: full_well_e?,
        read_noise_e: read_noise_e?,
        sense_node_capacitance_ff: capacitance,
        conversion_gain_uv_per_e: gain_uv,
        readout: readout?,
        dark_current_e_per_s: dark_current_e_per_s?,
        dark_current_reference_c: dark_current_reference_c?,
        dark_current_doubling_c: dark_current_doubling_c?,
        dark_current_law: dark_current_law?,
        dark_current_nonuniformity_percent: dark_nonuniformity?,
        colour: if bayer { Some(colour?) } else { None },
        dsnu_e: dsnu_e?,
        prnu_percent: prnu_percent?,
        adc_bits: adc_bits?,
        system_gain_dn_per_e: system_gain_dn_per_e?,
        black_level_dn: black_level_dn?,
        summing_well_e,
    })
}
