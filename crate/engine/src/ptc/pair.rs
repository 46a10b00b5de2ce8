//! The hot loop: integer sums of one frame pair, exact for any 16-bit data.
//!
//! One pass over two frames gives Σa, Σb, Σ(a−b)² and Σ(a+b)², from which the pair's means,
//! temporal variance and the spatial variance of its average follow exactly (see
//! [`PairSums::temporal_variance_dn2`]). Nothing here knows about stacks, darks or fits.
//!
//! Numerical stability: every sum is an integer, so a large offset (a dark level of 60 000 DN
//! on a 16-bit camera) loses nothing: the variance is formed from the exact integers
//! n·Σd² − (Σd)², never from two large floating-point numbers that nearly cancel. With at most
//! [`crate::frames::MAX_PIXELS`] = 2^28 pixels: Σa ≤ 2^44, Σ(a−b)² ≤ 2^60, Σ(a+b)² ≤ 2^62 fit
//! `u64`, and n·Σ(a−b)² ≤ 2^88 fits `u128`.

/// Pixels summed in 32-bit lanes before widening: 2^15 samples of at most 2^16 − 1 sum to less
/// than 2^31, and 2^15 differences (|a − b| ≤ 2^16 − 1, squared < 2^32) are widened one by one.
const BLOCK: usize = 1 << 15;

/// Exact integer sums over the pixels of a frame pair (a, b).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PairSums {
    /// Number of pixels n.
    pub pixels: u64,
    /// Σa.
    pub sum_a: u64,
    /// Σb.
    pub sum_b: u64,
    /// Σ(a − b)².
    pub sum_diff_sq: u64,
    /// Σ(a + b)².
    pub sum_sum_sq: u64,
}

impl PairSums {
    /// Add another region's sums (e.g. the next row of a region of interest).
    #[must_use]
    pub fn merged(self, o: PairSums) -> PairSums {
        PairSums {
            pixels: self.pixels + o.pixels,
            sum_a: self.sum_a + o.sum_a,
            sum_b: self.sum_b + o.sum_b,
            sum_diff_sq: self.sum_diff_sq + o.sum_diff_sq,
            sum_sum_sq: self.sum_sum_sq + o.sum_sum_sq,
        }
    }

    /// Mean of the pair, μ_y = (μ_A + μ_B)/2, in DN; `None` for no pixels.
    ///
    /// # Formula
    /// ```text
    /// μ_y = (Σa + Σb) / (2n)
    /// ```
    /// # Source
    /// EMVA 1288 Release 4.0 Linear, photon transfer method (REFERENCES.md §4 item 10, from
    /// memory).
    #[must_use]
    pub fn mean_dn(&self) -> Option<f64> {
        if self.pixels == 0 {
            return None;
        }
        Some((self.sum_a + self.sum_b) as f64 / (2.0 * self.pixels as f64))
    }

    /// Temporal variance from the pair difference, in DN²; `None` for no pixels.
    ///
    /// # Formula
    /// ```text
    /// σ_y² = 1/(2NM) · Σ[(a − μ_A) − (b − μ_B)]²
    ///      = (n·Σd² − (Σd)²) / (2n²)        d = a − b, n = N·M
    /// ```
    /// The numerator is formed exactly in 128-bit integers, then divided once.
    ///
    /// # Source
    /// EMVA 1288 Release 4.0 Linear, photon transfer method, the 1/(2NM) form (REFERENCES.md §4
    /// item 10, from memory). The toy example there gives 1.125 DN²:
    /// ```
    /// let s = engine::ptc::pair_sums(&[100, 102, 98, 101], &[101, 100, 99, 103]);
    /// let v = s.temporal_variance_dn2().unwrap();
    /// assert!((v - 1.125).abs() < 1e-12); // REFERENCES.md §4, two-frame toy example (derived)
    /// ```
    #[must_use]
    pub fn temporal_variance_dn2(&self) -> Option<f64> {
        if self.pixels == 0 {
            return None;
        }
        let n = u128::from(self.pixels);
        let sum_d = i128::from(self.sum_a) - i128::from(self.sum_b);
        let num = (n * u128::from(self.sum_diff_sq)) as i128 - sum_d * sum_d; // ≥ 0 (Cauchy–Schwarz)
        Some(num.max(0) as f64 / (2.0 * (self.pixels as f64) * (self.pixels as f64)))
    }

    /// Spatial variance of the pair's average frame ⟨y⟩ = (a + b)/2, in DN², before the
    /// temporal part is removed; `None` for fewer than two pixels.
    ///
    /// # Formula
    /// ```text
    /// s² = 1/(n − 1) · Σ(⟨y⟩ − μ_y)² = (n·Σs² − (Σs)²) / (4 n (n − 1))     s = a + b
    /// ```
    /// # Source
    /// EMVA 1288 Release 4.0 Linear, spatial nonuniformity (REFERENCES.md §4 item 11, from
    /// memory), with L = 2.
    #[must_use]
    pub fn spatial_variance_of_mean_dn2(&self) -> Option<f64> {
        if self.pixels < 2 {
            return None;
        }
        let n = u128::from(self.pixels);
        let sum_s = u128::from(self.sum_a + self.sum_b);
        let num = (n * u128::from(self.sum_sum_sq)).saturating_sub(sum_s * sum_s);
        let n = self.pixels as f64;
        Some(num as f64 / (4.0 * n * (n - 1.0)))
    }
}

