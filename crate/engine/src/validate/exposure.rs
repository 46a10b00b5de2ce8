//! The `exposure` object: each key read with its catalogue rule (`keys::scenario`). No rule
//! here joins keys.

use super::{key, ReadKey};
use crate::input::{Fields, Problems};
use crate::keys::{BINNING, BINNING_MODE, FRAMES_AVERAGED, TIME_S};
use crate::scenario::{BinningMode, Exposure};

pub(super) fn exposure(p: &mut Problems, f: &mut Fields<'_>) -> Option<Exposure> {
    let time_s = f.number_key(p, key!(TIME_S));
    let frames = f.whole_key(p, key!(FRAMES_AVERAGED));
    let binning = f.whole_key(p, key!(BINNING));
    let mode = f.choice_key(p, key!(BINNING_MODE)).map(|s| {
        if s == "charge" {
            BinningMode::Charge
        } else {
            BinningMode::Digital
        }
    });
    f.finish(p);
    Some(Exposure {
        time_s: time_s?,
        frames_averaged: frames?,
        binning: binning?,
        binning_mode: mode?,
    })
}
