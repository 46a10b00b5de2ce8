//! The spatial part of one averaged image (one stack, one channel): its row and column profiles,
//! the row/column/pixel split of its variance, horizontal and vertical spectrograms, the
//! histogram of its deviations from the mean, and counts of pixels beyond thresholds.
//!
//! Input is the stack's per-pixel sums S (the averaged image is ⟨y⟩ = S/L) seen through a
//! [`SubImage`] (a whole region, or one 2×2 phase of it), and optionally per-pixel sums of
//! squared pair differences for the high-noise class. Everything is in the container's DN as the
//! frames store them; the analysis rescales to the camera's native DN ([`SpatialSummary::scaled`]).
//! Nothing here knows about other stacks, the gain or which stack is the dark one.

use serde::Serialize;

use super::fft::Fft;

/// Histogram bins of the deviations from the mean (fewer when the values take fewer distinct
/// levels). 128 resolves a Gaussian core and its tails on a logarithmic count axis (common
/// practice, no source).
pub const HISTOGRAM_BINS: u64 = 128;

/// A pixel of the averaged image further than this many standard deviations of that image from
/// its mean is counted as a defect (hot above the mean in the dark, dark below it in a flat).
/// For a Gaussian image the chance is 2·10⁻⁹ per pixel a side, about 0.02 pixels in 12 MP, so
/// a count is a real defect, not a tail (this tool's choice: EMVA 1288 4.0 Linear states the
/// histograms but no thresholds, REFERENCES.md §4 item 11, from memory).
pub const DEFECT_SIGMAS: f64 = 6.0;

/// A dark pixel whose own temporal variance is above this many times its channel's is counted
/// as high-noise (blinking, random telegraph). With P frame pairs the per-pixel estimate of a
/// Gaussian pixel follows σ²·χ²_P/P: with P ≥ 4 the chance of exceeding 10σ² is below 5·10⁻⁸
/// per pixel (χ²₄ > 40), under one pixel in 12 MP (this tool's choice, χ² tail by hand; common
/// statistics, no single source).
pub const HIGH_NOISE_FACTOR: f64 = 10.0;

/// Fewest frame pairs (L ≥ 8 frames) for the high-noise count (see [`HIGH_NOISE_FACTOR`]).
pub const HIGH_NOISE_MIN_PAIRS: u32 = 4;

/// Most lines (rows or columns) a spectrogram averages, evenly spaced through the image: line
/// k of K is line ⌊k·lines/K⌋. Each bin is then a mean of at least 512 values of |DFT|², a
/// relative standard deviation of 1/√512 = 4.4 % for noise-like patterns, enough to see a
/// periodic pattern's peak, while a 12 MP frame needs 1 024 transforms instead of 7 000 (this
/// tool's choice; the standard averages every line, from memory).
pub const SPECTROGRAM_MAX_LINES: usize = 512;

/// A histogram with equal bins.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Histogram {
    /// Lower edge of the first bin.
    pub first_edge: f64,
    /// Width of each bin.
    pub bin_width: f64,
    /// Pixels per bin.
    pub counts: Vec<u64>,
}

/// The row, column and pixel parts of a spatial variance, temporal residual removed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VarianceSplit {
    /// s²_row: variance shared by whole rows, DN².
    pub row_dn2: f64,
    /// s²_col: variance shared by whole columns, DN².
    pub column_dn2: f64,
    /// s²_pix: the rest, pixel to pixel, DN².
    pub pixel_dn2: f64,
}

/// Pixels of a dark image whose temporal noise is far above their channel's.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HighNoise {
    /// Pixels above [`HIGH_NOISE_FACTOR`] × the channel's temporal variance (absent with fewer
    /// than [`HIGH_NOISE_MIN_PAIRS`] pairs).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub count: Option<u64>,
    /// Histogram of each pixel's temporal variance over the channel's (a ratio).
    pub histogram: Histogram,
}