/// Sums of a frame pair over the common length of `a` and `b` (the caller passes equal slices).
///
/// Written so the compiler vectorises it: blocks of [`BLOCK`] pixels are summed in 32-bit
/// lanes, the squares in 64-bit lanes. On x86-64 processors with AVX2 (checked at run time)
/// the same loop is compiled for 256-bit vectors, about twice as wide as the SSE2 baseline.
/// In wasm built with `simd128` (the page's frame worker) an explicit 128-bit loop does the
/// same integer arithmetic, 8 pixels a step.
#[must_use]
pub fn pair_sums(a: &[u16], b: &[u16]) -> PairSums {
    #[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
    let sums = pair_sums_simd128(a, b);
    #[cfg(not(all(target_arch = "wasm32", target_feature = "simd128")))]
    let sums = pair_sums_dispatched(a, b);
    #[allow(clippy::let_and_return)] // one binding per build configuration
    sums
}

/// The portable loop, or on x86-64 with AVX2 (checked at run time) its AVX2 build.
#[cfg(not(all(target_arch = "wasm32", target_feature = "simd128")))]
fn pair_sums_dispatched(a: &[u16], b: &[u16]) -> PairSums {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor supports AVX2, checked just above; the function is the
            // portable loop compiled with that feature enabled and touches no memory otherwise.
            return unsafe { pair_sums_avx2(a, b) };
        }
    }
    pair_sums_portable(a, b)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn pair_sums_avx2(a: &[u16], b: &[u16]) -> PairSums {
    pair_sums_portable(a, b)
}

/// Eight u16 as one vector: `c` must be exactly eight long (else zeros, never reached by the
/// loops, which load whole chunks).
#[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
#[inline(always)]
fn load_u16x8(c: &[u16]) -> core::arch::wasm32::v128 {
    match <&[u16; 8]>::try_from(c) {
        // SAFETY: eight u16 are 16 readable bytes; wasm's v128.load needs no alignment.
        Ok(a) => unsafe { core::arch::wasm32::v128_load(a.as_ptr().cast()) },
        Err(_) => core::arch::wasm32::u16x8_splat(0),
    }
}

/// Four u32 as one vector, as [`load_u16x8`].
#[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
#[inline(always)]
fn load_u32x4(c: &[u32]) -> core::arch::wasm32::v128 {
    match <&[u32; 4]>::try_from(c) {
        // SAFETY: four u32 are 16 readable bytes; no alignment needed.
        Ok(a) => unsafe { core::arch::wasm32::v128_load(a.as_ptr().cast()) },
        Err(_) => core::arch::wasm32::u32x4_splat(0),
    }
}

/// The sums with wasm's 128-bit SIMD: the same integers as [`pair_sums_portable`], exactly
/// (each lane's arithmetic is exact: within a block of [`BLOCK`] pixels a 32-bit lane receives
/// at most 2^12 pairwise sums of two samples, < 2^30; squares are formed exactly in 32 bits
/// (|a − b|² < 2^32) or 64 bits ((a + b)² < 2^34) and summed in 64-bit lanes). The last
/// pixels of a row that do not fill 8 lanes go through the portable loop.
#[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
fn pair_sums_simd128(a: &[u16], b: &[u16]) -> PairSums {
    use core::arch::wasm32::{
        i16x8_sub, i32x4_add, i64x2_add, u16x8_max, u16x8_min, u32x4_extadd_pairwise_u16x8,
        u32x4_extend_high_u16x8, u32x4_extend_low_u16x8, u32x4_extmul_high_u16x8,
        u32x4_extmul_low_u16x8, u32x4_extract_lane, u32x4_splat, u64x2_extend_high_u32x4,
        u64x2_extend_low_u32x4, u64x2_extmul_high_u32x4, u64x2_extmul_low_u32x4,
        u64x2_extract_lane, u64x2_splat, v128,
    };
    let n = a.len().min(b.len());
    let (a, b) = (
        a.get(..n).unwrap_or_default(),
        b.get(..n).unwrap_or_default(),
    );
    let mut out = PairSums {
        pixels: n as u64,
        ..PairSums::default()
    };
    let load = load_u16x8;
    let sum4 = |v: v128| -> u64 {
        u64::from(u32x4_extract_lane::<0>(v))
            + u64::from(u32x4_extract_lane::<1>(v))
            + u64::from(u32x4_extract_lane::<2>(v))
            + u64::from(u32x4_extract_lane::<3>(v))
    };
    let sum2 = |v: v128| -> u64 { u64x2_extract_lane::<0>(v) + u64x2_extract_lane::<1>(v) };
    for (ca, cb) in a.chunks(BLOCK).zip(b.chunks(BLOCK)) {
        let (mut sa, mut sb) = (u32x4_splat(0), u32x4_splat(0));
        let (mut dd, mut ss) = (u64x2_splat(0), u64x2_splat(0));
        let (xa, xb) = (ca.chunks_exact(8), cb.chunks_exact(8));
        let tail = pair_sums_portable(xa.remainder(), xb.remainder());
        for (x, y) in xa.zip(xb) {
            let (x, y) = (load(x), load(y));
            sa = i32x4_add(sa, u32x4_extadd_pairwise_u16x8(x));
            sb = i32x4_add(sb, u32x4_extadd_pairwise_u16x8(y));
            // |a − b| as u16 lanes, its square exactly in u32 lanes, summed in u64 lanes.
            let d = i16x8_sub(u16x8_max(x, y), u16x8_min(x, y));
            let (d2l, d2h) = (u32x4_extmul_low_u16x8(d, d), u32x4_extmul_high_u16x8(d, d));
            dd = i64x2_add(dd, u64x2_extend_low_u32x4(d2l));
            dd = i64x2_add(dd, u64x2_extend_high_u32x4(d2l));
            dd = i64x2_add(dd, u64x2_extend_low_u32x4(d2h));
            dd = i64x2_add(dd, u64x2_extend_high_u32x4(d2h));
            // a + b in u32 lanes, its square exactly in u64 lanes.
            let sl = i32x4_add(u32x4_extend_low_u16x8(x), u32x4_extend_low_u16x8(y));
            let sh = i32x4_add(u32x4_extend_high_u16x8(x), u32x4_extend_high_u16x8(y));
            ss = i64x2_add(ss, u64x2_extmul_low_u32x4(sl, sl));
            ss = i64x2_add(ss, u64x2_extmul_high_u32x4(sl, sl));
            ss = i64x2_add(ss, u64x2_extmul_low_u32x4(sh, sh));
            ss = i64x2_add(ss, u64x2_extmul_high_u32x4(sh, sh));
        }
        out.sum_a += sum4(sa) + tail.sum_a;
        out.sum_b += sum4(sb) + tail.sum_b;
        out.sum_diff_sq += sum2(dd) + tail.sum_diff_sq;
        out.sum_sum_sq += sum2(ss) + tail.sum_sum_sq;
    }
    out
}

