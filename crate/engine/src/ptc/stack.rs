//! A stack (frames taken under the same conditions) reduced to its statistics one frame at a time.
//!
//! Frames are consumed as they arrive: consecutive frames are paired for the temporal variance,
//! and a per-pixel integer sum is kept for the averaged frame (and, for dark stacks, a per-pixel
//! sum of squared pair differences for the high-noise pixels). Every figure is kept per 2×2
//! phase too, so that a colour sensor's channels come out of the same pass. Memory is bounded
//! by one held frame plus one `u32` per pixel (two for a dark stack), whatever the number of
//! frames; no stack holds all its frames. This file fits nothing and knows nothing about other
//! stacks.

use std::fmt;

use super::cfa::Cfa;
use super::pair::{pairs_pass, Be16, PairSums};
use super::region::{region_sums, summarise_groups, Group, Region};
use super::spatial::SpatialSummary;
use crate::frames::{Frame, FrameFile};

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

/// One group of pixels of a stack (a 2×2 phase, a diagonal pair of phases, or all of them).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct GroupStats {
    /// Pixels per frame in the group.
    pub pixels: u64,
    /// μ_y, DN.
    pub mean_dn: f64,
    /// σ_y², mean over the pairs, DN².
    pub temporal_variance_dn2: f64,
    /// Spatial variance of the averaged frame before the temporal part is removed, DN².
    pub spatial_variance_raw_dn2: f64,
    /// s_y² = raw − σ_y²/L, DN².
    pub spatial_variance_dn2: f64,
}

/// What the samples of a stack say about their bit depth.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
pub struct SampleInfo {
    /// Bits per sample of the container (8 or 16; the largest of the stack's frames).
    pub container_bits: u8,
    /// Bitwise OR of every sample analysed: its trailing zeros are the sample step's exponent.
    pub or: u16,
    /// Largest sample analysed.
    pub max: u16,
    /// Significant bits stated by every frame as MSB-aligned data (PNG sBIT), when they agree.
    pub msb_bits: Option<u8>,
}

/// A stack's statistics: everything the analysis needs, a few dozen numbers plus, per
/// channel, the spatial summary of the averaged frame (profiles, spectrograms, histograms).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StackStats {
    /// The stack's conditions.
    pub spec: StackSpec,
    /// Frame width × height (whole frame, before the region of interest).
    pub frame_size: (u32, u32),
    /// Pixels analysed per frame (the region of interest, or one channel of it).
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
    /// The ADC resolution all frames stated as LSB-aligned data (PGM maxval 2^b − 1 below the
    /// container's, raw bits below 16), when they agree.
    pub significant_bits: Option<u8>,
    /// What the samples say about their bit depth.
    #[serde(skip)]
    pub samples: SampleInfo,
    /// The 2×2 phases (see [`Cfa`]), then the diagonals 0+3 and 1+2.
    #[serde(skip)]
    pub groups: Vec<GroupStats>,
    /// The spatial summary of these pixels: the whole region for a mono layout, one channel
    /// after [`StackStats::channel`].
    #[serde(skip)]
    pub spatial: Option<SpatialSummary>,
    /// The spatial summary of each phase, for a Bayer layout.
    #[serde(skip)]
    pub phase_spatial: Vec<SpatialSummary>,
}

impl StackStats {
    /// The same stack seen as one group of its pixels: a phase 0–3, or a diagonal 4 (phases
    /// 0 and 3) or 5 (1 and 2). `None` for a group that was not kept.
    #[must_use]
    pub fn group(&self, g: usize) -> Option<StackStats> {
        let gs = self.groups.get(g)?;
        Some(StackStats {
            pixels: gs.pixels,
            mean_dn: gs.mean_dn,
            temporal_variance_dn2: gs.temporal_variance_dn2,
            spatial_variance_raw_dn2: gs.spatial_variance_raw_dn2,
            spatial_variance_dn2: gs.spatial_variance_dn2,
            spatial: self.phase_spatial.get(g).cloned(),
            groups: Vec::new(),
            phase_spatial: Vec::new(),
            ..self.clone()
        })
    }

