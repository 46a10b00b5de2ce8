//! PNG frames: single-channel greyscale, 8- or 16-bit (16-bit samples are big-endian in PNG).
//!
//! Reads the chunks, checks each chunk's CRC-32, checks the header against the file's size
//! before anything is allocated, inflates the IDAT data (`inflate`, with its Adler-32) into a
//! buffer of exactly the filtered image's size, and reverses the filters, pass by pass for
//! Adam7. It refuses colour, alpha, palette and 1/2/4-bit images rather than converting them,
//! ignores gamma and every other ancillary chunk, and stops reading at the first chunk after
//! the IDAT chunks (IEND may be missing). An `sBIT` chunk below the bit depth is kept as the
//! frame's [`Frame::msb_bits`] (the samples were scaled up from that many bits).
//!
//! # Source
//! PNG specification (ISO/IEC 15948:2003, W3C second edition): §5.2 signature, §5.3 chunk
//! layout, §5.4 critical and ancillary chunks, §5.5 CRC (ISO 3309, polynomial 0xEDB88320
//! reflected), §11.2.2 IHDR, §11.2.4 IDAT (consecutive, one zlib stream), §11.3.3.4 sBIT,
//! §9.2 filter types 0 to 4 with the Paeth predictor of §9.4, §8.2 Adam7.

use super::inflate::{self, InflateError};
use super::{check_size, Frame, FrameError, DEFLATE_MAX_RATIO};

const FORMAT: &str = "png";
const SIGNATURE: [u8; 8] = [0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a];

/// Adam7 passes (§8.2): first column, first row, column step, row step.
const ADAM7: [(u64, u64, u64, u64); 7] = [
    (0, 0, 8, 8),
    (4, 0, 8, 8),
    (0, 4, 4, 8),
    (2, 0, 4, 4),
    (0, 2, 2, 4),
    (1, 0, 2, 2),
    (0, 1, 1, 2),
];

fn corrupt(what: String) -> FrameError {
    FrameError::Corrupt {
        format: FORMAT,
        what,
    }
}

/// The CRC-32 tables for slicing by 8, built once at run time (8 KB of zeroed memory in the
/// program, not 8 KB of data in the wasm): `t[0]` is the table of §5.5 (D.2 of the
/// specification's sample code), and `t[k][n]` the CRC register after byte `n` then `k` zero
/// bytes, so eight bytes are folded in with eight independent look-ups.
///
/// # Source
/// §5.5 and its sample code for `t[0]`; slicing by 8 after Kounavis and Berry, "A Systematic
/// Approach to Building High Performance Software-based CRC Generators" (Intel, 2005), as in
/// zlib's crc32.c (`crc32_little`'s braided tables).
fn crc_tables() -> &'static [[u32; 256]; 8] {
    static TABLES: std::sync::OnceLock<[[u32; 256]; 8]> = std::sync::OnceLock::new();
    TABLES.get_or_init(|| {
        let mut t = [[0u32; 256]; 8];
        let [t0, rest @ ..] = &mut t;
        for (n, e) in (0u32..).zip(t0.iter_mut()) {
            let mut c = n;
            for _ in 0..8 {
                c = if c & 1 == 1 {
                    0xEDB8_8320 ^ (c >> 1)
                } else {
                    c >> 1
                };
            }
            *e = c;
        }
        let mut prev: &[u32; 256] = t0;
        for tk in rest.iter_mut() {
            for (e, p) in tk.iter_mut().zip(prev) {
                *e = (p >> 8) ^ at(t0, *p);
            }
            prev = tk;
        }
        t
    })
}

/// `table[x & 0xff]`.
#[inline(always)]
fn at(table: &[u32; 256], x: u32) -> u32 {
    // OK: the index is masked to 0..=255 and the table has 256 entries.
    #[allow(clippy::indexing_slicing)]
    table[(x & 0xff) as usize]
}

/// CRC-32 of the bytes (§5.5), eight bytes at a time (see [`crc_tables`]). Public (as
/// `engine::frames::png_crc32`) for the command line's PNG writer.
#[must_use]
pub fn crc32(bytes: &[u8]) -> u32 {
    let [t0, t1, t2, t3, t4, t5, t6, t7] = crc_tables();
    let mut c = !0u32;
    let mut eights = bytes.chunks_exact(8);
    for e in &mut eights {
        let (lo, hi) = match e {
            [a, b, c, d, e, f, g, h] => (
                u32::from_le_bytes([*a, *b, *c, *d]),
                u32::from_le_bytes([*e, *f, *g, *h]),
            ),
            _ => (0, 0),
        };
        let lo = lo ^ c;
        c = at(t7, lo)
            ^ at(t6, lo >> 8)
            ^ at(t5, lo >> 16)
            ^ at(t4, lo >> 24)
            ^ at(t3, hi)
            ^ at(t2, hi >> 8)
            ^ at(t1, hi >> 16)
            ^ at(t0, hi >> 24);
    }
    for b in eights.remainder() {
        c = at(t0, c ^ u32::from(*b)) ^ (c >> 8);
    }
    !c
}

