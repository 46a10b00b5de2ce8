//! The spatial summaries of one stack's region in two passes over its per-pixel sums, every
//! group of pixels (the whole region, or each 2×2 phase) at once.
//!
//! Pass 1 reads each row once for the integer moments of each phase (n, ΣS, ΣS², least and
//! largest S), the row sums by column parity and the column sums by row parity; pass 2 reads
//! each row once more for the histograms, the defect counts, the high-noise class and the lines
//! the spectrograms transform, copied into small matrices. The figures are those of the direct
//! definitions in [`super::spatial`] exactly (the same integers, the same floating-point
//! operations in the same order; a test compares them bit for bit). Nothing here knows about
//! frames, pairs or the analysis.

use super::spatial::{
    sample_variance, spectrogram, split_variance, HighNoise, Histogram, SpatialSummary,
    DEFECT_SIGMAS, HIGH_NOISE_FACTOR, HIGH_NOISE_MIN_PAIRS, HISTOGRAM_BINS, SPECTROGRAM_MAX_LINES,
};

/// Pixels per step of pass 1: 16 lanes, lane j taking the columns ≡ j (mod 16) of a row, so
/// its column parity is j's.
const LANES: usize = 16;

/// A stack's region: per-pixel sums S of L frames, row by row, and (dark stacks) per-pixel
/// sums D of squared pair differences, or an empty slice.
#[derive(Clone, Copy)]
pub(crate) struct Region<'a> {
    /// S, `width × height` values.
    pub sums: &'a [u32],
    /// D, `width × height` values or none.
    pub dsq: &'a [u32],
    /// Columns.
    pub width: usize,
    /// Rows.
    pub height: usize,
}

/// Exact integer moments of the sums of one group of pixels.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Moments {
    /// Pixels.
    pub n: u64,
    /// ΣS.
    pub s1: u128,
    /// ΣS².
    pub s2: u128,
    /// Least S (`u32::MAX` for no pixels).
    pub lo: u32,
    /// Largest S.
    pub hi: u32,
    /// Largest D.
    pub dsq_hi: u32,
    /// Bitwise OR of every S and of every D: their trailing zeros give a power of two that
    /// divides them all, by which the histograms index their tables.
    pub or: u32,
    pub dsq_or: u32,
}

impl Default for Moments {
    fn default() -> Self {
        Moments {
            n: 0,
            s1: 0,
            s2: 0,
            lo: u32::MAX,
            hi: 0,
            dsq_hi: 0,
            or: 0,
            dsq_or: 0,
        }
    }
}

impl Moments {
    fn merged(self, o: Moments) -> Moments {
        Moments {
            n: self.n + o.n,
            s1: self.s1 + o.s1,
            s2: self.s2 + o.s2,
            lo: self.lo.min(o.lo),
            hi: self.hi.max(o.hi),
            dsq_hi: self.dsq_hi.max(o.dsq_hi),
            or: self.or | o.or,
            dsq_or: self.dsq_or | o.dsq_or,
        }
    }
}

/// What pass 1 gives: moments per region parity, row sums by column parity, column sums by
/// row parity.
pub(crate) struct RegionSums {
    /// Index (row parity)·2 + column parity, parities counted from the region's corner.
    pub moments: [Moments; 4],
    row_sums: Vec<[u64; 2]>,
    column_sums: [Vec<u64>; 2],
}

