//! The worker's JavaScript interface: `analyse`, `simulate_frame` and `simulate_series` for
//! `boot.js`, and `pair_stats_ms` for `scripts/measure-frames.mjs`.
//!
//! Adapts JavaScript functions to the closures of [`crate::job`]; no rule or statistic here.
//! A file JavaScript cannot give (an exception, or not bytes) becomes a message, never a panic.

use js_sys::{Function, Uint8Array};
use wasm_bindgen::prelude::*;

use crate::{job, sim};

/// The seed as the page sends it (text: a JavaScript number cannot hold every u64).
fn seed_of(text: &str) -> Result<u64, String> {
    text.trim()
        .parse::<u64>()
        .map_err(|_| format!("seed: a whole number from 0 to 18446744073709551615, got “{text}”"))
}

fn problem_json(message: &str) -> JsValue {
    JsValue::from_str(&serde_json::json!({ "problem": message }).to_string())
}

/// The test-scene frame of a scenario (JSON text) with a seed (text): `[json, rgba]`, the JSON
/// text of [`sim::frame`] and its RGBA bytes (empty on a problem).
#[wasm_bindgen]
#[must_use]
pub fn simulate_frame(scenario_json: &str, seed: &str) -> js_sys::Array {
    match seed_of(seed) {
        Ok(seed) => {
            let a = sim::frame(scenario_json, seed);
            js_sys::Array::of2(&JsValue::from_str(&a.json), &Uint8Array::from(&a.rgba[..]))
        }
        Err(e) => js_sys::Array::of2(&problem_json(&e), &Uint8Array::new_with_length(0)),
    }
}

/// The photon transfer series of a scenario's sensor. With `zip`: `[json, zip]`, the JSON
/// `{"name": "….zip"}` and the archive of [`sim::series_zip`]; without: `[json, file…]`, the
/// JSON `{"manifest": "…", "names": […]}` and each file's bytes in manifest order. On a
/// problem `[{"problem": "…"}]`.
#[wasm_bindgen]
#[must_use]
pub fn simulate_series(scenario_json: &str, seed: &str, zip: bool) -> js_sys::Array {
    let out = js_sys::Array::new();
    let seed = match seed_of(seed) {
        Ok(s) => s,
        Err(e) => {
            out.push(&problem_json(&e));
            return out;
        }
    };
    if zip {
        match sim::series_zip(scenario_json, seed) {
            Ok(bytes) => {
                let name = format!("noise-budget-series-seed-{seed}.zip");
                out.push(&JsValue::from_str(
                    &serde_json::json!({ "name": name }).to_string(),
                ));
                out.push(&Uint8Array::from(&bytes[..]));
            }
            Err(e) => {
                out.push(&problem_json(&e));
            }
        }
        return out;
    }
    match sim::series(scenario_json, seed) {
        Ok(s) => {
            let names: Vec<&str> = s.files.iter().map(|(n, _)| n.as_str()).collect();
            out.push(&JsValue::from_str(
                &serde_json::json!({ "manifest": s.manifest_json, "names": names }).to_string(),
            ));
            for (_, bytes) in &s.files {
                out.push(&Uint8Array::from(&bytes[..]));
            }
        }
        Err(e) => {
            out.push(&problem_json(&e));
        }
    }
    out
}

/// Analyse the frames a manifest lists. `read(index)` returns a file's bytes as a
/// `Uint8Array` (or throws); `seen(index, text)` is called after each file with the frame's
/// size text, or `null` when it could not be read or decoded. Returns the JSON of
/// [`job::run`]. Each file's bytes are copied into wasm memory, decoded and dropped before the
/// next is read.
#[wasm_bindgen]
#[must_use]
pub fn analyse(manifest_json: &str, read: &Function, seen: &Function) -> String {
    let mut read_one = |f: &engine::ptc::FrameEntry| {
        let index = JsValue::from(u32::try_from(f.index).unwrap_or(u32::MAX));
        match read.call1(&JsValue::NULL, &index) {
            Ok(v) => match v.dyn_into::<Uint8Array>() {
                Ok(bytes) => Ok(bytes.to_vec()),
                Err(_) => Err("the browser gave no bytes for this file".to_string()),
            },
            Err(e) => Err(format!(
                "the browser could not read the file: {}",
                e.as_string()
                    .or_else(|| js_sys::JSON::stringify(&e).ok().and_then(|s| s.as_string()))
                    .unwrap_or_else(|| "no reason given".into())
            )),
        }
    };
    let mut seen_one = |f: &engine::ptc::FrameEntry, text: Option<String>| {
        let index = JsValue::from(u32::try_from(f.index).unwrap_or(u32::MAX));
        let text = text.map_or(JsValue::NULL, |t| JsValue::from_str(&t));
        // A failing progress report must not stop the analysis.
        let _ = seen.call2(&JsValue::NULL, &index, &text);
    };
    job::run(manifest_json, &mut read_one, &mut seen_one)
}

/// The best time, in milliseconds by `now()`, of `repeats` frame-pair statistics passes over
/// two synthetic 16-bit frames of `width` × `height` made in wasm memory (so no copy from
/// JavaScript is timed); for `scripts/measure-frames.mjs`. NaN when `now` gives no number.
#[wasm_bindgen]
#[must_use]
pub fn pair_stats_ms(width: u32, height: u32, repeats: u32, now: &Function) -> f64 {
    let n = usize::try_from(u64::from(width) * u64::from(height)).unwrap_or(0);
    let (a, b) = job::synthetic_pair(n);
    let clock = || {
        now.call0(&JsValue::NULL)
            .ok()
            .and_then(|v| v.as_f64())
            .unwrap_or(f64::NAN)
    };
    let mut best = f64::INFINITY;
    let mut check = 0u64;
    for _ in 0..repeats.max(1) {
        let t0 = clock();
        let s = engine::ptc::pair_sums(&a, &b);
        let t1 = clock();
        check = check.wrapping_add(s.sum_diff_sq);
        best = best.min(t1 - t0);
    }
    // Keep the sums observable so the pass cannot be optimised away.
    if check == u64::MAX {
        return f64::NAN;
    }
    best
}
