//! Colour: the channels of a colour filter array (`sensor.channels`) and the colour processing
//! (`processing`), each key read with its catalogue rule (`keys::colour`).
//!
//! The rules joining the channels with the light are in `light.rs` (each channel's QE must
//! reach the light, as the sensor's own QE must).

use super::{key, ReadKey};
use crate::colour::Processing;
use crate::input::{Fields, Problems};
use crate::keys;
use crate::scenario::{BayerPattern, ChannelResponse};
use crate::spectrum::QeCurve;

/// The Bayer pattern a `sensor.cfa` value names; `None` for `mono`.
pub(super) fn pattern(name: &str) -> Option<BayerPattern> {
    match name {
        "RGGB" => Some(BayerPattern::Rggb),
        "BGGR" => Some(BayerPattern::Bggr),
        "GRBG" => Some(BayerPattern::Grbg),
        "GBRG" => Some(BayerPattern::Gbrg),
        _ => None,
    }
}

/// `sensor.channels`: R, G and B, each with its QE.
pub(super) fn channels(p: &mut Problems, f: &mut Fields<'_>) -> Option<[ChannelResponse; 3]> {
    use keys::{CHANNEL_B, CHANNEL_G, CHANNEL_R};
    let mut read =
        |key: (&str, keys::Rule)| f.object_key(p, key).and_then(|mut c| channel(p, &mut c));
    let r = read(key!(CHANNEL_R));
    let g = read(key!(CHANNEL_G));
    let b = read(key!(CHANNEL_B));
    f.finish(p);
    Some([r?, g?, b?])
}

fn channel(p: &mut Problems, f: &mut Fields<'_>) -> Option<ChannelResponse> {
    use keys::{CHANNEL_QUANTUM_EFFICIENCY as QE, CHANNEL_QUANTUM_EFFICIENCY_CURVE as CURVE};
    let quantum_efficiency = f.number_key(p, key!(QE));
    let curve = f.pairs_key(p, key!(CURVE));
    let failed = f.had_problem_at(p, QE.name) || f.had_problem_at(p, CURVE.name);
    f.finish(p);
    // Whether the light can use what is given is checked with the light (`check_light`).
    (!failed).then(|| ChannelResponse {
        quantum_efficiency,
        quantum_efficiency_curve: curve.map(|points| QeCurve { points }),
    })
}

/// `processing`: white balance, colour matrix, channel correlation.
pub(super) fn processing(p: &mut Problems, f: &mut Fields<'_>) -> Option<Processing> {
    use keys::{CHANNEL_CORRELATION, COLOUR_MATRIX, WHITE_BALANCE};
    let defaults = Processing::default();
    let gains = f.numbers_key(p, key!(WHITE_BALANCE));
    let matrix = f.matrix_key(p, key!(COLOUR_MATRIX));
    let correlation = f.number_key(p, key!(CHANNEL_CORRELATION));
    let failed = f.had_problem_at(p, WHITE_BALANCE.name) || f.had_problem_at(p, COLOUR_MATRIX.name);
    f.finish(p);
    if failed {
        return None;
    }
    let white_balance = match gains.as_deref() {
        Some(&[r, g, b]) => [r, g, b],
        _ => defaults.white_balance,
    };
    let matrix = match matrix.as_deref() {
        Some([r0, r1, r2]) => match (r0.as_slice(), r1.as_slice(), r2.as_slice()) {
            (&[a, b, c], &[d, e, g], &[h, i, j]) => [[a, b, c], [d, e, g], [h, i, j]],
            _ => defaults.matrix,
        },
        _ => defaults.matrix,
    };
    Some(Processing {
        white_balance,
        matrix,
        correlation: correlation?,
    })
}
