//! A frame file's bytes with its header read and its samples checked, the samples widened to
//! `u16` only when a row is used: the form in which a long series is analysed.
//!
//! PGM and raw samples stay in the file's bytes ([`Samples`]); PNG and TIFF, which must be
//! inflated, are decoded into a [`Frame`] at once. The same checks as [`super::decode`], with
//! the same messages; one file's buffer is reused for the next ([`FrameFile::bytes_mut`]).
//! No I/O and no statistics here.

use super::{format_of, raw_geometry, xy, Format, Frame, FrameError, RawGeometry};

/// Where and how the samples of a headered file lie in its bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Samples {
    /// 16-bit big-endian samples from this byte offset (16-bit PGM).
    Be16(usize),
    /// 16-bit little-endian samples from this offset (raw).
    Le16(usize),
    /// One byte a sample from this offset (8-bit PGM).
    Byte(usize),
}

impl Samples {
    fn start(self) -> usize {
        match self {
            Samples::Be16(s) | Samples::Le16(s) | Samples::Byte(s) => s,
        }
    }

    fn bytes_per_sample(self) -> usize {
        match self {
            Samples::Byte(_) => 1,
            Samples::Be16(_) | Samples::Le16(_) => 2,
        }
    }
}

/// What a format's header says, checked against the file: the sizes, the container and its
/// stated depth, and where the `width × height` samples lie (all present, none above the
/// header's maximum).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Header {
    pub width: u32,
    pub height: u32,
    pub sample_bits: u8,
    pub significant_bits: Option<u8>,
    pub samples: Samples,
}

impl Header {
    /// The whole frame, widened.
    pub(crate) fn widened(&self, bytes: &[u8]) -> Frame {
        let mut pixels = Vec::new();
        widen_into(self.samples, self.data(bytes), &mut pixels);
        Frame {
            width: self.width,
            height: self.height,
            sample_bits: self.sample_bits,
            significant_bits: self.significant_bits,
            msb_bits: None,
            pixels,
        }
    }

    fn data<'a>(&self, bytes: &'a [u8]) -> &'a [u8] {
        bytes.get(self.samples.start()..).unwrap_or_default()
    }
}

/// Replace `out` with the samples of `data` (laid out as `samples` says, from its start),
/// reusing its allocation. A plain loop the compiler vectorises (a byte shuffle).
pub(crate) fn widen_into(samples: Samples, data: &[u8], out: &mut Vec<u16>) {
    let n = data.len() / samples.bytes_per_sample();
    out.resize(n, 0);
    match samples {
        Samples::Byte(_) => {
            for (o, b) in out.iter_mut().zip(data) {
                *o = u16::from(*b);
            }
        }
        Samples::Be16(_) => widen_16::<true>(data, out),
        Samples::Le16(_) => widen_16::<false>(data, out),
    }
}

/// `out[i]` = the i-th 16-bit sample of `data`, big-endian with `BIG`: eight bytes at a time
/// as one `u64` whose 16-bit lanes are byte-swapped with two masks and shifts (for `BIG`),
/// which compiles to a few vector instructions per 16 samples natively and in wasm's simd128
/// (where the zip of `chunks_exact(2)` stayed a call per sample).
fn widen_16<const BIG: bool>(data: &[u8], out: &mut [u16]) {
    const LOW: u64 = 0x00ff_00ff_00ff_00ff;
    #[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
    let (data, out) = {
        let done = widen_16_simd128::<BIG>(data, out);
        (
            data.get(2 * done..).unwrap_or_default(),
            out.get_mut(done..).unwrap_or_default(),
        )
    };
    // Indexed, not zips of chunks (see the simd128 loop).
    let (ins, in_rest) = data.as_chunks::<8>();
    let (outs, out_rest) = out.as_chunks_mut::<4>();
    let whole = ins.len().min(outs.len());
    for i in 0..whole {
        let (Some(d), Some(o)) = (ins.get(i), outs.get_mut(i)) else {
            break;
        };
        let x = u64::from_le_bytes(*d);
        let x = if BIG {
            ((x & LOW) << 8) | ((x >> 8) & LOW)
        } else {
            x
        };
        #[allow(clippy::cast_possible_truncation)] // each lane is 16 bits, taken by shifting
        {
            *o = [
                x as u16,
                (x >> 16) as u16,
                (x >> 32) as u16,
                (x >> 48) as u16,
            ];
        }
    }
    // The last samples (fewer than four, when the rows are whole chunks on both sides).
    if whole == ins.len() && whole == outs.len() {
        let (pairs, _) = in_rest.as_chunks::<2>();
        for (o, &p) in out_rest.iter_mut().zip(pairs) {
            *o = if BIG {
                u16::from_be_bytes(p)
            } else {
                u16::from_le_bytes(p)
            };
        }
    }
}

