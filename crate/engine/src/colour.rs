//! Colour channels through white balance and a 3×3 colour-correction matrix: the output
//! channels' means, covariance and SNR, and a luminance SNR.
//!
//! Linear algebra on per-channel means and variances that the model computed; no light, no
//! sensor and no parsing here.
//!
//! # The model (derived; REFERENCES.md §11)
//!
//! One output colour pixel is made of one sample of each raw channel R, G, B (for a Bayer
//! quad, G is the mean of Gr and Gb). Write x for the raw channel values (e⁻), with means μ
//! and covariance Σ. White balance multiplies each channel by its gain, W = diag(w); the
//! colour-correction matrix M then mixes them: o = M·W·x. Linear maps carry means and
//! covariances exactly:
//!
//! ```text
//! E[o] = M·W·μ,        Cov[o] = (M·W)·Σ·(M·W)ᵀ,       SNR_i = E[o]_i / √Cov[o]_ii
//! ```
//!
//! With independent channels Σ is diagonal and σ_i² = Σ_j (m_ij·w_j)²·σ_j². Interpolating
//! demosaicing correlates neighbouring samples; that is modelled by one correlation
//! coefficient ρ between every pair of raw channels, Σ_jk = ρ·σ_j·σ_k (j ≠ k), which is
//! positive semi-definite for 0 ≤ ρ ≤ 1 (its eigenvalues are σ-weighted forms of 1 + 2ρ and
//! 1 − ρ). A luminance Y = l·o (ITU-R BT.709 weights l = (0.2126, 0.7152, 0.0722) for linear
//! RGB, from memory) has mean l·E[o] and variance l·Cov[o]·lᵀ.
//!
//! The *noise gain* of output channel i is √(Cov[o]_ii) / √((W·Σ·W)_ii): how much the matrix
//! multiplies the noise that channel i had after white balance. For the row
//! (1.6, −0.4, −0.2) and equal independent noise it is √(1.6² + 0.4² + 0.2²) = 1.6613,
//! while a neutral grey's signal is multiplied by 1.6 − 0.4 − 0.2 = 1: the SNR falls 1.6613×.

/// Weights of luminance from linear RGB, ITU-R BT.709 (from memory; REFERENCES.md §11).
pub const BT709_LUMINANCE: [f64; 3] = [0.2126, 0.7152, 0.0722];

/// A 3 × 3 matrix, rows first.
pub type Matrix3 = [[f64; 3]; 3];

/// The identity matrix (no colour correction).
pub const IDENTITY: Matrix3 = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]];

/// How raw channels become output channels: white-balance gains, then the colour matrix.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Processing {
    /// White-balance gain of R, G and B (applied first).
    pub white_balance: [f64; 3],
    /// Colour-correction matrix, rows = output R, G, B, applied after white balance.
    pub matrix: Matrix3,
    /// Correlation coefficient ρ between every pair of raw channels' noise, 0 ≤ ρ ≤ 1.
    pub correlation: f64,
}

impl Default for Processing {
    fn default() -> Self {
        Processing {
            white_balance: [1.0; 3],
            matrix: IDENTITY,
            correlation: 0.0,
        }
    }
}

/// One output channel (or the luminance): its mean, noise and SNR.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputChannel {
    /// Mean, e⁻ (in raw electrons scaled by the gains and the matrix).
    pub mean_e: f64,
    /// Noise, rms, in the same units.
    pub noise_e: f64,
    /// mean / noise; `None` when the noise is zero.
    pub snr: Option<f64>,
    /// Noise after the matrix over the noise after white balance alone (see the module doc);
    /// `None` for the luminance and where the white-balanced noise is zero.
    pub noise_gain: Option<f64>,
}

/// Covariance of the raw channels from their variances and one correlation coefficient.
///
/// # Formula
/// ```text
/// Σ_jj = σ_j²,   Σ_jk = ρ·σ_j·σ_k  (j ≠ k)
/// ```
///
/// # Source
/// Definition of the correlation coefficient (common practice, no source).
///
/// ```
/// let s = engine::colour::raw_covariance([4.0, 1.0, 9.0], 0.5);
/// assert_eq!(s[0][1], 0.5 * 2.0 * 1.0);
/// assert_eq!(s[2][2], 9.0);
/// ```
#[must_use]
#[allow(clippy::indexing_slicing)] // OK because every index is an array index below 3 on [_; 3]
pub fn raw_covariance(variances: [f64; 3], correlation: f64) -> Matrix3 {
    let sd = variances.map(|v| v.max(0.0).sqrt());
    let mut s = [[0.0; 3]; 3];
    for (j, row) in s.iter_mut().enumerate() {
        for (k, cell) in row.iter_mut().enumerate() {
            *cell = if j == k {
                variances[j].max(0.0)
            } else {
                correlation * sd[j] * sd[k]
            };
        }
    }
    s
}