/// The spatial part of one averaged image. DN figures are in the units of the frames handed
/// in until [`SpatialSummary::scaled`] converts them.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpatialSummary {
    /// Rows of the image (of the channel).
    pub rows: u32,
    /// Columns of the image.
    pub columns: u32,
    /// Mean of each row of ⟨y⟩, DN (the vertical profile).
    pub row_means_dn: Vec<f64>,
    /// Mean of each column of ⟨y⟩, DN (the horizontal profile).
    pub column_means_dn: Vec<f64>,
    /// Sample variance of ⟨y⟩, before the temporal residual is removed, DN².
    pub variance_raw_dn2: f64,
    /// Sample variance of the row means, DN².
    pub row_means_variance_dn2: f64,
    /// Sample variance of the column means, DN².
    pub column_means_variance_dn2: f64,
    /// The split (absent with fewer than 3 rows or columns).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub split: Option<VarianceSplit>,
    /// Transform length of the horizontal spectrogram (the largest power of two ≤ columns).
    pub horizontal_length: u32,
    /// Mean over rows (at most [`SPECTROGRAM_MAX_LINES`], evenly spaced) of |DFT|²/P of each
    /// row of ⟨y⟩ − μ (first P columns), bins 0 … P/2, DN².
    pub horizontal_spectrogram_dn2: Vec<f64>,
    /// Transform length of the vertical spectrogram.
    pub vertical_length: u32,
    /// The same over columns (first P rows), DN².
    pub vertical_spectrogram_dn2: Vec<f64>,
    /// Histogram of ⟨y⟩ − μ, DN.
    pub histogram: Histogram,
    /// The defect threshold, [`DEFECT_SIGMAS`] × √variance_raw, DN.
    pub defect_threshold_dn: f64,
    /// Pixels with ⟨y⟩ − μ above the threshold.
    pub above_threshold: u64,
    /// Pixels with ⟨y⟩ − μ below minus the threshold.
    pub below_threshold: u64,
    /// The high-noise class (dark stacks only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub high_noise: Option<HighNoise>,
}

impl SpatialSummary {
    /// The same summary in units `step` times larger (container DN → native DN).
    #[must_use]
    pub fn scaled(&self, step: f64) -> SpatialSummary {
        let s2 = step * step;
        let mut o = self.clone();
        o.row_means_dn.iter_mut().for_each(|v| *v /= step);
        o.column_means_dn.iter_mut().for_each(|v| *v /= step);
        o.variance_raw_dn2 /= s2;
        o.row_means_variance_dn2 /= s2;
        o.column_means_variance_dn2 /= s2;
        if let Some(sp) = o.split.as_mut() {
            sp.row_dn2 /= s2;
            sp.column_dn2 /= s2;
            sp.pixel_dn2 /= s2;
        }
        o.horizontal_spectrogram_dn2
            .iter_mut()
            .for_each(|v| *v /= s2);
        o.vertical_spectrogram_dn2.iter_mut().for_each(|v| *v /= s2);
        o.histogram.first_edge /= step;
        o.histogram.bin_width /= step;
        o.defect_threshold_dn /= step;
        o
    }
}

/// Sample variance (n − 1) of a few values.
pub(crate) fn sample_variance(v: &[f64]) -> f64 {
    let n = v.len() as f64;
    if v.len() < 2 {
        return 0.0;
    }
    let mean = v.iter().sum::<f64>() / n;
    v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)
}

/// The split of a spatial variance into row, column and pixel parts.
///
/// # Formula
/// ```text
/// SS_res  = (MN − 1)·s²_y,meas − N(M − 1)·s²_r,meas − M(N − 1)·s²_c,meas
/// q²      = SS_res / ((M − 1)(N − 1))
/// s²_row  = s²_r,meas − q²/N        s²_col = s²_c,meas − q²/M        s²_pix = q² − σ²_y/L
/// ```
/// M rows, N columns; s²_y,meas: sample variance of ⟨y⟩; s²_r,meas, s²_c,meas: sample
/// variances of its row and column means; q²: the white part (pixel nonuniformity plus the
/// temporal residual σ²_y/L, which enters row and column means as 1/N and 1/M of itself, like
/// pixel nonuniformity). `None` unless M, N ≥ 2.
///
/// # Source
/// The two-way analysis of variance without replication: SS_total = N·SS_rows +
/// M·SS_columns + SS_residual exactly, and E[s²_r,meas] = s²_row + q²/N (any statistics text, from memory).
/// It agrees with REFERENCES.md §4 item 11's derivation to first order in 1/M and 1/N and is
/// unbiased for small images. EMVA 1288 Release 4.0 Linear splits the spatial variances into
/// these three parts (from memory: the standard's own equations were not available).
/// ```
/// // Derived by hand: a 4 × 4 image of pure row offsets (+1, +1, −1, −1) has s²_y = 16/15,
/// // row means ±1 (s² = 4/3), flat column means: all of it is row nonuniformity.
/// let s = engine::ptc::split_variance(16.0 / 15.0, 4.0 / 3.0, 0.0, 4, 4, 0.0, 1).unwrap();
/// assert!((s.row_dn2 - 4.0 / 3.0).abs() < 1e-12);
/// assert!(s.column_dn2.abs() < 1e-12 && s.pixel_dn2.abs() < 1e-12);
/// ```
#[must_use]
pub fn split_variance(
    variance_dn2: f64,
    row_means_variance_dn2: f64,
    column_means_variance_dn2: f64,
    rows: usize,
    columns: usize,
    temporal_variance_dn2: f64,
    frames: u32,
) -> Option<VarianceSplit> {
    if rows < 2 || columns < 2 {
        return None;
    }
    let (m, n) = (rows as f64, columns as f64);
    let ss_res = (m * n - 1.0) * variance_dn2
        - n * (m - 1.0) * row_means_variance_dn2
        - m * (n - 1.0) * column_means_variance_dn2;
    let q2 = ss_res / ((m - 1.0) * (n - 1.0));
    Some(VarianceSplit {
        row_dn2: row_means_variance_dn2 - q2 / n,
        column_dn2: column_means_variance_dn2 - q2 / m,
        pixel_dn2: q2 - temporal_variance_dn2 / f64::from(frames.max(1)),
    })
}

