//! TIFF frames: the first image of the file, greyscale with black = 0, unsigned 8- or 16-bit,
//! uncompressed or compressed with LZW, Deflate or PackBits.
//!
//! Decoding is the `tiff` crate's; this file checks the header against the file's size before
//! the image is allocated. It refuses colour, palette, alpha, white-is-zero, signed and
//! floating-point images, JPEG and other lossy compressions, rather than converting them.

use std::io::Cursor;

use tiff::decoder::{Decoder, DecodingResult, Limits};
use tiff::tags::Tag;
use tiff::ColorType;

use super::{check_size, Frame, FrameError};

const FORMAT: &str = "tiff";

/// TIFF Compression tag values (TIFF 6.0 specification, section 8 and the tag list; from
/// memory): none, LZW, Adobe Deflate, old Deflate, PackBits.
const COMPRESSION_NONE: u16 = 1;
const COMPRESSION_LZW: u16 = 5;
const COMPRESSION_ADOBE_DEFLATE: u16 = 8;
const COMPRESSION_DEFLATE: u16 = 32946;
const COMPRESSION_PACKBITS: u16 = 32773;

/// Largest ratio of decoded to stored size for each compression, to refuse a header whose
/// image could not come from the file's bytes before allocating it.
/// - PackBits: a 2-byte run codes at most 128 bytes, so 64:1.
/// - Deflate: about 1032:1 (as for PNG).
/// - LZW with codes of 9 to 12 bits: one code stands for at most 4096 bytes of its string
///   table, so the ratio is below 4096 × 8 / 9 ≈ 3641:1; 4096 is a round upper bound.
///
/// (Algorithm limits derived here from the code sizes; no published table.)
fn max_ratio(compression: u16) -> Option<u64> {
    match compression {
        COMPRESSION_NONE => Some(1),
        COMPRESSION_PACKBITS => Some(64),
        COMPRESSION_ADOBE_DEFLATE | COMPRESSION_DEFLATE => Some(super::DEFLATE_MAX_RATIO),
        COMPRESSION_LZW => Some(4096),
        _ => None,
    }
}

fn corrupt(e: &tiff::TiffError) -> FrameError {
    let what = e.to_string().to_lowercase();
    if what.contains("failed to fill whole buffer") || what.contains("unexpected end") {
        return FrameError::Corrupt {
            format: FORMAT,
            what: format!("truncated ({what})"),
        };
    }
    FrameError::Corrupt {
        format: FORMAT,
        what,
    }
}

/// Decode the first image of a greyscale TIFF.
pub(super) fn decode(bytes: &[u8]) -> Result<Frame, FrameError> {
    let file_bytes = bytes.len() as u64;
    let mut limits = Limits::default();
    // Tag values (strip tables, text) larger than the file cannot be valid.
    limits.ifd_value_size = bytes.len();
    let mut d = Decoder::new(Cursor::new(bytes))
        .map_err(|e| corrupt(&e))?
        .with_limits(limits.clone());
    let (width, height) = d.dimensions().map_err(|e| corrupt(&e))?;
    let n = check_size(u64::from(width), u64::from(height))?;
    let bits = match d.colortype().map_err(|e| corrupt(&e))? {
        ColorType::Gray(8) => 8u8,
        ColorType::Gray(16) => 16,
        ColorType::Gray(b) => {
            return Err(FrameError::UnsupportedBitDepth {
                format: FORMAT,
                bits: u32::from(b),
            })
        }
        other => {
            return Err(FrameError::NotGreyscale {
                format: FORMAT,
                found: format!("{other:?}").to_lowercase(),
            })
        }
    };
    let photometric = d
        .find_tag_unsigned::<u16>(Tag::PhotometricInterpretation)
        .map_err(|e| corrupt(&e))?;
    if photometric != Some(1) {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: match photometric {
                Some(0) => "white-is-zero greyscale".into(),
                Some(p) => format!("photometric interpretation {p}"),
                None => "without a photometric interpretation".into(),
            },
        });
    }
    let sample_format = d
        .find_tag_unsigned::<u16>(Tag::SampleFormat)
        .map_err(|e| corrupt(&e))?
        .unwrap_or(1);
    if sample_format != 1 {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: format!("sample format {sample_format} (not unsigned integer)"),
        });
    }
    let compression = d
        .find_tag_unsigned::<u16>(Tag::Compression)
        .map_err(|e| corrupt(&e))?
        .unwrap_or(COMPRESSION_NONE);
    let Some(ratio) = max_ratio(compression) else {
        return Err(FrameError::BadHeader {
            format: FORMAT,
            what: format!(
                "compression {compression} is not supported: uncompressed, LZW (5), Deflate (8, \
                 32946) or PackBits (32773) only"
            ),
        });
    };
    let decoded_bytes = n * u64::from(bits / 8);
    if decoded_bytes > ratio.saturating_mul(file_bytes) {
        return Err(if compression == COMPRESSION_NONE {
            FrameError::Truncated {
                needed_bytes: decoded_bytes,
                got_bytes: file_bytes,
            }
        } else {
            FrameError::ImplausibleSize {
                format: FORMAT,
                decoded_bytes,
                file_bytes,
            }
        });
    }
    limits.decoding_buffer_size = usize::try_from(decoded_bytes).unwrap_or(usize::MAX);
    // Compressed strips are read whole before decoding: they cannot exceed the file.
    limits.intermediate_buffer_size =
        usize::try_from(decoded_bytes.max(file_bytes)).unwrap_or(usize::MAX);
    let mut d = d.with_limits(limits);
    let pixels = match d.read_image().map_err(|e| corrupt(&e))? {
        DecodingResult::U8(v) => v.into_iter().map(u16::from).collect(),
        DecodingResult::U16(v) => v,
        _ => {
            return Err(FrameError::NotGreyscale {
                format: FORMAT,
                found: "not unsigned 8- or 16-bit samples".into(),
            })
        }
    };
    Frame::new(width, height, bits, pixels).map_err(|e| match e {
        FrameError::Truncated { .. } | FrameError::TrailingBytes { .. } => FrameError::Corrupt {
            format: FORMAT,
            what: "the decoded image does not have width × height samples".into(),
        },
        other => other,
    })
}
