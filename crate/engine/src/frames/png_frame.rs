//! PNG frames: single-channel greyscale, 8- or 16-bit (16-bit samples are big-endian in PNG).
//!
//! Decoding is the `png` crate's; this file checks the header against the file's size before
//! anything is allocated and refuses colour, alpha, palette and 1/2/4-bit images rather than
//! converting them. It ignores gamma; an `sBIT` chunk below the bit depth is kept as the frame's
//! [`Frame::msb_bits`] (PNG 1.2 §4.2.6: the samples were scaled up from that many bits).

use std::io::Cursor;

use super::{check_size, from_be16, Frame, FrameError, DEFLATE_MAX_RATIO};

const FORMAT: &str = "png";

/// Allocation the `png` crate may make besides the image (rows, chunks), beyond the image
/// bound: 16 MiB is ample for a greyscale frame's row buffers and metadata (common practice, no
/// source).
const PNG_SIDE_ALLOCATION_BYTES: u64 = 16 << 20;

fn corrupt(e: &png::DecodingError) -> FrameError {
    FrameError::Corrupt {
        format: FORMAT,
        what: e.to_string().to_lowercase(),
    }
}

/// Decode a greyscale PNG.
pub(super) fn decode(bytes: &[u8]) -> Result<Frame, FrameError> {
    let file_bytes = bytes.len() as u64;
    let side = DEFLATE_MAX_RATIO
        .saturating_mul(file_bytes)
        .saturating_add(PNG_SIDE_ALLOCATION_BYTES);
    let limits = png::Limits {
        bytes: usize::try_from(side).unwrap_or(usize::MAX),
    };
    let mut decoder = png::Decoder::new_with_limits(Cursor::new(bytes), limits);
    decoder.set_transformations(png::Transformations::IDENTITY);
    let info = decoder.read_header_info().map_err(|e| corrupt(&e))?;
    let (width, height) = (info.width, info.height);
    let n = check_size(u64::from(width), u64::from(height))?;
    let bits = match info.bit_depth {
        png::BitDepth::Eight => 8u8,
        png::BitDepth::Sixteen => 16,
        other => {
            return Err(FrameError::UnsupportedBitDepth {
                format: FORMAT,
                bits: other as u32,
            })
        }
    };
    if info.color_type != png::ColorType::Grayscale {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: format!("{:?}", info.color_type).to_lowercase(),
        });
    }
    let decoded_bytes = n * u64::from(bits / 8);
    if decoded_bytes > DEFLATE_MAX_RATIO.saturating_mul(file_bytes) {
        return Err(FrameError::ImplausibleSize {
            format: FORMAT,
            decoded_bytes,
            file_bytes,
        });
    }
    let mut reader = decoder.read_info().map_err(|e| corrupt(&e))?;
    // sBIT comes before IDAT, so read_info has seen it. One byte for a greyscale image; a value
    // outside 1..bit depth is invalid (PNG 1.2 §4.2.6) and, like a full-depth one, says nothing.
    let sbit = reader
        .info()
        .sbit
        .as_deref()
        .and_then(|b| b.first().copied())
        .filter(|b| *b >= 1 && *b < bits);
    let size = reader
        .output_buffer_size()
        .filter(|s| *s as u64 == decoded_bytes)
        .ok_or_else(|| FrameError::Corrupt {
            format: FORMAT,
            what: "the decoder's output size does not match the header".into(),
        })?;
    let mut buf = vec![0u8; size];
    reader.next_frame(&mut buf).map_err(|e| match e {
        png::DecodingError::IoError(_) => FrameError::Truncated {
            needed_bytes: decoded_bytes,
            got_bytes: file_bytes,
        },
        other => corrupt(&other),
    })?;
    let pixels = if bits == 8 {
        buf.iter().map(|b| u16::from(*b)).collect()
    } else {
        from_be16(&buf)
    };
    Frame::new(width, height, bits, pixels).map(|f| f.with_msb_bits(sbit))
}
