//! Tests of tiff_frame.rs on small TIFFs built here byte by byte (one strip or a few, values
//! inline in the IFD), and on damaged ones.

#![allow(clippy::unwrap_used, clippy::indexing_slicing, clippy::panic)] // test code

use super::*;

/// A classic TIFF: header, `data` at offset 8, then one IFD of (tag, type, values), each
/// entry's values inline (at most 4 bytes). `{data}` in a value is the data's offset.
fn tiff(le: bool, entries: &[(u16, u16, &[u32])], data: &[u8]) -> Vec<u8> {
    let u16b = |v: u16| if le { v.to_le_bytes() } else { v.to_be_bytes() };
    let u32b = |v: u32| if le { v.to_le_bytes() } else { v.to_be_bytes() };
    let mut f = if le {
        b"II*\0".to_vec()
    } else {
        b"MM\0*".to_vec()
    };
    let ifd = 8 + data.len() as u32 + (data.len() as u32 & 1);
    f.extend_from_slice(&u32b(ifd));
    f.extend_from_slice(data);
    if data.len() % 2 == 1 {
        f.push(0);
    }
    f.extend_from_slice(&u16b(entries.len() as u16));
    for (tag, kind, values) in entries {
        f.extend_from_slice(&u16b(*tag));
        f.extend_from_slice(&u16b(*kind));
        f.extend_from_slice(&u32b(values.len() as u32));
        let mut field = Vec::new();
        for v in *values {
            if *kind == 3 {
                field.extend_from_slice(&u16b(*v as u16));
            } else {
                field.extend_from_slice(&u32b(*v));
            }
        }
        field.resize(4, 0);
        f.extend_from_slice(&field);
    }
    f.extend_from_slice(&[0; 4]);
    f
}

/// A one-strip greyscale image's tags.
fn tags(
    w: u32,
    h: u32,
    bits: u32,
    compression: u32,
    predictor: u32,
    bytes: u32,
) -> Vec<(u16, u16, Vec<u32>)> {
    vec![
        (256, 4, vec![w]),
        (257, 4, vec![h]),
        (258, 3, vec![bits]),
        (259, 3, vec![compression]),
        (262, 3, vec![1]),
        (273, 4, vec![8]),
        (277, 3, vec![1]),
        (278, 4, vec![h]),
        (279, 4, vec![bytes]),
        (317, 3, vec![predictor]),
    ]
}

fn file(le: bool, t: &[(u16, u16, Vec<u32>)], data: &[u8]) -> Vec<u8> {
    let e: Vec<(u16, u16, &[u32])> = t.iter().map(|(a, b, c)| (*a, *b, &c[..])).collect();
    tiff(le, &e, data)
}

fn err(bytes: &[u8]) -> String {
    match decode(bytes) {
        Ok(f) => panic!("decoded as {} × {}", f.width(), f.height()),
        Err(e) => e.to_string(),
    }
}

/// Source: TIFF 6.0 §2 (byte order "II"/"MM"), §8 (16-bit samples in the file's byte order).
#[test]
fn both_byte_orders_uncompressed() {
    let data = [0x01, 0x02, 0x03, 0x04];
    let f = decode(&file(true, &tags(2, 1, 16, 1, 1, 4), &data)).unwrap();
    assert_eq!(f.pixels(), [0x0201, 0x0403]);
    let f = decode(&file(false, &tags(2, 1, 16, 1, 1, 4), &data)).unwrap();
    assert_eq!(f.pixels(), [0x0102, 0x0304]);
    let f = decode(&file(false, &tags(2, 2, 8, 1, 1, 4), &data)).unwrap();
    assert_eq!(
        (f.width(), f.height(), f.pixels()),
        (2, 2, &[1, 2, 3, 4][..])
    );
}

/// Source: TIFF 6.0 §9's PackBits example as one strip of a 6 × 4 8-bit image (the packed
/// bytes FE AA 02 80 00 2A FD AA 03 80 00 2A 22 F7 AA unpack to the 24 bytes below).
#[test]
fn packbits_strip_of_the_specifications_example() {
    let packed = [
        0xFE, 0xAA, 0x02, 0x80, 0x00, 0x2A, 0xFD, 0xAA, 0x03, 0x80, 0x00, 0x2A, 0x22, 0xF7, 0xAA,
    ];
    let f = decode(&file(true, &tags(6, 4, 8, 32773, 1, 15), &packed)).unwrap();
    let want: [u16; 24] = [
        0xAA, 0xAA, 0xAA, 0x80, 0x00, 0x2A, 0xAA, 0xAA, 0xAA, 0xAA, 0x80, 0x00, 0x2A, 0x22, 0xAA,
        0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA,
    ];
    assert_eq!(f.pixels(), want);
}

/// Source: TIFF 6.0 §13's encoder worked by hand on "ABABABA" (Clear, 65, 66, 258, 260, End
/// in 9-bit codes, MSB first), as a 7 × 1 8-bit LZW strip.
#[test]
fn lzw_strip() {
    let codes = [256u16, 65, 66, 258, 260, 257];
    let (mut acc, mut n, mut bytes) = (0u64, 0, Vec::new());
    for c in codes {
        acc = (acc << 9) | u64::from(c);
        n += 9;
        while n >= 8 {
            n -= 8;
            bytes.push((acc >> n) as u8);
        }
    }
    bytes.push((acc << (8 - n)) as u8);
    let f = decode(&file(
        false,
        &tags(7, 1, 8, 5, 1, bytes.len() as u32),
        &bytes,
    ))
    .unwrap();
    assert_eq!(f.pixels(), [65, 66, 65, 66, 65, 66, 65]);
}

