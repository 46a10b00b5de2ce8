//! A stack (frames taken under the same conditions) reduced to its statistics one frame at a time.
//!
//! Frames are consumed as they arrive: consecutive frames are paired for the temporal variance,
//! and for stacks of more than two frames a per-pixel integer sum is kept for the average frame.
//! Memory is bounded by one held frame plus, for L > 2, one `u32` per pixel; no stack holds all
//! its frames. This file fits nothing and knows nothing about other stacks.

use std::fmt;

use super::pair::{pair_sums, PairSums};
use crate::frames::Frame;

/// Most frames one stack may have: 2^16. Keeps the per-pixel sum below 2^16 · (2^16 − 1) < 2^32
/// (a `u32`) and the sum of its squares, times the pixel count, within `u128`.
pub const MAX_FRAMES_PER_STACK: u32 = 1 << 16;

/// Whether a stack was taken in the dark or under uniform light.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum FrameKind {
    /// Shutter closed or sensor covered.
    Dark,
    /// Uniform illumination (a flat field).
    Flat,
}

impl FrameKind {
    /// The name used in manifests and messages.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            FrameKind::Dark => "dark",
            FrameKind::Flat => "flat",
        }
    }
}

/// What all frames of one stack share.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StackSpec {
    /// Dark or flat.
    pub kind: FrameKind,
    /// Exposure (integration) time of each frame, in seconds.
    pub exposure_time_s: f64,
    /// A label for a light level at a fixed exposure, if the series has them.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub level: Option<String>,
    /// Mean photons per pixel per frame, when the user measured them.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub photons_per_pixel: Option<f64>,
    /// Number of frames the stack will receive (≥ 2).
    pub frames: u32,
}

/// A rectangular region of interest, in pixels from the top-left corner.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct Roi {
    /// First column.
    pub x: u32,
    /// First row.
    pub y: u32,
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
}

/// Why a stack cannot be accumulated.
#[derive(Debug, Clone, PartialEq, Eq)]
#[non_exhaustive]
pub enum StackError {
    /// Fewer than two or more than [`MAX_FRAMES_PER_STACK`] frames announced.
    FrameCount {
        /// The count announced.
        frames: u32,
    },
    /// The region of interest does not lie inside the frame, or is empty.
    RoiOutside {
        /// The region.
        roi: Roi,
        /// Frame width.
        width: u32,
        /// Frame height.
        height: u32,
    },
    /// A frame's size differs from the stack's.
    SizeMismatch {
        /// The stack's width × height.
        expected: (u32, u32),
        /// This frame's width × height.
        found: (u32, u32),
    },
    /// More frames pushed than announced.
    TooManyFrames {
        /// The count announced.
        frames: u32,
    },
    /// Fewer frames pushed than announced.
    MissingFrames {
        /// The count announced.
        expected: u32,
        /// The count pushed.
        got: u32,
    },
}

impl fmt::Display for StackError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            StackError::FrameCount { frames } => write!(
                f,
                "a stack needs from 2 to {MAX_FRAMES_PER_STACK} frames (two for the temporal \
                 variance of a pair), got {frames}"
            ),
            StackError::RoiOutside { roi, width, height } => write!(
                f,
                "region of interest x {}, y {}, width {}, height {} is empty or not inside the \
                 {width} × {height} frame",
                roi.x, roi.y, roi.width, roi.height
            ),
            StackError::SizeMismatch { expected, found } => write!(
                f,
                "frame is {} × {} pixels, the other frames are {} × {}",
                found.0, found.1, expected.0, expected.1
            ),
            StackError::TooManyFrames { frames } => {
                write!(f, "more frames than the {frames} announced for this stack")
            }
            StackError::MissingFrames { expected, got } => {
                write!(f, "stack received {got} frames, {expected} were announced")
            }
        }
    }
}

impl std::error::Error for StackError {}

