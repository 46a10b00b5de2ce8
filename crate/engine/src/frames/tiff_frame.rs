//! TIFF frames: the first image of the file, greyscale with black = 0, unsigned 8- or 16-bit,
//! uncompressed or compressed with LZW, Deflate or PackBits, in strips or tiles.
//!
//! Reads the header (classic or BigTIFF, either byte order) and the first IFD, checks the
//! image's size against the file's before anything is allocated, then decodes each strip or
//! tile (`lzw`, `inflate`, `packbits`) into one reused buffer of the chunk's size and places
//! its rows, undoing horizontal differencing (predictor 2). A chunk whose data decodes to more
//! than its rows is cut there (as libtiff does); to fewer, refused. It refuses colour,
//! palette, alpha, white-is-zero, signed and floating-point images, JPEG and other
//! compressions, rather than converting them, and reads no further IFD.
//!
//! # Source
//! TIFF Revision 6.0 (Adobe, 1992): §2 header and IFD (12-byte entries, values inline when
//! they fit in 4 bytes), §8 baseline tags (ImageWidth 256, ImageLength 257, BitsPerSample 258,
//! Compression 259, PhotometricInterpretation 262, StripOffsets 273, SamplesPerPixel 277,
//! RowsPerStrip 278, StripByteCounts 279, PlanarConfiguration 284), §14 Predictor 317, §15
//! tiles (322 to 325, edge tiles padded to the full tile), §19 SampleFormat 339; Adobe's
//! BigTIFF design (header 43, 8-byte offsets, 20-byte entries, LONG8 type 16); Adobe's TIFF
//! Technical Note 2 for Deflate (8; 32946 the older code of the same data).

use super::inflate::{self, InflateError};
use super::{check_size, lzw, packbits, Frame, FrameError};

const FORMAT: &str = "tiff";

/// TIFF Compression tag values (TIFF 6.0 §8 and the tag list): none, LZW, Adobe Deflate, old
/// Deflate, PackBits.
const COMPRESSION_NONE: u64 = 1;
const COMPRESSION_LZW: u64 = 5;
const COMPRESSION_ADOBE_DEFLATE: u64 = 8;
const COMPRESSION_DEFLATE: u64 = 32946;
const COMPRESSION_PACKBITS: u64 = 32773;

/// Largest ratio of decoded to stored size for each compression, to refuse a header whose
/// image could not come from the file's bytes before allocating it.
/// - PackBits: a 2-byte run codes at most 128 bytes, so 64:1.
/// - Deflate: about 1032:1 (as for PNG).
/// - LZW with codes of 9 to 12 bits: one code stands for at most 4096 bytes of its string
///   table, so the ratio is below 4096 × 8 / 9 ≈ 3641:1; 4096 is a round upper bound.
///
/// (Algorithm limits derived here from the code sizes; no published table.)
fn max_ratio(compression: u64) -> Option<u64> {
    match compression {
        COMPRESSION_NONE => Some(1),
        COMPRESSION_PACKBITS => Some(64),
        COMPRESSION_ADOBE_DEFLATE | COMPRESSION_DEFLATE => Some(super::DEFLATE_MAX_RATIO),
        COMPRESSION_LZW => Some(4096),
        _ => None,
    }
}

fn corrupt(what: String) -> FrameError {
    FrameError::Corrupt {
        format: FORMAT,
        what,
    }
}

/// The file's bytes with its byte order and offset size.
struct Tiff<'a> {
    bytes: &'a [u8],
    little_endian: bool,
    big: bool,
}

impl Tiff<'_> {
    /// The unsigned number of `size` (1, 2, 4 or 8) bytes at `at`, in the file's byte order.
    fn uint(&self, at: u64, size: u64) -> Option<u64> {
        let at = usize::try_from(at).ok()?;
        let b = self
            .bytes
            .get(at..at.checked_add(usize::try_from(size).ok()?)?)?;
        let mut v = 0u64;
        for i in 0..b.len() {
            let byte = if self.little_endian {
                b.get(b.len() - 1 - i)
            } else {
                b.get(i)
            };
            v = (v << 8) | u64::from(*byte?);
        }
        Some(v)
    }
}

/// One IFD entry: its tag, type, count and where its values are in the file.
#[derive(Clone, Copy)]
struct Entry {
    tag: u16,
    kind: u16,
    count: u64,
    values_at: u64,
}

/// The first IFD.
struct Ifd<'a> {
    tiff: &'a Tiff<'a>,
    entries_at: u64,
    count: u64,
}

