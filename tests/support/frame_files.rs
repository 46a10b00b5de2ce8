//! Test support: small PNG and TIFF writers for the frame tests, written here from the
//! specifications, sharing no code with the engine's decoders.
//!
//! PNG: filter type 0 on every row, zlib stored blocks (RFC 1951 §3.2.4); TIFF: one strip,
//! uncompressed, LZW (TIFF 6.0 §13), Deflate (zlib stored blocks) or PackBits (§9). The
//! cross-check against a general-purpose library's files is tests/python/test_frame_decoders.py
//! (Pillow); these writers make the files of the Rust tests without a crate that decodes too.
//! Not every test uses every writer.
#![allow(dead_code)]

use std::collections::HashMap;

/// CRC-32 (ISO-HDLC, as PNG uses), bit by bit (PNG spec §5.5).
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut c = !0u32;
    for b in bytes {
        c ^= u32::from(*b);
        for _ in 0..8 {
            c = if c & 1 == 1 {
                (c >> 1) ^ 0xEDB8_8320
            } else {
                c >> 1
            };
        }
    }
    !c
}

/// Adler-32 (RFC 1950 §8.2).
pub fn adler32(bytes: &[u8]) -> u32 {
    let (mut a, mut b) = (1u32, 0u32);
    for x in bytes {
        a = (a + u32::from(*x)) % 65521;
        b = (b + a) % 65521;
    }
    (b << 16) | a
}

/// A zlib stream of stored blocks (RFC 1950 §2.2, RFC 1951 §3.2.4).
pub fn zlib_stored(data: &[u8]) -> Vec<u8> {
    let mut z = vec![0x78, 0x01];
    let mut blocks = data.chunks(65535).peekable();
    if blocks.peek().is_none() {
        z.extend_from_slice(&[1, 0, 0, 0xff, 0xff]);
    }
    while let Some(b) = blocks.next() {
        z.push(u8::from(blocks.peek().is_none()));
        let n = b.len() as u16;
        z.extend_from_slice(&n.to_le_bytes());
        z.extend_from_slice(&(!n).to_le_bytes());
        z.extend_from_slice(b);
    }
    z.extend_from_slice(&adler32(data).to_be_bytes());
    z
}

/// A PNG chunk: length, type, data, CRC (PNG spec §5.3).
pub fn png_chunk(kind: &[u8; 4], data: &[u8]) -> Vec<u8> {
    let mut body = kind.to_vec();
    body.extend_from_slice(data);
    let mut c = (data.len() as u32).to_be_bytes().to_vec();
    c.extend_from_slice(&body);
    c.extend_from_slice(&crc32(&body).to_be_bytes());
    c
}

/// A PNG of any colour type and bit depth (PNG spec §11.2.2) from its unfiltered rows, packed
/// as the file holds them (16-bit big-endian); an `sBIT` chunk when `sbit` is given.
pub fn png(
    width: u32,
    height: u32,
    depth: u8,
    colour: u8,
    rows: &[u8],
    sbit: Option<&[u8]>,
) -> Vec<u8> {
    let channels = match colour {
        2 => 3,
        4 => 2,
        6 => 4,
        _ => 1,
    };
    let stride = (width as usize * channels * usize::from(depth)).div_ceil(8);
    let mut filtered = Vec::new();
    for row in rows.chunks(stride.max(1)).take(height as usize) {
        filtered.push(0);
        filtered.extend_from_slice(row);
    }
    let mut ihdr = width.to_be_bytes().to_vec();
    ihdr.extend_from_slice(&height.to_be_bytes());
    ihdr.extend_from_slice(&[depth, colour, 0, 0, 0]);
    let mut f = vec![0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a];
    f.extend(png_chunk(b"IHDR", &ihdr));
    if let Some(s) = sbit {
        f.extend(png_chunk(b"sBIT", s));
    }
    f.extend(png_chunk(b"IDAT", &zlib_stored(&filtered)));
    f.extend(png_chunk(b"IEND", &[]));
    f
}

/// A 16-bit greyscale PNG of these samples.
pub fn png16(width: u32, height: u32, samples: &[u16], sbit: Option<u8>) -> Vec<u8> {
    let rows: Vec<u8> = samples.iter().flat_map(|v| v.to_be_bytes()).collect();
    png(
        width,
        height,
        16,
        0,
        &rows,
        sbit.as_ref().map(std::slice::from_ref),
    )
}

/// TIFF compressions these writers know.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Compression {
    Uncompressed,
    Lzw,
    Deflate,
    Packbits,
}

pub const COMPRESSIONS: [Compression; 4] = [
    Compression::Uncompressed,
    Compression::Lzw,
    Compression::Deflate,
    Compression::Packbits,
];

/// PackBits (TIFF 6.0 §9): runs of 3 or more as replicate runs, the rest as literals.
pub fn packbits(data: &[u8]) -> Vec<u8> {
    let (mut out, mut i) = (Vec::new(), 0);
    while i < data.len() {
        let mut j = i;
        while j + 1 < data.len() && data[j + 1] == data[i] && j + 1 - i < 127 {
            j += 1;
        }
        if j - i >= 2 {
            out.push((257 - (j - i + 1)) as u8);
            out.push(data[i]);
            i = j + 1;
            continue;
        }
        let start = i;
        while i < data.len() && i - start < 128 {
            if i + 2 < data.len() && data[i] == data[i + 1] && data[i] == data[i + 2] {
                break;
            }
            i += 1;
        }
        out.push((i - start - 1) as u8);
        out.extend_from_slice(&data[start..i]);
    }
    out
}

