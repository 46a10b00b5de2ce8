//! Fuzz target: the frame manifest reader on arbitrary text must list problems or give a
//! manifest, never panic; every problem names a key path.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Err(problems) = engine::ptc::parse_manifest(text) {
        assert!(!problems.is_empty());
        for p in problems {
            assert!(!p.to_string().is_empty());
        }
    }
});