/// Pass 1. `max_sum` bounds every S (L times the largest sample): squares are summed exactly in
/// 64-bit lanes over as many pixels as that bound allows, then widened.
pub(crate) fn region_sums(region: Region<'_>, max_sum: u64) -> RegionSums {
    let w = region.width;
    let mut out = RegionSums {
        moments: [Moments::default(); 4],
        row_sums: Vec::with_capacity(region.height),
        column_sums: [vec![0; w], vec![0; w]],
    };
    // Each lane adds at most `per_lane` squares below (max_sum)² in a u64; max_sum < 2^32, so
    // per_lane ≥ 1.
    let square = u128::from(max_sum.max(1)).pow(2);
    let per_lane = usize::try_from(u128::from(u64::MAX) / square)
        .unwrap_or(usize::MAX)
        .max(1);
    let block = per_lane.saturating_mul(LANES).min(w.max(LANES)) / LANES * LANES;
    let block = block.max(LANES);
    let rows = region.sums.chunks_exact(w.max(1)).take(region.height);
    let mut dsq_rows = region.dsq.chunks_exact(w.max(1));
    for (r, row) in rows.enumerate() {
        let stats = row_moments(row, block);
        let dsq_hi = dsq_rows.next().map(row_max_or);
        let py = (r % 2) * 2;
        for parity in 0..2 {
            if let (Some(m), Some(s)) = (out.moments.get_mut(py + parity), stats.get(parity)) {
                let mut s = *s;
                if let Some((hi, or)) = dsq_hi {
                    s.dsq_hi = hi.get(parity).copied().unwrap_or(0);
                    s.dsq_or = or.get(parity).copied().unwrap_or(0);
                }
                *m = m.merged(s);
            }
        }
        out.row_sums.push([
            stats.first().map_or(0, |s| s.s1 as u64),
            stats.get(1).map_or(0, |s| s.s1 as u64),
        ]);
        if let Some(cols) = out.column_sums.get_mut(r % 2) {
            add_row(cols, row);
        }
    }
    out
}

/// Column sums += the row (widened), a loop the compiler vectorises.
fn add_row(columns: &mut [u64], row: &[u32]) {
    for (c, v) in columns.iter_mut().zip(row) {
        *c += u64::from(*v);
    }
}

/// The moments of one row by column parity (even, odd), `dsq_hi` left 0.
fn row_moments(row: &[u32], block: usize) -> [Moments; 2] {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor supports AVX2, checked just above; the function is the
            // portable loop compiled with that feature enabled and touches no memory otherwise.
            return unsafe { row_moments_avx2(row, block) };
        }
    }
    row_moments_portable(row, block)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn row_moments_avx2(row: &[u32], block: usize) -> [Moments; 2] {
    row_moments_portable(row, block)
}

#[inline(always)]
#[allow(clippy::indexing_slicing)] // OK because every index is j < LANES into arrays of LANES
fn row_moments_portable(row: &[u32], block: usize) -> [Moments; 2] {
    let mut out = [Moments::default(); 2];
    let full = row.len() - row.len() % LANES;
    let (body, tail) = row.split_at(full);
    for chunk in body.chunks(block.max(LANES)) {
        let mut s1 = [0u64; LANES];
        let mut s2 = [0u64; LANES];
        let mut lo = [u32::MAX; LANES];
        let mut hi = [0u32; LANES];
        let mut or = [0u32; LANES];
        for c in chunk.chunks_exact(LANES) {
            let Ok(c) = <&[u32; LANES]>::try_from(c) else {
                continue;
            };
            for j in 0..LANES {
                let v = c[j];
                s1[j] += u64::from(v);
                s2[j] += u64::from(v) * u64::from(v);
                lo[j] = lo[j].min(v);
                hi[j] = hi[j].max(v);
                or[j] |= v;
            }
        }
        for j in 0..LANES {
            let m = &mut out[j % 2];
            m.s1 += u128::from(s1[j]);
            m.s2 += u128::from(s2[j]);
            m.lo = m.lo.min(lo[j]);
            m.hi = m.hi.max(hi[j]);
            m.or |= or[j];
        }
    }
    for p in &mut out {
        p.n = (full / 2) as u64;
    }
    // The tail starts at an even offset (full is a multiple of 16).
    for (i, v) in tail.iter().enumerate() {
        let m = &mut out[i % 2];
        m.n += 1;
        m.s1 += u128::from(*v);
        m.s2 += u128::from(u64::from(*v) * u64::from(*v));
        m.lo = m.lo.min(*v);
        m.hi = m.hi.max(*v);
        m.or |= *v;
    }
    out
}

