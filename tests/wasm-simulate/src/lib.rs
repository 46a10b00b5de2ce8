//! A bare wasm wrapper over the engine for measuring: no wasm-bindgen, just exported functions
//! over linear memory, so node can load it with no glue. Not shipped, not part of the workspace.
//!
//! Without the `simulate` feature it exports what the page always needs (`evaluate`), so the
//! size difference of the two builds is the simulator's cost in a page's wasm.

/// Room for `len` bytes of input in wasm memory (leaked: the module is loaded for one measure).
#[no_mangle]
pub extern "C" fn alloc(len: usize) -> *mut u8 {
    let mut v = vec![0u8; len];
    let p = v.as_mut_ptr();
    std::mem::forget(v);
    p
}

fn text<'a>(ptr: *const u8, len: usize) -> &'a str {
    // SAFETY: the caller wrote `len` bytes at `ptr`, allocated by `alloc`.
    let bytes = unsafe { std::slice::from_raw_parts(ptr, len) };
    std::str::from_utf8(bytes).unwrap_or("")
}

/// The scenario's temporal SNR, or −1 for an invalid scenario.
#[no_mangle]
pub extern "C" fn evaluate(ptr: *const u8, len: usize) -> f64 {
    engine::evaluate_json(text(ptr, len)).map_or(-1.0, |r| r.snr.temporal)
}

/// A test-scene frame's mean output value, DN, or −1 when refused.
#[cfg(feature = "simulate")]
#[no_mangle]
pub extern "C" fn simulate_frame(ptr: *const u8, len: usize, w: u32, h: u32, seed: u64) -> f64 {
    frame_mean(text(ptr, len), w, h, seed)
}

/// Bytes of a whole series (PGM files and manifest), or −1 when refused.
#[cfg(feature = "simulate")]
#[no_mangle]
pub extern "C" fn simulate_series(ptr: *const u8, len: usize, w: u32, h: u32, seed: u64) -> f64 {
    let Ok(sc) = engine::validate::scenario_from_json(text(ptr, len)) else {
        return -1.0;
    };
    let Ok(size) = engine::simulate::FrameSize::new(w, h) else {
        return -1.0;
    };
    engine::simulate::series(&sc, seed, size).map_or(-1.0, |s| {
        (s.files.iter().map(|(_, b)| b.len()).sum::<usize>() + s.manifest_json.len()) as f64
    })
}

/// The frame's mean output value (shared by the wasm export and the native baseline).
pub fn frame_mean(json: &str, w: u32, h: u32, seed: u64) -> f64 {
    let Ok(sc) = engine::validate::scenario_from_json(json) else {
        return -1.0;
    };
    let Ok(size) = engine::simulate::FrameSize::new(w, h) else {
        return -1.0;
    };
    engine::simulate::frame(&sc, seed, size).map_or(-1.0, |f| {
        f.values_dn.iter().sum::<f64>() / f.values_dn.len() as f64
    })
}
