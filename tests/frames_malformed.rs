//! Frame decoders: round trips of every supported format and variant, and malformed files of
//! every format refused with a clear error, never a panic (including random bytes, proptest).
//!
//! Files are written by tests/support/frame_files.rs, small writers made from the
//! specifications that share no code with the engine's decoders (the cross-check against a
//! general-purpose library's files is tests/python/test_frame_decoders.py, Pillow). No
//! statistics here.

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)] // test code: a failure should panic

#[path = "support/frame_files.rs"]
mod frame_files;

use engine::frames::{decode, decode_as, Format, FrameError, RawGeometry, MAX_PIXELS};
use frame_files::{crc32, png, tiff, tiff16, tiff8, Compression, TiffImage};
use proptest::prelude::*;

/// A 5 × 3 test pattern (chosen): distinct values, including 0 and the top of the range.
fn pattern(max: u16) -> Vec<u16> {
    (0..15u32)
        .map(|i| {
            if i == 14 {
                max
            } else {
                ((i * 4679) % u32::from(max)) as u16
            }
        })
        .collect()
}

fn message(bytes: &[u8], raw: Option<RawGeometry>) -> String {
    match decode(bytes, raw) {
        Ok(f) => panic!("decoded a malformed file as {} × {}", f.width(), f.height()),
        Err(e) => e.to_string(),
    }
}

/// A PNG whose IHDR announces `width` × `height` (CRC fixed so only the size is wrong).
fn png_with_size(mut bytes: Vec<u8>, width: u32, height: u32) -> Vec<u8> {
    // Signature (8), IHDR length (4), "IHDR" (4), then width and height.
    bytes[16..20].copy_from_slice(&width.to_be_bytes());
    bytes[20..24].copy_from_slice(&height.to_be_bytes());
    let crc = crc32(&bytes[12..29]);
    bytes[29..33].copy_from_slice(&crc.to_be_bytes());
    bytes
}

// ---- round trips --------------------------------------------------------------------------

#[test]
fn png_round_trips_8_and_16_bit() {
    let v16 = pattern(u16::MAX);
    let be: Vec<u8> = v16.iter().flat_map(|v| v.to_be_bytes()).collect();
    let f = decode(&png(5, 3, 16, 0, &be, None), None).unwrap();
    assert_eq!((f.width(), f.height(), f.sample_bits()), (5, 3, 16));
    assert_eq!(f.pixels(), &v16[..]);
    let v8: Vec<u8> = (0..15).map(|i| (i * 17) as u8).collect();
    let f = decode(&png(5, 3, 8, 0, &v8, None), None).unwrap();
    assert_eq!(
        f.pixels(),
        &v8.iter().map(|v| u16::from(*v)).collect::<Vec<_>>()[..]
    );
}

#[test]
fn tiff_round_trips_every_compression() {
    let v16 = pattern(u16::MAX);
    let v8: Vec<u8> = (0..15).map(|i| (i * 17) as u8).collect();
    for c in [
        Compression::Uncompressed,
        Compression::Lzw,
        Compression::Deflate,
        Compression::Packbits,
    ] {
        let f = decode(&tiff16(5, 3, &v16, c), None).unwrap();
        assert_eq!((f.width(), f.height(), f.sample_bits()), (5, 3, 16));
        assert_eq!(f.pixels(), &v16[..]);
        let f = decode(&tiff8(5, 3, &v8, c), None).unwrap();
        assert_eq!(
            f.pixels(),
            &v8.iter().map(|v| u16::from(*v)).collect::<Vec<_>>()[..]
        );
    }
}

#[test]
fn pgm_and_raw_round_trip() {
    let v = pattern(4095);
    let mut pgm = b"P5\n5 3\n4095\n".to_vec();
    pgm.extend(v.iter().flat_map(|x| x.to_be_bytes()));
    let f = decode(&pgm, None).unwrap();
    assert_eq!((f.pixels(), f.significant_bits()), (&v[..], Some(12)));
    let raw: Vec<u8> = v.iter().flat_map(|x| x.to_le_bytes()).collect();
    let g = RawGeometry {
        width: 5,
        height: 3,
        bits: 12,
    };
    let f = decode(&raw, Some(g)).unwrap();
    assert_eq!(f.pixels(), &v[..]);
    assert_eq!(
        decode_as(Format::Raw, &raw, Some(g)).unwrap().pixels(),
        &v[..]
    );
}