/// A chunk type as text for messages: its four letters, other bytes as '?'.
fn name(kind: [u8; 4]) -> String {
    kind.iter()
        .map(|b| {
            if b.is_ascii_alphabetic() {
                char::from(*b)
            } else {
                '?'
            }
        })
        .collect()
}

/// A chunk's type and data.
type Chunk<'a> = ([u8; 4], &'a [u8]);

/// The chunks of a PNG after its signature: (type, data), each CRC checked, up to IEND or up
/// to the first chunk after the IDAT chunks (unread).
struct Chunks<'a> {
    rest: &'a [u8],
    idat_seen: bool,
}

impl<'a> Chunks<'a> {
    fn next(&mut self) -> Result<Option<Chunk<'a>>, FrameError> {
        let Some((len, kind)) = self.rest.get(..8).and_then(|h| {
            let len = u32::from_be_bytes(h.get(..4)?.try_into().ok()?);
            let kind: [u8; 4] = h.get(4..8)?.try_into().ok()?;
            Some((len, kind))
        }) else {
            if self.rest.is_empty() || self.idat_seen {
                return Ok(None);
            }
            return Err(corrupt(
                "truncated: the file ends inside a chunk header".into(),
            ));
        };
        if self.idat_seen && kind != *b"IDAT" {
            return Ok(None);
        }
        if len > 0x7fff_ffff {
            return Err(corrupt(format!(
                "chunk {}: length {len} is more than 2^31 - 1",
                name(kind)
            )));
        }
        let len = len as usize;
        let (Some(body), Some(stored)) = (
            self.rest.get(4..8 + len),
            self.rest
                .get(8 + len..12 + len)
                .and_then(|c| c.try_into().ok())
                .map(u32::from_be_bytes),
        ) else {
            return Err(corrupt(format!(
                "truncated: the file ends inside chunk {}",
                name(kind)
            )));
        };
        let computed = crc32(body);
        if computed != stored {
            return Err(corrupt(format!(
                "chunk {}: crc 0x{stored:08x} does not match 0x{computed:08x}",
                name(kind)
            )));
        }
        self.rest = self.rest.get(12 + len..).unwrap_or(&[]);
        Ok(Some((kind, body.get(4..).unwrap_or(&[]))))
    }
}