/// A stack's statistics: everything the analysis needs, a few dozen numbers.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StackStats {
    /// The stack's conditions.
    pub spec: StackSpec,
    /// Frame width × height (whole frame, before the region of interest).
    pub frame_size: (u32, u32),
    /// Pixels analysed per frame (the region of interest).
    pub pixels: u64,
    /// Frame pairs used for the temporal variance (frames 1–2, 3–4, …).
    pub pairs: u32,
    /// Mean over all frames and pixels, μ_y, in DN.
    pub mean_dn: f64,
    /// Temporal variance σ_y², mean over the pairs, in DN².
    pub temporal_variance_dn2: f64,
    /// Spatial variance of the average frame before the temporal part is removed, in DN².
    pub spatial_variance_raw_dn2: f64,
    /// Spatial variance s_y² = raw − σ_y²/L, in DN² (may be negative when the fixed pattern is
    /// below the temporal noise left after averaging; the analysis reports that).
    pub spatial_variance_dn2: f64,
    /// The ADC resolution all frames stated (PGM maxval, raw bits), when they agree.
    pub significant_bits: Option<u8>,
}

/// Accumulates one stack's frames into [`StackStats`].
#[derive(Debug)]
pub struct StackAccumulator {
    spec: StackSpec,
    frame_size: Option<(u32, u32)>,
    roi: Option<Roi>,
    held: Option<Frame>,
    pushed: u32,
    pairs: u32,
    sum_all: u64,
    variance_sum_dn2: f64,
    last_pair: PairSums,
    pixel_sums: Option<Vec<u32>>,
    bits: Option<Option<u8>>,
}

impl StackAccumulator {
    /// Start a stack of `spec.frames` frames, analysed over `roi` (whole frame if `None`).
    ///
    /// # Errors
    /// [`StackError::FrameCount`] unless 2 ≤ frames ≤ [`MAX_FRAMES_PER_STACK`].
    pub fn new(spec: StackSpec, roi: Option<Roi>) -> Result<Self, StackError> {
        if spec.frames < 2 || spec.frames > MAX_FRAMES_PER_STACK {
            return Err(StackError::FrameCount {
                frames: spec.frames,
            });
        }
        Ok(StackAccumulator {
            spec,
            frame_size: None,
            roi,
            held: None,
            pushed: 0,
            pairs: 0,
            sum_all: 0,
            variance_sum_dn2: 0.0,
            last_pair: PairSums::default(),
            pixel_sums: None,
            bits: None,
        })
    }

    /// The stack's conditions.
    #[must_use]
    pub fn spec(&self) -> &StackSpec {
        &self.spec
    }

    /// Add the next frame. The frame is kept only until its pair partner arrives.
    ///
    /// # Errors
    /// A size that differs from the stack's first frame, a region of interest outside the frame,
    /// or more frames than announced.
    pub fn push(&mut self, frame: Frame) -> Result<(), StackError> {
        if self.pushed >= self.spec.frames {
            return Err(StackError::TooManyFrames {
                frames: self.spec.frames,
            });
        }
        let size = (frame.width(), frame.height());
        let roi = match self.frame_size {
            Some(expected) if expected != size => {
                return Err(StackError::SizeMismatch {
                    expected,
                    found: size,
                })
            }
            Some(_) => self.region(size),
            None => {
                let roi = self.region(size);
                check_roi(roi, size)?;
                self.frame_size = Some(size);
                roi
            }
        };
        self.pushed += 1;
        self.bits = Some(match self.bits {
            None => frame.significant_bits(),
            Some(b) if b == frame.significant_bits() => b,
            Some(_) => None,
        });
        if self.spec.frames > 2 {
            let sums = self
                .pixel_sums
                .get_or_insert_with(|| vec![0; (roi.width as usize) * (roi.height as usize)]);
            let mut sums_rows = sums.chunks_exact_mut(roi.width as usize);
            for row in rows(&frame, roi) {
                if let Some(acc) = sums_rows.next() {
                    for (s, v) in acc.iter_mut().zip(row) {
                        *s += u32::from(*v);
                    }
                }
            }
        }
        match self.held.take() {
            None => self.held = Some(frame),
            Some(first) => {
                let mut s = PairSums::default();
                for (ra, rb) in rows(&first, roi).zip(rows(&frame, roi)) {
                    s = s.merged(pair_sums(ra, rb));
                }
                self.sum_all += s.sum_a + s.sum_b;
                self.variance_sum_dn2 += s.temporal_variance_dn2().unwrap_or(0.0);
                self.pairs += 1;
                self.last_pair = s;
            }
        }
        Ok(())
    }

