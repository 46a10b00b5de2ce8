//! Greyscale image frames decoded from bytes: Netpbm PGM (P5), PNG, TIFF and raw 16-bit.
//!
//! Every decoder checks each size in the header against the byte length before it allocates,
//! and reports a malformed file as a [`FrameError`] naming what is wrong (the caller adds the
//! file name). This module does no file I/O and computes no statistics: frames go to
//! [`crate::ptc`] for that. Colour images, alpha, floating-point and signed samples are refused,
//! not converted.

mod file;
#[cfg(any(feature = "png", feature = "tiff"))]
mod inflate;
#[cfg(feature = "tiff")]
mod lzw;
#[cfg(feature = "tiff")]
mod packbits;
mod pgm;
#[cfg(feature = "png")]
mod png_frame;
mod raw;
#[cfg(feature = "tiff")]
mod tiff_frame;

use std::fmt;

pub use file::FrameFile;
pub(crate) use file::{Header, Samples};
#[cfg(feature = "png")]
pub use png_frame::{crc32 as png_crc32, paeth as png_paeth};
pub use raw::RawGeometry;

/// Most pixels one frame may have: 2^28 (268 megapixels, 512 MiB of 16-bit samples).
///
/// The limit keeps every integer accumulator of [`crate::ptc`] exact: a sum of squared
/// 16-bit differences is below 2^32 · 2^28 = 2^60 and fits a `u64`.
pub const MAX_PIXELS: u64 = 1 << 28;

/// Largest ratio of decompressed to compressed size that Deflate can reach: a length-258 match
/// coded in 1 bit of a fixed-Huffman-free stream gives about 1032:1 (zlib's technical notes,
/// "maximum compression factor", from memory). A PNG (or Deflate TIFF) announcing more pixel
/// bytes than this times its file size cannot be valid, so it is refused before its buffer is
/// allocated.
#[cfg(any(feature = "png", feature = "tiff"))]
pub(crate) const DEFLATE_MAX_RATIO: u64 = 1032;

/// A decoded greyscale frame: samples row by row, top row first, widened to `u16`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Frame {
    width: u32,
    height: u32,
    sample_bits: u8,
    significant_bits: Option<u8>,
    msb_bits: Option<u8>,
    pixels: Vec<u16>,
}

impl Frame {
    /// A frame from samples, row by row; `sample_bits` is the container depth (8 or 16).
    ///
    /// # Errors
    /// [`FrameError::ZeroSize`], [`FrameError::TooLarge`], [`FrameError::UnsupportedBitDepth`],
    /// or [`FrameError::Truncated`]/[`FrameError::TrailingBytes`] when the number of samples is
    /// not width × height.
    pub fn new(
        width: u32,
        height: u32,
        sample_bits: u8,
        pixels: Vec<u16>,
    ) -> Result<Self, FrameError> {
        let n = check_size(u64::from(width), u64::from(height))?;
        if sample_bits != 8 && sample_bits != 16 {
            return Err(FrameError::UnsupportedBitDepth {
                format: "frame",
                bits: u32::from(sample_bits),
            });
        }
        check_exact_len(n, pixels.len() as u64)?;
        if sample_bits == 8 {
            if let Some((i, v)) = pixels.iter().enumerate().find(|(_, v)| **v > 255) {
                let (x, y) = xy(i, width);
                return Err(FrameError::SampleOutOfRange {
                    x,
                    y,
                    value: u32::from(*v),
                    max: 255,
                });
            }
        }
        Ok(Frame {
            width,
            height,
            sample_bits,
            significant_bits: None,
            msb_bits: None,
            pixels,
        })
    }

    /// Width in pixels.
    #[must_use]
    pub fn width(&self) -> u32 {
        self.width
    }

    /// Height in pixels.
    #[must_use]
    pub fn height(&self) -> u32 {
        self.height
    }

    /// Bits per sample of the container: 8 or 16.
    #[must_use]
    pub fn sample_bits(&self) -> u8 {
        self.sample_bits
    }

