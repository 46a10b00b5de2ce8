//! Tests of png_frame.rs on small PNGs built here byte by byte (their zlib streams are stored
//! blocks, so every filtered byte is visible), and on damaged ones.

#![allow(clippy::unwrap_used, clippy::indexing_slicing, clippy::panic)] // test code

use super::*;
use crate::frames::inflate::adler32;

fn chunk(kind: &[u8; 4], data: &[u8]) -> Vec<u8> {
    let mut body = kind.to_vec();
    body.extend_from_slice(data);
    let mut c = (data.len() as u32).to_be_bytes().to_vec();
    c.extend_from_slice(&body);
    c.extend_from_slice(&crc32(&body).to_be_bytes());
    c
}

/// A zlib stream of one stored block (RFC 1951 §3.2.4).
fn stored(data: &[u8]) -> Vec<u8> {
    let n = data.len() as u16;
    let mut z = vec![0x78, 0x01, 0x01];
    z.extend_from_slice(&n.to_le_bytes());
    z.extend_from_slice(&(!n).to_le_bytes());
    z.extend_from_slice(data);
    z.extend_from_slice(&adler32(data).to_be_bytes());
    z
}

fn png(
    width: u32,
    height: u32,
    depth: u8,
    interlace: u8,
    extra: &[u8],
    filtered: &[u8],
) -> Vec<u8> {
    let mut ihdr = width.to_be_bytes().to_vec();
    ihdr.extend_from_slice(&height.to_be_bytes());
    ihdr.extend_from_slice(&[depth, 0, 0, 0, interlace]);
    let mut f = SIGNATURE.to_vec();
    f.extend(chunk(b"IHDR", &ihdr));
    f.extend_from_slice(extra);
    f.extend(chunk(b"IDAT", &stored(filtered)));
    f.extend(chunk(b"IEND", &[]));
    f
}

fn err(bytes: &[u8]) -> String {
    match decode(bytes) {
        Ok(f) => panic!("decoded as {} × {}", f.width(), f.height()),
        Err(e) => e.to_string(),
    }
}

/// Source: the CRC-32 check value 0xCBF43926 of "123456789" (CRC-32/ISO-HDLC in Greg Cook's
/// catalogue of parametrised CRC algorithms; also Python's `zlib.crc32`), and the IEND chunk's
/// CRC AE 42 60 82 that ends every PNG (PNG spec §11.2.5).
#[test]
fn crc32_check_values() {
    assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
    assert_eq!(crc32(b"IEND"), 0xAE42_6082);
}

/// Source: Python 3's `zlib.crc32` (zlib 1.3) on these inputs (0x414FA339 for the fox is also
/// Wikipedia's CRC-32 example); and for every length from 0 to 40 (each tail after the 8-byte
/// steps), the bit-at-a-time CRC of §5.5's definition (polynomial 0xEDB88320, reflected).
#[test]
fn crc32_eight_at_a_time_matches_bitwise() {
    assert_eq!(
        crc32(b"The quick brown fox jumps over the lazy dog"),
        0x414F_A339
    );
    let long: Vec<u8> = (0..100_003u32).map(|i| (i * 7 % 251) as u8).collect();
    assert_eq!(crc32(&long), 0xf8a4_718a);
    let bitwise = |bytes: &[u8]| {
        let mut c = !0u32;
        for b in bytes {
            c ^= u32::from(*b);
            for _ in 0..8 {
                c = if c & 1 == 1 {
                    0xEDB8_8320 ^ (c >> 1)
                } else {
                    c >> 1
                };
            }
        }
        !c
    };
    for n in 0..=40 {
        assert_eq!(crc32(&long[..n]), bitwise(&long[..n]), "length {n}");
    }
}

/// Source: PNG spec §9.2 (filters 0 to 4) and §9.4 (Paeth), worked by hand on these rows.
#[test]
fn every_filter_type_on_known_rows() {
    let filtered = [
        0, 10, 20, 30, // None
        1, 5, 5, 5, // Sub: 5, 10, 15
        2, 1, 2, 3, // Up: 6, 12, 18
        3, 4, 4, 4, // Average: 4 + 6/2 = 7, 4 + (7 + 12)/2 = 13, 4 + (13 + 18)/2 = 19
        4, 1, 1, 1, // Paeth: b each time: 8, 14, 20
        1, 200, 100, 0, // Sub, wrapping: 200, 300 - 256 = 44, 44
        4, 0, 5, 0, // Paeth: b = 200; b = 44, + 5 = 49; a = 49 (b = c = 44)
    ];
    let f = decode(&png(3, 7, 8, 0, &[], &filtered)).unwrap();
    assert_eq!(
        f.pixels(),
        [10, 20, 30, 5, 10, 15, 6, 12, 18, 7, 13, 19, 8, 14, 20, 200, 44, 44, 200, 49, 49]
    );
    // 16-bit: Sub works on bytes two apart (bpp 2), samples big-endian.
    let f = decode(&png(2, 1, 16, 0, &[], &[1, 0x01, 0x02, 0x03, 0x04])).unwrap();
    assert_eq!((f.sample_bits(), f.pixels()), (16, &[0x0102, 0x0406][..]));
}

