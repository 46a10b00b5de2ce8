//! HDR: several readouts of one pixel (exposures of different lengths, or two conversion
//! gains) stitched into one linear output, its SNR at a scene level, each transition's SNR dip,
//! and the combined dynamic range.
//!
//! Works on readouts the model resolved (each one's [`OutputNoise`] and capacity); no
//! scenario, light or parsing here.
//!
//! # The stitch (derived; REFERENCES.md §11)
//!
//! Readouts are ordered from the most sensitive (the longest exposure, or the high gain) to
//! the least. The scene level x is written in electrons of the first readout (its output-pixel
//! signal); readout j sees S_j = x / g_j, where g_j is its scale (t_1 / t_j for exposures, 1
//! for a second conversion gain, which reads the same charge), and is multiplied back by g_j,
//! so the output is linear in x. Its variance in output units is g_j²·V_j(S_j), so
//! SNR_j(x) = S_j / √V_j(S_j).
//!
//! The output uses readout j until S_j reaches the switch point f·C_j (f the switch
//! fraction, C_j readout j's capacity), so transition j sits at x_j = f·C_j·g_j; the last
//! readout is used up to its own capacity. With a blend fraction β > 0, the output over
//! [(1 − β)·x_j, x_j] is (1 − w)·g_j·S_j + w·g_{j+1}·S_{j+1} with w rising linearly from 0 to 1,
//! whose variance is
//!
//! ```text
//! (1 − w)²·g_a²·V_a + w²·g_b²·V_b + 2w(1 − w)·g_a·g_b·Cov_ab
//! ```
//!
//! Cov_ab: the fixed-pattern parts belong to the same pixel, so they are fully correlated
//! (√(dsnu_a·dsnu_b) + √(prnu_a·prnu_b)); the shot noise is fully correlated when both
//! readouts read the same charge (dual conversion gain, √(shot_a·shot_b)) and independent for
//! separate exposures; read, reset and quantization noise are always independent.
//!
//! The dip of a transition is SNR just below it (readout j alone, at the start of the blend)
//! over the lowest SNR from there to just above it (readout j + 1 alone at x_j), in dB. With a
//! hard switch and shot-limited readouts the dip is 10·log10(g_{j+1}/g_j).
//!
//! The combined dynamic range is the top of the last readout, g_last·C_last, over the first
//! readout's temporal minimum detectable signal.

use crate::output_noise::{OutputNoise, Variances};

/// One readout of an HDR pixel: an exposure, or one of two conversion gains.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Readout {
    /// g: electrons of the first readout per electron of this one (t_1/t_j; 1 for a gain).
    pub scale: f64,
    /// C: the output-pixel signal (e⁻ of this readout, dark excluded) at which it saturates.
    pub capacity_e: f64,
    /// Its noise terms.
    pub noise: OutputNoise,
}

/// Whether the readouts read the same charge (their shot noise is shared).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Sharing {
    /// Separate integrations (multi-exposure HDR): independent shot noise.
    SeparateExposures,
    /// The same charge read at two conversion gains: shared shot noise.
    SameCharge,
}

/// The stitching rule.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stitch {
    /// f: the output leaves a readout when its signal reaches f × its capacity, 0 < f ≤ 1.
    pub switch_fraction: f64,
    /// β: the width of the blend below each switch point as a fraction of its level, 0 ≤ β < 1
    /// (0: a hard switch).
    pub blend_fraction: f64,
    /// Whether the readouts share their charge.
    pub sharing: Sharing,
}

/// The combined output at one scene level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Combined {
    /// Temporal SNR; 0 at zero signal.
    pub snr_temporal: f64,
    /// Temporal and fixed-pattern SNR.
    pub snr_total: f64,
    /// The readout in use (the lower one inside a blend).
    pub readout: usize,
    /// The blend weight of the next readout (0 outside a blend).
    pub blend_weight: f64,
    /// The last readout is beyond its capacity: the output clips.
    pub saturated: bool,
}

/// One transition between readout `from` and `from + 1`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Transition {
    /// Index of the readout the output leaves.
    pub from: usize,
    /// Scene level of the switch point x_j, e⁻ of the first readout (output pixel).
    pub level_e: f64,
    /// Scene level where the blend starts (= `level_e` for a hard switch).
    pub blend_start_e: f64,
    /// Temporal SNR just below the transition (readout `from` alone).
    pub snr_below: f64,
    /// Lowest temporal SNR from the blend's start to just above the switch.
    pub snr_above: f64,
    /// `snr_below` over `snr_above`, dB.
    pub dip_db: f64,
    /// The same with fixed-pattern noise: total SNR below, lowest above, and the dip in dB.
    pub snr_total_below: f64,
    /// See `snr_total_below`.
    pub snr_total_above: f64,
    /// See `snr_total_below`.
    pub dip_db_total: f64,
    /// The next readout is already beyond its capacity at the switch point.
    pub next_saturated: bool,
}