    /// The ADC resolution the file states for LSB-aligned samples, when it does: a PGM whose
    /// maxval is 2^b − 1, or the `bits` of a raw geometry. TIFF does not say it; a PNG's `sBIT`
    /// is [`Frame::msb_bits`].
    #[must_use]
    pub fn significant_bits(&self) -> Option<u8> {
        self.significant_bits
    }

    /// The significant bits of MSB-aligned samples, when the file states them (a PNG's `sBIT`
    /// below its bit depth): the camera's values were shifted left by the container's bits minus
    /// these.
    #[must_use]
    pub fn msb_bits(&self) -> Option<u8> {
        self.msb_bits
    }

    /// The samples, row by row.
    #[must_use]
    pub fn pixels(&self) -> &[u16] {
        &self.pixels
    }

    /// Number of pixels, width × height.
    #[must_use]
    pub fn len(&self) -> usize {
        self.pixels.len()
    }

    /// Whether the frame has no pixels (never true for a decoded frame).
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.pixels.is_empty()
    }

    #[cfg_attr(not(feature = "png"), allow(dead_code))]
    pub(crate) fn with_msb_bits(mut self, bits: Option<u8>) -> Self {
        self.msb_bits = bits;
        self
    }
}

/// The file formats this module reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Format {
    /// Netpbm greymap, binary (P5), 8- or 16-bit big-endian.
    Pgm,
    /// PNG, greyscale 8- or 16-bit.
    Png,
    /// TIFF, greyscale (black is zero) 8- or 16-bit unsigned, uncompressed, LZW, Deflate or
    /// PackBits.
    Tiff,
    /// Headerless little-endian 16-bit samples of a given geometry.
    Raw,
}

impl Format {
    /// The format's name as messages show it.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            Format::Pgm => "pgm",
            Format::Png => "png",
            Format::Tiff => "tiff",
            Format::Raw => "raw",
        }
    }
}

/// What is wrong with a frame file. The caller adds the file name.
#[derive(Debug, Clone, PartialEq, Eq)]
#[non_exhaustive]
pub enum FrameError {
    /// The bytes start with no known signature, and no raw geometry was given.
    UnknownFormat,
    /// The file ends before the data its header (or the given geometry) announces.
    Truncated {
        /// Bytes (or samples, for [`Frame::new`]) the header announces.
        needed_bytes: u64,
        /// Bytes (or samples) present.
        got_bytes: u64,
    },
    /// Bytes follow the image data.
    TrailingBytes {
        /// How many bytes too many.
        extra_bytes: u64,
    },
    /// A header field is malformed or missing.
    BadHeader {
        /// The format being read.
        format: &'static str,
        /// What is wrong, lower case.
        what: String,
    },
    /// Width or height is zero.
    ZeroSize {
        /// Width in pixels.
        width: u64,
        /// Height in pixels.
        height: u64,
    },
    /// More pixels than [`MAX_PIXELS`] (this also covers width × height overflowing).
    TooLarge {
        /// Width in pixels.
        width: u64,
        /// Height in pixels.
        height: u64,
    },
    /// A bit depth this module does not read.
    UnsupportedBitDepth {
        /// The format being read.
        format: &'static str,
        /// The bit depth found.
        bits: u32,
    },
    /// Not a single-channel greyscale image of unsigned samples.
    NotGreyscale {
        /// The format being read.
        format: &'static str,
        /// What was found instead.
        found: String,
    },
    /// A sample above the largest value the header allows.
    SampleOutOfRange {
        /// Column of the first such sample.
        x: u32,
        /// Row of the first such sample.
        y: u32,
        /// Its value.
        value: u32,
        /// The largest allowed value.
        max: u32,
    },
    /// The decoded size could not have come from so few compressed bytes.
    ImplausibleSize {
        /// The format being read.
        format: &'static str,
        /// Bytes the header announces once decompressed.
        decoded_bytes: u64,
        /// Bytes in the file.
        file_bytes: u64,
    },
    /// The compressed or structured data is corrupt: a checksum fails, a chunk, strip or tag
    /// runs past the end of the file, a code is invalid.
    Corrupt {
        /// The format being read.
        format: &'static str,
        /// What is wrong, lower case (chunk and tag names as the format spells them).
        what: String,
    },
    /// A format this build was made without (its decoder is a cargo feature, left out to keep
    /// a build small).
    NotBuiltIn {
        /// The format the file's signature announces.
        format: &'static str,
    },
}

