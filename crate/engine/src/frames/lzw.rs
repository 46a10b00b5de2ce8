//! TIFF LZW decoding (compression 5): codes of 9 to 12 bits, most significant bit first.
//!
//! The string table holds no strings: every entry is a stretch of the output already written
//! (an entry is the previous code's string plus the next one's first byte, which the output
//! holds contiguously), kept as a start and a length, so the table is 4096 pairs and decoding a
//! code is one copy. Decoding stops when the caller's limit is reached (a strip's bytes), so
//! codes after the image, or a missing end code, do not matter. It does not read the LSB-first
//! "old-style" LZW of some early writers.
//!
//! # Source
//! TIFF 6.0 §13 ("LZW Compression": Clear 256, EndOfInformation 257, first entry 258, code
//! width growing to 10, 11 and 12 bits one code early, when entry 511, 1023, 2047 is next).

use std::fmt;

/// What is wrong with LZW data.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub(crate) enum LzwError {
    /// The first code after a Clear is not a single byte.
    FirstCode(u16),
    /// A code that the table does not hold yet.
    Undefined(u16),
}

impl fmt::Display for LzwError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LzwError::FirstCode(c) => write!(f, "lzw code {c} follows a clear code"),
            LzwError::Undefined(c) => write!(f, "lzw code {c} is not in the table yet"),
        }
    }
}

const CLEAR: u16 = 256;
const END: u16 = 257;
const FIRST_ENTRY: u16 = 258;
const TABLE_SIZE: usize = 4096;

/// Decode LZW `data` into `out` (appending) until `out` holds `limit` bytes or the data (or an
/// end code) ends.
pub(crate) fn decode(data: &[u8], out: &mut Vec<u8>, limit: usize) -> Result<(), LzwError> {
    // table[code - 258] = (start in `out`, length).
    let mut table = vec![(0usize, 0usize); TABLE_SIZE - usize::from(FIRST_ENTRY)];
    let (mut acc, mut nacc, mut pos) = (0u32, 0u32, 0usize);
    let mut next = FIRST_ENTRY;
    let mut prev: Option<(usize, usize)> = None;
    while out.len() < limit {
        let width = match next {
            ..=510 => 9,
            511..=1022 => 10,
            1023..=2046 => 11,
            _ => 12,
        };
        while nacc < width {
            let Some(b) = data.get(pos) else {
                return Ok(());
            };
            pos += 1;
            acc = (acc << 8) | u32::from(*b);
            nacc += 8;
        }
        nacc -= width;
        // OK: at most 12 bits.
        #[allow(clippy::cast_possible_truncation)]
        let code = ((acc >> nacc) & ((1 << width) - 1)) as u16;
        acc &= (1 << nacc) - 1;
        if code == CLEAR {
            next = FIRST_ENTRY;
            prev = None;
            continue;
        }
        if code == END {
            return Ok(());
        }
        let start = out.len();
        let room = limit - start;
        let Some((p_start, p_len)) = prev else {
            let byte = u8::try_from(code).map_err(|_| LzwError::FirstCode(code))?;
            out.push(byte);
            prev = Some((start, 1));
            continue;
        };
        let (from, len) = if let Ok(byte) = u8::try_from(code) {
            out.push(byte);
            (start, 0)
        } else if code < next {
            table
                .get(usize::from(code - FIRST_ENTRY))
                .copied()
                .ok_or(LzwError::Undefined(code))?
        } else if code == next {
            // The string being defined: the previous one and its own first byte.
            (p_start, p_len + 1)
        } else {
            return Err(LzwError::Undefined(code));
        };
        copy(out, from, len.min(room));
        let len = if code < CLEAR { 1 } else { len };
        // A full table (4096 codes) takes no more entries until the next Clear.
        if let Some(entry) = table.get_mut(usize::from(next - FIRST_ENTRY)) {
            *entry = (p_start, p_len + 1);
            next += 1;
        }
        prev = Some((start, len));
    }
    Ok(())
}

/// Append `len` bytes of `out` from `from` (the source may run into the bytes being written).
fn copy(out: &mut Vec<u8>, from: usize, len: usize) {
    let mut left = len;
    let mut from = from;
    while left > 0 {
        let n = left.min(out.len() - from);
        if n == 0 {
            return;
        }
        out.extend_from_within(from..from + n);
        from += n;
        left -= n;
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)] // test code

    use super::*;

    /// Source: TIFF 6.0 §13's encoder worked by hand on "ABABABA": Clear, 65 'A', 66 'B',
    /// 258 "AB", 260 "ABA" (the code being defined, the KwKwK case), End, 9-bit codes MSB
    /// first (the same codes as the LZW writer of tests/python/test_frame_decoders.py, which
    /// Pillow/libtiff read back there).
    #[test]
    fn short_string_with_a_code_being_defined() {
        let codes = [256u16, 65, 66, 258, 260, 257];
        let mut bytes = Vec::new();
        let (mut acc, mut n) = (0u64, 0);
        for c in codes {
            acc = (acc << 9) | u64::from(c);
            n += 9;
            while n >= 8 {
                n -= 8;
                bytes.push((acc >> n) as u8);
            }
        }
        bytes.push((acc << (8 - n)) as u8);
        let mut out = Vec::new();
        decode(&bytes, &mut out, 100).unwrap();
        assert_eq!(out, b"ABABABA");
        // A limit stops the decoding in the middle of a string.
        let mut out = Vec::new();
        decode(&bytes, &mut out, 5).unwrap();
        assert_eq!(out, b"ABABA");
    }

    /// Source: TIFF 6.0 §13 (a code above the next table entry is an error; common practice,
    /// no source for the wording).
    #[test]
    fn undefined_codes_are_errors() {
        // Clear, 'A', then 300 (table holds 258 only after the next code).
        let codes = [256u16, 65, 300];
        let mut acc = 0u64;
        for c in codes {
            acc = (acc << 9) | u64::from(c);
        }
        acc <<= 5;
        let bytes: Vec<u8> = (0..4).rev().map(|i| (acc >> (8 * i)) as u8).collect();
        let mut out = Vec::new();
        assert_eq!(decode(&bytes, &mut out, 100), Err(LzwError::Undefined(300)));
    }
}