// ---- malformed ----------------------------------------------------------------------------

#[test]
fn malformed_pgm() {
    for (bytes, start) in [
        (&b"P2 1 1 255\n1"[..], "not a PGM (P5), PNG or TIFF"), // wrong magic (plain PGM)
        (b"P5", "bad pgm header: the file ends before the width"),
        (
            b"P5 4 4 255\n\x00\x00",
            "truncated: the image needs 16 bytes",
        ), // header > data
        (
            b"P5 4294967295 4294967295 65535\n",
            "image size 4294967295 × 4294967295 is more than",
        ),
        (b"P5 0 4 255\n", "image size 0 × 4"),
        (
            b"P5 1 1 0\n\x00",
            "bad pgm header: maxval must be from 1 to 65535, got 0",
        ),
        (
            b"P5 1 1 65536\n\x00\x00",
            "bad pgm header: maxval must be from 1 to 65535",
        ),
        (
            b"P5 1 1 255x\x00",
            "bad pgm header: maxval must be followed by one whitespace",
        ),
    ] {
        let m = message(bytes, None);
        assert!(m.starts_with(start), "{m:?} should start with {start:?}");
    }
}

#[test]
fn malformed_raw() {
    let g = |width, height, bits| {
        Some(RawGeometry {
            width,
            height,
            bits,
        })
    };
    for (bytes, geometry, start) in [
        (
            vec![0u8; 7],
            g(2, 2, 16),
            "truncated: the image needs 8 bytes",
        ),
        (vec![0u8; 10], g(2, 2, 16), "2 bytes after the image data"),
        (
            vec![],
            g(u32::MAX, u32::MAX, 16),
            "image size 4294967295 × 4294967295",
        ),
        (vec![], g(0, 0, 16), "image size 0 × 0"),
        (vec![0u8; 8], g(2, 2, 0), "raw bit depth 0 is not supported"),
        (
            vec![0u8; 8],
            g(2, 2, 24),
            "raw bit depth 24 is not supported",
        ),
        (
            vec![0, 0, 0, 4],
            g(2, 1, 10),
            "sample at column 1, row 0 is 1024, above the maximum 1023",
        ),
    ] {
        let m = message(&bytes, geometry);
        assert!(m.starts_with(start), "{m:?} should start with {start:?}");
    }
    assert!(matches!(
        decode_as(Format::Raw, &[0; 8], None),
        Err(FrameError::BadHeader { .. })
    ));
}

#[test]
fn malformed_png() {
    let v8 = vec![7u8; 15];
    let good = png(5, 3, 8, 0, &v8, None);
    // Truncated anywhere after the signature and before the image data ends: an error, never a
    // panic. The last 12 bytes are the empty IEND chunk; without it the image is still whole,
    // and then it must decode to the same pixels.
    let iend = good.len() - 12;
    for cut in 8..good.len() {
        match decode(&good[..cut], None) {
            Err(e) => {
                let m = e.to_string();
                assert!(
                    m.starts_with("corrupt png") || m.starts_with("truncated"),
                    "cut {cut}: {m}"
                );
            }
            Ok(f) => {
                assert!(cut >= iend, "cut {cut} of {} decoded", good.len());
                assert_eq!(f.pixels(), &[7u16; 15][..]);
            }
        }
    }
    // Wrong magic.
    let mut bad = good.clone();
    bad[1] = b'Q';
    assert!(message(&bad, None).starts_with("not a PGM (P5), PNG or TIFF"));
    assert!(decode_as(Format::Png, &bad, None).is_err());
    // Header sizes bigger than the data can hold (valid CRC): refused before allocating.
    let m = message(&png_with_size(good.clone(), 16384, 16384), None);
    assert!(
        m.starts_with("png header announces 268435456 bytes of pixels"),
        "{m}"
    );
    // width × height beyond the limit (and beyond 32 bits).
    let m = message(&png_with_size(good.clone(), 0x7fff_ffff, 0x7fff_ffff), None);
    assert!(
        m.contains(&format!("more than {MAX_PIXELS} pixels")) || m.starts_with("corrupt png"),
        "{m}"
    );
    // Zero size.
    let m = message(&png_with_size(good, 0, 3), None);
    assert!(
        m.starts_with("corrupt png") || m.starts_with("image size 0"),
        "{m}"
    );
    // Colour, alpha, palette and low bit depths.
    let rgb = png(5, 3, 8, 2, &[0; 45], None);
    assert!(message(&rgb, None).starts_with("png image is rgb"));
    let ga = png(5, 3, 8, 4, &[0; 30], None);
    assert!(message(&ga, None).starts_with("png image is greyscale with alpha"));
    let g4 = png(4, 2, 4, 0, &[0; 4], None);
    assert!(message(&g4, None).starts_with("png bit depth 4 is not supported"));
}