    /// The same statistics in units `step` times larger (container DN → the camera's DN).
    #[must_use]
    pub fn scaled(&self, step: f64) -> StackStats {
        let s2 = step * step;
        let g = |x: &GroupStats| GroupStats {
            pixels: x.pixels,
            mean_dn: x.mean_dn / step,
            temporal_variance_dn2: x.temporal_variance_dn2 / s2,
            spatial_variance_raw_dn2: x.spatial_variance_raw_dn2 / s2,
            spatial_variance_dn2: x.spatial_variance_dn2 / s2,
        };
        StackStats {
            mean_dn: self.mean_dn / step,
            temporal_variance_dn2: self.temporal_variance_dn2 / s2,
            spatial_variance_raw_dn2: self.spatial_variance_raw_dn2 / s2,
            spatial_variance_dn2: self.spatial_variance_dn2 / s2,
            groups: self.groups.iter().map(g).collect(),
            spatial: self.spatial.as_ref().map(|x| x.scaled(step)),
            phase_spatial: self.phase_spatial.iter().map(|x| x.scaled(step)).collect(),
            ..self.clone()
        }
    }
}

/// What summing a run of rows gives: each pair's sums by 2×2 phase, the samples' OR and their
/// maximum.
type RowsSum = ([[PairSums; 4]; 2], u16, u16);

/// One pass of a stack accumulator over the rows of its pending frames (a pair or two).
#[derive(Clone, Copy)]
struct RowsPass<'a> {
    pending: &'a [FrameFile],
    /// The region's columns x0..x1.
    columns: (usize, usize),
    /// The region's first column's parity.
    odd_x: usize,
    /// Write the per-pixel sums instead of adding to them.
    first: bool,
    /// Read the rows as the files' big-endian bytes ([`Be16`]).
    in_place: bool,
}

impl RowsPass<'_> {
    /// Rows `ys`, whose per-pixel sums are `sums` and `dsq` (`w` a row; `dsq` empty for a
    /// flat stack). Natively with the `threads` feature the rows are split between two
    /// threads ([`super::threads::on_two`]), which write disjoint rows and whose integer sums
    /// add in any order, so the result is the same as in one thread. In wasm, without the
    /// feature, or when the thread cannot start (no sum touched), one thread.
    fn run_split(
        self,
        ys: std::ops::Range<usize>,
        w: usize,
        sums: &mut [u32],
        dsq: &mut [u32],
        rows: &mut [Vec<u16>; 4],
    ) -> RowsSum {
        #[cfg(all(feature = "threads", not(target_arch = "wasm32")))]
        if ys.len() >= 2 && w > 0 {
            let mid = ys.start + ys.len() / 2;
            let cut = (mid - ys.start) * w;
            let (s1, s2) = sums.split_at_mut(cut.min(sums.len()));
            let (d1, d2) = dsq.split_at_mut(cut.min(dsq.len()));
            let (upper, lower) = (ys.start..mid, mid..ys.end);
            if let Some((a, b)) = super::threads::on_two(
                || self.run(upper, w, s1, d1, rows),
                move || self.run(lower, w, s2, d2, &mut Default::default()),
            ) {
                return merge_rows_sums(a, b);
            }
        }
        self.run(ys, w, sums, dsq, rows)
    }

    /// [`RowsPass::run_split`] in this thread; `rows` are the buffers of widened rows.
    fn run(
        self,
        ys: std::ops::Range<usize>,
        w: usize,
        sums: &mut [u32],
        dsq: &mut [u32],
        rows: &mut [Vec<u16>; 4],
    ) -> RowsSum {
        let mut phases = [[PairSums::default(); 4]; 2];
        let (mut or, mut max) = (0u16, 0u16);
        let [ba, bb, bc, bd] = rows;
        let mut sums_rows = sums.chunks_exact_mut(w.max(1));
        let mut dsq_rows = dsq.chunks_exact_mut(w.max(1));
        let (pending, columns) = (self.pending, self.columns);
        for y in ys {
            let Some(s) = sums_rows.next() else { break };
            let d = dsq_rows.next().unwrap_or_default();
            let (Some(fa), Some(fb)) = (pending.first(), pending.get(1)) else {
                break;
            };
            let (fc, fd) = (pending.get(2), pending.get(3));
            let passes = if self.in_place {
                fn raw(f: &FrameFile, y: usize, columns: (usize, usize)) -> Be16<'_> {
                    Be16(f.be16_row(y, columns).unwrap_or_default())
                }
                let raw = |f| raw(f, y, columns);
                let cd = fc.zip(fd).map(|(fc, fd)| (raw(fc), raw(fd)));
                pairs_pass(raw(fa), raw(fb), cd, s, d, self.first)
            } else {
                let (ra, rb) = (fa.row(y, columns, ba), fb.row(y, columns, bb));
                let cd = fc
                    .zip(fd)
                    .map(|(fc, fd)| (fc.row(y, columns, bc), fd.row(y, columns, bd)));
                pairs_pass(ra, rb, cd, s, d, self.first)
            };
            let py = (y % 2) * 2;
            for (pass, slots) in passes.iter().zip(phases.iter_mut()) {
                for (parity, p) in pass.parity.iter().enumerate() {
                    if let Some(slot) = slots.get_mut(py + (parity + self.odd_x) % 2) {
                        *slot = slot.merged(*p);
                    }
                }
                or |= pass.or;
                max = max.max(pass.max);
            }
        }
        (phases, or, max)
    }
}