#[inline(always)]
fn pair_sums_portable(a: &[u16], b: &[u16]) -> PairSums {
    let n = a.len().min(b.len());
    let (a, b) = (
        a.get(..n).unwrap_or_default(),
        b.get(..n).unwrap_or_default(),
    );
    let mut out = PairSums {
        pixels: n as u64,
        ..PairSums::default()
    };
    for (ca, cb) in a.chunks(BLOCK).zip(b.chunks(BLOCK)) {
        let mut sa: u32 = 0;
        let mut sb: u32 = 0;
        let mut dd: u64 = 0;
        let mut ss: u64 = 0;
        for (&x, &y) in ca.iter().zip(cb) {
            let (x, y) = (u32::from(x), u32::from(y));
            sa += x;
            sb += y;
            let d = x.abs_diff(y);
            dd += u64::from(d * d);
            let s = u64::from(x + y);
            ss += s * s;
        }
        out.sum_a += u64::from(sa);
        out.sum_b += u64::from(sb);
        out.sum_diff_sq += dd;
        out.sum_sum_sq += ss;
    }
    out
}

// ---- the stack accumulator's fused pass ------------------------------------------------------

/// Pixels per step of the fused pass: 16 lanes, each summing the samples at its own offset, so
/// a lane's parity is the sample's column parity within the row (the caller's rows start at an
/// even or odd column, which it knows).
const LANES: usize = 16;

/// A row of 16-bit samples as a pass reads them: native `u16`s, or a file's big-endian bytes
/// read in place ([`Be16`]), so that widening them costs no pass of its own (measured: a
/// separate widening pass over the rows cost about as much as the rest of the pass, since its
/// loads could not overlap the pass's work on the per-pixel sums).
pub(crate) trait Row<'r>: Copy {
    /// Samples in the row.
    fn samples(self) -> usize;
    /// The first `n` samples; `n` must not exceed [`Row::samples`] (the passes cut every row
    /// to the shortest), else the row is empty.
    fn first(self, n: usize) -> Self;
    /// Sample `i`, which must be below [`Row::samples`] (the passes index only below the
    /// length they cut every row to; written as indexing so that the loops vectorise).
    fn at(self, i: usize) -> u16;
    /// Samples `LANES·c` to `LANES·c + LANES − 1`, which must be below [`Row::samples`] (else
    /// zeros). Indexed, not an iterator of chunks: at opt-level "z" the zip of two such
    /// iterators stayed a call per chunk.
    fn chunk(self, c: usize) -> [u16; LANES];
    /// The row as widened samples, if it is one (for the SIMD loops that load them).
    #[cfg_attr(
        not(all(target_arch = "wasm32", target_feature = "simd128")),
        allow(dead_code)
    )]
    fn widened(self) -> Option<&'r [u16]>;
}

impl<'r> Row<'r> for &'r [u16] {
    #[inline(always)]
    fn samples(self) -> usize {
        self.len()
    }
    #[inline(always)]
    fn first(self, n: usize) -> Self {
        self.get(..n).unwrap_or_default()
    }
    #[inline(always)]
    #[allow(clippy::indexing_slicing)] // OK because callers index below the length (see the trait)
    fn at(self, i: usize) -> u16 {
        self[i]
    }
    #[inline(always)]
    fn chunk(self, c: usize) -> [u16; LANES] {
        self.get(LANES * c..)
            .and_then(<[u16]>::first_chunk::<LANES>)
            .copied()
            .unwrap_or([0; LANES])
    }
    #[inline(always)]
    fn widened(self) -> Option<&'r [u16]> {
        Some(self)
    }
}

/// 16-bit big-endian samples in place (a 16-bit PGM's row; a trailing odd byte is not a
/// sample).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Be16<'a>(pub &'a [u8]);

impl<'r> Row<'r> for Be16<'r> {
    #[inline(always)]
    fn samples(self) -> usize {
        self.0.len() / 2
    }
    #[inline(always)]
    fn first(self, n: usize) -> Self {
        Be16(self.0.get(..2 * n).unwrap_or_default())
    }
    #[inline(always)]
    #[allow(clippy::indexing_slicing)] // OK because callers index below the length (see the trait)
    fn at(self, i: usize) -> u16 {
        u16::from_be_bytes([self.0[2 * i], self.0[2 * i + 1]])
    }
    #[inline(always)]
    #[allow(clippy::indexing_slicing)] // OK because 2j + 1 < 2·LANES indexes an array of 2·LANES
    fn chunk(self, c: usize) -> [u16; LANES] {
        let b = self
            .0
            .get(2 * LANES * c..)
            .and_then(<[u8]>::first_chunk::<{ 2 * LANES }>)
            .unwrap_or(&[0; 2 * LANES]);
        std::array::from_fn(|j| u16::from_be_bytes([b[2 * j], b[2 * j + 1]]))
    }
    #[inline(always)]
    fn widened(self) -> Option<&'r [u16]> {
        None
    }
}

