//! Fuzz target: every frame decoder on arbitrary bytes (signature sniffing, then each format
//! forced, and raw with a geometry taken from the first bytes) must return a frame or an error,
//! never panic, and a decoded frame must hold width × height samples.
#![no_main]

use engine::frames::{decode, decode_as, Format, RawGeometry};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let check = |r: Result<engine::frames::Frame, engine::frames::FrameError>| {
        if let Ok(f) = r {
            assert_eq!(f.len() as u64, u64::from(f.width()) * u64::from(f.height()));
            let _ = f.msb_bits();
        }
    };
    check(decode(data, None));
    for format in [Format::Pgm, Format::Png, Format::Tiff] {
        check(decode_as(format, data, None));
    }
    if let [w, h, bits, rest @ ..] = data {
        let g = RawGeometry {
            width: u32::from(*w),
            height: u32::from(*h),
            bits: *bits,
        };
        check(decode(rest, Some(g)));
    }
});