/// Two runs of rows' sums together.
#[cfg(all(feature = "threads", not(target_arch = "wasm32")))]
fn merge_rows_sums(a: RowsSum, b: RowsSum) -> RowsSum {
    let (mut phases, or, max) = a;
    for (mine, theirs) in phases.iter_mut().zip(b.0) {
        for (m, t) in mine.iter_mut().zip(theirs) {
            *m = m.merged(t);
        }
    }
    (phases, or | b.1, max.max(b.2))
}

/// The memory of a stack accumulator (its per-pixel sums and its frame buffers), handed from
/// one stack to the next ([`StackAccumulator::with_buffers`],
/// [`StackAccumulator::finish_with_buffers`]) so that a series of stacks allocates it once.
/// Holds no figure: a new stack overwrites it.
#[derive(Debug, Default)]
pub struct StackBuffers {
    sums: Vec<u32>,
    dsq: Vec<u32>,
    spares: Vec<FrameFile>,
}

/// Most frames an accumulator holds: two pairs are summed in one pass, so a pair waits for
/// the next (three frames held, the fourth arriving).
const HELD_FRAMES: usize = 3;

/// How many frames an accumulator sums in one pass over its per-pixel sums (two pairs): the
/// work of a stack comes in bursts at every such frame, so a reader that wants its reading to
/// overlap the summing reads this many files ahead.
pub const FRAMES_SUMMED_AT_ONCE: usize = HELD_FRAMES + 1;

/// Accumulates one stack's frames into [`StackStats`].
#[derive(Debug)]
pub struct StackAccumulator {
    spec: StackSpec,
    cfa: Cfa,
    frame_size: Option<(u32, u32)>,
    roi: Option<Roi>,
    /// Frames received and not yet summed: at most [`HELD_FRAMES`].
    pending: Vec<FrameFile>,
    /// Frame buffers to give the caller in exchange for its frames.
    spares: Vec<FrameFile>,
    /// One row of each pending frame, widened.
    rows: [Vec<u16>; 4],
    pushed: u32,
    pairs: u32,
    /// Σ over pairs of each group's pair variance: phases 0–3, diagonals 0+3 and 1+2, all.
    variance_sums_dn2: [f64; 7],
    pixel_sums: Vec<u32>,
    pixel_dsq: Vec<u32>,
    or: u16,
    max: u16,
    container_bits: u8,
    bits: Option<Option<u8>>,
    msb_bits: Option<Option<u8>>,
    /// Whether the spatial summaries (histograms, profiles, spectrograms) are made.
    summaries: bool,
}