/// What one pass over a row of a frame pair gives besides the per-pixel updates. The stack's
/// pass leaves `sum_sum_sq` of its sums at 0: the stack takes the spatial variance from the
/// per-pixel sums, and only the temporal variance from the pair.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) struct RowPass {
    /// Sums over the samples at even offsets from the row's first sample, then at odd offsets.
    pub parity: [PairSums; 2],
    /// Bitwise OR of every sample of both rows (its trailing zeros give the sample step).
    pub or: u16,
    /// Largest sample of both rows.
    pub max: u16,
}

/// One pass over a row pair (a, b): the pair's sums split by column parity, the OR and the
/// maximum of the samples, and per pixel `sums += a + b` and (when `dsq` is not empty)
/// `dsq += (a − b)²`, saturating.
///
/// Exact: within a block of [`BLOCK`] pixels each 32-bit lane receives BLOCK/16 = 2^11 samples
/// (< 2^27); a per-pixel sum of at most 2^16 frames of 16-bit samples is below 2^32 (the
/// stack's frame limit); (a − b)² < 2^32 fits a `u32`. A per-pixel `dsq` that saturates marks
/// a pixel far noisier than any threshold, which is what it is used for.
#[cfg(test)]
pub(crate) fn pair_pass(a: &[u16], b: &[u16], sums: &mut [u32], dsq: &mut [u32]) -> RowPass {
    let [mut p, _] = pairs_pass(a, b, None, sums, dsq, false);
    p.parity = parity_sums::<&[u16], true>(a, b);
    p
}

/// One pass over the rows of one pair (a, b) or two pairs (a, b) and (c, d) of a stack: each
/// pair's [`RowPass`] (the OR and maximum of all the rows in the first), and per pixel
/// `sums += a + b (+ c + d)` and, when `dsq` is not empty, `dsq += (a − b)² (+ (c − d)²)`,
/// saturating. With `first` the per-pixel values are written instead of added (the stack's
/// first pass: the buffers need no zeroing). Two pairs in one pass read and write the per-pixel
/// sums once instead of twice, which is most of the pass's memory traffic.
///
/// Exact as [`pair_sums`]: a + b + c + d < 2^18; a per-pixel sum of at most 2^16 frames of
/// 16-bit samples is below 2^32 (the stack's frame limit); (a − b)² < 2^32, and saturating
/// additions of non-negative values give min(2^32 − 1, the sum) in any order, so the pixel's
/// `dsq` is the same whether its pairs come one or two at a time. A `dsq` that saturates marks a
/// pixel far noisier than any threshold, which is what it is used for. On x86-64 with AVX2
/// (checked at run time) the loops are compiled for 256-bit vectors; in wasm with `simd128`
/// the per-pixel part over widened rows is written with 128-bit vectors ([`per_pixel`]) and
/// the compiler vectorises the rest.
pub(crate) fn pairs_pass<'r, R: Row<'r>>(
    a: R,
    b: R,
    cd: Option<(R, R)>,
    sums: &mut [u32],
    dsq: &mut [u32],
    first: bool,
) -> [RowPass; 2] {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor supports AVX2, checked just above; the function is the
            // portable loop compiled with that feature enabled and touches no memory otherwise.
            return unsafe { pairs_pass_avx2(a, b, cd, sums, dsq, first) };
        }
    }
    pairs_pass_portable(a, b, cd, sums, dsq, first)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn pairs_pass_avx2<'r, R: Row<'r>>(
    a: R,
    b: R,
    cd: Option<(R, R)>,
    sums: &mut [u32],
    dsq: &mut [u32],
    first: bool,
) -> [RowPass; 2] {
    pairs_pass_portable(a, b, cd, sums, dsq, first)
}

#[inline(always)]
fn pairs_pass_portable<'r, R: Row<'r>>(
    a: R,
    b: R,
    cd: Option<(R, R)>,
    sums: &mut [u32],
    dsq: &mut [u32],
    first: bool,
) -> [RowPass; 2] {
    let (c, d) = cd.unwrap_or((a, b));
    let mut n = a.samples().min(b.samples()).min(sums.len());
    if cd.is_some() {
        n = n.min(c.samples()).min(d.samples());
    }
    let with_dsq = !dsq.is_empty();
    if with_dsq {
        n = n.min(dsq.len());
    }
    let (a, b) = (a.first(n), b.first(n));
    let (c, d) = (c.first(n), d.first(n));
    let sums = sums.get_mut(..n).unwrap_or_default();
    let dsq = if with_dsq {
        dsq.get_mut(..n).unwrap_or_default()
    } else {
        &mut []
    };
    let two = cd.is_some();
    let (or, max) = match (first, with_dsq, two) {
        (false, false, false) => per_pixel::<R, false, false, false>(a, b, c, d, sums, dsq),
        (false, false, true) => per_pixel::<R, false, false, true>(a, b, c, d, sums, dsq),
        (false, true, false) => per_pixel::<R, false, true, false>(a, b, c, d, sums, dsq),
        (false, true, true) => per_pixel::<R, false, true, true>(a, b, c, d, sums, dsq),
        (true, false, false) => per_pixel::<R, true, false, false>(a, b, c, d, sums, dsq),
        (true, false, true) => per_pixel::<R, true, false, true>(a, b, c, d, sums, dsq),
        (true, true, false) => per_pixel::<R, true, true, false>(a, b, c, d, sums, dsq),
        (true, true, true) => per_pixel::<R, true, true, true>(a, b, c, d, sums, dsq),
    };
    [
        RowPass {
            parity: parity_sums::<R, false>(a, b),
            or,
            max,
        },
        RowPass {
            parity: if two {
                parity_sums::<R, false>(c, d)
            } else {
                [PairSums::default(); 2]
            },
            or: 0,
            max: 0,
        },
    ]
}