impl Ifd<'_> {
    fn entry_size(&self) -> u64 {
        if self.tiff.big {
            20
        } else {
            12
        }
    }

    fn find(&self, tag: u16) -> Result<Option<Entry>, FrameError> {
        let t = self.tiff;
        let (inline, count_size) = if t.big { (8, 8) } else { (4, 4) };
        for i in 0..self.count {
            let at = self.entries_at + i * self.entry_size();
            let found = t
                .uint(at, 2)
                .ok_or_else(|| corrupt("the ifd runs past the end of the file".into()))?;
            if found != u64::from(tag) {
                continue;
            }
            let kind = t.uint(at + 2, 2).unwrap_or(0);
            let count = t.uint(at + 4, count_size).unwrap_or(0);
            let size = match kind {
                1 | 2 | 6 | 7 => 1,
                3 | 8 => 2,
                4 | 9 | 11 | 13 => 4,
                _ => 8,
            };
            let field = at + 4 + count_size;
            let values_at = match count.checked_mul(size) {
                Some(n) if n <= inline => field,
                Some(n) => {
                    let off = t.uint(field, inline).unwrap_or(u64::MAX);
                    match off.checked_add(n) {
                        Some(end) if end <= t.bytes.len() as u64 => off,
                        _ => {
                            return Err(corrupt(format!(
                                "tag {tag}: its {count} values run past the end of the file"
                            )))
                        }
                    }
                }
                None => return Err(corrupt(format!("tag {tag}: count {count} is too large"))),
            };
            return Ok(Some(Entry {
                tag,
                kind: u16::try_from(kind).unwrap_or(0),
                count,
                values_at,
            }));
        }
        Ok(None)
    }

    /// The `i`-th value of an entry of unsigned integers (BYTE, SHORT, LONG, LONG8).
    fn value(&self, e: Entry, i: u64) -> Result<u64, FrameError> {
        let size = match e.kind {
            1 => 1,
            3 => 2,
            4 => 4,
            16 => 8,
            k => {
                return Err(corrupt(format!(
                    "tag {}: type {k} is not an unsigned integer",
                    e.tag
                )))
            }
        };
        if i >= e.count {
            return Err(corrupt(format!(
                "tag {}: has {} values, not {}",
                e.tag,
                e.count,
                i + 1
            )));
        }
        self.tiff
            .uint(e.values_at + i * size, size)
            .ok_or_else(|| corrupt(format!("tag {}: runs past the end of the file", e.tag)))
    }

    /// The first value of a tag, if the IFD has it.
    fn first(&self, tag: u16) -> Result<Option<u64>, FrameError> {
        match self.find(tag)? {
            Some(e) => self.value(e, 0).map(Some),
            None => Ok(None),
        }
    }

    fn required(&self, tag: u16, what: &str) -> Result<Entry, FrameError> {
        self.find(tag)?
            .ok_or_else(|| corrupt(format!("tag {tag} ({what}) is missing")))
    }

    /// Every value of a tag is the same (BitsPerSample, SampleFormat): that value.
    fn same(&self, tag: u16, default: u64) -> Result<u64, FrameError> {
        let Some(e) = self.find(tag)? else {
            return Ok(default);
        };
        let v = self.value(e, 0)?;
        for i in 1..e.count {
            if self.value(e, i)? != v {
                return Err(corrupt(format!("tag {tag}: the samples differ")));
            }
        }
        Ok(v)
    }
}

