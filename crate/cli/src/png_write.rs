//! A 16-bit greyscale PNG writer for `simulate --frame`, with text chunks.
//!
//! Small on purpose: each row's filter chosen by the minimum sum of absolute differences (the
//! specification's suggested heuristic), the zlib stream from `miniz_oxide`'s Deflate, the
//! chunk CRC-32 and the Paeth predictor the engine's decoder uses, and nothing else: no gamma,
//! no colour, one IDAT.
//!
//! # Source
//! PNG specification (ISO/IEC 15948:2003): §5.2 signature, §5.3 chunks, §5.5 CRC-32, §11.2.2
//! IHDR, §11.3.4.5 iTXt (uncompressed, no language tag), §9.2 filter types 0 to 4, §9.4 Paeth,
//! §12.8 filter selection (minimum sum of absolute differences, bytes read as signed).

use engine::frames::{png_crc32 as crc32, png_paeth as paeth};

fn chunk(out: &mut Vec<u8>, kind: &[u8; 4], data: &[u8]) {
    // A chunk longer than 2^31 − 1 bytes cannot be written; the frames here are far smaller
    // (the engine's simulation is limited to 2^28 pixels: 512 MiB).
    let len = u32::try_from(data.len()).unwrap_or(u32::MAX);
    out.extend_from_slice(&len.to_be_bytes());
    let start = out.len();
    out.extend_from_slice(kind);
    out.extend_from_slice(data);
    let crc = crc32(out.get(start..).unwrap_or(&[]));
    out.extend_from_slice(&crc.to_be_bytes());
}

/// The PNG file of a `width` × `height` frame of 16-bit samples, row by row, with `texts` as
/// uncompressed iTXt chunks (keyword, UTF-8 text).
pub fn grey16(width: u32, height: u32, samples: &[u16], texts: &[(&str, &str)]) -> Vec<u8> {
    let mut out = vec![0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a];
    let mut ihdr = width.to_be_bytes().to_vec();
    ihdr.extend_from_slice(&height.to_be_bytes());
    ihdr.extend_from_slice(&[16, 0, 0, 0, 0]);
    chunk(&mut out, b"IHDR", &ihdr);
    for (keyword, text) in texts {
        // Keyword, NUL, compression flag 0, method 0, empty language tag and translation.
        let mut t = keyword.as_bytes().to_vec();
        t.extend_from_slice(&[0, 0, 0, 0, 0]);
        t.extend_from_slice(text.as_bytes());
        chunk(&mut out, b"iTXt", &t);
    }
    let row = width as usize;
    let mut filtered = Vec::with_capacity(samples.len() * 2 + height as usize);
    let mut prev = vec![0u8; row * 2];
    let mut cur = Vec::with_capacity(row * 2);
    let mut trial = Vec::with_capacity(row * 2);
    let mut best = Vec::with_capacity(row * 2);
    for r in samples.chunks(row.max(1)) {
        cur.clear();
        cur.extend(r.iter().flat_map(|s| s.to_be_bytes()));
        let mut best_cost = u64::MAX;
        let mut best_type = 0;
        for filter in 0..5u8 {
            filter_row(filter, &cur, &prev, &mut trial);
            // §12.8: the sum of the filtered bytes as signed magnitudes.
            let cost: u64 = trial
                .iter()
                .map(|b| u64::from((*b as i8).unsigned_abs()))
                .sum();
            if cost < best_cost {
                best_cost = cost;
                best_type = filter;
                std::mem::swap(&mut best, &mut trial);
            }
        }
        filtered.push(best_type);
        filtered.extend_from_slice(&best);
        std::mem::swap(&mut prev, &mut cur);
    }
    // Level 6, zlib's default: close to 9 in size on noisy frames, and several times faster.
    let z = miniz_oxide::deflate::compress_to_vec_zlib(&filtered, 6);
    chunk(&mut out, b"IDAT", &z);
    chunk(&mut out, b"IEND", &[]);
    out
}

/// Filter one row of bytes (§9.2, 2 bytes a pixel) with `filter` 0 to 4 against the row above
/// (`prev`, zeros for the first row), into `out`.
fn filter_row(filter: u8, row: &[u8], prev: &[u8], out: &mut Vec<u8>) {
    const BPP: usize = 2;
    out.clear();
    for (i, (x, b)) in row.iter().zip(prev).enumerate() {
        let a = i
            .checked_sub(BPP)
            .and_then(|j| row.get(j))
            .copied()
            .unwrap_or(0);
        let c = i
            .checked_sub(BPP)
            .and_then(|j| prev.get(j))
            .copied()
            .unwrap_or(0);
        let predictor = match filter {
            0 => 0,
            1 => a,
            2 => *b,
            // OK: the mean of two bytes fits a byte.
            #[allow(clippy::cast_possible_truncation)]
            3 => ((u16::from(a) + u16::from(*b)) / 2) as u8,
            _ => paeth(a, *b, c),
        };
        out.push(x.wrapping_sub(predictor));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Source: the CRC-32 check value 0xCBF43926 of "123456789" (CRC-32/ISO-HDLC).
    #[test]
    fn checksums() {
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
    }

    /// Source: the engine's decoder reading it back (its own tests check it against Pillow).
    #[test]
    fn the_engine_reads_it_back() {
        let samples: Vec<u16> = (0..3 * 40_000u32).map(|i| (i * 7919) as u16).collect();
        let f = engine::frames::decode(&grey16(300, 400, &samples, &[("Title", "tést")]), None)
            .map_err(|e| e.to_string());
        assert_eq!(f.map(|f| f.pixels().to_vec()), Ok(samples));
    }

    /// Source: the engine's decoder reading it back; a smooth frame, on which §12.8's
    /// heuristic picks filters other than 0 (checked from the rows' filter bytes), and a width
    /// of one pixel (no left neighbour in any row).
    #[test]
    fn filtered_rows_read_back() {
        let (w, h) = (97u32, 61u32);
        let samples: Vec<u16> = (0..w * h)
            .map(|i| ((i % w) * 300 + (i / w) * 500 + (i * 37) % 11) as u16)
            .collect();
        let png = grey16(w, h, &samples, &[]);
        let f = engine::frames::decode(&png, None).map_err(|e| e.to_string());
        assert_eq!(f.map(|f| f.pixels().to_vec()), Ok(samples.clone()));
        let idat = png.windows(4).position(|k| k == b"IDAT").unwrap() + 4;
        let z = &png[idat..png.len() - 16];
        let raw = miniz_oxide::inflate::decompress_to_vec_zlib(z).unwrap();
        let types: Vec<u8> = raw.chunks(1 + 2 * w as usize).map(|r| r[0]).collect();
        assert!(types.iter().any(|t| *t != 0), "filters chosen: {types:?}");
        let column: Vec<u16> = (0..40).map(|i| i * 1000).collect();
        let f = engine::frames::decode(&grey16(1, 40, &column, &[]), None);
        assert_eq!(f.map(|f| f.pixels().to_vec()).ok(), Some(column));
    }
}