/// The per-pixel part of the pass over slices of one length: `sums (+)= a + b (+ c + d)`,
/// with `DSQ` `dsq (+)= (a − b)² (+ (c − d)²)` (saturating); `=` with `FIRST`; c and d with
/// `TWO`. Returns the OR and the maximum of the samples. In wasm with `simd128`, widened rows go
/// through [`per_pixel_simd128`]; everywhere else a plain loop the compiler vectorises.
#[inline(always)]
fn per_pixel<'r, R: Row<'r>, const FIRST: bool, const DSQ: bool, const TWO: bool>(
    a: R,
    b: R,
    c: R,
    d: R,
    sums: &mut [u32],
    dsq: &mut [u32],
) -> (u16, u16) {
    #[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
    if let (Some(a), Some(b), Some(c), Some(d)) =
        (a.widened(), b.widened(), c.widened(), d.widened())
    {
        return per_pixel_simd128::<FIRST, DSQ, TWO>(a, b, c, d, sums, dsq);
    }
    per_pixel_loop::<R, FIRST, DSQ, TWO>(a, b, c, d, sums, dsq)
}

/// [`per_pixel`] with wasm's 128-bit SIMD, eight pixels at a time: the same integers as the
/// plain loop (u16 lanes for the samples, |a − b| and the OR and maximum; u32 lanes for the
/// sums, the squares formed exactly by widening multiplies, |a − b|² < 2^32, and saturating
/// additions as an add whose wrap is detected by an unsigned compare). The last pixels that do
/// not fill eight lanes go through the plain loop.
#[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
#[inline(always)]
fn per_pixel_simd128<'r, const FIRST: bool, const DSQ: bool, const TWO: bool>(
    a: &'r [u16],
    b: &'r [u16],
    c: &'r [u16],
    d: &'r [u16],
    sums: &mut [u32],
    dsq: &mut [u32],
) -> (u16, u16) {
    use core::arch::wasm32::{
        i16x8_sub, i32x4_add, u16x8_extract_lane, u16x8_max, u16x8_min, u16x8_splat,
        u32x4_extend_high_u16x8, u32x4_extend_low_u16x8, u32x4_extmul_high_u16x8,
        u32x4_extmul_low_u16x8, u32x4_lt, v128, v128_or, v128_store,
    };
    let n = sums.len();
    let cut = |s: &'r [u16]| s.get(..n).unwrap_or_default();
    let (a, b, c, d) = (cut(a), cut(b), cut(c), cut(d));
    let dsq = if DSQ {
        dsq.get_mut(..n).unwrap_or_default()
    } else {
        dsq
    };
    let whole = if a.len() == n && b.len() == n && (!TWO || (c.len() == n && d.len() == n)) {
        n - n % 8
    } else {
        0
    };
    let (mut or, mut max) = (u16x8_splat(0), u16x8_splat(0));
    let load = |s: &[u16], i: usize| load_u16x8(s.get(i..i + 8).unwrap_or_default());
    let load32 = |s: &[u32], i: usize| load_u32x4(s.get(i..i + 4).unwrap_or_default());
    let store32 = |s: &mut [u32], i: usize, v: v128| {
        if let Some(s) = s
            .get_mut(i..i + 4)
            .and_then(|s| <&mut [u32; 4]>::try_from(s).ok())
        {
            // SAFETY: four u32 are 16 writable bytes; wasm's v128.store needs no alignment.
            unsafe { v128_store(s.as_mut_ptr().cast::<v128>(), v) }
        }
    };
    // a + b with the result u32::MAX where it wrapped (unsigned lanes).
    let saturating = |x: v128, y: v128| -> v128 {
        let s = i32x4_add(x, y);
        v128_or(s, u32x4_lt(s, x))
    };
    let mut i = 0;
    while i < whole {
        let (x, y) = (load(a, i), load(b, i));
        or = v128_or(or, v128_or(x, y));
        max = u16x8_max(max, u16x8_max(x, y));
        let mut lo = i32x4_add(u32x4_extend_low_u16x8(x), u32x4_extend_low_u16x8(y));
        let mut hi = i32x4_add(u32x4_extend_high_u16x8(x), u32x4_extend_high_u16x8(y));
        let diff = i16x8_sub(u16x8_max(x, y), u16x8_min(x, y));
        let (mut dlo, mut dhi) = (
            u32x4_extmul_low_u16x8(diff, diff),
            u32x4_extmul_high_u16x8(diff, diff),
        );
        if TWO {
            let (z, w) = (load(c, i), load(d, i));
            or = v128_or(or, v128_or(z, w));
            max = u16x8_max(max, u16x8_max(z, w));
            lo = i32x4_add(
                lo,
                i32x4_add(u32x4_extend_low_u16x8(z), u32x4_extend_low_u16x8(w)),
            );
            hi = i32x4_add(
                hi,
                i32x4_add(u32x4_extend_high_u16x8(z), u32x4_extend_high_u16x8(w)),
            );
            let diff = i16x8_sub(u16x8_max(z, w), u16x8_min(z, w));
            dlo = saturating(dlo, u32x4_extmul_low_u16x8(diff, diff));
            dhi = saturating(dhi, u32x4_extmul_high_u16x8(diff, diff));
        }
        if FIRST {
            store32(sums, i, lo);
            store32(sums, i + 4, hi);
        } else {
            store32(sums, i, i32x4_add(load32(sums, i), lo));
            store32(sums, i + 4, i32x4_add(load32(sums, i + 4), hi));
        }
        if DSQ {
            if FIRST {
                store32(dsq, i, dlo);
                store32(dsq, i + 4, dhi);
            } else {
                store32(dsq, i, saturating(load32(dsq, i), dlo));
                store32(dsq, i + 4, saturating(load32(dsq, i + 4), dhi));
            }
        }
        i += 8;
    }
    let tail = |s: &'r [u16]| s.get(whole..).unwrap_or_default();
    let (t_or, t_max) = per_pixel_loop::<&[u16], FIRST, DSQ, TWO>(
        tail(a),
        tail(b),
        tail(c),
        tail(d),
        sums.get_mut(whole..).unwrap_or_default(),
        if DSQ {
            dsq.get_mut(whole..).unwrap_or_default()
        } else {
            &mut []
        },
    );
    let lanes = |v: v128| -> [u16; 8] {
        [
            u16x8_extract_lane::<0>(v),
            u16x8_extract_lane::<1>(v),
            u16x8_extract_lane::<2>(v),
            u16x8_extract_lane::<3>(v),
            u16x8_extract_lane::<4>(v),
            u16x8_extract_lane::<5>(v),
            u16x8_extract_lane::<6>(v),
            u16x8_extract_lane::<7>(v),
        ]
    };
    let or = lanes(or).iter().fold(t_or, |o, v| o | v);
    let max = lanes(max).iter().fold(t_max, |m, v| m.max(*v));
    (or, max)
}

