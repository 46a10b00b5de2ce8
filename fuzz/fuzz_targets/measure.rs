//! Fuzz target: the whole measurement — a fixed manifest of one dark and two flat stacks whose
//! frames are cut from the fuzzer's bytes (small raw or PGM frames) — must give a
//! characterization with finite figures or a failure, never panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

const MANIFEST: &str = r#"{"version": 1, "cfa": "RGGB", "raw": {"width": 6, "height": 4, "bits": 16},
  "frames": [
    {"path": "0", "kind": "dark", "exposure_time_s": 0.01},
    {"path": "1", "kind": "dark", "exposure_time_s": 0.01},
    {"path": "2", "kind": "dark", "exposure_time_s": 0.01},
    {"path": "3", "kind": "flat", "exposure_time_s": 0.01, "level": "a"},
    {"path": "4", "kind": "flat", "exposure_time_s": 0.01, "level": "a"},
    {"path": "5", "kind": "flat", "exposure_time_s": 0.01, "level": "b"},
    {"path": "6", "kind": "flat", "exposure_time_s": 0.01, "level": "b"},
    {"path": "7", "kind": "flat", "exposure_time_s": 0.01, "level": "c"},
    {"path": "8", "kind": "flat", "exposure_time_s": 0.01, "level": "c"}
  ]}"#;

fuzz_target!(|data: &[u8]| {
    let Ok(mut m) = engine::ptc::parse_manifest(MANIFEST) else {
        return;
    };
    // The first byte picks the layout and a stated depth, so every path is reached.
    if let Some(b) = data.first() {
        m.cfa = engine::ptc::Cfa::from_name(engine::ptc::CFA_NAMES[usize::from(b % 5)])
            .unwrap_or_default();
        m.significant_bits = (b & 0x80 != 0).then_some(8 + (b >> 3) % 9);
    }
    let frame = 6 * 4 * 2;
    let body = data.get(1..).unwrap_or_default();
    let result = engine::ptc::measure(
        &m,
        &mut |f| {
            let i: usize = f.path.parse().unwrap_or(0);
            let start = (i * frame) % body.len().max(1);
            let mut bytes: Vec<u8> = body.iter().cycle().skip(start).take(frame).copied().collect();
            bytes.resize(frame, 0);
            Ok(bytes)
        },
        &mut |_, _| {},
    );
    if let Ok(c) = result {
        let s = &c.sensor;
        assert!(s.system_gain_dn_per_e.is_finite() && s.system_gain_dn_per_e > 0.0);
        for v in [s.read_noise_e, s.full_well_e, s.dsnu_e, s.prnu_percent, s.black_level_dn]
            .into_iter()
            .flatten()
        {
            assert!(v.is_finite(), "sensor figure {v}");
        }
        for f in &c.figures {
            if let Some(v) = f.value {
                assert!(v.is_finite(), "{} is {v}", f.key);
            }
        }
        let _ = engine::ptc::spatial_csv(&c);
        let _ = serde_json::to_string(&c);
    }
});