/// The largest value and the OR of a row's values, by column parity.
fn row_max_or(row: &[u32]) -> ([u32; 2], [u32; 2]) {
    let mut hi = [0u32; LANES];
    let mut or = [0u32; LANES];
    let mut chunks = row.chunks_exact(LANES);
    for c in &mut chunks {
        for ((m, o), v) in hi.iter_mut().zip(or.iter_mut()).zip(c) {
            *m = (*m).max(*v);
            *o |= *v;
        }
    }
    let (mut out_hi, mut out_or) = ([0u32; 2], [0u32; 2]);
    let tail = chunks.remainder().iter().enumerate();
    for (j, (m, o)) in hi
        .iter()
        .zip(&or)
        .enumerate()
        .chain(tail.map(|(i, v)| (i, (v, v))))
    {
        if let (Some(h), Some(r)) = (out_hi.get_mut(j % 2), out_or.get_mut(j % 2)) {
            *h = (*h).max(*m);
            *r |= *o;
        }
    }
    (out_hi, out_or)
}

/// One group of a region's pixels: all of them (`step` 1), or the 2×2 phase whose first pixel
/// is at column `x0`, row `y0` of the region (`step` 2); and the temporal variance of its
/// pixels.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Group {
    /// First column, region coordinates.
    pub x0: usize,
    /// First row.
    pub y0: usize,
    /// 1 (every pixel) or 2 (one phase).
    pub step: usize,
    /// σ²_y of the group's pixels, DN².
    pub temporal_variance_dn2: f64,
}

impl Group {
    fn columns(&self, w: usize) -> usize {
        w.saturating_sub(self.x0).div_ceil(self.step.max(1))
    }
    fn rows(&self, h: usize) -> usize {
        h.saturating_sub(self.y0).div_ceil(self.step.max(1))
    }
}

/// Most entries of a direct bin table (two bytes each: 128 KiB, within a core's L2 cache).
const DIRECT_TABLE_ENTRIES: u64 = 1 << 16;

/// Classes of a value besides its bin: at or above the upper cut-off (1), below the lower one
/// (2); both at once (3) cannot happen for the thresholds used, but would be counted right.
const CLASSES: usize = 4;

/// Histogram bins and tail classes in integers: bin(x) = ⌊x·B/R⌋ for x = v − lo in [0, R),
/// without a division per value. Every x is a multiple of 2^t (t: the trailing zeros of the OR
/// of the values, e.g. the 2^4 of 12-bit samples at the top of 16-bit files), so when R/2^t is
/// at most [`DIRECT_TABLE_ENTRIES`] a table of each multiple's bin and class gives both at once.
/// Else blocks of 2^s values with 2^s ≤ ⌊R/B⌋ hold at most one bin edge (edges are at least
/// ⌊R/B⌋ apart), so a table of each block's first bin and the edge inside it, if any, gives
/// the bin exactly (fewer than 2B + 1 blocks), and the class is two comparisons.
struct Binner {
    lo: u32,
    /// v ≥ `from` is class 1; v < `below_end` class 2.
    from: u64,
    below_end: u64,
    lookup: Lookup,
}

enum Lookup {
    /// Bin·[`CLASSES`] + class of x = i·2^shift at `table[i]`.
    Direct { shift: u32, table: Vec<u16> },
    /// Per block of 2^shift: its first value's bin, and the first x of the next bin (u64::MAX
    /// for none).
    Blocks { shift: u32, table: Vec<(u16, u64)> },
}