/// [`per_pixel`] as a plain loop.
#[inline(always)]
#[allow(clippy::indexing_slicing)] // OK because the caller cut every slice to one length n
fn per_pixel_loop<'r, R: Row<'r>, const FIRST: bool, const DSQ: bool, const TWO: bool>(
    a: R,
    b: R,
    c: R,
    d: R,
    sums: &mut [u32],
    dsq: &mut [u32],
) -> (u16, u16) {
    let n = sums.len();
    let (a, b, c, d) = (a.first(n), b.first(n), c.first(n), d.first(n));
    let dsq = if DSQ { &mut dsq[..n] } else { dsq };
    let (mut or, mut max) = (0u16, 0u16);
    for i in 0..n {
        let (ai, bi) = (a.at(i), b.at(i));
        let (x, y) = (u32::from(ai), u32::from(bi));
        let mut v = x + y;
        // |a − b| in 16 bits (twice the lanes of a 32-bit difference), squared in 32.
        let diff = u32::from(ai.abs_diff(bi));
        let mut dd = diff * diff;
        or |= ai | bi;
        max = max.max(ai.max(bi));
        if TWO {
            let (ci, di) = (c.at(i), d.at(i));
            let (z, w) = (u32::from(ci), u32::from(di));
            v += z + w;
            let diff = u32::from(ci.abs_diff(di));
            dd = dd.saturating_add(diff * diff);
            or |= ci | di;
            max = max.max(ci.max(di));
        }
        sums[i] = if FIRST { v } else { sums[i].wrapping_add(v) };
        if DSQ {
            dsq[i] = if FIRST { dd } else { dsq[i].saturating_add(dd) };
        }
    }
    (or, max)
}

/// The reduction part: the pair sums of the samples at even and at odd offsets, in 16 lanes
/// (lane j takes the offsets ≡ j mod 16, so its parity is j's).
#[inline(always)]
#[allow(clippy::indexing_slicing)] // OK because every index is j < LANES into arrays of LANES
fn parity_sums<'r, R: Row<'r>, const SQUARES_OF_SUMS: bool>(a: R, b: R) -> [PairSums; 2] {
    #[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
    if let (Some(a), Some(b)) = (a.widened(), b.widened()) {
        return parity_sums_simd128::<SQUARES_OF_SUMS>(a, b);
    }
    let n = a.samples().min(b.samples());
    let mut out = [PairSums::default(); 2];
    let mut dd = [0u64; LANES];
    let mut ss = [0u64; LANES];
    let chunks = n / LANES;
    let mut next = 0;
    while next < chunks {
        let take = (chunks - next).min(BLOCK / LANES);
        let mut sa = [0u32; LANES];
        let mut sb = [0u32; LANES];
        for c in next..next + take {
            let (x, y) = (a.chunk(c), b.chunk(c));
            for j in 0..LANES {
                let (xj, yj) = (u32::from(x[j]), u32::from(y[j]));
                sa[j] += xj;
                sb[j] += yj;
                let d = xj.abs_diff(yj);
                dd[j] += u64::from(d * d);
                if SQUARES_OF_SUMS {
                    let s = u64::from(xj + yj);
                    ss[j] += s * s;
                }
            }
        }
        next += take;
        for j in 0..LANES {
            out[j % 2].sum_a += u64::from(sa[j]);
            out[j % 2].sum_b += u64::from(sb[j]);
        }
    }
    for j in 0..LANES {
        out[j % 2].sum_diff_sq += dd[j];
        out[j % 2].sum_sum_sq += ss[j];
    }
    let full = chunks * LANES;
    for p in &mut out {
        p.pixels = (full / 2) as u64;
    }
    // The last pixels that do not fill 16 lanes (only at the row's end: blocks are multiples
    // of 16, so offsets keep their parity).
    for i in full..n {
        let (x, y) = (u32::from(a.at(i)), u32::from(b.at(i)));
        let s = u64::from(x + y);
        out[i % 2] = out[i % 2].merged(PairSums {
            pixels: 1,
            sum_a: u64::from(x),
            sum_b: u64::from(y),
            sum_diff_sq: u64::from(x.abs_diff(y).pow(2)),
            sum_sum_sq: if SQUARES_OF_SUMS { s * s } else { 0 },
        });
    }
    out
}

