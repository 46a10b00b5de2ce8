//! The `detection` object: the detection task's keys, each read with its catalogue rule
//! (`keys::detection`), and the one rule a range cannot state (a contrast of 0). Left out,
//! the object is read as empty, so every key takes its catalogue default.

use serde_json::Map;

use super::{key, ReadKey};
use crate::input::{Fields, Problems};
use crate::keys;
use crate::scenario::Detection;

/// The detection task of the object in `f`.
pub(super) fn detection(p: &mut Problems, f: &mut Fields<'_>) -> Option<Detection> {
    use keys::{
        CONTRAST, CONTRAST_INTERVAL, DETECTION_PROBABILITY, FALSE_ALARM_PROBABILITY,
        PIXELS_SEARCHED,
    };
    let false_alarm = f.number_key(p, key!(FALSE_ALARM_PROBABILITY));
    let required = f.number_key(p, key!(DETECTION_PROBABILITY));
    let pixels = f.whole_key(p, key!(PIXELS_SEARCHED));
    let contrast = f.number_key(p, key!(CONTRAST));
    let interval = f.number_key(p, key!(CONTRAST_INTERVAL));
    if contrast == Some(0.0) {
        p.push(
            &f.path_of(const { CONTRAST.name }),
            "must not be 0: two patches of the same signal have no contrast to detect".into(),
        );
    }
    f.finish(p);
    Some(Detection {
        false_alarm_probability: false_alarm?,
        detection_probability: required?,
        pixels: pixels?,
        contrast: contrast.filter(|c| *c != 0.0)?,
        contrast_interval: interval?,
    })
}

/// The detection task of a scenario without a `detection` object: every key's default.
pub(super) fn defaults(p: &mut Problems) -> Option<Detection> {
    let empty = Map::new();
    let mut f = Fields::new(const { keys::DETECTION.name }, &empty);
    detection(p, &mut f)
}