/// As [`widen_16`] with wasm's 128-bit vectors, 8 samples a step (one load, one byte shuffle
/// for `BIG`, one store), where the compiler leaves the `u64` form scalar: measured in node's
/// V8 on a 12 MP, L = 16 series, the widening was 29 % of the worker's analysis. Returns the
/// samples written (a multiple of 8); the caller widens the rest.
#[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
fn widen_16_simd128<const BIG: bool>(data: &[u8], out: &mut [u16]) -> usize {
    use core::arch::wasm32::{i8x16_shuffle, v128, v128_load, v128_store};
    let mut done = 0;
    // Indexed, not a zip of `chunks_exact`: at opt-level "z" the zip's `next` stayed a call per
    // step (measured: five times opt-level 3's time).
    let (ins, _) = data.as_chunks::<16>();
    let (outs, _) = out.as_chunks_mut::<8>();
    for i in 0..ins.len().min(outs.len()) {
        let (Some(d), Some(o)) = (ins.get(i), outs.get_mut(i)) else {
            break;
        };
        // SAFETY: `d` is exactly 16 readable bytes and `o` exactly 8 writable u16 (16 bytes);
        // wasm's v128.load and v128.store have no alignment requirement.
        let v = unsafe { v128_load(d.as_ptr().cast::<v128>()) };
        let v = if BIG {
            i8x16_shuffle::<1, 0, 3, 2, 5, 4, 7, 6, 9, 8, 11, 10, 13, 12, 15, 14>(v, v)
        } else {
            v
        };
        // SAFETY: as above; wasm is little-endian, so lane k lands in o[k].
        unsafe { v128_store(o.as_mut_ptr().cast::<v128>(), v) };
        done += 8;
    }
    done
}

/// The largest sample of `data`, one vectorised pass.
fn largest(samples: Samples, data: &[u8]) -> u16 {
    match samples {
        Samples::Byte(_) => u16::from(data.iter().copied().max().unwrap_or(0)),
        Samples::Be16(_) => data
            .chunks_exact(2)
            .map(|p| match p {
                &[hi, lo] => u16::from_be_bytes([hi, lo]),
                _ => 0,
            })
            .max()
            .unwrap_or(0),
        Samples::Le16(_) => data
            .chunks_exact(2)
            .map(|p| match p {
                &[lo, hi] => u16::from_le_bytes([lo, hi]),
                _ => 0,
            })
            .max()
            .unwrap_or(0),
    }
}

/// Refuse the first sample above `max` (a scan only when the largest is above it; none when
/// `max` is the container's own largest value, as for a 16-bit PGM with maxval 65535).
pub(crate) fn check_samples(
    samples: Samples,
    data: &[u8],
    width: u32,
    max: u16,
) -> Result<(), FrameError> {
    let container_max = match samples {
        Samples::Byte(_) => u16::from(u8::MAX),
        Samples::Be16(_) | Samples::Le16(_) => u16::MAX,
    };
    if max >= container_max || largest(samples, data) <= max {
        return Ok(());
    }
    let mut row = Vec::new();
    widen_into(samples, data, &mut row);
    match row.iter().position(|v| *v > max) {
        None => Ok(()),
        Some(i) => {
            let (x, y) = xy(i, width);
            Err(FrameError::SampleOutOfRange {
                x,
                y,
                value: u32::from(row.get(i).copied().unwrap_or(0)),
                max: u32::from(max),
            })
        }
    }
}