/// [`parity_sums`] with wasm's 128-bit SIMD, for widened rows: the same integers, exactly.
/// Eight samples a step, widened to two u32x4 (samples 0–3 and 4–7), whose even lanes hold the
/// even offsets; |a − b|² and (a + b)² go to u64x2 lanes in the same even/odd order. Exact as
/// [`pair_sums_simd128`]: within a block of [`BLOCK`] pixels a u32 lane of the sums receives
/// 2^12 sums of two samples (< 2^29). Written out because at opt-level "s" the compiler left
/// the portable 16-lane loop scalar. The last samples that do not fill 8 lanes go through the
/// portable loop (their offsets keep their parity: blocks and steps are multiples of 8).
#[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
fn parity_sums_simd128<const SQUARES_OF_SUMS: bool>(a: &[u16], b: &[u16]) -> [PairSums; 2] {
    use core::arch::wasm32::{
        i16x8_sub, i32x4_add, i64x2_add, u16x8_max, u16x8_min, u32x4_extend_high_u16x8,
        u32x4_extend_low_u16x8, u32x4_extmul_high_u16x8, u32x4_extmul_low_u16x8,
        u32x4_extract_lane, u32x4_splat, u64x2_extend_high_u32x4, u64x2_extend_low_u32x4,
        u64x2_extmul_high_u32x4, u64x2_extmul_low_u32x4, u64x2_extract_lane, u64x2_splat,
    };
    let n = a.len().min(b.len());
    let whole = n - n % 8;
    let (ha, ta) = a.split_at(whole.min(a.len()));
    let (hb, tb) = b.split_at(whole.min(b.len()));
    let mut out = [PairSums::default(); 2];
    let (mut dd, mut ss) = (u64x2_splat(0), u64x2_splat(0));
    for (ca, cb) in ha.chunks(BLOCK).zip(hb.chunks(BLOCK)) {
        let (mut sa, mut sb) = (u32x4_splat(0), u32x4_splat(0));
        let (xa, _) = ca.as_chunks::<8>();
        let (xb, _) = cb.as_chunks::<8>();
        for i in 0..xa.len().min(xb.len()) {
            let (Some(x), Some(y)) = (xa.get(i), xb.get(i)) else {
                break;
            };
            let (x, y) = (load_u16x8(x), load_u16x8(y));
            let (xl, xh) = (u32x4_extend_low_u16x8(x), u32x4_extend_high_u16x8(x));
            let (yl, yh) = (u32x4_extend_low_u16x8(y), u32x4_extend_high_u16x8(y));
            sa = i32x4_add(sa, i32x4_add(xl, xh));
            sb = i32x4_add(sb, i32x4_add(yl, yh));
            let d = i16x8_sub(u16x8_max(x, y), u16x8_min(x, y));
            let (d2l, d2h) = (u32x4_extmul_low_u16x8(d, d), u32x4_extmul_high_u16x8(d, d));
            dd = i64x2_add(dd, u64x2_extend_low_u32x4(d2l));
            dd = i64x2_add(dd, u64x2_extend_high_u32x4(d2l));
            dd = i64x2_add(dd, u64x2_extend_low_u32x4(d2h));
            dd = i64x2_add(dd, u64x2_extend_high_u32x4(d2h));
            if SQUARES_OF_SUMS {
                let (sl, sh) = (i32x4_add(xl, yl), i32x4_add(xh, yh));
                ss = i64x2_add(ss, u64x2_extmul_low_u32x4(sl, sl));
                ss = i64x2_add(ss, u64x2_extmul_high_u32x4(sl, sl));
                ss = i64x2_add(ss, u64x2_extmul_low_u32x4(sh, sh));
                ss = i64x2_add(ss, u64x2_extmul_high_u32x4(sh, sh));
            }
        }
        let (ea, oa) = (
            u64::from(u32x4_extract_lane::<0>(sa)) + u64::from(u32x4_extract_lane::<2>(sa)),
            u64::from(u32x4_extract_lane::<1>(sa)) + u64::from(u32x4_extract_lane::<3>(sa)),
        );
        let (eb, ob) = (
            u64::from(u32x4_extract_lane::<0>(sb)) + u64::from(u32x4_extract_lane::<2>(sb)),
            u64::from(u32x4_extract_lane::<1>(sb)) + u64::from(u32x4_extract_lane::<3>(sb)),
        );
        let [even, odd] = &mut out;
        (even.sum_a, even.sum_b) = (even.sum_a + ea, even.sum_b + eb);
        (odd.sum_a, odd.sum_b) = (odd.sum_a + oa, odd.sum_b + ob);
    }
    let [even, odd] = &mut out;
    even.sum_diff_sq = u64x2_extract_lane::<0>(dd);
    odd.sum_diff_sq = u64x2_extract_lane::<1>(dd);
    even.sum_sum_sq = u64x2_extract_lane::<0>(ss);
    odd.sum_sum_sq = u64x2_extract_lane::<1>(ss);
    even.pixels = (whole / 2) as u64;
    odd.pixels = (whole / 2) as u64;
    for (i, (&x, &y)) in ta.iter().zip(tb).enumerate() {
        let (x, y) = (u32::from(x), u32::from(y));
        let s = u64::from(x + y);
        let Some(p) = out.get_mut((whole + i) % 2) else {
            break;
        };
        *p = p.merged(PairSums {
            pixels: 1,
            sum_a: u64::from(x),
            sum_b: u64::from(y),
            sum_diff_sq: u64::from(x.abs_diff(y).pow(2)),
            sum_sum_sq: if SQUARES_OF_SUMS { s * s } else { 0 },
        });
    }
    out
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)] // OK because a failing test should stop loudly
mod tests {
    use super::*;

    #[test]
    fn toy_example_both_forms() {
        // Source: REFERENCES.md §4 "Two-frame toy example" (derived there from EMVA 1288
        // item 10): μ_A = 100.25, μ_B = 100.75, μ_y = 100.5, σ_y² = 1.125 DN².
        let s = pair_sums(&[100, 102, 98, 101], &[101, 100, 99, 103]);
        assert_eq!((s.sum_a, s.sum_b), (401, 403));
        assert_eq!(s.mean_dn(), Some(100.5));
        assert_eq!(s.temporal_variance_dn2(), Some(1.125));
    }