#[test]
fn malformed_tiff() {
    let v16 = pattern(u16::MAX);
    for c in [
        Compression::Uncompressed,
        Compression::Lzw,
        Compression::Deflate,
        Compression::Packbits,
    ] {
        let good = tiff16(5, 3, &v16, c);
        for cut in 0..good.len() {
            let m = message(&good[..cut], None);
            assert!(
                m.starts_with("corrupt tiff")
                    || m.starts_with("truncated")
                    || m.starts_with("not a PGM")
                    || m.starts_with("tiff header announces"),
                "cut {cut}: {m}"
            );
        }
    }
    // Wrong magic.
    let mut bad = tiff16(5, 3, &v16, Compression::Uncompressed);
    bad[2] = 0;
    assert!(message(&bad, None).starts_with("not a PGM (P5), PNG or TIFF"));
    assert!(decode_as(Format::Tiff, &bad, None).is_err());
    // Colour, 32-bit, float and signed samples.
    let image = |bits, samples, photometric, sample_format| TiffImage {
        width: 2,
        height: 1,
        bits,
        samples,
        photometric,
        sample_format,
    };
    let none = Compression::Uncompressed;
    assert!(message(&tiff(image(8, 3, 2, 1), &[0; 6], none), None).starts_with("tiff image is rgb"));
    assert!(message(&tiff(image(32, 1, 1, 1), &[0; 8], none), None)
        .starts_with("tiff bit depth 32 is not supported"));
    assert!(message(&tiff(image(32, 1, 1, 3), &[0; 8], none), None).starts_with("tiff"));
    assert!(message(&tiff(image(16, 1, 1, 2), &[0; 4], none), None)
        .starts_with("tiff image is sample format 2"));
}

#[test]
fn tiff_header_bigger_than_its_data() {
    // An uncompressed 5 × 3 16-bit TIFF whose ImageWidth/ImageLength tags are rewritten to
    // 4000 × 4000: 32 MB of pixels announced in a file of about 200 bytes.
    let good = tiff16(5, 3, &pattern(u16::MAX), Compression::Uncompressed);
    let mut bad = good.clone();
    // Little-endian IFD: offset at bytes 4..8, then a 2-byte count and 12-byte entries
    // (tag, type, count, value). Rewrite the values of tags 256 and 257.
    let ifd = u32::from_le_bytes(bad[4..8].try_into().unwrap()) as usize;
    let n = u16::from_le_bytes(bad[ifd..ifd + 2].try_into().unwrap()) as usize;
    for i in 0..n {
        let e = ifd + 2 + 12 * i;
        let tag = u16::from_le_bytes(bad[e..e + 2].try_into().unwrap());
        let ty = u16::from_le_bytes(bad[e + 2..e + 4].try_into().unwrap());
        if tag == 256 || tag == 257 {
            if ty == 3 {
                bad[e + 8..e + 10].copy_from_slice(&4000u16.to_le_bytes());
            } else {
                bad[e + 8..e + 12].copy_from_slice(&4000u32.to_le_bytes());
            }
        }
    }
    let m = message(&bad, None);
    assert!(
        m.starts_with("truncated: the image needs 32000000 bytes"),
        "{m}"
    );
}

// ---- no panic for any input ---------------------------------------------------------------

fn valid_files() -> Vec<Vec<u8>> {
    let v16 = pattern(u16::MAX);
    let be: Vec<u8> = v16.iter().flat_map(|v| v.to_be_bytes()).collect();
    let mut pgm = b"P5 5 3 65535\n".to_vec();
    pgm.extend(&be);
    vec![
        pgm,
        png(5, 3, 16, 0, &be, None),
        tiff16(5, 3, &v16, Compression::Uncompressed),
        tiff16(5, 3, &v16, Compression::Lzw),
        tiff16(5, 3, &v16, Compression::Deflate),
        tiff16(5, 3, &v16, Compression::Packbits),
    ]
}