/// What a decoded file says of its frame.
struct Info {
    width: u32,
    height: u32,
    sample_bits: u8,
    significant_bits: Option<u8>,
    msb_bits: Option<u8>,
}

#[derive(Debug, Clone, Default)]
enum State {
    /// Not decoded (or the last decode failed).
    #[default]
    Empty,
    /// Samples in the bytes.
    Encoded(Header),
    /// Decoded samples (PNG, TIFF, or a frame handed over).
    Decoded(Frame),
}

/// A frame file: its bytes as read and, once [`FrameFile::decode`] succeeded, what they hold.
/// The bytes of one file are replaced by the next's in the same buffer, so a series of files
/// is read into the same memory.
#[derive(Debug, Clone, Default)]
pub struct FrameFile {
    bytes: Vec<u8>,
    state: State,
}

impl From<Frame> for FrameFile {
    fn from(frame: Frame) -> Self {
        FrameFile {
            bytes: Vec::new(),
            state: State::Decoded(frame),
        }
    }
}

impl FrameFile {
    /// The file's bytes, to be replaced by the next file's (clear, then fill). Until the next
    /// [`FrameFile::decode`] the file holds no frame.
    pub fn bytes_mut(&mut self) -> &mut Vec<u8> {
        self.state = State::Empty;
        &mut self.bytes
    }

    /// Read the header and check the samples, as [`super::decode`] does (the same checks and
    /// messages); PNG and TIFF are decoded here, PGM and raw samples are widened when used.
    ///
    /// # Errors
    /// A [`FrameError`] naming what is wrong with the bytes; the file then holds no frame.
    pub fn decode(&mut self, raw: Option<RawGeometry>) -> Result<(), FrameError> {
        self.state = State::Empty;
        let bytes = self.bytes.as_slice();
        self.state = match format_of(bytes, raw)? {
            Format::Pgm => State::Encoded(super::pgm::parse(bytes)?),
            Format::Raw => State::Encoded(super::raw::parse(bytes, raw_geometry(raw)?)?),
            format @ (Format::Png | Format::Tiff) => {
                State::Decoded(super::decode_as(format, bytes, raw)?)
            }
        };
        Ok(())
    }

    fn header(&self) -> Option<Info> {
        match &self.state {
            State::Empty => None,
            State::Encoded(h) => Some(Info {
                width: h.width,
                height: h.height,
                sample_bits: h.sample_bits,
                significant_bits: h.significant_bits,
                msb_bits: None,
            }),
            State::Decoded(f) => Some(Info {
                width: f.width,
                height: f.height,
                sample_bits: f.sample_bits,
                significant_bits: f.significant_bits,
                msb_bits: f.msb_bits,
            }),
        }
    }

    /// Whether the file holds a decoded frame.
    #[must_use]
    pub fn is_decoded(&self) -> bool {
        self.header().is_some()
    }

    /// Width in pixels (0 until decoded).
    #[must_use]
    pub fn width(&self) -> u32 {
        self.header().map_or(0, |h| h.width)
    }

    /// Height in pixels (0 until decoded).
    #[must_use]
    pub fn height(&self) -> u32 {
        self.header().map_or(0, |h| h.height)
    }

    /// Bits per sample of the container, 8 or 16 (0 until decoded).
    #[must_use]
    pub fn sample_bits(&self) -> u8 {
        self.header().map_or(0, |h| h.sample_bits)
    }

    /// As [`Frame::significant_bits`].
    #[must_use]
    pub fn significant_bits(&self) -> Option<u8> {
        self.header().and_then(|h| h.significant_bits)
    }

    /// As [`Frame::msb_bits`].
    #[must_use]
    pub fn msb_bits(&self) -> Option<u8> {
        self.header().and_then(|h| h.msb_bits)
    }

    /// The whole frame, widened (`None` until decoded).
    #[must_use]
    pub fn to_frame(&self) -> Option<Frame> {
        match &self.state {
            State::Empty => None,
            State::Encoded(h) => Some(h.widened(&self.bytes)),
            State::Decoded(f) => Some(f.clone()),
        }
    }

