//! Headerless raw frames: little-endian 16-bit samples, row by row, of a geometry the user gives.
//!
//! The file must hold exactly width × height samples, each below 2^bits. Does not guess a
//! geometry from the file size, and reads no other sample layout (no 8-bit, big-endian or
//! packed 10/12-bit raw).

use super::file::check_samples;
#[cfg(test)]
use super::Frame;
use super::{check_exact_len, check_size, FrameError, Header, Samples};

/// The geometry of a raw frame, which the file itself does not carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RawGeometry {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
    /// ADC resolution: every sample is below 2^bits; 1..=16.
    pub bits: u8,
}

/// Decode raw little-endian 16-bit samples.
#[cfg(test)]
fn decode(bytes: &[u8], g: RawGeometry) -> Result<Frame, FrameError> {
    parse(bytes, g).map(|h| h.widened(bytes))
}

/// Check raw little-endian 16-bit samples against their geometry (all present, each below
/// 2^bits), without widening.
pub(super) fn parse(bytes: &[u8], g: RawGeometry) -> Result<Header, FrameError> {
    if g.bits == 0 || g.bits > 16 {
        return Err(FrameError::UnsupportedBitDepth {
            format: "raw",
            bits: u32::from(g.bits),
        });
    }
    let n = check_size(u64::from(g.width), u64::from(g.height))?;
    let needed = 2 * n;
    check_exact_len(needed, bytes.len() as u64)?;
    let samples = Samples::Le16(0);
    if g.bits < 16 {
        // OK because bits < 16, so 2^bits − 1 < 65535.
        #[allow(clippy::cast_possible_truncation)]
        let max = ((1u32 << g.bits) - 1) as u16;
        check_samples(samples, bytes, g.width, max)?;
    }
    Ok(Header {
        width: g.width,
        height: g.height,
        sample_bits: 16,
        significant_bits: Some(g.bits),
        samples,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn g(width: u32, height: u32, bits: u8) -> RawGeometry {
        RawGeometry {
            width,
            height,
            bits,
        }
    }

    #[test]
    fn reads_little_endian_and_checks_everything() {
        let f = decode(&[0x01, 0x02, 0xff, 0x0f], g(2, 1, 12));
        assert_eq!(f.map(|f| f.pixels().to_vec()), Ok(vec![0x0201, 0x0fff]));
        let msg = |r: Result<Frame, FrameError>| r.err().map(|e| e.to_string()).unwrap_or_default();
        assert!(msg(decode(&[0, 0x10], g(1, 1, 12))).contains("4096, above the maximum 4095"));
        assert!(msg(decode(&[0; 3], g(2, 1, 16))).starts_with("truncated"));
        assert!(msg(decode(&[0; 6], g(2, 1, 16))).starts_with("2 bytes after"));
        assert!(msg(decode(&[0; 4], g(2, 1, 17))).contains("bit depth 17"));
        assert!(msg(decode(&[0; 4], g(2, 1, 0))).contains("bit depth 0"));
        assert!(msg(decode(&[], g(0, 1, 8))).starts_with("image size 0"));
        assert!(msg(decode(&[], g(u32::MAX, u32::MAX, 8))).contains("pixels (this tool's limit)"));
    }
}