/// TIFF LZW (TIFF 6.0 §13): Clear first, MSB-first codes of 9 to 12 bits growing one code
/// early, Clear again before the table fills, End last.
pub fn lzw(data: &[u8]) -> Vec<u8> {
    let mut out = Vec::new();
    let (mut acc, mut nacc) = (0u64, 0u32);
    let mut emit = |code: u16, width: u32, out: &mut Vec<u8>| {
        acc = (acc << width) | u64::from(code);
        nacc += width;
        while nacc >= 8 {
            nacc -= 8;
            out.push((acc >> nacc) as u8);
        }
    };
    let width_for = |next: u16| match next {
        ..=511 => 9,
        512..=1023 => 10,
        1024..=2047 => 11,
        _ => 12,
    };
    let mut table: HashMap<(u16, u8), u16> = HashMap::new();
    let mut next = 258u16;
    emit(256, 9, &mut out);
    let mut w: Option<u16> = None;
    for &c in data {
        let Some(prefix) = w else {
            w = Some(u16::from(c));
            continue;
        };
        if let Some(code) = table.get(&(prefix, c)) {
            w = Some(*code);
            continue;
        }
        emit(prefix, width_for(next), &mut out);
        table.insert((prefix, c), next);
        next += 1;
        if next == 4094 {
            emit(256, width_for(next), &mut out);
            table.clear();
            next = 258;
        }
        w = Some(u16::from(c));
    }
    if let Some(prefix) = w {
        emit(prefix, width_for(next), &mut out);
        next += 1;
    }
    emit(257, width_for(next), &mut out);
    if nacc > 0 {
        out.push((acc << (8 - nacc)) as u8);
    }
    out
}

/// What a TIFF's IFD says about its image.
#[derive(Debug, Clone, Copy)]
pub struct TiffImage {
    pub width: u32,
    pub height: u32,
    pub bits: u16,
    pub samples: u16,
    pub photometric: u16,
    pub sample_format: u16,
}

/// A little-endian classic TIFF (TIFF 6.0 §2): header, one strip of `data` (the samples'
/// bytes as the file holds them), then the IFD, its larger values after it.
pub fn tiff(image: TiffImage, data: &[u8], compression: Compression) -> Vec<u8> {
    let (code, strip) = match compression {
        Compression::Uncompressed => (1u16, data.to_vec()),
        Compression::Lzw => (5, lzw(data)),
        Compression::Deflate => (8, zlib_stored(data)),
        Compression::Packbits => (32773, packbits(data)),
    };
    let mut f = b"II*\0".to_vec();
    let ifd = 8 + strip.len() + strip.len() % 2;
    f.extend_from_slice(&(ifd as u32).to_le_bytes());
    f.extend_from_slice(&strip);
    f.resize(ifd, 0);
    let s = u32::from(image.samples);
    let entries: Vec<(u16, u16, Vec<u32>)> = vec![
        (256, 4, vec![image.width]),
        (257, 4, vec![image.height]),
        (258, 3, vec![u32::from(image.bits); s as usize]),
        (259, 3, vec![u32::from(code)]),
        (262, 3, vec![u32::from(image.photometric)]),
        (273, 4, vec![8]),
        (277, 3, vec![s]),
        (278, 4, vec![image.height]),
        (279, 4, vec![strip.len() as u32]),
        (339, 3, vec![u32::from(image.sample_format); s as usize]),
    ];
    let mut extra = Vec::new();
    let extra_at = ifd + 2 + 12 * entries.len() + 4;
    f.extend_from_slice(&(entries.len() as u16).to_le_bytes());
    for (tag, kind, values) in &entries {
        let mut v = Vec::new();
        for x in values {
            if *kind == 3 {
                v.extend_from_slice(&(*x as u16).to_le_bytes());
            } else {
                v.extend_from_slice(&x.to_le_bytes());
            }
        }
        f.extend_from_slice(&tag.to_le_bytes());
        f.extend_from_slice(&kind.to_le_bytes());
        f.extend_from_slice(&(values.len() as u32).to_le_bytes());
        if v.len() <= 4 {
            v.resize(4, 0);
            f.extend_from_slice(&v);
        } else {
            f.extend_from_slice(&((extra_at + extra.len()) as u32).to_le_bytes());
            extra.extend_from_slice(&v);
        }
    }
    f.extend_from_slice(&[0; 4]);
    f.extend_from_slice(&extra);
    f
}

fn grey(width: u32, height: u32, bits: u16) -> TiffImage {
    TiffImage {
        width,
        height,
        bits,
        samples: 1,
        photometric: 1,
        sample_format: 1,
    }
}

/// A 16-bit greyscale TIFF of these samples (little-endian in the file).
pub fn tiff16(width: u32, height: u32, samples: &[u16], compression: Compression) -> Vec<u8> {
    let data: Vec<u8> = samples.iter().flat_map(|v| v.to_le_bytes()).collect();
    tiff(grey(width, height, 16), &data, compression)
}

/// An 8-bit greyscale TIFF of these samples.
pub fn tiff8(width: u32, height: u32, samples: &[u8], compression: Compression) -> Vec<u8> {
    tiff(grey(width, height, 8), samples, compression)
}