impl Binner {
    /// `or`: the OR of every value (lo included); `(from, below_end)`: the class cut-offs.
    fn new(lo: u32, range: u64, bins: u64, or: u32, (from, below_end): (u64, u64)) -> Binner {
        let bin_of = |x: u64| (u128::from(x) * u128::from(bins) / u128::from(range.max(1))) as u64;
        let class = |v: u64| usize::from(v >= from) + 2 * usize::from(v < below_end);
        let t = if or == 0 { 0 } else { or.trailing_zeros() };
        let multiples = ((range - 1) >> t) + 1;
        let lookup = if bins <= 256 && multiples <= DIRECT_TABLE_ENTRIES {
            let table = (0..multiples)
                .map(|i| {
                    let x = i << t;
                    let index = bin_of(x) as usize * CLASSES + class(u64::from(lo) + x);
                    u16::try_from(index).unwrap_or(u16::MAX)
                })
                .collect();
            Lookup::Direct { shift: t, table }
        } else {
            let q = range / bins.max(1);
            let shift = if q == 0 { 0 } else { 63 - q.leading_zeros() };
            let blocks = range.div_ceil(1u64 << shift);
            let table = (0..blocks)
                .map(|b| {
                    let first = b << shift;
                    let k = bin_of(first);
                    // First x of bin k + 1: ⌈(k + 1)·R/B⌉.
                    let next = (u128::from(k + 1) * u128::from(range)).div_ceil(u128::from(bins));
                    let last = (first + (1u64 << shift)).min(range);
                    let edge = u64::try_from(next)
                        .ok()
                        .filter(|e| *e < last && k + 1 < bins)
                        .unwrap_or(u64::MAX);
                    (u16::try_from(k).unwrap_or(u16::MAX), edge)
                })
                .collect();
            Lookup::Blocks { shift, table }
        };
        Binner {
            lo,
            from,
            below_end,
            lookup,
        }
    }

    /// Bin·[`CLASSES`] + class of one value (as [`Counter::add`] finds it; for the tests).
    #[cfg(test)]
    fn index(&self, v: u32) -> usize {
        let x = u64::from(v - self.lo.min(v));
        match &self.lookup {
            Lookup::Direct { shift, table } => table
                .get(usize::try_from(x >> shift).unwrap_or(usize::MAX))
                .map_or(usize::MAX, |b| usize::from(*b)),
            Lookup::Blocks { shift, table } => {
                match table.get(usize::try_from(x >> shift).unwrap_or(usize::MAX)) {
                    Some(&(k, edge)) => {
                        (usize::from(k) + usize::from(x >= edge)) * CLASSES
                            + usize::from(u64::from(v) >= self.from)
                            + 2 * usize::from(u64::from(v) < self.below_end)
                    }
                    None => usize::MAX,
                }
            }
        }
    }
}

/// The least v in [lo, hi] with `pred(v)` true, for a `pred` false then true along v (an upper
/// set); hi + 1 when none.
fn first_true(lo: u32, hi: u32, pred: impl Fn(u32) -> bool) -> u64 {
    let (mut a, mut b) = (u64::from(lo), u64::from(hi) + 1);
    while a < b {
        let m = a + (b - a) / 2;
        // OK because a ≤ m < b ≤ hi + 1, so m ≤ hi fits u32.
        #[allow(clippy::cast_possible_truncation)]
        if pred(m as u32) {
            b = m;
        } else {
            a = m + 1;
        }
    }
    a
}

/// A histogram being filled through a [`Binner`], in four interleaved copies (consecutive
/// values go to different copies, so that a run of values in one bin does not wait on its own
/// increments), each bin split by class: the counts of values at or above the upper cut-off
/// and below the lower one come out of the same increments.
struct Counter {
    binner: Binner,
    bins: usize,
    copies: Vec<u32>,
}

/// Interleaved copies of a histogram. Each counts at most one value in four of a group of at
/// most 2^28 pixels, so a `u32` cannot overflow.
const COPIES: usize = 4;

impl Counter {
    fn new(lo: u32, range: u64, bins: u64, or: u32, cuts: (u64, u64)) -> Counter {
        let n = usize::try_from(bins).unwrap_or(1);
        Counter {
            binner: Binner::new(lo, range, bins, or, cuts),
            bins: n,
            copies: vec![0; n * CLASSES * COPIES],
        }
    }