impl fmt::Display for FrameError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FrameError::UnknownFormat => write!(
                f,
                "not a PGM (P5), PNG or TIFF file, and no raw geometry (width, height, bits) \
                 was given"
            ),
            FrameError::Truncated {
                needed_bytes,
                got_bytes,
            } => write!(
                f,
                "truncated: the image needs {needed_bytes} bytes of pixel data, the file has \
                 {got_bytes}"
            ),
            FrameError::TrailingBytes { extra_bytes } => write!(
                f,
                "{extra_bytes} bytes after the image data (wrong width, height or bit depth?)"
            ),
            FrameError::BadHeader { format, what } => write!(f, "bad {format} header: {what}"),
            FrameError::ZeroSize { width, height } => {
                write!(f, "image size {width} × {height}: width and height must be ≥ 1")
            }
            FrameError::TooLarge { width, height } => write!(
                f,
                "image size {width} × {height} is more than {MAX_PIXELS} pixels (this tool's limit)"
            ),
            FrameError::UnsupportedBitDepth { format, bits } => write!(
                f,
                "{format} bit depth {bits} is not supported: 8- or 16-bit samples only"
            ),
            FrameError::NotGreyscale { format, found } => write!(
                f,
                "{format} image is {found}: only single-channel greyscale frames are analysed"
            ),
            FrameError::SampleOutOfRange { x, y, value, max } => write!(
                f,
                "sample at column {x}, row {y} is {value}, above the maximum {max} the header allows"
            ),
            FrameError::ImplausibleSize {
                format,
                decoded_bytes,
                file_bytes,
            } => write!(
                f,
                "{format} header announces {decoded_bytes} bytes of pixels, more than \
                 {file_bytes} compressed bytes can hold"
            ),
            FrameError::Corrupt { format, what } => write!(f, "corrupt {format} data: {what}"),
            FrameError::NotBuiltIn { format } => write!(
                f,
                "a {format} file, which this build does not read (it was left out to keep the \
                 build small; PGM and raw frames are read)"
            ),
        }
    }
}

impl std::error::Error for FrameError {}

/// The format a file's first bytes announce, if any.
#[must_use]
pub fn sniff(bytes: &[u8]) -> Option<Format> {
    if bytes.starts_with(b"P5") {
        Some(Format::Pgm)
    } else if bytes.starts_with(&[0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a]) {
        Some(Format::Png)
    } else if bytes.starts_with(b"II*\0")
        || bytes.starts_with(b"MM\0*")
        || bytes.starts_with(b"II+\0")
        || bytes.starts_with(b"MM\0+")
    {
        Some(Format::Tiff)
    } else {
        None
    }
}

/// Decode a frame. With `raw` the bytes are headerless little-endian 16-bit samples of that
/// geometry; without it the format is recognised from the file's signature.
///
/// # Errors
/// A [`FrameError`] naming what is wrong with the bytes.
///
/// ```
/// let f = engine::frames::decode(b"P5 2 1 255\n\x01\x02", None).unwrap();
/// assert_eq!((f.width(), f.height(), f.pixels()), (2, 1, &[1u16, 2][..]));
/// let e = engine::frames::decode(b"P5 2 2 255\n\x01\x02", None).unwrap_err();
/// assert!(e.to_string().starts_with("truncated"));
/// ```
pub fn decode(bytes: &[u8], raw: Option<RawGeometry>) -> Result<Frame, FrameError> {
    decode_as(format_of(bytes, raw)?, bytes, raw)
}

