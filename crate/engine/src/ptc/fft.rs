//! A small radix-2 fast Fourier transform, for the spectrograms of averaged frames.
//!
//! Power-of-two lengths only (the caller takes the largest power of two that fits a row); two
//! real lines go through one complex transform. Hand-written because a general FFT crate would
//! outweigh the frame worker's whole analysis; it knows nothing of frames or statistics.

/// A transform of one power-of-two length, with its twiddle factors computed once.
pub(crate) struct Fft {
    len: usize,
    /// The stage with half-length h uses the factors of k = j·len/(2h), j < h: cos and sin of
    /// −2πk/len at `stage_re[h + j]`, `stage_im[h + j]` (each stage's factors side by side, so
    /// that its butterflies run over plain slices, which the compiler vectorises).
    stage_re: Vec<f64>,
    stage_im: Vec<f64>,
    /// Pairs (i, j), i < j, exchanged by the bit-reversal permutation.
    swaps: Vec<(u32, u32)>,
}

impl Fft {
    /// A transform of length `len`; `None` unless `len` is a power of two ≥ 2.
    pub(crate) fn new(len: usize) -> Option<Fft> {
        if len < 2 || !len.is_power_of_two() {
            return None;
        }
        let twiddles: Vec<(f64, f64)> = (0..len / 2)
            .map(|k| {
                let angle = -2.0 * std::f64::consts::PI * k as f64 / len as f64;
                (angle.cos(), angle.sin())
            })
            .collect();
        let (mut stage_re, mut stage_im) = (vec![0.0; len], vec![0.0; len]);
        let mut half = 1;
        while half < len {
            let stride = len / (2 * half);
            for j in 0..half {
                let (wr, wi) = twiddles.get(j * stride).copied().unwrap_or((1.0, 0.0));
                if let (Some(r), Some(i)) = (stage_re.get_mut(half + j), stage_im.get_mut(half + j))
                {
                    *r = wr;
                    *i = wi;
                }
            }
            half *= 2;
        }
        let bits = len.trailing_zeros();
        let swaps = (0..len)
            .filter_map(|i| {
                let j = i.reverse_bits() >> (usize::BITS - bits);
                (j > i).then(|| (u32::try_from(i).ok(), u32::try_from(j).ok()))
            })
            .filter_map(|(i, j)| Some((i?, j?)))
            .collect();
        Some(Fft {
            len,
            stage_re,
            stage_im,
            swaps,
        })
    }

    pub(crate) fn len(&self) -> usize {
        self.len
    }

