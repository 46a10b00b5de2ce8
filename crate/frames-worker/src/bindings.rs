//! The worker's JavaScript interface: `Analysis`, `simulate_frame` and `simulate_series` for
//! `boot.js`, and `pair_stats_ms` for `scripts/measure-frames.mjs`.
//!
//! Adapts JavaScript values to [`crate::job`]; no rule or statistic here. A file JavaScript
//! cannot give becomes a message, never a panic.

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

/// An analysis given its files one at a time (see [`job::Job`]), for `boot.js`, which reads
/// the next files while one is analysed:
///
/// ```text
/// const a = Analysis.start(manifest);
/// while ((i = a.wanted()) !== undefined) { …a.upcoming(5) read ahead…; told = a.give(i, bytes) }
/// a.answer()
/// ```
#[wasm_bindgen]
pub struct Analysis {
    job: job::Job,
}

#[wasm_bindgen]
impl Analysis {
    /// Start on the manifest the page wrote (JSON text); a manifest with problems wants no file
    /// and answers with them.
    #[must_use]
    pub fn start(manifest_json: &str) -> Analysis {
        Analysis {
            job: job::Job::start(manifest_json),
        }
    }

    /// The manifest index of the file to give next, or `undefined` once the answer is ready.
    #[must_use]
    pub fn wanted(&self) -> Option<u32> {
        self.job.wanted().map(index_u32)
    }

    /// The manifest indices of the next `n` files wanted, the wanted one first.
    #[must_use]
    pub fn upcoming(&self, n: u32) -> Vec<u32> {
        let n = usize::try_from(n).unwrap_or(usize::MAX);
        self.job.upcoming(n).into_iter().map(index_u32).collect()
    }

    /// Give file `index`'s bytes (copied into wasm memory, into the buffer the last frame
    /// used). Returns the file table's text for it (`"W × H, B-bit"`), `null` when it could not
    /// be decoded, or `undefined` when it was read a second time.
    #[must_use]
    pub fn give(&mut self, index: u32, bytes: &Uint8Array) -> JsValue {
        let fill = |buffer: &mut Vec<u8>| {
            // A buffer of the last frame's length is overwritten as it is, without zeroing.
            buffer.resize(bytes.length() as usize, 0);
            bytes.copy_to(buffer);
        };
        told(self.job.give(index as usize, Ok(&fill)))
    }

    /// Say that the browser could not read file `index`, and why (the message follows the
    /// file's name in the problems). Returns as [`Analysis::give`].
    #[must_use]
    pub fn unreadable(&mut self, index: u32, why: &str) -> JsValue {
        told(self.job.give(
            index as usize,
            Err(format!("the browser could not read the file: {why}")),
        ))
    }

    /// The answer: the JSON text of [`job::run`].
    #[must_use]
    pub fn answer(self) -> String {
        self.job.answer()
    }
}

fn index_u32(i: usize) -> u32 {
    u32::try_from(i).unwrap_or(u32::MAX)
}

fn told(t: Option<Option<String>>) -> JsValue {
    match t {
        None => JsValue::UNDEFINED,
        Some(None) => JsValue::NULL,
        Some(Some(text)) => JsValue::from_str(&text),
    }
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