/// Source: PNG spec §9.4 (PaethPredictor: p = a + b − c, pa = |p − a|, pb = |p − b|,
/// pc = |p − c|; a if pa ≤ pb and pa ≤ pc, else b if pb ≤ pc, else c), worked by hand; also
/// checked with a 6-line Python transcription of §9.4's pseudo-code.
/// 8-bit, above = 50 50 30 200, filtered 5 7 9 1:
/// (a, b, c) = (0, 50, 0): p 50, (50, 0, 50) → b, 55; (55, 50, 50): p 55, (0, 5, 5) → a, 62;
/// (62, 30, 50): p 42, (20, 12, 8) → c, 59; (59, 200, 30): p 229, (170, 29, 199) → b, 201.
/// 16-bit (two bytes apart): the even bytes as above; the odd bytes, above 20 10 0 0, filtered
/// 5 3 0 0: (0, 20, 0) → b, 25; (25, 10, 20): p 15, (10, 5, 5), the tie pb = pc → b, 13;
/// (13, 0, 10): p 3, (10, 3, 7) → b, 0; (0, 0, 0) → a, 0.
#[test]
fn paeth_rows_worked_by_hand() {
    let mut row = [5, 7, 9, 1];
    unfilter_row::<1>(4, &mut row, &[50, 50, 30, 200]).unwrap();
    assert_eq!(row, [55, 62, 59, 201]);
    let mut row = [5, 5, 7, 3, 9, 0, 1, 0];
    unfilter_row::<2>(4, &mut row, &[50, 20, 50, 10, 30, 0, 200, 0]).unwrap();
    assert_eq!(row, [55, 25, 62, 13, 59, 0, 201, 0]);
    // The first row: above is zeros, so Paeth is Sub (§9.4: b = c = 0 gives a).
    let mut row = [1, 2, 3, 4];
    unfilter_row::<2>(4, &mut row, &[0; 4]).unwrap();
    assert_eq!(row, [1, 2, 4, 6]);
    assert_eq!(unfilter_row::<1>(5, &mut row, &[0; 4]), Err(5));
}

/// Source: PNG spec §8.2 (Adam7 pass origins and steps), worked by hand for a 3 × 3 image whose
/// pixel at column x, row y is 10y + x: passes 1, 4, 5, 6, 7 are non-empty.
#[test]
fn adam7_places_each_pass() {
    let filtered = [
        0, 0, // pass 1: (0, 0)
        0, 2, // pass 4: (2, 0)
        0, 20, 22, // pass 5: row 2, columns 0 and 2
        0, 1, 0, 21, // pass 6: column 1 of rows 0 and 2
        0, 10, 11, 12, // pass 7: row 1
    ];
    let f = decode(&png(3, 3, 8, 1, &[], &filtered)).unwrap();
    assert_eq!(f.pixels(), [0, 1, 2, 10, 11, 12, 20, 21, 22]);
}

/// Source: PNG spec §11.3.3.4 (sBIT for greyscale: one byte, 1 to the bit depth).
#[test]
fn sbit_below_the_depth_is_kept() {
    let rows = [0, 0x10, 0x00];
    let f = decode(&png(1, 1, 16, 0, &chunk(b"sBIT", &[12]), &rows)).unwrap();
    assert_eq!(f.msb_bits(), Some(12));
    let f = decode(&png(1, 1, 16, 0, &chunk(b"sBIT", &[16]), &rows)).unwrap();
    assert_eq!(f.msb_bits(), None);
    assert!(err(&png(1, 1, 16, 0, &chunk(b"sBIT", &[17]), &rows)).contains("chunk sBIT"));
}

/// Source: PNG spec §5.5 (a chunk whose CRC fails is damaged), RFC 1950 §2.2 (ADLER32), §5.4
/// (an unknown critical chunk cannot be skipped), §9.2 (filter types 0 to 4 only); the wording
/// is this project's.
#[test]
fn damaged_files_name_what_failed() {
    let good = png(3, 1, 8, 0, &[], &[0, 1, 2, 3]);
    // IDAT's CRC: the chunk starts after the signature (8) and IHDR (25).
    let mut bad = good.clone();
    let crc_at = 33 + 8 + (good.len() - 33 - 12 - 12);
    bad[crc_at] ^= 0xff;
    let m = err(&bad);
    assert!(m.starts_with("corrupt png data: chunk IDAT: crc 0x"), "{m}");
    // A pixel byte changed and the chunk re-signed: the Adler-32 fails.
    let mut z = stored(&[0, 1, 2, 3]);
    z[8] = 9;
    let mut f = SIGNATURE.to_vec();
    f.extend_from_slice(&good[8..33]);
    f.extend(chunk(b"IDAT", &z));
    let m = err(&f);
    assert!(m.contains("IDAT: zlib adler-32 0x"), "{m}");
    // Unknown critical chunk, bad filter type, too little or too much data.
    let m = err(&png(3, 1, 8, 0, &chunk(b"ABCD", &[]), &[0, 1, 2, 3]));
    assert!(m.contains("chunk ABCD is critical and unknown"), "{m}");
    let m = err(&png(3, 1, 8, 0, &[], &[5, 1, 2, 3]));
    assert!(m.contains("row 0: filter type 5"), "{m}");
    assert!(err(&png(3, 1, 8, 0, &[], &[0, 1, 2])).contains("truncated"));
    assert!(err(&png(3, 1, 8, 0, &[], &[0, 1, 2, 3, 4])).contains("more than the image"));
    // Low depths and colour types as before.
    assert!(err(&png(8, 1, 4, 0, &[], &[0, 0, 0, 0, 0])).starts_with("png bit depth 4"));
    let mut rgb = good.clone();
    rgb[25] = 2;
    let crc = crc32(&rgb[12..29]);
    rgb[29..33].copy_from_slice(&crc.to_be_bytes());
    assert!(err(&rgb).starts_with("png image is rgb"));
    // Any cut before the IDAT chunk ends is an error.
    for cut in 8..good.len() - 12 {
        assert!(decode(&good[..cut]).is_err(), "cut {cut}");
    }
}
