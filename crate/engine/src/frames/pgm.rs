//! Netpbm PGM, binary variant (P5): one greymap, 8-bit or 16-bit big-endian samples.
//!
//! Reads the first image only and refuses trailing bytes (a multi-image file is refused, not
//! partly read). Does not read the plain-text variant (P2).
//!
//! Format (Netpbm's `pgm` manual page, from memory): `P5`, whitespace, width, whitespace, height,
//! whitespace, maxval (1..65535), one whitespace character, then width × height samples, one byte
//! each when maxval < 256, else two bytes, most significant first. `#` starts a comment that runs
//! to the end of the line, anywhere in the header before maxval.

use super::file::check_samples;
#[cfg(test)]
use super::Frame;
use super::{check_exact_len, check_size, FrameError, Samples};

const FORMAT: &str = "pgm";

/// Longest decimal number accepted in the header: u32::MAX has 10 digits.
const MAX_DIGITS: usize = 10;

struct PgmHeader {
    width: u64,
    height: u64,
    maxval: u64,
    data_start: usize,
}

fn bad(what: impl Into<String>) -> FrameError {
    FrameError::BadHeader {
        format: FORMAT,
        what: what.into(),
    }
}

fn parse_header(bytes: &[u8]) -> Result<PgmHeader, FrameError> {
    if !bytes.starts_with(b"P5") {
        return Err(bad("missing the \"P5\" signature"));
    }
    let mut pos = 2;
    let mut fields = [0u64; 3];
    for (field, name) in fields.iter_mut().zip(["width", "height", "maxval"]) {
        // Whitespace and comments before each number; at least one whitespace byte.
        let start = pos;
        loop {
            match bytes.get(pos) {
                Some(b) if b.is_ascii_whitespace() => pos += 1,
                Some(b'#') => {
                    while let Some(b) = bytes.get(pos) {
                        pos += 1;
                        if *b == b'\n' || *b == b'\r' {
                            break;
                        }
                    }
                }
                Some(_) => break,
                None => return Err(bad(format!("the file ends before the {name}"))),
            }
        }
        if pos == start {
            return Err(bad(format!("no whitespace before the {name}")));
        }
        let digits_start = pos;
        let mut value: u64 = 0;
        while let Some(b) = bytes.get(pos).filter(|b| b.is_ascii_digit()) {
            if pos - digits_start >= MAX_DIGITS {
                return Err(bad(format!("{name} has more than {MAX_DIGITS} digits")));
            }
            value = value * 10 + u64::from(b - b'0');
            pos += 1;
        }
        if pos == digits_start {
            let found = bytes.get(pos).map_or_else(
                || "the end of the file".to_string(),
                |b| format!("byte {b:#04x}"),
            );
            return Err(bad(format!(
                "{name} must be a decimal number, found {found}"
            )));
        }
        *field = value;
    }
    // Exactly one whitespace byte ends the header.
    match bytes.get(pos) {
        Some(b) if b.is_ascii_whitespace() => pos += 1,
        Some(b) => {
            return Err(bad(format!(
                "maxval must be followed by one whitespace byte, found {b:#04x}"
            )))
        }
        None => return Err(bad("the file ends right after maxval")),
    }
    let [width, height, maxval] = fields;
    Ok(PgmHeader {
        width,
        height,
        maxval,
        data_start: pos,
    })
}

/// Decode a P5 greymap.
#[cfg(test)]
fn decode(bytes: &[u8]) -> Result<Frame, FrameError> {
    parse(bytes).map(|h| h.widened(bytes))
}

/// Read and check a P5 greymap's header and samples (none above maxval), without widening.
pub(super) fn parse(bytes: &[u8]) -> Result<super::Header, FrameError> {
    let h = parse_header(bytes)?;
    if h.maxval == 0 || h.maxval > 65535 {
        return Err(bad(format!(
            "maxval must be from 1 to 65535, got {}",
            h.maxval
        )));
    }
    let n = check_size(h.width, h.height)?;
    let bytes_per_sample: u64 = if h.maxval < 256 { 1 } else { 2 };
    let needed = n * bytes_per_sample; // ≤ 2^29: no overflow
    let data = bytes.get(h.data_start..).unwrap_or_default();
    check_exact_len(needed, data.len() as u64)?;
    // OK because check_size bounded width and height by MAX_PIXELS = 2^28.
    #[allow(clippy::cast_possible_truncation)]
    let (width, height) = (h.width as u32, h.height as u32);
    let samples = if bytes_per_sample == 1 {
        Samples::Byte(h.data_start)
    } else {
        Samples::Be16(h.data_start)
    };
    // OK because maxval ≤ 65535 was checked above.
    #[allow(clippy::cast_possible_truncation)]
    let maxval = h.maxval as u16;
    // A full-scale maxval (255 or 65535) admits every sample the bytes can hold.
    if maxval != 255 && maxval != 65535 {
        check_samples(samples, data, width, maxval)?;
    }
    let significant_bits = if (h.maxval + 1).is_power_of_two() {
        // OK because maxval + 1 ≤ 65536 = 2^16.
        #[allow(clippy::cast_possible_truncation)]
        Some((h.maxval + 1).trailing_zeros() as u8)
    } else {
        None
    };
    Ok(super::Header {
        width,
        height,
        sample_bits: if bytes_per_sample == 1 { 8 } else { 16 },
        significant_bits,
        samples,
    })
}

#[cfg(test)]
#[allow(clippy::panic)] // OK because a failing test should stop loudly
mod tests {
    use super::*;

    #[test]
    fn reads_8_and_16_bit_with_comments() {
        let f = decode(b"P5\n# made by hand\n3 1\n# another\n255\n\x00\x7f\xff")
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(f.pixels(), &[0, 127, 255]);
        assert_eq!(f.significant_bits(), Some(8));
        let f = decode(b"P5 2 1 4095\n\x0f\xff\x01\x02").unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(f.pixels(), &[4095, 258]);
        assert_eq!((f.sample_bits(), f.significant_bits()), (16, Some(12)));
    }

    #[test]
    fn refuses_malformed_headers() {
        for (bytes, start) in [
            (&b"P6 1 1 255\n\x00"[..], "bad pgm header"),
            (b"P5 1 1 0\n\x00", "bad pgm header: maxval"),
            (b"P5 1 1 70000\n\x00\x00", "bad pgm header: maxval"),
            (b"P5 0 1 255\n", "image size 0"),
            (b"P5 99999999 99999999 255\n\x00", "image size"),
            (b"P5 1 1 255", "bad pgm header"),
            (b"P5 1 x 255\n\x00", "bad pgm header: height"),
            (b"P5 2 2 255\n\x00", "truncated"),
            (b"P5 1 1 255\n\x00\x00", "1 bytes after"),
            (
                b"P5 1 1 1000\n\x10\x00",
                "sample at column 0, row 0 is 4096",
            ),
            (b"P5 12345678901 1 255\n", "bad pgm header: width has more"),
        ] {
            let e = decode(bytes)
                .err()
                .map(|e| e.to_string())
                .unwrap_or_default();
            assert!(e.starts_with(start), "{e:?} should start with {start:?}");
        }
    }
}