/// Points at which a blend's lowest SNR is sought (the SNR along a blend is smooth: a ratio of
/// a linear function to the square root of a quadratic in w, so 256 intervals find its minimum
/// to far better than the 0.001 dB the report shows; common practice, no source).
const BLEND_SAMPLES: u32 = 256;

fn db(ratio: f64) -> f64 {
    20.0 * ratio.log10()
}

fn snr(signal: f64, variance: f64) -> f64 {
    if signal > 0.0 && variance > 0.0 {
        signal / variance.sqrt()
    } else {
        0.0
    }
}

impl Readout {
    fn signal_at(&self, level_e: f64) -> f64 {
        level_e / self.scale
    }
    fn variances_at(&self, level_e: f64) -> Variances {
        self.noise.at(self.signal_at(level_e))
    }
    /// The scene level at which this readout saturates, e⁻ of the first readout.
    fn top_e(&self) -> f64 {
        self.scale * self.capacity_e
    }
}

/// The switch levels x_j = f·C_j·g_j of every readout but the last.
fn switch_levels<'a>(
    readouts: &'a [Readout],
    stitch: &'a Stitch,
) -> impl Iterator<Item = f64> + 'a {
    let last = readouts.len().saturating_sub(1);
    readouts
        .iter()
        .take(last)
        .map(|r| stitch.switch_fraction * r.top_e())
}

/// Temporal and total SNR of a blend of readouts `a` and `b` with weight `w` on `b`.
fn blended(a: &Readout, b: &Readout, stitch: &Stitch, level_e: f64, w: f64) -> (f64, f64) {
    let (va, vb) = (a.variances_at(level_e), b.variances_at(level_e));
    let (ga, gb) = (a.scale, b.scale);
    let (ka, kb) = ((1.0 - w) * ga, w * gb);
    let shared_shot = match stitch.sharing {
        Sharing::SameCharge => (va.shot() * vb.shot()).sqrt(),
        Sharing::SeparateExposures => 0.0,
    };
    let temporal = ka * ka * va.temporal() + kb * kb * vb.temporal() + 2.0 * ka * kb * shared_shot;
    let fixed_a = va.dsnu + va.prnu;
    let fixed_b = vb.dsnu + vb.prnu;
    let shared_fixed = (va.dsnu * vb.dsnu).sqrt() + (va.prnu * vb.prnu).sqrt();
    let total = temporal + ka * ka * fixed_a + kb * kb * fixed_b + 2.0 * ka * kb * shared_fixed;
    (snr(level_e, temporal), snr(level_e, total))
}

fn alone(r: &Readout, level_e: f64) -> (f64, f64) {
    let s = r.signal_at(level_e);
    let v = r.noise.at(s);
    (snr(s, v.temporal()), snr(s, v.total()))
}