    /// In-place forward DFT X_k = Σ x_n e^(−2πi kn/N) of `re` + i·`im` (both `len` long;
    /// shorter slices are left alone).
    ///
    /// # Formula
    /// Iterative Cooley–Tukey, decimation in time: bit-reversed order, then log2 N stages of
    /// butterflies (Cooley & Tukey 1965, from memory; checked against numpy.fft.fft in the
    /// tests).
    pub(crate) fn forward(&self, re: &mut [f64], im: &mut [f64]) {
        #[cfg(target_arch = "x86_64")]
        {
            if std::is_x86_feature_detected!("avx2") {
                // SAFETY: the processor supports AVX2, checked just above; the function is the
                // portable code compiled with that feature enabled (the same operations in the
                // same order: no fused multiply-add, which AVX2 does not enable) and touches no
                // memory otherwise.
                unsafe { self.forward_avx2(re, im) };
                return;
            }
        }
        self.forward_portable(re, im);
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn forward_avx2(&self, re: &mut [f64], im: &mut [f64]) {
        self.forward_portable(re, im);
    }

    #[inline(always)]
    fn forward_portable(&self, re: &mut [f64], im: &mut [f64]) {
        let n = self.len;
        if re.len() != n || im.len() != n {
            return;
        }
        for &(i, j) in &self.swaps {
            re.swap(i as usize, j as usize);
            im.swap(i as usize, j as usize);
        }
        let mut half = 1;
        while half < n {
            let (Some(wre), Some(wim)) = (
                self.stage_re.get(half..2 * half),
                self.stage_im.get(half..2 * half),
            ) else {
                return;
            };
            for (block_re, block_im) in re
                .chunks_exact_mut(2 * half)
                .zip(im.chunks_exact_mut(2 * half))
            {
                let (lo_re, hi_re) = block_re.split_at_mut(half);
                let (lo_im, hi_im) = block_im.split_at_mut(half);
                butterflies(lo_re, lo_im, hi_re, hi_im, wre, wim);
            }
            half *= 2;
        }
    }

    /// Add |X_k|² of two real lines x and y (each `len` long) to `power` for k = 0 … len/2,
    /// through one complex transform of z = x + i·y: X_k = (Z_k + Z*_(N−k))/2,
    /// Y_k = (Z_k − Z*_(N−k))/(2i) (the standard two-for-one real FFT, from memory).
    /// `y` may be `None` for an odd line out.
    pub(crate) fn add_power_of_real_pair(
        &self,
        x: &[f64],
        y: Option<&[f64]>,
        re: &mut Vec<f64>,
        im: &mut Vec<f64>,
        power: &mut [f64],
    ) {
        let n = self.len;
        re.clear();
        re.extend_from_slice(x);
        im.clear();
        match y {
            Some(y) => im.extend_from_slice(y),
            None => im.resize(n, 0.0),
        }
        if re.len() != n || im.len() != n {
            return;
        }
        self.forward(re, im);
        for (k, p) in power.iter_mut().enumerate().take(n / 2 + 1) {
            let m = (n - k) % n;
            let (Some(&zr), Some(&zi), Some(&cr), Some(&ci)) =
                (re.get(k), im.get(k), re.get(m), im.get(m))
            else {
                continue;
            };
            // X_k = ((zr + cr) + i(zi − ci))/2, Y_k = ((zi + ci) − i(zr − cr))/2
            let (xr, xi) = ((zr + cr) / 2.0, (zi - ci) / 2.0);
            *p += xr * xr + xi * xi;
            if y.is_some() {
                let (yr, yi) = ((zi + ci) / 2.0, -(zr - cr) / 2.0);
                *p += yr * yr + yi * yi;
            }
        }
    }
}

/// One stage's butterflies over a block: x ← x + w·y, y ← x − w·y, element by element.
#[inline(always)]
#[allow(clippy::indexing_slicing)] // OK because every slice is cut to the least length n first
fn butterflies(
    lo_re: &mut [f64],
    lo_im: &mut [f64],
    hi_re: &mut [f64],
    hi_im: &mut [f64],
    wre: &[f64],
    wim: &[f64],
) {
    let n = lo_re
        .len()
        .min(lo_im.len())
        .min(hi_re.len())
        .min(hi_im.len())
        .min(wre.len())
        .min(wim.len());
    let (lo_re, lo_im) = (&mut lo_re[..n], &mut lo_im[..n]);
    let (hi_re, hi_im) = (&mut hi_re[..n], &mut hi_im[..n]);
    let (wre, wim) = (&wre[..n], &wim[..n]);
    for j in 0..n {
        let (yr, yi, wr, wi) = (hi_re[j], hi_im[j], wre[j], wim[j]);
        let (tr, ti) = (yr * wr - yi * wi, yr * wi + yi * wr);
        let (ar, ai) = (lo_re[j], lo_im[j]);
        lo_re[j] = ar + tr;
        lo_im[j] = ai + ti;
        hi_re[j] = ar - tr;
        hi_im[j] = ai - ti;
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)] // OK because a failing test should stop loudly
mod tests {
    use super::*;

    #[test]
    fn impulse_and_cosine() {
        // The DFT of a unit impulse is 1 everywhere; of cos(2π·3n/16) it is 8 at k = 3 and 13
        // (the definition of the DFT, by hand).
        let f = Fft::new(16).unwrap();
        let (mut re, mut im) = (vec![0.0; 16], vec![0.0; 16]);
        re[0] = 1.0;
        f.forward(&mut re, &mut im);
        assert!(re.iter().all(|v| (v - 1.0).abs() < 1e-12) && im.iter().all(|v| v.abs() < 1e-12));
        let x: Vec<f64> = (0..16)
            .map(|n| (2.0 * std::f64::consts::PI * 3.0 * f64::from(n) / 16.0).cos())
            .collect();
        let mut power = vec![0.0; 9];
        let (mut a, mut b) = (Vec::new(), Vec::new());
        f.add_power_of_real_pair(&x, Some(&[0.0; 16]), &mut a, &mut b, &mut power);
        for (k, p) in power.iter().enumerate() {
            let want = if k == 3 { 64.0 } else { 0.0 };
            assert!((p - want).abs() < 1e-9, "k {k}: {p}");
        }
        assert!(Fft::new(12).is_none() && Fft::new(1).is_none());
    }

    #[test]
    fn parseval_for_a_real_pair() {
        // Σ|X_k|² over all k = N Σx² (Parseval); with the half spectrum 0…N/2, the bins 1…N/2−1
        // count twice.
        let f = Fft::new(64).unwrap();
        let x: Vec<f64> = (0..64).map(|n| f64::from((n * 37 % 11) - 5)).collect();
        let y: Vec<f64> = (0..64).map(|n| f64::from((n * 13 % 7) - 3)).collect();
        let mut power = vec![0.0; 33];
        let (mut a, mut b) = (Vec::new(), Vec::new());
        f.add_power_of_real_pair(&x, Some(&y), &mut a, &mut b, &mut power);
        let full: f64 = power[0] + power[32] + 2.0 * power[1..32].iter().sum::<f64>();
        let energy: f64 = x.iter().chain(&y).map(|v| v * v).sum::<f64>() * 64.0;
        assert!((full - energy).abs() < 1e-6 * energy);
    }
}