impl StackAccumulator {
    /// Start a stack of `spec.frames` frames of a mono sensor, analysed over `roi` (whole
    /// frame if `None`).
    ///
    /// # Errors
    /// [`StackError::FrameCount`] unless 2 ≤ frames ≤ [`MAX_FRAMES_PER_STACK`].
    pub fn new(spec: StackSpec, roi: Option<Roi>) -> Result<Self, StackError> {
        Self::with_cfa(spec, roi, Cfa::Mono)
    }

    /// As [`StackAccumulator::new`], for a sensor with the colour filter layout `cfa`: the
    /// spatial summaries are then made per channel instead of for the whole region.
    ///
    /// # Errors
    /// [`StackError::FrameCount`] unless 2 ≤ frames ≤ [`MAX_FRAMES_PER_STACK`].
    pub fn with_cfa(spec: StackSpec, roi: Option<Roi>, cfa: Cfa) -> Result<Self, StackError> {
        Self::with_buffers(spec, roi, cfa, StackBuffers::default())
    }

    /// As [`StackAccumulator::with_cfa`], in the memory of an earlier stack (see
    /// [`StackBuffers`]).
    ///
    /// # Errors
    /// [`StackError::FrameCount`] unless 2 ≤ frames ≤ [`MAX_FRAMES_PER_STACK`].
    pub fn with_buffers(
        spec: StackSpec,
        roi: Option<Roi>,
        cfa: Cfa,
        buffers: StackBuffers,
    ) -> Result<Self, StackError> {
        if spec.frames < 2 || spec.frames > MAX_FRAMES_PER_STACK {
            return Err(StackError::FrameCount {
                frames: spec.frames,
            });
        }
        Ok(StackAccumulator {
            spec,
            cfa,
            frame_size: None,
            roi,
            pending: Vec::with_capacity(HELD_FRAMES + 1),
            spares: buffers.spares,
            rows: Default::default(),
            pushed: 0,
            pairs: 0,
            variance_sums_dn2: [0.0; 7],
            pixel_sums: buffers.sums,
            pixel_dsq: buffers.dsq,
            or: 0,
            max: 0,
            container_bits: 0,
            bits: None,
            msb_bits: None,
            summaries: true,
        })
    }

    /// Leave out the spatial summaries (defect histograms, profiles, spectrograms: most of
    /// [`StackAccumulator::finish`]'s time): the stack's statistics then have no `spatial` and
    /// no `phase_spatial`, everything else the same. For stacks whose summaries will not be
    /// reported (the analysis uses one dark and one flat stack's, see [`crate::ptc::measure`]).
    #[must_use]
    pub fn without_summaries(mut self) -> Self {
        self.summaries = false;
        self
    }

    /// The stack's conditions.
    #[must_use]
    pub fn spec(&self) -> &StackSpec {
        &self.spec
    }

    /// Add the next frame. The frame is kept only until its pair partner arrives (and that
    /// pair until the next one, see [`StackAccumulator::push_file`]).
    ///
    /// # Errors
    /// A size that differs from the stack's first frame, a region of interest outside the frame,
    /// or more frames than announced.
    pub fn push(&mut self, frame: Frame) -> Result<(), StackError> {
        self.push_file(&mut FrameFile::from(frame))
    }