/// The combined output's SNR at scene level `level_e` (e⁻ of the first readout).
///
/// With one readout this is that readout's own SNR, so a single-exposure HDR scenario gives
/// the plain figures.
///
/// ```
/// use engine::hdr::{combined_at, Readout, Sharing, Stitch};
/// use engine::output_noise::OutputNoise;
/// // REFERENCES.md §11: long exposure saturating at 10 000 e⁻, R = 16, read noise 2 e⁻.
/// let noise = OutputNoise { frames: 1.0, reads: 1.0, pixels: 1.0, dark_e: 0.0,
///     background_e: 0.0, read_e2: 4.0, reset_e2: 0.0, quantization_e2: 0.0, dsnu_e2: 0.0,
///     prnu: 0.0 };
/// let long = Readout { scale: 1.0, capacity_e: 10_000.0, noise };
/// let short = Readout { scale: 16.0, capacity_e: 10_000.0, noise };
/// let stitch = Stitch { switch_fraction: 1.0, blend_fraction: 0.0,
///     sharing: Sharing::SeparateExposures };
/// let above = combined_at(&[long, short], &stitch, 10_000.0 * (1.0 + 1e-12));
/// assert!((20.0 * above.snr_temporal.log10() - 27.931).abs() < 5e-4);
/// ```
#[must_use]
pub fn combined_at(readouts: &[Readout], stitch: &Stitch, level_e: f64) -> Combined {
    let pure = |j: usize, r: &Readout| {
        let (t, tot) = alone(r, level_e);
        Combined {
            snr_temporal: t,
            snr_total: tot,
            readout: j,
            blend_weight: 0.0,
            saturated: false,
        }
    };
    for (j, (x_j, pair)) in switch_levels(readouts, stitch)
        .zip(readouts.windows(2))
        .enumerate()
    {
        let [a, b] = pair else { continue };
        if level_e > x_j {
            continue;
        }
        let start = (1.0 - stitch.blend_fraction) * x_j;
        if stitch.blend_fraction > 0.0 && level_e > start && x_j > start {
            let w = (level_e - start) / (x_j - start);
            let (t, tot) = blended(a, b, stitch, level_e, w);
            return Combined {
                snr_temporal: t,
                snr_total: tot,
                readout: j,
                blend_weight: w,
                saturated: false,
            };
        }
        return pure(j, a);
    }
    match readouts.last() {
        Some(last) => Combined {
            saturated: last.signal_at(level_e) > last.capacity_e,
            ..pure(readouts.len() - 1, last)
        },
        None => Combined {
            snr_temporal: 0.0,
            snr_total: 0.0,
            readout: 0,
            blend_weight: 0.0,
            saturated: false,
        },
    }
}

/// Every transition with its level and SNR dip.
///
/// ```
/// use engine::hdr::{transitions, Readout, Sharing, Stitch};
/// use engine::output_noise::OutputNoise;
/// // REFERENCES.md §11, dual conversion gain: high gain 1.5 e⁻ read noise saturating at
/// // 6000 e⁻, low gain 10 e⁻; switching at 6000 e⁻: 37.780 dB below, 37.710 dB above.
/// let noise = |read_e: f64| OutputNoise { frames: 1.0, reads: 1.0, pixels: 1.0,
///     dark_e: 0.0, background_e: 0.0, read_e2: read_e * read_e, reset_e2: 0.0,
///     quantization_e2: 0.0, dsnu_e2: 0.0, prnu: 0.0 };
/// let high = Readout { scale: 1.0, capacity_e: 6000.0, noise: noise(1.5) };
/// let low = Readout { scale: 1.0, capacity_e: 60_000.0, noise: noise(10.0) };
/// let stitch = Stitch { switch_fraction: 1.0, blend_fraction: 0.0, sharing: Sharing::SameCharge };
/// let t = transitions(&[high, low], &stitch)[0];
/// assert!((20.0 * t.snr_below.log10() - 37.780).abs() < 5e-4);
/// assert!((20.0 * t.snr_above.log10() - 37.710).abs() < 5e-4);
/// assert!((t.dip_db - 0.070).abs() < 5e-4);
/// ```
#[must_use]
pub fn transitions(readouts: &[Readout], stitch: &Stitch) -> Vec<Transition> {
    switch_levels(readouts, stitch)
        .zip(readouts.windows(2))
        .enumerate()
        .filter_map(|(j, (x_j, pair))| {
            let [a, b] = pair else { return None };
            let start = (1.0 - stitch.blend_fraction) * x_j;
            let (below, below_total) = alone(a, start);
            let (mut above, mut above_total) = alone(b, x_j);
            if stitch.blend_fraction > 0.0 && x_j > start {
                for i in 0..=BLEND_SAMPLES {
                    let w = f64::from(i) / f64::from(BLEND_SAMPLES);
                    let (t, tot) = blended(a, b, stitch, start + w * (x_j - start), w);
                    above = above.min(t);
                    above_total = above_total.min(tot);
                }
            }
            let dip = |hi: f64, lo: f64| {
                if hi > 0.0 && lo > 0.0 {
                    db(hi) - db(lo)
                } else {
                    0.0
                }
            };
            Some(Transition {
                from: j,
                level_e: x_j,
                blend_start_e: start,
                snr_below: below,
                snr_above: above,
                dip_db: dip(below, above),
                snr_total_below: below_total,
                snr_total_above: above_total,
                dip_db_total: dip(below_total, above_total),
                next_saturated: b.signal_at(x_j) > b.capacity_e,
            })
        })
        .collect()
}

/// The highest scene level the combined output holds (the last readout's top), e⁻ of the
/// first readout; `None` when its capacity is ≤ 0 (dark charge fills it).
#[must_use]
pub fn top_level_e(readouts: &[Readout]) -> Option<f64> {
    readouts
        .last()
        .map(Readout::top_e)
        .filter(|t| *t > 0.0 && t.is_finite())
}