/// Mean over `lines` lines (at most [`SPECTROGRAM_MAX_LINES`]) of |DFT|²/P of the first
/// P = 2^⌊log2 len⌋ values of each line less `mean`; bins 0 … P/2. `(0, [])` when a line is shorter than 4. `fill(i, j0, out)` writes
/// the first P values of lines i … i + out.len()/P − 1 into `out`, line after line (so that
/// a caller can gather several columns per pass over its rows).
pub(crate) fn spectrogram(
    lines: usize,
    len: usize,
    mean: f64,
    l: f64,
    group: usize,
    fill: impl Fn(usize, usize, &mut [u32]),
) -> (u32, Vec<f64>) {
    if len < 4 || lines == 0 {
        return (0, Vec::new());
    }
    let p = 1usize << (usize::BITS - 1 - len.leading_zeros());
    let Some(fft) = Fft::new(p) else {
        return (0, Vec::new());
    };
    let lines = lines.min(SPECTROGRAM_MAX_LINES);
    let group = group.max(2) & !1;
    let mut power = vec![0.0; p / 2 + 1];
    let (mut re, mut im) = (Vec::with_capacity(p), Vec::with_capacity(p));
    let mut raw = vec![0u32; p * group];
    let mut x = vec![0.0; p];
    let mut y = vec![0.0; p];
    let mut i = 0;
    while i < lines {
        let count = group.min(lines - i);
        let buf = raw.get_mut(..p * count).unwrap_or_default();
        fill(i, p, buf);
        let mut chunks = buf.chunks_exact(p);
        while let Some(a) = chunks.next() {
            for (o, v) in x.iter_mut().zip(a) {
                *o = f64::from(*v) / l - mean;
            }
            match chunks.next() {
                Some(b) => {
                    for (o, v) in y.iter_mut().zip(b) {
                        *o = f64::from(*v) / l - mean;
                    }
                    fft.add_power_of_real_pair(&x, Some(&y), &mut re, &mut im, &mut power);
                }
                None => fft.add_power_of_real_pair(&x, None, &mut re, &mut im, &mut power),
            }
        }
        i += count;
    }
    let norm = (lines as f64) * (fft.len() as f64);
    power.iter_mut().for_each(|v| *v /= norm);
    (u32::try_from(p).unwrap_or(0), power)
}

/// The direct form of the summary: one image (a whole region, or one phase seen through a
/// [`direct::SubImage`]) at a time, several passes over it, each figure as its definition
/// reads. The summaries are made by [`super::region`]'s two fused passes instead; this form is
/// kept as the reference they must equal exactly (tests only).
#[cfg(test)]
pub(crate) mod direct {
    use super::*;