/// Decode the first image of a greyscale TIFF.
pub(super) fn decode(bytes: &[u8]) -> Result<Frame, FrameError> {
    let file_bytes = bytes.len() as u64;
    let (little_endian, big) = match bytes.get(..4) {
        Some(b"II*\0") => (true, false),
        Some(b"MM\0*") => (false, false),
        Some(b"II+\0") => (true, true),
        Some(b"MM\0+") => (false, true),
        _ => return Err(corrupt("not a tiff header".into())),
    };
    let tiff = Tiff {
        bytes,
        little_endian,
        big,
    };
    let first_ifd = if big {
        if tiff.uint(4, 2) != Some(8) || tiff.uint(6, 2) != Some(0) {
            return Err(corrupt("bigtiff header: offsets are not 8 bytes".into()));
        }
        tiff.uint(8, 8)
    } else {
        tiff.uint(4, 4)
    }
    .ok_or_else(|| corrupt("truncated: the file ends inside the header".into()))?;
    let (count_size, entry_size) = if big { (8, 20) } else { (2, 12) };
    let count = tiff.uint(first_ifd, count_size).ok_or_else(|| {
        corrupt(format!(
            "the first ifd at {first_ifd} is past the end of the file"
        ))
    })?;
    let entries_at = first_ifd + count_size;
    // The entries, then the next IFD's offset (TIFF 6.0 §2), must be in the file.
    if count
        .checked_mul(entry_size)
        .and_then(|n| n.checked_add(entries_at + count_size.max(4)))
        .is_none_or(|end| end > file_bytes)
    {
        return Err(corrupt(format!(
            "the first ifd's {count} entries run past the end of the file"
        )));
    }
    let ifd = Ifd {
        tiff: &tiff,
        entries_at,
        count,
    };

    let width_entry = ifd.required(256, "image width")?;
    let height_entry = ifd.required(257, "image length")?;
    let (w, h) = (ifd.value(width_entry, 0)?, ifd.value(height_entry, 0)?);
    let n = check_size(w, h)?;
    let too_large = || FrameError::TooLarge {
        width: w,
        height: h,
    };
    let (width, height) = (
        u32::try_from(w).map_err(|_| too_large())?,
        u32::try_from(h).map_err(|_| too_large())?,
    );
    let samples = ifd.first(277)?.unwrap_or(1);
    let photometric = ifd.first(262)?;
    let colour = match photometric {
        None => Some("without a photometric interpretation".to_string()),
        Some(0 | 1) => None,
        Some(2) if samples >= 4 => Some("rgba".into()),
        Some(2) => Some("rgb".into()),
        Some(3) => Some("palette colour".into()),
        Some(5) => Some("cmyk".into()),
        Some(6) => Some("ycbcr".into()),
        Some(p) => Some(format!("photometric interpretation {p}")),
    };
    if let Some(found) = colour {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found,
        });
    }
    if samples != 1 {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: format!("{samples} samples per pixel"),
        });
    }
    let bits = match ifd.same(258, 1)? {
        8 => 8u8,
        16 => 16,
        b => {
            return Err(FrameError::UnsupportedBitDepth {
                format: FORMAT,
                bits: u32::try_from(b).unwrap_or(u32::MAX),
            })
        }
    };
    if photometric == Some(0) {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: "white-is-zero greyscale".into(),
        });
    }
    let sample_format = ifd.same(339, 1)?;
    if sample_format != 1 {
        return Err(FrameError::NotGreyscale {
            format: FORMAT,
            found: format!("sample format {sample_format} (not unsigned integer)"),
        });
    }
    let compression = ifd.first(259)?.unwrap_or(COMPRESSION_NONE);
    let Some(ratio) = max_ratio(compression) else {
        return Err(FrameError::BadHeader {
            format: FORMAT,
            what: format!(
                "compression {compression} is not supported: uncompressed, LZW (5), Deflate (8, \
                 32946) or PackBits (32773) only"
            ),
        });
    };
    let predictor = ifd.first(317)?.unwrap_or(1);
    if predictor != 1 && predictor != 2 {
        return Err(FrameError::BadHeader {
            format: FORMAT,
            what: format!(
                "predictor {predictor} is not supported: none (1) or horizontal differencing (2) \
                 only"
            ),
        });
    }
    // With one sample per pixel, planar configuration 2 lays out the same bytes as 1.
    let planar = ifd.first(284)?.unwrap_or(1);
    if planar != 1 && planar != 2 {
        return Err(corrupt(format!(
            "planar configuration {planar} does not exist"
        )));
    }
    let bpp = u64::from(bits / 8);
    let decoded_bytes = n * bpp;
    let plausible = ratio.saturating_mul(file_bytes);
    if decoded_bytes > plausible {
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

    let layout = Layout::new(&ifd, w, h, bpp, plausible)?;
    let mut pixels = vec![0u16; usize::try_from(n).map_err(|_| too_large())?];
    let mut scratch = Vec::new();
    scratch
        .try_reserve_exact(usize::try_from(layout.chunk_bytes).map_err(|_| too_large())?)
        .map_err(|_| corrupt("no memory for a strip".into()))?;
    for i in 0..layout.chunks {
        let (col0, row0, cw, ch) = layout.chunk(i, h);
        let expected = usize::try_from(cw * ch * bpp).map_err(|_| too_large())?;
        let what = layout.what;
        let off = ifd.value(layout.offsets, i)?;
        let len = ifd.value(layout.counts, i)?;
        let data = off
            .checked_add(len)
            .and_then(|end| bytes.get(usize::try_from(off).ok()?..usize::try_from(end).ok()?))
            .ok_or_else(|| corrupt(format!("{what} {i} runs past the end of the file")))?;
        scratch.clear();
        let chunk: &[u8] = match compression {
            COMPRESSION_NONE => data.get(..expected).unwrap_or(data),
            COMPRESSION_LZW => {
                lzw::decode(data, &mut scratch, expected)
                    .map_err(|e| corrupt(format!("{what} {i}: {e}")))?;
                &scratch
            }
            COMPRESSION_PACKBITS => {
                packbits::decode(data, &mut scratch, expected);
                &scratch
            }
            _ => {
                match inflate::zlib(data, &mut scratch, expected) {
                    Ok(()) | Err(InflateError::TooLong) => {}
                    Err(e) => return Err(corrupt(format!("{what} {i}: {e}"))),
                }
                &scratch
            }
        };
        if chunk.len() != expected {
            return Err(corrupt(format!(
                "{what} {i} holds {} of its {expected} bytes",
                chunk.len()
            )));
        }
        place(
            chunk,
            &mut pixels,
            (col0, row0, cw),
            (w, h),
            bits,
            little_endian,
            predictor == 2,
        );
    }
    Frame::new(width, height, bits, pixels)
}