/// The output channels R, G, B and the luminance, from the raw channels' means and covariance.
///
/// # Formula
/// ```text
/// A = M·diag(w);   E[o] = A·μ;   Cov[o] = A·Σ·Aᵀ;   Y = l·o with l = BT.709 weights
/// ```
///
/// # Source
/// Means and covariances through a linear map (derived; REFERENCES.md §11's noise-gain check:
/// row (1.6, −0.4, −0.2), equal independent noise → 1.6613).
///
/// ```
/// use engine::colour::{outputs, raw_covariance, Processing};
/// let p = Processing {
///     matrix: [[1.6, -0.4, -0.2], [-0.3, 1.5, -0.2], [-0.1, -0.5, 1.6]],
///     ..Processing::default()
/// };
/// let (rgb, _y) = outputs([100.0; 3], &raw_covariance([1.0; 3], 0.0), &p);
/// // REFERENCES.md §11: noise gain 1.6613, neutral grey's signal × 1.0.
/// assert!((rgb[0].noise_gain.unwrap() - 1.6613).abs() < 5e-5);
/// assert!((rgb[0].mean_e - 100.0).abs() < 1e-9);
/// ```
#[must_use]
#[allow(clippy::indexing_slicing)] // OK because every index is an array index below 3 on [_; 3]
pub fn outputs(
    means_e: [f64; 3],
    covariance: &Matrix3,
    processing: &Processing,
) -> ([OutputChannel; 3], OutputChannel) {
    let w = processing.white_balance;
    let mut a = processing.matrix;
    for row in &mut a {
        for (cell, gain) in row.iter_mut().zip(w) {
            *cell *= gain;
        }
    }
    let mean = apply(&a, means_e);
    let cov = sandwich(&a, covariance);
    let rgb: [OutputChannel; 3] = std::array::from_fn(|i| {
        let var = cov[i][i].max(0.0);
        let balanced = w[i] * w[i] * covariance[i][i].max(0.0);
        OutputChannel {
            mean_e: mean[i],
            noise_e: var.sqrt(),
            snr: ratio(mean[i], var.sqrt()),
            noise_gain: (balanced > 0.0).then(|| (var / balanced).sqrt()),
        }
    });
    let l = BT709_LUMINANCE;
    let y_mean = dot(l, mean);
    let y_var = dot(l, apply(&cov, l)).max(0.0);
    let luminance = OutputChannel {
        mean_e: y_mean,
        noise_e: y_var.sqrt(),
        snr: ratio(y_mean, y_var.sqrt()),
        noise_gain: None,
    };
    (rgb, luminance)
}

fn ratio(mean: f64, noise: f64) -> Option<f64> {
    (noise > 0.0).then(|| mean / noise)
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn apply(m: &Matrix3, v: [f64; 3]) -> [f64; 3] {
    [dot(m[0], v), dot(m[1], v), dot(m[2], v)]
}

/// A·S·Aᵀ.
#[allow(clippy::indexing_slicing)] // OK because every index is an array index below 3 on [_; 3]
fn sandwich(a: &Matrix3, s: &Matrix3) -> Matrix3 {
    let mut out = [[0.0; 3]; 3];
    for (i, out_row) in out.iter_mut().enumerate() {
        for (j, cell) in out_row.iter_mut().enumerate() {
            let mut acc = 0.0;
            for (k, s_row) in s.iter().enumerate() {
                for (l, s_kl) in s_row.iter().enumerate() {
                    acc += a[i][k] * s_kl * a[j][l];
                }
            }
            *cell = acc;
        }
    }
    out
}

#[cfg(test)]
#[allow(clippy::indexing_slicing)] // test code
mod tests {
    use super::*;

    #[test]
    fn identity_keeps_each_channel() {
        let (rgb, _) = outputs(
            [10.0, 20.0, 30.0],
            &raw_covariance([4.0, 9.0, 16.0], 0.0),
            &Processing::default(),
        );
        assert_eq!(rgb[1].mean_e, 20.0);
        assert_eq!(rgb[1].noise_e, 3.0);
        assert_eq!(rgb[1].noise_gain, Some(1.0));
    }

    #[test]
    fn correlation_changes_a_mixing_row() {
        // Row (1, −1, 0) of equal σ: variance 2σ²(1 − ρ) (derived from A·Σ·Aᵀ).
        let p = Processing {
            matrix: [[1.0, -1.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]],
            correlation: 0.25,
            ..Processing::default()
        };
        let (rgb, _) = outputs([5.0; 3], &raw_covariance([1.0; 3], 0.25), &p);
        assert!((rgb[0].noise_e * rgb[0].noise_e - 2.0 * 0.75).abs() < 1e-12);
        assert_eq!(rgb[0].snr, Some(0.0));
    }
}