    /// A view of the per-pixel sums: rows `y0, y0 + dy, …` and columns `x0, x0 + dx, …` of a
    /// row-major buffer `stride` wide.
    #[derive(Clone, Copy)]
    pub(crate) struct SubImage<'a> {
        pub data: &'a [u32],
        pub stride: usize,
        pub x0: usize,
        pub y0: usize,
        pub step: usize,
        pub columns: usize,
        pub rows: usize,
    }

    impl SubImage<'_> {
        /// The values of one row of the view.
        fn row(&self, r: usize) -> impl Iterator<Item = u32> + '_ {
            let start = (self.y0 + r * self.step) * self.stride + self.x0;
            self.data
                .get(start..)
                .unwrap_or_default()
                .iter()
                .step_by(self.step)
                .take(self.columns)
                .copied()
        }
    }

    /// Summarise one averaged image. `frames` = L; `temporal_variance_dn2` = σ²_y of the same
    /// pixels; `dsq` = per-pixel Σ(a − b)² over `pairs` pairs, seen through the same view.
    pub(crate) fn summarise(
        img: SubImage<'_>,
        frames: u32,
        temporal_variance_dn2: f64,
        dsq: Option<SubImage<'_>>,
        pairs: u32,
    ) -> SpatialSummary {
        let l = f64::from(frames.max(1));
        let (rows, cols) = (img.rows, img.columns);
        let n = (rows * cols) as f64;
        // Integer sums per row and column (exact), then the profiles.
        let mut col_sums = vec![0u64; cols];
        let mut row_means = Vec::with_capacity(rows);
        let (mut s1, mut s2) = (0u128, 0u128);
        let (mut lo, mut hi) = (u32::MAX, 0u32);
        for r in 0..rows {
            let mut rs = 0u64;
            for (c, v) in col_sums.iter_mut().zip(img.row(r)) {
                *c += u64::from(v);
                rs += u64::from(v);
                s2 += u128::from(u64::from(v) * u64::from(v));
                lo = lo.min(v);
                hi = hi.max(v);
            }
            s1 += u128::from(rs);
            row_means.push(rs as f64 / (cols as f64 * l));
        }
        let column_means: Vec<f64> = col_sums
            .iter()
            .map(|c| *c as f64 / (rows as f64 * l))
            .collect();
        let nn = (rows * cols) as u128;
        let variance_raw = if nn > 1 {
            (nn * s2).saturating_sub(s1 * s1) as f64 / (n * (n - 1.0) * l * l)
        } else {
            0.0
        };
        let mean = s1 as f64 / (n * l);
        let row_var = sample_variance(&row_means);
        let col_var = sample_variance(&column_means);
        let split = split_variance(
            variance_raw,
            row_var,
            col_var,
            rows,
            cols,
            temporal_variance_dn2,
            frames,
        );

        // Spectrograms: the first P values of each line, less the image mean.
        let pick = |k: usize, lines: usize| k * lines / lines.clamp(1, SPECTROGRAM_MAX_LINES);
        let horizontal = spectrogram(rows, cols, mean, l, 2, |k0, p, out| {
            for (k, line) in out.chunks_exact_mut(p).enumerate() {
                for (o, v) in line.iter_mut().zip(img.row(pick(k0 + k, rows))) {
                    *o = v;
                }
            }
        });
        // Columns are gathered 16 at a time in one pass over the rows.
        let vertical = spectrogram(cols, rows, mean, l, 16, |k0, p, out| {
            let count = out.len() / p;
            let picked: Vec<usize> = (0..count).map(|k| pick(k0 + k, cols)).collect();
            for r in 0..p {
                let start = (img.y0 + r * img.step) * img.stride + img.x0;
                let row = img.data.get(start..).unwrap_or_default();
                for (k, c) in picked.iter().enumerate() {
                    if let (Some(o), Some(v)) = (out.get_mut(k * p + r), row.get(c * img.step)) {
                        *o = *v;
                    }
                }
            }
        });

        // Histogram of S over [lo, hi] in integer arithmetic: bin = (S − lo)·B / (hi − lo + 1).
        let range = u64::from(hi.saturating_sub(lo)) + 1;
        let bins = HISTOGRAM_BINS.min(range);
        let mut counts = vec![0u64; usize::try_from(bins).unwrap_or(1)];
        let threshold = DEFECT_SIGMAS * variance_raw.sqrt();
        let (mut above, mut below) = (0u64, 0u64);
        for r in 0..rows {
            for v in img.row(r) {
                let i = u64::from(v - lo.min(v)) * bins / range;
                if let Some(c) = counts.get_mut(usize::try_from(i).unwrap_or(0)) {
                    *c += 1;
                }
                let dev = f64::from(v) / l - mean;
                if dev > threshold {
                    above += 1;
                } else if dev < -threshold {
                    below += 1;
                }
            }
        }
        let histogram = Histogram {
            first_edge: f64::from(lo) / l - mean,
            bin_width: range as f64 / (bins as f64 * l),
            counts,
        };

        let high_noise = dsq.map(|d| high_noise(d, temporal_variance_dn2, pairs));
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

    fn high_noise(d: SubImage<'_>, temporal_variance_dn2: f64, pairs: u32) -> HighNoise {
        // Per pixel σ²_i = D_i / (2P); the ratio to the channel's σ² binned in integers of D.
        let denom = 2.0 * f64::from(pairs.max(1)) * temporal_variance_dn2;
        let mut max = 0u32;
        for r in 0..d.rows {
            for v in d.row(r) {
                max = max.max(v);
            }
        }
        let range = u64::from(max) + 1;
        let bins = HISTOGRAM_BINS.min(range);
        let mut counts = vec![0u64; usize::try_from(bins).unwrap_or(1)];
        let limit = HIGH_NOISE_FACTOR * denom;
        let mut count = 0u64;
        for r in 0..d.rows {
            for v in d.row(r) {
                let i = u64::from(v) * bins / range;
                if let Some(c) = counts.get_mut(usize::try_from(i).unwrap_or(0)) {
                    *c += 1;
                }
                if f64::from(v) > limit {
                    count += 1;
                }
            }
        }
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
    }
}