    /// Finish the stack: its statistics.
    ///
    /// # Errors
    /// [`StackError::MissingFrames`] when fewer frames were pushed than announced.
    pub fn finish(mut self) -> Result<StackStats, StackError> {
        let (Some(size), true) = (self.frame_size, self.pushed == self.spec.frames) else {
            return Err(StackError::MissingFrames {
                expected: self.spec.frames,
                got: self.pushed,
            });
        };
        let roi = self.region(size);
        let n = u64::from(roi.width) * u64::from(roi.height);
        if let Some(odd) = self.held.take() {
            self.sum_all += rows(&odd, roi)
                .map(|r| r.iter().map(|v| u64::from(*v)).sum::<u64>())
                .sum::<u64>();
        }
        let frames = f64::from(self.spec.frames);
        let pairs = f64::from(self.pairs.max(1));
        let temporal = self.variance_sum_dn2 / pairs;
        let raw = match &self.pixel_sums {
            Some(sums) => spatial_variance_of_sums(sums, self.spec.frames),
            None => self.last_pair.spatial_variance_of_mean_dn2().unwrap_or(0.0),
        };
        Ok(StackStats {
            mean_dn: self.sum_all as f64 / (frames * n as f64),
            temporal_variance_dn2: temporal,
            spatial_variance_raw_dn2: raw,
            spatial_variance_dn2: spatial_variance_corrected_dn2(raw, temporal, self.spec.frames),
            frame_size: size,
            pixels: n,
            pairs: self.pairs,
            significant_bits: self.bits.flatten(),
            spec: self.spec,
        })
    }

    fn region(&self, (width, height): (u32, u32)) -> Roi {
        self.roi.unwrap_or(Roi {
            x: 0,
            y: 0,
            width,
            height,
        })
    }
}

fn check_roi(roi: Roi, (width, height): (u32, u32)) -> Result<(), StackError> {
    let inside = |start: u32, len: u32, total: u32| {
        len > 0 && u64::from(start) + u64::from(len) <= u64::from(total)
    };
    if inside(roi.x, roi.width, width) && inside(roi.y, roi.height, height) {
        Ok(())
    } else {
        Err(StackError::RoiOutside { roi, width, height })
    }
}

/// The rows of a region of a frame, as slices (the region was checked to lie inside).
fn rows(frame: &Frame, roi: Roi) -> impl Iterator<Item = &[u16]> {
    let w = frame.width() as usize;
    let (x0, x1) = (roi.x as usize, roi.x as usize + roi.width as usize);
    frame
        .pixels()
        .chunks_exact(w.max(1))
        .skip(roi.y as usize)
        .take(roi.height as usize)
        .map(move |row| row.get(x0..x1).unwrap_or_default())
}

/// Spatial variance of the average of L frames from the per-pixel sums, before the temporal
/// part is removed, in DN².
///
/// # Formula
/// ```text
/// ⟨y⟩ = S / L per pixel;   s² = (n·ΣS² − (ΣS)²) / (n (n − 1) L²)
/// ```
/// Exact in integers: S < 2^32, ΣS < 2^60, n·ΣS² < 2^120 (n ≤ 2^28).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, spatial nonuniformity (REFERENCES.md §4 item 11, from memory).
fn spatial_variance_of_sums(sums: &[u32], frames: u32) -> f64 {
    let n = sums.len() as u128;
    if n < 2 {
        return 0.0;
    }
    let (mut s1, mut s2) = (0u128, 0u128);
    for &s in sums {
        let s = u64::from(s);
        s1 += u128::from(s);
        s2 += u128::from(s * s);
    }
    let num = (n * s2).saturating_sub(s1 * s1);
    let l = f64::from(frames);
    let n = n as f64;
    num as f64 / (n * (n - 1.0) * l * l)
}

