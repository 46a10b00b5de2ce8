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
#[must_use]
pub fn pair_sums(a: &[u16], b: &[u16]) -> PairSums {
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

#[cfg(test)]
#[allow(clippy::unwrap_used)] // OK because a failing test should stop loudly
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
    fn large_offset_loses_nothing() {
        // The toy pair lifted by 65 000 DN has the same variance, exactly.
        let lift = |v: &[u16]| v.iter().map(|x| x + 65000 - 100).collect::<Vec<u16>>();
        let s = pair_sums(&lift(&[100, 102, 98, 101]), &lift(&[101, 100, 99, 103]));
        assert_eq!(s.temporal_variance_dn2(), Some(1.125));
    }
}