/// Decode bytes as the given format (no signature sniffing); `raw` is needed for
/// [`Format::Raw`].
///
/// # Errors
/// As [`decode`]; a raw format without geometry is [`FrameError::BadHeader`].
pub fn decode_as(
    format: Format,
    bytes: &[u8],
    raw: Option<RawGeometry>,
) -> Result<Frame, FrameError> {
    match format {
        Format::Pgm => pgm::parse(bytes).map(|h| h.widened(bytes)),
        Format::Png => decode_png(bytes),
        Format::Tiff => decode_tiff(bytes),
        Format::Raw => raw::parse(bytes, raw_geometry(raw)?).map(|h| h.widened(bytes)),
    }
}

/// The format to decode: raw when a geometry is given, else the file's signature.
fn format_of(bytes: &[u8], raw: Option<RawGeometry>) -> Result<Format, FrameError> {
    match raw {
        Some(_) => Ok(Format::Raw),
        None => sniff(bytes).ok_or(FrameError::UnknownFormat),
    }
}

fn raw_geometry(raw: Option<RawGeometry>) -> Result<RawGeometry, FrameError> {
    raw.ok_or_else(|| FrameError::BadHeader {
        format: "raw",
        what: "no geometry (width, height, bits) given".into(),
    })
}

#[cfg(feature = "png")]
fn decode_png(bytes: &[u8]) -> Result<Frame, FrameError> {
    png_frame::decode(bytes)
}

#[cfg(not(feature = "png"))]
fn decode_png(_bytes: &[u8]) -> Result<Frame, FrameError> {
    Err(FrameError::NotBuiltIn { format: "png" })
}

#[cfg(feature = "tiff")]
fn decode_tiff(bytes: &[u8]) -> Result<Frame, FrameError> {
    tiff_frame::decode(bytes)
}

#[cfg(not(feature = "tiff"))]
fn decode_tiff(_bytes: &[u8]) -> Result<Frame, FrameError> {
    Err(FrameError::NotBuiltIn { format: "tiff" })
}

/// Check a width and height: both ≥ 1 and their product at most [`MAX_PIXELS`]. Returns the
/// pixel count. Works in `u64`, so the product of two `u32` cannot overflow.
pub(crate) fn check_size(width: u64, height: u64) -> Result<u64, FrameError> {
    if width == 0 || height == 0 {
        return Err(FrameError::ZeroSize { width, height });
    }
    match width.checked_mul(height) {
        Some(n) if n <= MAX_PIXELS => Ok(n),
        _ => Err(FrameError::TooLarge { width, height }),
    }
}

/// Check that exactly `needed` units (bytes or samples) are present: fewer is `Truncated`,
/// more is `TrailingBytes`.
pub(crate) fn check_exact_len(needed: u64, got: u64) -> Result<(), FrameError> {
    if got < needed {
        return Err(FrameError::Truncated {
            needed_bytes: needed,
            got_bytes: got,
        });
    }
    if got > needed {
        return Err(FrameError::TrailingBytes {
            extra_bytes: got - needed,
        });
    }
    Ok(())
}

/// Column and row of the `i`-th sample of a frame `width` wide.
pub(crate) fn xy(i: usize, width: u32) -> (u32, u32) {
    let w = u64::from(width.max(1));
    let i = i as u64;
    // OK because i < MAX_PIXELS = 2^28, so both quotients fit u32.
    #[allow(clippy::cast_possible_truncation)]
    ((i % w) as u32, (i / w) as u32)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn size_checks_catch_zero_and_overflow() {
        assert!(matches!(check_size(0, 5), Err(FrameError::ZeroSize { .. })));
        assert!(matches!(
            check_size(u64::from(u32::MAX), u64::from(u32::MAX)),
            Err(FrameError::TooLarge { .. })
        ));
        assert_eq!(check_size(3, 4), Ok(12));
    }

    #[test]
    fn frame_new_checks_sample_count() {
        assert!(Frame::new(2, 2, 16, vec![0; 3]).is_err());
        assert!(Frame::new(2, 2, 16, vec![0; 5]).is_err());
        assert!(Frame::new(2, 2, 8, vec![0, 0, 0, 256]).is_err());
        assert!(Frame::new(2, 2, 12, vec![0; 4]).is_err());
        assert!(Frame::new(2, 2, 16, vec![0; 4]).is_ok());
    }
}
