//! A small radix-2 fast Fourier transform, for the spectrograms of averaged frames.
//!
//! Power-of-two lengths only (the caller takes the largest power of two that fits a row); two
//! real lines go through one complex transform. Hand-written because a general FFT crate would
//! outweigh the frame worker's whole analysis; it knows nothing of frames or statistics.

/// A transform of one power-of-two length, with its twiddle factors computed once.
pub(crate) struct Fft {
    len: usize,
    /// cos and sin of −2πk/len for k < len/2.
    twiddles: Vec<(f64, f64)>,
}

impl Fft {
    /// A transform of length `len`; `None` unless `len` is a power of two ≥ 2.
    pub(crate) fn new(len: usize) -> Option<Fft> {
        if len < 2 || !len.is_power_of_two() {
            return None;
        }
        let twiddles = (0..len / 2)
            .map(|k| {
                let angle = -2.0 * std::f64::consts::PI * k as f64 / len as f64;
                (angle.cos(), angle.sin())
            })
            .collect();
        Some(Fft { len, twiddles })
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
        let n = self.len;
        if re.len() != n || im.len() != n {
            return;
        }
        let bits = n.trailing_zeros();
        for i in 0..n {
            let j = i.reverse_bits() >> (usize::BITS - bits);
            if j > i {
                re.swap(i, j);
                im.swap(i, j);
            }
        }
        let mut half = 1;
        while half < n {
            let stride = n / (2 * half);
            for (block_re, block_im) in re
                .chunks_exact_mut(2 * half)
                .zip(im.chunks_exact_mut(2 * half))
            {
                let (lo_re, hi_re) = block_re.split_at_mut(half);
                let (lo_im, hi_im) = block_im.split_at_mut(half);
                let tw = self.twiddles.iter().step_by(stride);
                for ((((xr, xi), yr), yi), (wr, wi)) in lo_re
                    .iter_mut()
                    .zip(lo_im.iter_mut())
                    .zip(hi_re.iter_mut())
                    .zip(hi_im.iter_mut())
                    .zip(tw)
                {
                    let (tr, ti) = (*yr * wr - *yi * wi, *yr * wi + *yi * wr);
                    let (ar, ai) = (*xr, *xi);
                    *xr = ar + tr;
                    *xi = ai + ti;
                    *yr = ar - tr;
                    *yi = ai - ti;
                }
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