    /// Count every `step`-th value of `line` (the first included), `step` 1 or 2.
    fn add(&mut self, line: &[u32], step: usize) {
        if step == 2 {
            self.add_every::<2>(line);
        } else {
            self.add_every::<1>(line);
        }
    }

    /// Every `STEP`-th value: four at a time from a chunk of 4·`STEP`, one to each copy.
    /// (The chunks are visited by index in `for_chunks`: at opt-level "z" an iterator of
    /// chunks, enumerated over the four copies, stayed calls per value.)
    #[inline(always)]
    fn add_every<const STEP: usize>(&mut self, line: &[u32]) {
        let lo = self.binner.lo;
        let width = self.bins * CLASSES;
        let mut copies = self.copies.chunks_exact_mut(width.max(1));
        let (Some(c0), Some(c1), Some(c2), Some(c3)) =
            (copies.next(), copies.next(), copies.next(), copies.next())
        else {
            return;
        };
        let rest = line
            .get(line.len() - line.len() % (COPIES * STEP)..)
            .unwrap_or_default();
        match &self.binner.lookup {
            Lookup::Direct { shift, table } => {
                let (shift, table) = (*shift, table.as_slice());
                // Every value is at least lo (lo is the least of them).
                let one = |copy: &mut [u32], v: u32| {
                    let x = (v.wrapping_sub(lo) >> shift) as usize;
                    if let Some(index) = table.get(x) {
                        if let Some(c) = copy.get_mut(usize::from(*index)) {
                            *c += 1;
                        }
                    }
                };
                for_chunks::<STEP>(line, |[v0, v1, v2, v3]| {
                    one(c0, v0);
                    one(c1, v1);
                    one(c2, v2);
                    one(c3, v3);
                });
                for v in rest.iter().step_by(STEP) {
                    one(c0, *v);
                }
            }
            Lookup::Blocks { shift, table } => {
                let (shift, table) = (*shift, table.as_slice());
                let (from, end) = (self.binner.from, self.binner.below_end);
                let one = |copy: &mut [u32], v: u32| {
                    let x = u64::from(v.wrapping_sub(lo));
                    let block = usize::try_from(x >> shift).unwrap_or(usize::MAX);
                    if let Some(&(bin, edge)) = table.get(block) {
                        let index = (usize::from(bin) + usize::from(x >= edge)) * CLASSES
                            + usize::from(u64::from(v) >= from)
                            + 2 * usize::from(u64::from(v) < end);
                        if let Some(c) = copy.get_mut(index) {
                            *c += 1;
                        }
                    }
                };
                for_chunks::<STEP>(line, |[v0, v1, v2, v3]| {
                    one(c0, v0);
                    one(c1, v1);
                    one(c2, v2);
                    one(c3, v3);
                });
                for v in rest.iter().step_by(STEP) {
                    one(c0, *v);
                }
            }
        }
    }

    /// The histogram's counts, the count at or above the upper cut-off and the count below the
    /// lower one.
    fn counts(&self) -> (Vec<u64>, u64, u64) {
        let width = self.bins * CLASSES;
        let at = |b: usize, class: usize| -> u64 {
            (0..COPIES)
                .filter_map(|k| self.copies.get(k * width + b * CLASSES + class))
                .map(|c| u64::from(*c))
                .sum()
        };
        let counts = (0..self.bins)
            .map(|b| (0..CLASSES).map(|c| at(b, c)).sum())
            .collect();
        let above = (0..self.bins).map(|b| at(b, 1) + at(b, 3)).sum();
        let below = (0..self.bins).map(|b| at(b, 2) + at(b, 3)).sum();
        (counts, above, below)
    }
}