    /// Add the next frame as its file holds it, without taking its memory: the file is
    /// exchanged for a buffer of no particular content, into which the caller reads the next
    /// file ([`FrameFile::bytes_mut`]). Frames are summed two pairs at a time (one pass over the
    /// per-pixel sums for four frames), so at most three are held; a series is read with four
    /// frame buffers, whatever its length, and no fresh memory per frame.
    ///
    /// # Errors
    /// As [`StackAccumulator::push`]; on an error `file` is left as it was.
    pub fn push_file(&mut self, file: &mut FrameFile) -> Result<(), StackError> {
        if self.pushed >= self.spec.frames {
            return Err(StackError::TooManyFrames {
                frames: self.spec.frames,
            });
        }
        let size = (file.width(), file.height());
        match self.frame_size {
            Some(expected) if expected != size => {
                return Err(StackError::SizeMismatch {
                    expected,
                    found: size,
                })
            }
            Some(_) => {}
            None => {
                let roi = self.region(size);
                check_roi(roi, size)?;
                self.frame_size = Some(size);
                // The first pass writes the per-pixel sums: a buffer of the right length is
                // reused as it is, without zeroing.
                let n = (roi.width as usize) * (roi.height as usize);
                if self.pixel_sums.len() != n {
                    self.pixel_sums.clear();
                    self.pixel_sums.resize(n, 0);
                }
                if self.spec.kind == FrameKind::Dark && self.pixel_dsq.len() != n {
                    self.pixel_dsq.clear();
                    self.pixel_dsq.resize(n, 0);
                }
            }
        }
        self.pushed += 1;
        self.container_bits = self.container_bits.max(file.sample_bits());
        self.bits = Some(match self.bits {
            None => file.significant_bits(),
            Some(b) if b == file.significant_bits() => b,
            Some(_) => None,
        });
        self.msb_bits = Some(match self.msb_bits {
            None => file.msb_bits(),
            Some(b) if b == file.msb_bits() => b,
            Some(_) => None,
        });
        let spare = self.spares.pop().unwrap_or_default();
        self.pending.push(std::mem::replace(file, spare));
        let remaining = self.spec.frames - self.pushed;
        match self.pending.len() {
            // A pair waits for the next pair when two more frames are coming.
            2 if remaining < 2 => self.sum_pending(),
            4 => self.sum_pending(),
            _ => {}
        }
        Ok(())
    }

    /// The per-pixel data of this stack: S, and D for a dark stack (else empty).
    fn dsq_mut(&mut self) -> (&mut [u32], &mut [u32]) {
        let dark = self.spec.kind == FrameKind::Dark;
        let dsq: &mut [u32] = if dark { &mut self.pixel_dsq } else { &mut [] };
        (&mut self.pixel_sums, dsq)
    }

    /// Sum the pending pair or pairs in one pass over the region's rows.
    fn sum_pending(&mut self) {
        let Some(size) = self.frame_size else { return };
        let roi = self.region(size);
        let pending = std::mem::take(&mut self.pending);
        let mut rows = std::mem::take(&mut self.rows);
        let first = self.pairs == 0;
        let (w, x0) = (roi.width as usize, roi.x as usize);
        let ys = roi.y as usize..(roi.y + roi.height) as usize;
        let pass = RowsPass {
            pending: &pending,
            columns: (x0, x0 + w),
            odd_x: (roi.x % 2) as usize,
            first,
            // 16-bit PGM frames are read in place natively, the others widened a row at a
            // time, and in wasm all of them (measured: in place compiled to a slower loop
            // there, the worker's analysis in node 1.3× as long, where natively it took 0.88×
            // as long).
            in_place: cfg!(not(target_arch = "wasm32"))
                && pending
                    .iter()
                    .all(|f| f.be16_row(roi.y as usize, (x0, x0 + w)).is_some()),
        };
        let (sums, dsq) = self.dsq_mut();
        let (phases, or, max) = pass.run_split(ys, w, sums, dsq, &mut rows);
        self.or |= or;
        self.max = self.max.max(max);
        let pairs = pending.len() / 2;
        for slots in phases.iter().take(pairs) {
            for (sum, group) in self.variance_sums_dn2.iter_mut().zip(group_sums(slots)) {
                *sum += group.temporal_variance_dn2().unwrap_or(0.0);
            }
            self.pairs += 1;
        }
        self.rows = rows;
        self.spares.extend(pending);
    }

    /// Finish the stack: its statistics.
    ///
    /// # Errors
    /// [`StackError::MissingFrames`] when fewer frames were pushed than announced.
    pub fn finish(self) -> Result<StackStats, StackError> {
        self.finish_with_buffers().0
    }