/// Decode a greyscale PNG.
pub(super) fn decode(bytes: &[u8]) -> Result<Frame, FrameError> {
    let file_bytes = bytes.len() as u64;
    let mut chunks = Chunks {
        rest: bytes
            .strip_prefix(&SIGNATURE)
            .ok_or_else(|| corrupt("no png signature".into()))?,
        idat_seen: false,
    };
    let ihdr = match chunks.next()? {
        Some((kind, data)) if kind == *b"IHDR" && data.len() == 13 => data,
        _ => return Err(corrupt("the first chunk is not a 13-byte IHDR".into())),
    };
    let field = |at: usize| {
        ihdr.get(at..at + 4)
            .and_then(|b| b.try_into().ok())
            .map_or(0, u32::from_be_bytes)
    };
    let (width, height) = (field(0), field(4));
    let [depth, colour, compression, filter, interlace] = match ihdr.get(8..13) {
        Some(&[a, b, c, d, e]) => [a, b, c, d, e],
        _ => [0; 5],
    };
    // §11.2.2: the allowed bit depths of each colour type.
    let allowed: &[u8] = match colour {
        0 => &[1, 2, 4, 8, 16],
        3 => &[1, 2, 4, 8],
        2 | 4 | 6 => &[8, 16],
        _ => &[],
    };
    if !allowed.contains(&depth) {
        return Err(corrupt(format!(
            "colour type {colour} with bit depth {depth} is not a png image type"
        )));
    }
    if compression != 0 || filter != 0 || interlace > 1 {
        return Err(corrupt(format!(
            "compression {compression}, filter {filter}, interlace {interlace}: only 0, 0, 0 or 1 exist"
        )));
    }
    let n = check_size(u64::from(width), u64::from(height))?;
    if depth != 8 && depth != 16 {
        return Err(FrameError::UnsupportedBitDepth {
            format: FORMAT,
            bits: u32::from(depth),
        });
    }
    if colour != 0 {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: match colour {
                2 => "rgb",
                3 => "palette colour",
                4 => "greyscale with alpha",
                _ => "rgba",
            }
            .into(),
        });
    }
    let bpp = u64::from(depth / 8);
    let decoded_bytes = n * bpp;
    if decoded_bytes > DEFLATE_MAX_RATIO.saturating_mul(file_bytes) {
        return Err(FrameError::ImplausibleSize {
            format: FORMAT,
            decoded_bytes,
            file_bytes,
        });
    }
    let (w, h) = (u64::from(width), u64::from(height));
    let passes: Vec<(u64, u64, u64, u64, u64, u64)> = if interlace == 1 {
        ADAM7
            .iter()
            .map(|&(x0, y0, dx, dy)| {
                let pw = w.saturating_sub(x0).div_ceil(dx);
                let ph = h.saturating_sub(y0).div_ceil(dy);
                (x0, y0, dx, dy, pw, ph)
            })
            .filter(|p| p.4 > 0 && p.5 > 0)
            .collect()
    } else {
        vec![(0, 0, 1, 1, w, h)]
    };
    // Each row is a filter byte and its samples; ≤ 2^28 pixels, so the sum fits easily.
    let filtered: u64 = passes.iter().map(|p| p.5 * (1 + p.4 * bpp)).sum();
    let filtered = usize::try_from(filtered).map_err(|_| FrameError::TooLarge {
        width: w,
        height: h,
    })?;

    let mut sbit = None;
    let mut idat: Vec<u8> = Vec::new();
    while let Some((kind, data)) = chunks.next()? {
        match &kind {
            b"IDAT" => {
                chunks.idat_seen = true;
                idat.extend_from_slice(data);
            }
            b"IEND" => break,
            b"sBIT" => {
                let bits = match data {
                    [b] if (1..=depth).contains(b) && sbit.is_none() => *b,
                    _ => {
                        return Err(corrupt(
                            "chunk sBIT: not one byte from 1 to the bit depth, or twice".into(),
                        ))
                    }
                };
                sbit = Some(bits);
            }
            b"IHDR" => return Err(corrupt("a second IHDR chunk".into())),
            // PLTE may appear (and is ignored) in a greyscale file's lax writers' output.
            b"PLTE" => {}
            // §5.4: bit 5 of the first byte clear is a critical chunk, which cannot be skipped.
            k if k[0] & 0x20 == 0 => {
                return Err(corrupt(format!(
                    "chunk {} is critical and unknown",
                    name(kind)
                )))
            }
            _ => {}
        }
    }
    if !chunks.idat_seen {
        return Err(corrupt("no IDAT chunk".into()));
    }
    let mut raw = Vec::new();
    raw.try_reserve_exact(filtered)
        .map_err(|_| corrupt("no memory for the image".into()))?;
    inflate::zlib(&idat, &mut raw, filtered).map_err(|e| match e {
        InflateError::TooLong => corrupt("the IDAT data holds more than the image".into()),
        e => corrupt(format!("IDAT: {e}")),
    })?;
    drop(idat);
    if raw.len() != filtered {
        return Err(corrupt(format!(
            "truncated: the IDAT data holds {} of the image's {filtered} bytes",
            raw.len()
        )));
    }
    let pixels = unfilter(&mut raw, &passes, w, bpp)?;
    // A full-depth sBIT says nothing (the samples use every bit).
    let sbit = sbit.filter(|b| *b < depth);
    Frame::new(width, height, depth, pixels).map(|f| f.with_msb_bits(sbit))
}