/// `f` on the values at offsets 0, `STEP`, 2·`STEP` and 3·`STEP` of each whole chunk of
/// 4·`STEP` values of `line`, in order (a shorter tail left out).
#[inline(always)]
fn for_chunks<const STEP: usize>(line: &[u32], mut f: impl FnMut([u32; COPIES])) {
    for c in 0..line.len() / (COPIES * STEP) {
        let at = |k: usize| line.get(c * COPIES * STEP + k * STEP).copied().unwrap_or(0);
        f([at(0), at(1), at(2), at(3)]);
    }
}

/// What pass 2 needs and gives for one group.
struct Tally {
    group: Group,
    rows: usize,
    columns: usize,
    /// Histogram of S; S ≥ `from` is above the defect threshold, S < `below_end` below minus
    /// it.
    values: Counter,
    /// Histogram of D; D ≥ `from` is a high-noise pixel.
    dsq: Option<Counter>,
    /// Rows (of the group) of the horizontal spectrogram, in order, and their first P values.
    h_rows: Vec<usize>,
    h_len: usize,
    h_next: usize,
    h_data: Vec<u32>,
    /// Columns of the vertical spectrogram and the first P values of each, row by row.
    v_columns: Vec<usize>,
    v_len: usize,
    v_data: Vec<u32>,
}

/// The largest power of two ≤ n (0 for n < 4: no spectrogram).
fn transform_length(n: usize) -> usize {
    if n < 4 {
        0
    } else {
        1usize << (usize::BITS - 1 - n.leading_zeros())
    }
}

/// The lines a spectrogram averages: ⌊k·lines/K⌋, K = min(lines, [`SPECTROGRAM_MAX_LINES`]).
fn picked(lines: usize) -> Vec<usize> {
    let k = lines.clamp(1, SPECTROGRAM_MAX_LINES);
    (0..lines.min(SPECTROGRAM_MAX_LINES))
        .map(|i| i * lines / k)
        .collect()
}

/// Pass 2 and the summaries of `groups` (all pixels, or phases), from pass 1's `sums`.
/// `frames` = L, `pairs` = frame pairs behind D.
///
/// Natively with the `threads` feature, two or more groups (a colour sensor's four phases) are
/// summarised on two threads, half the groups each ([`super::threads::on_two`]): a group's
/// summary depends on its own pixels only, so the result is the same as in one thread. In
/// wasm, without the feature, or when the thread cannot start, one thread. Measured: the
/// summaries were about 40 % of a 12 MP colour stack's analysis.
pub(crate) fn summarise_groups(
    region: Region<'_>,
    sums: &RegionSums,
    groups: &[Group],
    frames: u32,
    pairs: u32,
) -> Vec<SpatialSummary> {
    #[cfg(all(feature = "threads", not(target_arch = "wasm32")))]
    if groups.len() >= 2 {
        let (first, second) = groups.split_at(groups.len() / 2);
        if let Some((mut out, rest)) = super::threads::on_two(
            || summarise_some(region, sums, first, frames, pairs),
            || summarise_some(region, sums, second, frames, pairs),
        ) {
            out.extend(rest);
            return out;
        }
    }
    summarise_some(region, sums, groups, frames, pairs)
}