/// How the image is cut into chunks: strips or tiles.
struct Layout {
    what: &'static str,
    offsets: Entry,
    counts: Entry,
    chunks: u64,
    /// Rows per strip, or the tile's width and length.
    chunk_width: u64,
    chunk_rows: u64,
    across: u64,
    /// Bytes of the largest chunk.
    chunk_bytes: u64,
}

impl Layout {
    fn new(ifd: &Ifd, w: u64, h: u64, bpp: u64, plausible: u64) -> Result<Layout, FrameError> {
        let tiles = ifd.find(324)?.is_some();
        let (what, chunk_width, chunk_rows, offsets, counts) = if tiles {
            let tw = ifd.value(ifd.required(322, "tile width")?, 0)?;
            let tl = ifd.value(ifd.required(323, "tile length")?, 0)?;
            if ifd.find(273)?.is_some() {
                return Err(corrupt("both strips and tiles".into()));
            }
            (
                "tile",
                tw,
                tl,
                ifd.required(324, "tile offsets")?,
                ifd.required(325, "tile byte counts")?,
            )
        } else {
            let rows = ifd.first(278)?.unwrap_or(h).min(h);
            (
                "strip",
                w,
                rows,
                ifd.required(273, "strip offsets")?,
                ifd.required(279, "strip byte counts")?,
            )
        };
        if chunk_width == 0 || chunk_rows == 0 {
            return Err(corrupt(format!("{what} size {chunk_width} × {chunk_rows}")));
        }
        let across = w.div_ceil(chunk_width);
        let chunks = across * h.div_ceil(chunk_rows);
        if offsets.count != chunks || counts.count != chunks {
            return Err(corrupt(format!(
                "{} {what} offsets and {} byte counts for {chunks} {what}s",
                offsets.count, counts.count
            )));
        }
        let chunk_bytes = chunk_width
            .checked_mul(chunk_rows)
            .and_then(|p| p.checked_mul(bpp))
            .filter(|b| *b <= plausible)
            .ok_or_else(|| {
                corrupt(format!(
                    "a {what} of {chunk_width} × {chunk_rows} pixels is more than the file can hold"
                ))
            })?;
        Ok(Layout {
            what,
            offsets,
            counts,
            chunks,
            chunk_width,
            chunk_rows,
            across,
            chunk_bytes,
        })
    }

    /// Chunk `i`'s first column and row, width and rows (a last strip may be shorter; tiles
    /// keep their size and are clipped when placed).
    fn chunk(&self, i: u64, h: u64) -> (u64, u64, u64, u64) {
        let (col0, row0) = (
            (i % self.across) * self.chunk_width,
            (i / self.across) * self.chunk_rows,
        );
        let rows = if self.what == "strip" {
            self.chunk_rows.min(h - row0)
        } else {
            self.chunk_rows
        };
        (col0, row0, self.chunk_width, rows)
    }
}

/// Place a decoded chunk's rows in the image, in the file's byte order, undoing horizontal
/// differencing (TIFF 6.0 §14: each sample is the sum of the row's differences so far,
/// modulo 2^bits).
fn place(
    chunk: &[u8],
    pixels: &mut [u16],
    (col0, row0, cw): (u64, u64, u64),
    (w, h): (u64, u64),
    bits: u8,
    little_endian: bool,
    differenced: bool,
) {
    let bpp = usize::from(bits / 8);
    let row_bytes = (cw as usize) * bpp;
    let visible = (w - col0).min(cw) as usize;
    let mask = if bits == 8 { 0xff } else { 0xffff };
    for (y, row) in chunk.chunks_exact(row_bytes.max(1)).enumerate() {
        let image_row = row0 + y as u64;
        if image_row >= h {
            break;
        }
        let start = (image_row * w + col0) as usize;
        let Some(dst) = pixels.get_mut(start..start + visible) else {
            return;
        };
        let mut acc = 0u16;
        for (d, s) in dst.iter_mut().zip(row.chunks_exact(bpp)) {
            let v = match s {
                [a, b] if little_endian => u16::from_le_bytes([*a, *b]),
                [a, b] => u16::from_be_bytes([*a, *b]),
                [a] => u16::from(*a),
                _ => 0,
            };
            *d = if differenced {
                acc = acc.wrapping_add(v) & mask;
                acc
            } else {
                v
            };
        }
    }
}

#[cfg(test)]
mod tests;