/// Reverse each row's filter in place (§9.2) and place the samples, pass by pass.
fn unfilter(
    raw: &mut [u8],
    passes: &[(u64, u64, u64, u64, u64, u64)],
    width: u64,
    bpp: u64,
) -> Result<Vec<u16>, FrameError> {
    let total: u64 = passes.iter().map(|p| p.4 * p.5).sum();
    // Zeroed by the allocator (fresh pages need no writing), not by a pass over the memory.
    let mut pixels = vec![0u16; usize::try_from(total).unwrap_or(0)];
    let bpp_us = bpp as usize;
    let mut rest = raw;
    for &(x0, y0, dx, dy, pw, ph) in passes {
        let stride = (pw * bpp) as usize;
        // The row above the first: zeros (§9.2: "the previous scanline" is absent, so b = c = 0).
        let zeros = vec![0u8; stride];
        let mut prev: &[u8] = &zeros;
        for row_index in 0..ph {
            let (row, tail) = std::mem::take(&mut rest)
                .split_at_mut_checked(1 + stride)
                .ok_or_else(|| corrupt("the image's rows do not fill its data".into()))?;
            rest = tail;
            let (filter, row) = row.split_at_mut(1);
            let filter = filter.first().copied().unwrap_or(0);
            let done = if bpp_us == 2 {
                unfilter_row::<2>(filter, row, prev)
            } else {
                unfilter_row::<1>(filter, row, prev)
            };
            done.map_err(|t| corrupt(format!("row {row_index}: filter type {t} is not 0 to 4")))?;
            let y = y0 + row_index * dy;
            if dx == 1 {
                // A whole row (not interlaced, or Adam7's pass 7): the samples in a run.
                let at = (y * width + x0) as usize;
                if let Some(dst) = pixels.get_mut(at..at + pw as usize) {
                    if bpp_us == 2 {
                        for (p, s) in dst.iter_mut().zip(row.chunks_exact(2)) {
                            if let [a, b] = s {
                                *p = u16::from_be_bytes([*a, *b]);
                            }
                        }
                    } else {
                        for (p, s) in dst.iter_mut().zip(row.iter()) {
                            *p = u16::from(*s);
                        }
                    }
                }
            } else {
                for (i, s) in row.chunks_exact(bpp_us).enumerate() {
                    let v = match s {
                        [a, b] => u16::from_be_bytes([*a, *b]),
                        [a] => u16::from(*a),
                        _ => 0,
                    };
                    let x = x0 + i as u64 * dx;
                    if let Some(p) = pixels.get_mut((y * width + x) as usize) {
                        *p = v;
                    }
                }
            }
            prev = row;
        }
    }
    Ok(pixels)
}

/// Reverse one row's filter (§9.2, Paeth §9.4) for `BPP` bytes per pixel, `prev` the row above
/// after its own unfiltering (zeros for the first row); the filter type when it is not 0 to 4.
///
/// Each filter is one pass over whole pixels, the left pixel `a` and upper-left `c` carried in
/// locals, so the loops index nothing (rows of a whole number of pixels: the caller cuts them
/// `width × BPP` long; a `prev` of another length only shortens the zip, which never happens).
fn unfilter_row<const BPP: usize>(filter: u8, row: &mut [u8], prev: &[u8]) -> Result<(), u8> {
    let pixels = row.chunks_exact_mut(BPP);
    let above = prev.chunks_exact(BPP);
    match filter {
        0 => {}
        1 => {
            let mut a = [0u8; BPP];
            for x in pixels {
                for (x, a) in x.iter_mut().zip(a.iter_mut()) {
                    *x = x.wrapping_add(*a);
                    *a = *x;
                }
            }
        }
        2 => {
            for (x, b) in row.iter_mut().zip(prev) {
                *x = x.wrapping_add(*b);
            }
        }
        3 => {
            let mut a = [0u8; BPP];
            for (x, b) in pixels.zip(above) {
                for ((x, a), b) in x.iter_mut().zip(a.iter_mut()).zip(b) {
                    // OK: the mean of two bytes fits a byte.
                    #[allow(clippy::cast_possible_truncation)]
                    let m = ((u16::from(*a) + u16::from(*b)) / 2) as u8;
                    *x = x.wrapping_add(m);
                    *a = *x;
                }
            }
        }
        4 => {
            let (mut a, mut c) = ([0u8; BPP], [0u8; BPP]);
            for (x, b) in pixels.zip(above) {
                for (((x, a), c), b) in x.iter_mut().zip(a.iter_mut()).zip(c.iter_mut()).zip(b) {
                    *x = x.wrapping_add(paeth(*a, *b, *c));
                    *a = *x;
                    *c = *b;
                }
            }
        }
        t => return Err(t),
    }
    Ok(())
}

/// The Paeth predictor (§9.4): of left, above and upper left, the one nearest a + b − c.
/// Public (as `engine::frames::png_paeth`) for the command line's PNG writer.
#[inline(always)]
#[must_use]
pub fn paeth(a: u8, b: u8, c: u8) -> u8 {
    let (ia, ib, ic) = (i16::from(a), i16::from(b), i16::from(c));
    let p = ia + ib - ic;
    let (pa, pb, pc) = ((p - ia).abs(), (p - ib).abs(), (p - ic).abs());
    if pa <= pb && pa <= pc {
        a
    } else if pb <= pc {
        b
    } else {
        c
    }
}

#[cfg(test)]
mod tests;