/// [`summarise_groups`] in this thread.
fn summarise_some(
    region: Region<'_>,
    sums: &RegionSums,
    groups: &[Group],
    frames: u32,
    pairs: u32,
) -> Vec<SpatialSummary> {
    let (w, h) = (region.width, region.height);
    let l = f64::from(frames.max(1));
    let with_dsq = !region.dsq.is_empty();
    // Per group: the parities it covers and its moments.
    let mut tallies: Vec<Tally> = Vec::with_capacity(groups.len());
    let mut heads = Vec::with_capacity(groups.len());
    for g in groups {
        let (rows, cols) = (g.rows(h), g.columns(w));
        let m = covered(g)
            .iter()
            .filter_map(|i| sums.moments.get(*i))
            .fold(Moments::default(), |a, b| a.merged(*b));
        let n = (rows * cols) as f64;
        let nn = (rows * cols) as u128;
        let variance_raw = if nn > 1 {
            (nn * m.s2).saturating_sub(m.s1 * m.s1) as f64 / (n * (n - 1.0) * l * l)
        } else {
            0.0
        };
        let mean = m.s1 as f64 / (n * l);
        let (lo, hi) = (m.lo, m.hi);
        let range = u64::from(hi.saturating_sub(lo)) + 1;
        let bins = HISTOGRAM_BINS.min(range);
        let threshold = DEFECT_SIGMAS * variance_raw.sqrt();
        let above_from = first_true(lo, hi, |v| f64::from(v) / l - mean > threshold);
        let below = |v: u32| f64::from(v) / l - mean < -threshold;
        let below_end = first_true(lo, hi, |v| !below(v));
        let dsq = with_dsq.then(|| {
            let denom = 2.0 * f64::from(pairs.max(1)) * g.temporal_variance_dn2;
            let range = u64::from(m.dsq_hi) + 1;
            let bins = HISTOGRAM_BINS.min(range);
            let limit = HIGH_NOISE_FACTOR * denom;
            let from = first_true(0, m.dsq_hi, |v| f64::from(v) > limit);
            Counter::new(0, range, bins, m.dsq_or, (from, 0))
        });
        let (h_len, v_len) = (transform_length(cols), transform_length(rows));
        let h_rows = if h_len > 0 { picked(rows) } else { Vec::new() };
        let v_columns = if v_len > 0 { picked(cols) } else { Vec::new() };
        tallies.push(Tally {
            group: *g,
            rows,
            columns: cols,
            values: Counter::new(lo, range, bins, m.or, (above_from, below_end)),
            dsq,
            h_data: Vec::with_capacity(h_rows.len() * h_len),
            h_rows,
            h_len,
            h_next: 0,
            v_data: Vec::with_capacity(v_columns.len() * v_len),
            v_columns,
            v_len,
        });
        heads.push((m, variance_raw, mean, threshold, range, bins));
    }

    // Pass 2: every row once, each group's pixels of it.
    let dsq_rows = region.dsq.chunks_exact(w.max(1));
    let mut dsq_rows = dsq_rows.map(Some).chain(std::iter::repeat(None));
    for (r, row) in region.sums.chunks_exact(w.max(1)).take(h).enumerate() {
        let drow = dsq_rows.next().flatten();
        for t in &mut tallies {
            let g = t.group;
            if r < g.y0 || (r - g.y0) % g.step != 0 {
                continue;
            }
            let rr = (r - g.y0) / g.step;
            let line = row.get(g.x0..).unwrap_or_default();
            t.values.add(line, g.step);
            if let (Some(counter), Some(d)) = (t.dsq.as_mut(), drow) {
                counter.add(d.get(g.x0..).unwrap_or_default(), g.step);
            }
            if t.h_rows.get(t.h_next) == Some(&rr) {
                t.h_data
                    .extend(line.iter().step_by(g.step).take(t.h_len).copied());
                t.h_next += 1;
            }
            if rr < t.v_len {
                t.v_data.extend(
                    t.v_columns
                        .iter()
                        .map(|c| line.get(c * g.step).copied().unwrap_or(0)),
                );
            }
        }
    }

    tallies
        .into_iter()
        .zip(heads)
        .map(|(t, (m, variance_raw, mean, threshold, range, bins))| {
            finish_group(
                t,
                sums,
                (w, h),
                (m, variance_raw, mean, threshold, range, bins),
                frames,
                pairs,
            )
        })
        .collect()
}

/// The region parities (index row parity·2 + column parity) a group covers.
fn covered(g: &Group) -> Vec<usize> {
    if g.step == 1 {
        vec![0, 1, 2, 3]
    } else {
        vec![(g.y0 % 2) * 2 + g.x0 % 2]
    }
}