/// Cases per property: 512, or `PROPTEST_CASES` for long runs (the fuzzing fallback where
/// cargo-fuzz cannot run; see DEVELOPERS.md).
fn cases() -> u32 {
    std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(512)
}

/// A manifest of one dark and two flat stacks of small raw frames, with a layout and a depth.
fn small_manifest(cfa: &str, bits: Option<u8>, frames_per_stack: usize) -> String {
    let mut entries = Vec::new();
    for (s, (kind, level)) in [("dark", "d"), ("flat", "a"), ("flat", "b"), ("flat", "c")]
        .iter()
        .enumerate()
    {
        for j in 0..frames_per_stack {
            entries.push(format!(
                r#"{{"path": "{}", "kind": "{kind}", "exposure_time_s": 0.01, "level": "{level}"}}"#,
                s * 100 + j
            ));
        }
    }
    let bits = bits.map_or(String::new(), |b| format!(r#""significant_bits": {b},"#));
    format!(
        r#"{{"version": 1, "cfa": "{cfa}", {bits} "raw": {{"width": 6, "height": 5, "bits": 16}}, "frames": [{}]}}"#,
        entries.join(", ")
    )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(cases()))]

    #[test]
    fn measuring_random_frames_never_panics(
        cfa in 0usize..5, bits in prop::option::of(1u8..=16), l in 2usize..5,
        bytes in prop::collection::vec(any::<u8>(), 1..400)) {
        let m = engine::ptc::parse_manifest(&small_manifest(engine::ptc::CFA_NAMES[cfa], bits, l)).unwrap();
        let frame = 6 * 5 * 2;
        let r = engine::ptc::measure(&m, &mut |f| {
            let i: usize = f.path.parse().unwrap_or(0);
            Ok(bytes.iter().cycle().skip(i * 7 % bytes.len()).take(frame).copied().collect())
        }, &mut |_, _| {});
        if let Ok(c) = r {
            prop_assert!(c.sensor.system_gain_dn_per_e.is_finite());
            for f in &c.figures {
                prop_assert!(f.value.is_none_or(f64::is_finite));
            }
            let _ = engine::ptc::spatial_csv(&c);
            prop_assert!(serde_json::to_string(&c).is_ok());
        }
    }

    #[test]
    fn mutated_manifests_never_panic_and_name_keys(
        cfa in 0usize..5, bits in prop::option::of(0u8..=20),
        cut in 0usize..600, flips in prop::collection::vec((0usize..600, any::<u8>()), 0..4)) {
        let mut text = small_manifest(engine::ptc::CFA_NAMES[cfa], bits, 2).into_bytes();
        for (at, v) in flips {
            let n = text.len();
            text[at % n] = v;
        }
        text.truncate(cut.max(1));
        if let Ok(t) = std::str::from_utf8(&text) {
            if let Err(ps) = engine::ptc::parse_manifest(t) {
                prop_assert!(!ps.is_empty());
                for p in ps {
                    prop_assert!(p.to_string().contains(": "), "{p}");
                }
            }
        }
    }

    #[test]
    fn random_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..512),
                                w in 0u32..64, h in 0u32..64, bits in 0u8..20) {
        let _ = decode(&bytes, None);
        for f in [Format::Pgm, Format::Png, Format::Tiff] {
            let _ = decode_as(f, &bytes, None);
        }
        let _ = decode(&bytes, Some(RawGeometry { width: w, height: h, bits }));
    }

    #[test]
    fn random_bytes_behind_each_signature_never_panic(
        which in 0usize..4, bytes in prop::collection::vec(any::<u8>(), 0..512)) {
        let sig: &[u8] = [&b"P5"[..], &[0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a], b"II*\0", b"MM\0*"][which];
        let mut file = sig.to_vec();
        file.extend(bytes);
        let _ = decode(&file, None);
    }

    #[test]
    fn damaged_valid_files_never_panic(which in 0usize..6, cut in 0usize..400,
                                       flips in prop::collection::vec((0usize..400, any::<u8>()), 0..6)) {
        let mut file = valid_files()[which].clone();
        for (at, v) in flips {
            let n = file.len();
            file[at % n] = v;
        }
        file.truncate(cut.max(1));
        let _ = decode(&file, None);
    }
}