/// Source: TIFF 6.0 §14 (predictor 2: each sample is stored as its difference from the one on
/// its left, modulo 2^bits), worked by hand; Deflate from Python `zlib.compress` (below).
#[test]
fn horizontal_differencing() {
    // Differences 1, 1, 1, 253 of an 8-bit row: 1, 2, 3, 256 → 0.
    let f = decode(&file(true, &tags(4, 1, 8, 1, 2, 4), &[1, 1, 1, 253])).unwrap();
    assert_eq!(f.pixels(), [1, 2, 3, 0]);
    // 16-bit little-endian differences 0xFFFF, 2: 0xFFFF, 0x10001 → 1.
    let f = decode(&file(true, &tags(2, 1, 16, 1, 2, 4), &[0xFF, 0xFF, 2, 0])).unwrap();
    assert_eq!(f.pixels(), [0xFFFF, 1]);
    // Python: zlib.compress(bytes([1, 1, 1, 253])) = 78 9c 63 64 64 fc 0b 00 01 0a 01 01.
    let z = [
        0x78, 0x9c, 0x63, 0x64, 0x64, 0xfc, 0x0b, 0x00, 0x01, 0x0a, 0x01, 0x01,
    ];
    for c in [8, 32946] {
        let f = decode(&file(true, &tags(4, 1, 8, c, 2, 12), &z)).unwrap();
        assert_eq!(f.pixels(), [1, 2, 3, 0]);
    }
}

/// Source: Adobe's BigTIFF design (header "II", 43, offset size 8, 0, then an 8-byte IFD
/// offset; an IFD's count is 8 bytes and each entry 20, values inline up to 8 bytes).
#[test]
fn bigtiff() {
    let mut f = b"II+\0".to_vec();
    f.extend_from_slice(&8u16.to_le_bytes());
    f.extend_from_slice(&0u16.to_le_bytes());
    f.extend_from_slice(&20u64.to_le_bytes());
    f.extend_from_slice(&[7, 9, 0, 0]); // the strip at 16, padded
    let entries: [(u16, u16, u64); 9] = [
        (256, 16, 2),
        (257, 16, 1),
        (258, 3, 8),
        (259, 3, 1),
        (262, 3, 1),
        (273, 16, 16),
        (277, 3, 1),
        (278, 16, 1),
        (279, 16, 2),
    ];
    f.extend_from_slice(&(entries.len() as u64).to_le_bytes());
    for (tag, kind, v) in entries {
        f.extend_from_slice(&tag.to_le_bytes());
        f.extend_from_slice(&kind.to_le_bytes());
        f.extend_from_slice(&1u64.to_le_bytes());
        f.extend_from_slice(&v.to_le_bytes());
    }
    f.extend_from_slice(&0u64.to_le_bytes());
    assert_eq!(decode(&f).unwrap().pixels(), [7, 9]);
}

/// Source: TIFF 6.0 §2 and §8 (offsets and counts must lie in the file); the wording is this
/// project's.
#[test]
fn damaged_files_name_what_failed() {
    let m = err(&file(true, &tags(2, 1, 16, 1, 1, 1000), &[1, 2, 3, 4]));
    assert!(m.contains("strip 0 runs past the end of the file"), "{m}");
    // Clear, 65, then 300 (9-bit codes): 300 is not in the table yet.
    let m = err(&file(
        true,
        &tags(4, 1, 8, 5, 1, 4),
        &[0x80, 0x10, 0x65, 0x80],
    ));
    assert!(m.contains("strip 0: lzw code"), "{m}");
    let m = err(&file(true, &tags(4, 1, 8, 32773, 1, 2), &[0xFE, 0xAA]));
    assert!(m.contains("strip 0 holds 3 of its 4 bytes"), "{m}");
    let m = err(&file(
        true,
        &tags(4, 1, 8, 8, 1, 4),
        &[0x78, 0x9c, 0x63, 0x64],
    ));
    assert!(
        m.starts_with("corrupt tiff data: strip 0: deflate data ends early"),
        "{m}"
    );
    let m = err(&file(true, &tags(4, 1, 8, 7, 1, 4), &[0; 4]));
    assert!(
        m.starts_with("bad tiff header: compression 7 is not supported"),
        "{m}"
    );
    let m = err(&file(true, &tags(4, 1, 8, 1, 3, 4), &[0; 4]));
    assert!(m.starts_with("bad tiff header: predictor 3"), "{m}");
    let mut t = tags(4, 1, 8, 1, 1, 4);
    t[4].2 = vec![2];
    assert!(err(&file(true, &t, &[0; 4])).starts_with("tiff image is rgb"));
    t[4].2 = vec![0];
    assert!(err(&file(true, &t, &[0; 4])).starts_with("tiff image is white-is-zero"));
    let good = file(true, &tags(2, 1, 16, 1, 1, 4), &[1, 2, 3, 4]);
    for cut in 0..good.len() {
        assert!(decode(&good[..cut]).is_err(), "cut {cut}");
    }
}