/// Remove the temporal noise left in an average of L frames from its spatial variance.
///
/// # Formula
/// ```text
/// s_y² = s_meas² − σ_y² / L
/// ```
/// s_meas²: spatial variance of the averaged frame (DN²); σ_y²: temporal variance (DN²);
/// L: frames averaged.
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, spatial nonuniformity (REFERENCES.md §4 item 11, from memory).
/// ```
/// let s2 = engine::ptc::spatial_variance_corrected_dn2(1.0, 4.0, 16);
/// assert!((s2 - 0.75).abs() < 1e-15); // REFERENCES.md §4, temporal correction example
/// ```
#[must_use]
pub fn spatial_variance_corrected_dn2(spatial_raw_dn2: f64, temporal_dn2: f64, frames: u32) -> f64 {
    spatial_raw_dn2 - temporal_dn2 / f64::from(frames.max(1))
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)] // OK because a failing test should stop loudly
mod tests {
    use super::*;

    fn spec(frames: u32) -> StackSpec {
        StackSpec {
            kind: FrameKind::Flat,
            exposure_time_s: 0.01,
            level: None,
            photons_per_pixel: None,
            frames,
        }
    }

    fn frame(v: &[u16]) -> Frame {
        Frame::new(2, 2, 16, v.to_vec()).unwrap()
    }

    #[test]
    fn two_frame_stack_gives_the_toy_example() {
        // Source: REFERENCES.md §4 two-frame toy example: μ_y = 100.5, σ_y² = 1.125 DN².
        let mut acc = StackAccumulator::new(spec(2), None).unwrap();
        acc.push(frame(&[100, 102, 98, 101])).unwrap();
        acc.push(frame(&[101, 100, 99, 103])).unwrap();
        let s = acc.finish().unwrap();
        assert_eq!(s.mean_dn, 100.5);
        assert_eq!(s.temporal_variance_dn2, 1.125);
        // Average frame [100.5, 101, 98.5, 102]: sample variance 6.5/3 (by hand; Python's
        // statistics.variance computing the same gives 2.1666…), minus σ_y²/L = 1.125/2.
        assert!((s.spatial_variance_raw_dn2 - 6.5 / 3.0).abs() < 1e-12);
        assert!((s.spatial_variance_dn2 - (6.5 / 3.0 - 0.5625)).abs() < 1e-12);
    }

    #[test]
    fn longer_stacks_use_the_per_pixel_sum() {
        // Four frames: the pair-sum path and the per-pixel path must agree on the spatial part
        // when frames 3–4 repeat frames 1–2.
        let mut acc = StackAccumulator::new(spec(4), None).unwrap();
        for _ in 0..2 {
            acc.push(frame(&[100, 102, 98, 101])).unwrap();
            acc.push(frame(&[101, 100, 99, 103])).unwrap();
        }
        let s = acc.finish().unwrap();
        assert_eq!(s.pairs, 2);
        assert_eq!(s.temporal_variance_dn2, 1.125);
        assert!((s.spatial_variance_raw_dn2 - 6.5 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn roi_and_errors() {
        let roi = Roi {
            x: 1,
            y: 0,
            width: 1,
            height: 2,
        };
        let mut acc = StackAccumulator::new(spec(2), Some(roi)).unwrap();
        acc.push(frame(&[0, 10, 0, 20])).unwrap();
        acc.push(frame(&[0, 12, 0, 20])).unwrap();
        let s = acc.finish().unwrap();
        assert_eq!((s.pixels, s.mean_dn), (2, 15.5));
        // d = [−2, 0]: (2·4 − 4)/(2·4) = 0.5
        assert_eq!(s.temporal_variance_dn2, 0.5);

        assert!(StackAccumulator::new(spec(1), None).is_err());
        let far = Roi { x: 2, ..roi };
        let mut acc = StackAccumulator::new(spec(2), Some(far)).unwrap();
        assert!(matches!(
            acc.push(frame(&[0; 4])),
            Err(StackError::RoiOutside { .. })
        ));
        let mut acc = StackAccumulator::new(spec(2), None).unwrap();
        acc.push(frame(&[0; 4])).unwrap();
        let other = Frame::new(4, 1, 16, vec![0; 4]).unwrap();
        assert!(matches!(
            acc.push(other),
            Err(StackError::SizeMismatch { .. })
        ));
        assert!(matches!(
            acc.finish(),
            Err(StackError::MissingFrames { .. })
        ));
    }
}