#[allow(clippy::type_complexity)]
fn finish_group(
    t: Tally,
    sums: &RegionSums,
    (w, h): (usize, usize),
    (m, variance_raw, mean, threshold, range, bins): (Moments, f64, f64, f64, u64, u64),
    frames: u32,
    pairs: u32,
) -> SpatialSummary {
    let l = f64::from(frames.max(1));
    let g = t.group;
    let (rows, cols) = (t.rows, t.columns);
    // Profiles from the integer row and column sums.
    let row_sum = |r: usize| -> u64 {
        let y = g.y0 + r * g.step;
        sums.row_sums.get(y).map_or(0, |p| {
            if g.step == 1 {
                p[0] + p[1]
            } else {
                p.get(g.x0 % 2).copied().unwrap_or(0)
            }
        })
    };
    let column_sum = |c: usize| -> u64 {
        let x = g.x0 + c * g.step;
        let at = |parity: usize| {
            sums.column_sums
                .get(parity)
                .and_then(|v| v.get(x))
                .copied()
                .unwrap_or(0)
        };
        if g.step == 1 {
            at(0) + at(1)
        } else {
            at(g.y0 % 2)
        }
    };
    let _ = (w, h);
    let row_means: Vec<f64> = (0..rows)
        .map(|r| row_sum(r) as f64 / (cols as f64 * l))
        .collect();
    let column_means: Vec<f64> = (0..cols)
        .map(|c| column_sum(c) as f64 / (rows as f64 * l))
        .collect();
    let row_var = sample_variance(&row_means);
    let col_var = sample_variance(&column_means);
    let split = split_variance(
        variance_raw,
        row_var,
        col_var,
        rows,
        cols,
        g.temporal_variance_dn2,
        frames,
    );
    let horizontal = spectrogram(rows, cols, mean, l, 2, |k0, p, out| {
        let start = k0 * p;
        if let Some(src) = t.h_data.get(start..start + out.len()) {
            out.copy_from_slice(src);
        }
    });
    let kv = t.v_columns.len();
    // Row by row through the matrix (its rows are contiguous), each value to its line.
    let vertical = spectrogram(cols, rows, mean, l, 16, |k0, p, out| {
        let count = out.len() / p.max(1);
        for (r, values) in t.v_data.chunks_exact(kv.max(1)).take(p).enumerate() {
            for (k, v) in values.iter().skip(k0).take(count).enumerate() {
                if let Some(o) = out.get_mut(k * p + r) {
                    *o = *v;
                }
            }
        }
    });
    let (value_counts, above, below) = t.values.counts();
    let histogram = Histogram {
        first_edge: f64::from(m.lo) / l - mean,
        bin_width: range as f64 / (bins as f64 * l),
        counts: value_counts,
    };
    let high_noise = t.dsq.map(|d| {
        let (counts, count, _) = d.counts();
        let denom = 2.0 * f64::from(pairs.max(1)) * g.temporal_variance_dn2;
        let range = u64::from(m.dsq_hi) + 1;
        let bins = HISTOGRAM_BINS.min(range);
        let usable = pairs >= HIGH_NOISE_MIN_PAIRS && denom > 0.0;
        HighNoise {
            count: usable.then_some(count),
            histogram: Histogram {
                first_edge: 0.0,
                bin_width: if denom > 0.0 {
                    range as f64 / (bins as f64 * denom)
                } else {
                    0.0
                },
                counts,
            },
        }
    });
    SpatialSummary {
        rows: u32::try_from(rows).unwrap_or(u32::MAX),
        columns: u32::try_from(cols).unwrap_or(u32::MAX),
        row_means_dn: row_means,
        column_means_dn: column_means,
        variance_raw_dn2: variance_raw,
        row_means_variance_dn2: row_var,
        column_means_variance_dn2: col_var,
        split,
        horizontal_length: horizontal.0,
        horizontal_spectrogram_dn2: horizontal.1,
        vertical_length: vertical.0,
        vertical_spectrogram_dn2: vertical.1,
        histogram,
        defect_threshold_dn: threshold,
        above_threshold: above,
        below_threshold: below,
        high_noise,
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
// OK because a failing test should stop loudly
mod tests;