/// The combined dynamic range: the top level over the first readout's temporal minimum
/// detectable signal (e⁻, output pixel); `None` when either does not exist.
///
/// ```
/// use engine::hdr::{dynamic_range, Readout};
/// use engine::output_noise::OutputNoise;
/// let noise = OutputNoise { frames: 1.0, reads: 1.0, pixels: 1.0, dark_e: 0.0,
///     background_e: 0.0, read_e2: 4.0, reset_e2: 0.0, quantization_e2: 0.0, dsnu_e2: 0.0,
///     prnu: 0.0 };
/// let long = Readout { scale: 1.0, capacity_e: 10_000.0, noise };
/// let short = Readout { scale: 16.0, capacity_e: 10_000.0, noise };
/// // 16 × 10 000 e⁻ over a 2.56 e⁻ threshold (derived): 62 500.
/// assert_eq!(dynamic_range(&[long, short], 2.56), Some(62_500.0));
/// ```
#[must_use]
pub fn dynamic_range(readouts: &[Readout], min_detectable_e: f64) -> Option<f64> {
    top_level_e(readouts)
        .filter(|_| min_detectable_e > 0.0)
        .map(|top| top / min_detectable_e)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code
mod tests {
    use super::*;

    fn noise(read_e: f64, prnu: f64) -> OutputNoise {
        OutputNoise {
            frames: 1.0,
            reads: 1.0,
            pixels: 1.0,
            dark_e: 0.0,
            background_e: 0.0,
            read_e2: read_e * read_e,
            reset_e2: 0.0,
            quantization_e2: 0.0,
            dsnu_e2: 0.0,
            prnu,
        }
    }

    #[test]
    fn multi_exposure_dip_matches_references_section_11() {
        // REFERENCES.md §11: 39.998 dB below, 27.931 dB above, dip 12.067 dB.
        let long = Readout {
            scale: 1.0,
            capacity_e: 10_000.0,
            noise: noise(2.0, 0.0),
        };
        let short = Readout {
            scale: 16.0,
            ..long
        };
        let stitch = Stitch {
            switch_fraction: 1.0,
            blend_fraction: 0.0,
            sharing: Sharing::SeparateExposures,
        };
        let t = transitions(&[long, short], &stitch);
        assert_eq!(t.len(), 1);
        assert!((db(t[0].snr_below) - 39.998).abs() < 5e-4);
        assert!((db(t[0].snr_above) - 27.931).abs() < 5e-4);
        assert!((t[0].dip_db - 12.067).abs() < 5e-4);
        assert_eq!(t[0].level_e, 10_000.0);
        assert!(!t[0].next_saturated);
    }

    #[test]
    fn a_blend_is_continuous_at_both_ends() {
        let long = Readout {
            scale: 1.0,
            capacity_e: 10_000.0,
            noise: noise(2.0, 0.01),
        };
        let short = Readout { scale: 8.0, ..long };
        let stitch = Stitch {
            switch_fraction: 0.9,
            blend_fraction: 0.2,
            sharing: Sharing::SeparateExposures,
        };
        let x = 9000.0;
        let start = 0.8 * x;
        let eps = 1e-9;
        for (lo, hi) in [(start - eps, start + eps), (x - eps, x + eps)] {
            let a = combined_at(&[long, short], &stitch, lo);
            let b = combined_at(&[long, short], &stitch, hi);
            assert!((a.snr_temporal - b.snr_temporal).abs() < 1e-6);
            assert!((a.snr_total - b.snr_total).abs() < 1e-6);
        }
        let t = transitions(&[long, short], &stitch)[0];
        // The blend's lowest point lies at or below the short exposure alone at the switch.
        assert!(t.snr_above <= alone(&short, x).0 + 1e-12);
        assert!(t.dip_db > 0.0);
    }

    #[test]
    fn one_readout_is_the_plain_pixel() {
        let r = Readout {
            scale: 1.0,
            capacity_e: 5000.0,
            noise: noise(3.0, 0.0),
        };
        let stitch = Stitch {
            switch_fraction: 0.5,
            blend_fraction: 0.3,
            sharing: Sharing::SeparateExposures,
        };
        let c = combined_at(&[r], &stitch, 1000.0);
        assert_eq!(c.snr_temporal, 1000.0 / (1000.0f64 + 9.0).sqrt());
        assert!(transitions(&[r], &stitch).is_empty());
        assert!(combined_at(&[r], &stitch, 6000.0).saturated);
    }
}