    #[test]
    fn extreme_values_do_not_overflow() {
        // Every pixel at the 16-bit extremes, across several blocks: exact sums.
        let n = 3 * BLOCK + 7;
        let a = vec![u16::MAX; n];
        let b = vec![0u16; n];
        let s = pair_sums(&a, &b);
        let m = u64::from(u16::MAX);
        assert_eq!(s.sum_a, m * n as u64);
        assert_eq!(s.sum_diff_sq, m * m * n as u64);
        assert_eq!(s.sum_sum_sq, m * m * n as u64);
        // Constant difference: no temporal variance at all, exactly.
        assert_eq!(s.temporal_variance_dn2(), Some(0.0));
        assert_eq!(s.spatial_variance_of_mean_dn2(), Some(0.0));
    }

    #[test]
    fn dispatched_and_portable_loops_agree() {
        let a: Vec<u16> = (0..100_003u32)
            .map(|i| (i.wrapping_mul(2_654_435_761) >> 16) as u16)
            .collect();
        let b: Vec<u16> = (0..100_003u32)
            .map(|i| (i.wrapping_mul(40_503) >> 3) as u16)
            .collect();
        assert_eq!(pair_sums(&a, &b), pair_sums_portable(&a, &b));
    }

    #[test]
    fn fused_pass_matches_the_plain_sums_by_parity() {
        // The fused pass over a row of odd length (three blocks and a tail) against pair_sums
        // of the even- and odd-offset samples taken apart: the same integers.
        let n = 2 * BLOCK + 37;
        let a: Vec<u16> = (0..n as u32)
            .map(|i| (i.wrapping_mul(2_654_435_761) >> 16) as u16)
            .collect();
        let b: Vec<u16> = (0..n as u32)
            .map(|i| (i.wrapping_mul(40_503) >> 3) as u16)
            .collect();
        let mut sums = vec![1u32; n];
        let mut dsq = vec![0u32; n];
        let got = pair_pass(&a, &b, &mut sums, &mut dsq);
        for parity in 0..2 {
            let pick = |v: &[u16]| {
                v.iter()
                    .skip(parity)
                    .step_by(2)
                    .copied()
                    .collect::<Vec<_>>()
            };
            assert_eq!(got.parity[parity], pair_sums(&pick(&a), &pick(&b)));
        }
        assert_eq!(got.or, a.iter().chain(&b).fold(0, |o, v| o | v));
        assert_eq!(got.max, *a.iter().chain(&b).max().unwrap());
        for i in [0, 1, 17, BLOCK, n - 1] {
            assert_eq!(sums[i], 1 + u32::from(a[i]) + u32::from(b[i]));
            assert_eq!(dsq[i], u32::from(a[i].abs_diff(b[i])).pow(2));
        }
        let mut sums2 = vec![1u32; n];
        assert_eq!(pair_pass(&a, &b, &mut sums2, &mut []), got);
        assert_eq!(sums2, sums);
    }

    #[test]
    fn big_endian_rows_in_place_give_what_widened_rows_give() {
        // Derived: Be16 reads the same samples from their big-endian bytes, so every output of
        // the pass (parity sums, OR, maximum, per-pixel sums and squared differences) is the
        // same integer as for the widened rows, for one pair or two, first pass or not, with or
        // without the squared differences; rows of odd length (blocks and a tail), and a
        // trailing odd byte that is not a sample.
        let n = 2 * BLOCK + 37;
        let row = |m: u32, s: u32| -> Vec<u16> {
            (0..n as u32)
                .map(|i| (i.wrapping_mul(m) >> s) as u16)
                .collect()
        };
        let rows = [
            row(2_654_435_761, 16),
            row(40_503, 3),
            row(2_246_822_519, 15),
            row(97, 0),
        ];
        let bytes: Vec<Vec<u8>> = rows
            .iter()
            .map(|r| {
                let mut b: Vec<u8> = r.iter().flat_map(|v| v.to_be_bytes()).collect();
                b.push(0xff);
                b
            })
            .collect();
        let [a, b, c, d] = &rows;
        let be = |i: usize| Be16(&bytes[i]);
        for first in [false, true] {
            for with_dsq in [false, true] {
                for two in [false, true] {
                    let start: Vec<u32> = (0..n as u32).map(|i| i % 7).collect();
                    let (mut s1, mut s2) = (start.clone(), start.clone());
                    let (mut d1, mut d2) = if with_dsq {
                        (start.clone(), start.clone())
                    } else {
                        (Vec::new(), Vec::new())
                    };
                    let cd = two.then_some((c.as_slice(), d.as_slice()));
                    let widened =
                        pairs_pass(a.as_slice(), b.as_slice(), cd, &mut s1, &mut d1, first);
                    let cd = two.then_some((be(2), be(3)));
                    let in_place = pairs_pass(be(0), be(1), cd, &mut s2, &mut d2, first);
                    let case = format!("first {first}, dsq {with_dsq}, two {two}");
                    assert_eq!(widened, in_place, "{case}");
                    assert_eq!(s1, s2, "{case}");
                    assert_eq!(d1, d2, "{case}");
                }
            }
        }
    }

    #[test]
    fn large_offset_loses_nothing() {
        // The toy pair lifted by 65 000 DN has the same variance, exactly.
        let lift = |v: &[u16]| v.iter().map(|x| x + 65000 - 100).collect::<Vec<u16>>();
        let s = pair_sums(&lift(&[100, 102, 98, 101]), &lift(&[101, 100, 99, 103]));
        assert_eq!(s.temporal_variance_dn2(), Some(1.125));
    }
}