    /// Row `y`'s columns x0..x1 as the file's own big-endian bytes, when its samples are
    /// 16-bit big-endian and not yet decoded (16-bit PGM), for a pass that reads them in place
    /// (`ptc::pair::Be16`); `None` otherwise, or for a row outside the frame.
    pub(crate) fn be16_row(&self, y: usize, (x0, x1): (usize, usize)) -> Option<&[u8]> {
        let State::Encoded(h) = &self.state else {
            return None;
        };
        let Samples::Be16(start) = h.samples else {
            return None;
        };
        let row = start + y * h.width as usize * 2;
        self.bytes.get(row + 2 * x0..row + 2 * x1)
    }

    /// Columns `x0..x1` of row `y`: the decoded samples, or the file's widened into `buf`.
    /// Empty when out of the frame.
    pub(crate) fn row<'a>(
        &'a self,
        y: usize,
        (x0, x1): (usize, usize),
        buf: &'a mut Vec<u16>,
    ) -> &'a [u16] {
        match &self.state {
            State::Empty => &[],
            State::Decoded(f) => {
                let start = y * f.width as usize;
                f.pixels.get(start + x0..start + x1).unwrap_or_default()
            }
            State::Encoded(h) => {
                let per = h.samples.bytes_per_sample();
                let start = h.samples.start() + y * h.width as usize * per;
                let data = self
                    .bytes
                    .get(start + x0 * per..start + x1 * per)
                    .unwrap_or_default();
                widen_into(h.samples, data, buf);
                buf
            }
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)] // OK because a failing test should stop loudly
mod tests {
    use super::*;

    #[test]
    #[allow(clippy::indexing_slicing, clippy::cast_possible_truncation)] // test code
    fn widening_sixteen_bit_samples_matches_the_byte_order_functions() {
        // Every length from 0 to 21 samples (the eight-byte blocks and their remainders), each
        // sample checked against u16::from_be_bytes / from_le_bytes (std).
        for n in 0..22usize {
            let data: Vec<u8> = (0..2 * n).map(|i| (i * 37 + 11) as u8).collect();
            let mut be = vec![0u16; n];
            let mut le = vec![0u16; n];
            super::widen_16::<true>(&data, &mut be);
            super::widen_16::<false>(&data, &mut le);
            for k in 0..n {
                let pair = [data[2 * k], data[2 * k + 1]];
                assert_eq!(be[k], u16::from_be_bytes(pair), "n {n}, sample {k}");
                assert_eq!(le[k], u16::from_le_bytes(pair), "n {n}, sample {k}");
            }
        }
    }

    #[test]
    fn rows_and_frames_equal_the_decoded_frame() {
        // A 16-bit PGM, an 8-bit one and a raw file: every row, whole or cut, and the whole
        // frame, as decode() gives them; a failed decode leaves no frame.
        let mut pgm16 = b"P5 3 2 65535\n".to_vec();
        pgm16.extend([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12]);
        let pgm8 = b"P5 3 2 255\n\x01\x02\x03\x04\x05\x06".to_vec();
        let raw = vec![1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12];
        let g = RawGeometry {
            width: 3,
            height: 2,
            bits: 16,
        };
        for (bytes, geometry) in [(pgm16, None), (pgm8, None), (raw, Some(g))] {
            let want = super::super::decode(&bytes, geometry).unwrap();
            let mut f = FrameFile::default();
            *f.bytes_mut() = bytes;
            f.decode(geometry).unwrap();
            assert_eq!(f.to_frame().as_ref(), Some(&want));
            assert_eq!(
                (f.width(), f.height(), f.sample_bits()),
                (3, 2, want.sample_bits())
            );
            let mut buf = Vec::new();
            for y in 0..2 {
                for (x0, x1) in [(0, 3), (1, 3), (2, 2)] {
                    let row = want.pixels().get(y * 3 + x0..y * 3 + x1).unwrap();
                    assert_eq!(f.row(y, (x0, x1), &mut buf), row);
                }
            }
            f.bytes_mut().truncate(5);
            assert!(f.decode(geometry).is_err());
            assert!(!f.is_decoded() && f.to_frame().is_none());
        }
    }
}