    /// As [`StackAccumulator::finish`], handing back the accumulator's memory for the next
    /// stack ([`StackAccumulator::with_buffers`]).
    pub fn finish_with_buffers(mut self) -> (Result<StackStats, StackError>, StackBuffers) {
        let stats = self.statistics();
        let mut spares = std::mem::take(&mut self.spares);
        spares.append(&mut self.pending);
        let buffers = StackBuffers {
            sums: std::mem::take(&mut self.pixel_sums),
            dsq: std::mem::take(&mut self.pixel_dsq),
            spares,
        };
        (stats, buffers)
    }

    fn statistics(&mut self) -> Result<StackStats, StackError> {
        let (Some(size), true) = (self.frame_size, self.pushed == self.spec.frames) else {
            return Err(StackError::MissingFrames {
                expected: self.spec.frames,
                got: self.pushed,
            });
        };
        let roi = self.region(size);
        let w = roi.width as usize;
        let h = roi.height as usize;
        // An odd frame out (L odd) adds to the sums only.
        if let Some(odd) = self.pending.pop() {
            let mut buf = Vec::new();
            let columns = (roi.x as usize, roi.x as usize + w);
            for (r, sums) in self.pixel_sums.chunks_exact_mut(w.max(1)).enumerate() {
                let row = odd.row(roi.y as usize + r, columns, &mut buf);
                for (s, v) in sums.iter_mut().zip(row) {
                    *s = s.wrapping_add(u32::from(*v));
                    self.or |= *v;
                    self.max = self.max.max(*v);
                }
            }
            self.spares.push(odd);
        }
        let frames = self.spec.frames;
        let l = f64::from(frames);
        let pairs = f64::from(self.pairs.max(1));
        // Exact integer moments of the per-pixel sums, per phase: n, ΣS, ΣS² (S < 2^32,
        // ΣS² < 2^92 for n ≤ 2^28), from one pass that also gives the spatial summaries'
        // profiles. Every S is at most L times the largest sample.
        let dark = self.spec.kind == FrameKind::Dark;
        let region = Region {
            sums: &self.pixel_sums,
            dsq: if dark { &self.pixel_dsq } else { &[] },
            width: w,
            height: h,
        };
        let region_moments = region_sums(region, u64::from(self.max) * u64::from(frames));
        let mut moments = [(0u64, 0u128, 0u128); 4];
        for (i, m) in region_moments.moments.iter().enumerate() {
            // Region parity (row, column) → the frame's 2×2 phase.
            let phase = ((roi.y as usize + i / 2) % 2) * 2 + (roi.x as usize + i % 2) % 2;
            if let Some(slot) = moments.get_mut(phase) {
                *slot = (m.n, m.s1, m.s2);
            }
        }
        let merge = |idx: &[usize]| {
            idx.iter()
                .filter_map(|i| moments.get(*i))
                .fold((0u64, 0u128, 0u128), |a, m| {
                    (a.0 + m.0, a.1 + m.1, a.2 + m.2)
                })
        };
        let group_moments = [
            merge(&[0]),
            merge(&[1]),
            merge(&[2]),
            merge(&[3]),
            merge(&[0, 3]),
            merge(&[1, 2]),
            merge(&[0, 1, 2, 3]),
        ];
        let groups: Vec<GroupStats> = group_moments
            .iter()
            .zip(self.variance_sums_dn2)
            .map(|(&(n, s1, s2), vsum)| {
                let temporal = vsum / pairs;
                let raw = spatial_variance_of_moments(n, s1, s2, frames);
                GroupStats {
                    pixels: n,
                    mean_dn: if n > 0 {
                        s1 as f64 / (n as f64 * l)
                    } else {
                        0.0
                    },
                    temporal_variance_dn2: temporal,
                    spatial_variance_raw_dn2: raw,
                    spatial_variance_dn2: spatial_variance_corrected_dn2(raw, temporal, frames),
                }
            })
            .collect();
        let whole = groups.get(6).cloned().unwrap_or(GroupStats {
            pixels: 0,
            mean_dn: 0.0,
            temporal_variance_dn2: 0.0,
            spatial_variance_raw_dn2: 0.0,
            spatial_variance_dn2: 0.0,
        });
        let mut spatial = None;
        let mut phase_spatial = Vec::new();
        if !self.summaries {
            // Left out on request.
        } else if self.cfa.is_bayer() {
            let phases: Vec<Group> = (0..4usize)
                .map(|phase| Group {
                    // The phase's first pixel inside the region, in region coordinates.
                    x0: ((phase % 2) + roi.x as usize) % 2,
                    y0: ((phase / 2) + roi.y as usize) % 2,
                    step: 2,
                    temporal_variance_dn2: groups
                        .get(phase)
                        .map_or(0.0, |g| g.temporal_variance_dn2),
                })
                .filter(|g| w > g.x0 && h > g.y0)
                .collect();
            if phases.len() == 4 {
                phase_spatial =
                    summarise_groups(region, &region_moments, &phases, frames, self.pairs);
            }
        } else {
            let whole_region = Group {
                x0: 0,
                y0: 0,
                step: 1,
                temporal_variance_dn2: whole.temporal_variance_dn2,
            };
            spatial =
                summarise_groups(region, &region_moments, &[whole_region], frames, self.pairs)
                    .pop();
        }
        Ok(StackStats {
            mean_dn: whole.mean_dn,
            temporal_variance_dn2: whole.temporal_variance_dn2,
            spatial_variance_raw_dn2: whole.spatial_variance_raw_dn2,
            spatial_variance_dn2: whole.spatial_variance_dn2,
            frame_size: size,
            pixels: whole.pixels,
            pairs: self.pairs,
            significant_bits: self.bits.flatten(),
            samples: SampleInfo {
                container_bits: self.container_bits,
                or: self.or,
                max: self.max,
                msb_bits: self.msb_bits.flatten(),
            },
            groups,
            spatial,
            phase_spatial,
            spec: self.spec.clone(),
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

/// The pair sums of each group from those of the four phases: phases 0–3, the diagonals 0+3
/// and 1+2, all four.
fn group_sums(p: &[PairSums; 4]) -> [PairSums; 7] {
    let [a, b, c, d] = *p;
    [
        a,
        b,
        c,
        d,
        a.merged(d),
        b.merged(c),
        a.merged(b).merged(c.merged(d)),
    ]
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

/// Spatial variance of the average of L frames from the moments of the per-pixel sums, before
/// the temporal part is removed, in DN².
///
/// # Formula
/// ```text
/// ⟨y⟩ = S / L per pixel;   s² = (n·ΣS² − (ΣS)²) / (n (n − 1) L²)
/// ```
/// Exact in integers: S < 2^32, ΣS < 2^60, n·ΣS² < 2^120 (n ≤ 2^28).
///
/// # Source
/// EMVA 1288 Release 4.0 Linear, spatial nonuniformity (REFERENCES.md §4 item 11, from memory).
fn spatial_variance_of_moments(n: u64, s1: u128, s2: u128, frames: u32) -> f64 {
    if n < 2 {
        return 0.0;
    }
    let nn = u128::from(n);
    let num = (nn * s2).saturating_sub(s1 * s1);
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
    fn rows_split_between_threads_sum_as_in_one_thread() {
        // Derived: the two halves write disjoint rows and their integer sums add in any order,
        // so splitting the rows between threads gives exactly the one-thread result, for one
        // pair or two, widened or in place, first pass or not, dark (dsq) or flat.
        let (w, h) = (37usize, 23usize);
        let samples = |k: u32| -> Vec<u16> {
            (0..(w * h) as u32)
                .map(|i| (i.wrapping_add(k * 7919).wrapping_mul(2_654_435_761) >> 17) as u16)
                .collect()
        };
        let pgm = |v: &[u16]| {
            let mut f = FrameFile::default();
            let b = f.bytes_mut();
            b.extend(format!("P5\n{w} {h}\n65535\n").bytes());
            b.extend(v.iter().flat_map(|x| x.to_be_bytes()));
            f.decode(None).unwrap();
            f
        };
        for in_place in [false, true] {
            let files: Vec<FrameFile> = (0..4)
                .map(|k| {
                    let v = samples(k);
                    if in_place {
                        pgm(&v)
                    } else {
                        FrameFile::from(Frame::new(w as u32, h as u32, 16, v).unwrap())
                    }
                })
                .collect();
            assert_eq!(files[0].be16_row(0, (0, w)).is_some(), in_place);
            for frames in [2, 4] {
                for first in [false, true] {
                    for dark in [false, true] {
                        let pass = RowsPass {
                            pending: &files[..frames],
                            columns: (3, 33),
                            odd_x: 1,
                            first,
                            in_place,
                        };
                        let n = 19 * 30;
                        let start: Vec<u32> = (0..n as u32).map(|i| i % 11).collect();
                        let (mut s1, mut s2) = (start.clone(), start.clone());
                        let (mut d1, mut d2) = if dark {
                            (start.clone(), start)
                        } else {
                            (Vec::new(), Vec::new())
                        };
                        let one = pass.run(2..21, 30, &mut s1, &mut d1, &mut Default::default());
                        let split =
                            pass.run_split(2..21, 30, &mut s2, &mut d2, &mut Default::default());
                        let case = format!(
                            "in place {in_place}, {frames} frames, first {first}, dark {dark}"
                        );
                        assert_eq!(one, split, "{case}");
                        assert_eq!(s1, s2, "{case}");
                        assert_eq!(d1, d2, "{case}");
                        assert!(one.0[0].iter().all(|p| p.pixels > 0), "{case}");
                    }
                }
            }
        }
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
    fn every_stack_length_gives_the_brute_force_figures() {
        // L = 2 … 19 frames of 13 × 7 (odd width: both parities end a row), so that one to four
        // pairs are summed per pass and an odd frame out is left: the mean, the temporal
        // variance (the mean of each pair's, by the separate pair_sums path, EMVA 1288's 1/(2NM)
        // form) and the spatial variance of the averaged frame (sample variance, n − 1) computed
        // here directly in f64. Frames: invented data from a fixed-seed generator.
        let (w, h) = (13u32, 7u32);
        let n = (w * h) as usize;
        let mut state = 0x2545_f491_4f6c_dd1du64;
        let mut sample = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            1000 + (state % 97) as u16
        };
        for l in 2..=19u32 {
            let frames: Vec<Vec<u16>> =
                (0..l).map(|_| (0..n).map(|_| sample()).collect()).collect();
            let mut acc = StackAccumulator::new(spec(l), None).unwrap();
            for f in &frames {
                acc.push(Frame::new(w, h, 16, f.clone()).unwrap()).unwrap();
            }
            let s = acc.finish().unwrap();
            let pairs = (l / 2) as usize;
            assert_eq!(s.pairs as usize, pairs, "L {l}");
            let temporal: f64 = (0..pairs)
                .map(|k| {
                    crate::ptc::pair_sums(&frames[2 * k], &frames[2 * k + 1])
                        .temporal_variance_dn2()
                        .unwrap()
                })
                .sum::<f64>()
                / pairs as f64;
            assert!(
                (s.temporal_variance_dn2 - temporal).abs() <= 1e-12 * temporal,
                "L {l}: {} vs {temporal}",
                s.temporal_variance_dn2
            );
            let means: Vec<f64> = (0..n)
                .map(|i| frames.iter().map(|f| f64::from(f[i])).sum::<f64>() / f64::from(l))
                .collect();
            let mean = means.iter().sum::<f64>() / n as f64;
            assert!((s.mean_dn - mean).abs() <= 1e-12 * mean, "L {l}");
            let raw = means.iter().map(|m| (m - mean).powi(2)).sum::<f64>() / (n as f64 - 1.0);
            assert!(
                (s.spatial_variance_raw_dn2 - raw).abs() <= 1e-9 * raw,
                "L {l}: {} vs {raw}",
                s.spatial_variance_raw_dn2
            );
        }
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
