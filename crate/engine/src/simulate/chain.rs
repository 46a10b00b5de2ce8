//! The pixel and readout chain: from mean electrons to digital numbers, one output row at a time.
//!
//! Stages, per physical pixel and frame, in the order a sensor applies them:
//!
//! 1. **Response** ([`Response`]): the mean photo-charge (signal and background light) times the
//!    pixel's PRNU gain 1 + p·z (z from the PRNU map, fixed by the seed; a gain below 0 is
//!    taken as 0), plus the mean dark charge.
//! 2. **Charge** ([`Well`]): one Poisson count of that mean (photon, background and dark shot
//!    noise together: a sum of independent Poisson counts is a Poisson count of the summed
//!    mean), clipped at the full well. With `charge` binning the b² clipped charges are summed
//!    and clipped at the summing well, when the scenario gives one.
//! 3. **Fixed offset**: the pixel's DSNU offset σ_DSNU·z' (z' from the DSNU map), in electrons,
//!    summed over a charge bin (so a bin carries b²·σ²_DSNU, as the model says).
//! 4. **Readout** ([`Readout`]): one normal deviate of variance σ_r² + σ_k² (read noise and the
//!    readout's reset noise: 0, kT/C or 2kT/C; a sum of independent normal deviates is one
//!    normal deviate of the summed variance), then the ADC: DN = ⌊black + K·e + ½⌋ clipped to
//!    0 … 2^bits − 1 (quantization and clipping happen here, not as added noise).
//! 5. **Combining**: `digital` binning sums the b² pixels' DN; frame averaging takes the mean
//!    of N frames' output values.
//!
//! Where colour and HDR will slot in: a colour filter array makes the response's gain depend
//! on the pixel's channel (per-channel QE), so [`Response::mean_e`] takes the physical
//! position; multi-exposure or dual-conversion-gain HDR reads one charge through several
//! [`Readout`]s and merges them, which stays inside stage 4 and 5. Only mono, single-gain
//! sensors are simulated today.
//!
//! This file knows no scene layout and no file format; the draws come from `random.rs`.

use super::random::{Source, Stream};
use crate::scenario::BinningMode;

/// A pixel whose mean charge is this many standard deviations (√mean) above its full well is
/// clipped without a Poisson draw: the chance that the count falls below the well is below
/// 10⁻²³ (normal tail at 10σ), and it keeps means beyond the sampler's limit out of it.
const SURE_SATURATION_SIGMAS: f64 = 10.0;

/// Stage 1: mean charge of one physical pixel in one frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Response {
    /// Background-light electrons per pixel per frame (PRNU applies to them too).
    pub background_e: f64,
    /// Dark electrons per pixel per frame.
    pub dark_e: f64,
    /// PRNU as a fraction p (prnu_percent / 100).
    pub prnu: f64,
    /// DSNU, e⁻ rms.
    pub dsnu_e: f64,
}

impl Response {
    /// The mean charge of a pixel with PRNU deviate `z` receiving `signal_e` signal electrons
    /// on average. Colour will add the pixel's position here (its filter's QE).
    fn mean_e(&self, signal_e: f64, z: f64) -> f64 {
        let gain = (1.0 + self.prnu * z).max(0.0);
        (signal_e + self.background_e) * gain + self.dark_e
    }
}

/// Stage 2: the wells.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Well {
    /// Full-well capacity of one pixel, e⁻.
    pub full_well_e: f64,
    /// Capacity of the node charge-binned charge is summed in, e⁻ (charge binning only).
    pub summing_well_e: Option<f64>,
}

impl Well {
    /// One pixel's charge: a Poisson count of `mean`, clipped at the full well.
    fn collect(&self, mean: f64, noise: &mut Source) -> f64 {
        if mean - self.full_well_e > SURE_SATURATION_SIGMAS * mean.sqrt() {
            return self.full_well_e;
        }
        noise.poisson(mean).min(self.full_well_e)
    }
}

/// Stage 4: analog noise, gain and the ADC.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Readout {
    /// √(σ_r² + σ_k²): read noise and the readout's reset noise of one read, e⁻ rms.
    pub analog_noise_e: f64,
    /// System gain K, DN/e⁻.
    pub gain_dn_per_e: f64,
    /// Black level, DN.
    pub black_level_dn: f64,
    /// ADC full scale 2^bits − 1, DN.
    pub full_scale_dn: f64,
}

impl Readout {
    /// One read of `charge_e` electrons (offsets included) into DN.
    fn read(&self, charge_e: f64, noise: &mut Source) -> f64 {
        let e = if self.analog_noise_e > 0.0 {
            charge_e + self.analog_noise_e * noise.normal()
        } else {
            charge_e
        };
        (self.black_level_dn + self.gain_dn_per_e * e + 0.5)
            .floor()
            // max then min, not f64::clamp, whose check of its bounds links core's float
            // formatting into the wasm (crate::decimal); the same value for a finite sample.
            .max(0.0)
            .min(self.full_scale_dn)
    }
}

/// The whole chain of one simulated camera setting.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Chain {
    pub response: Response,
    pub well: Well,
    pub readout: Readout,
    /// Binning factor b.
    pub binning: u32,
    /// Where binned pixels are summed.
    pub binning_mode: BinningMode,
    /// Frames averaged, N.
    pub frames_averaged: u32,
}

/// Which temporal noise stream a row draws from.
#[derive(Debug, Clone, Copy)]
pub(crate) struct NoiseKey {
    pub seed: u64,
    pub kind: Stream,
    /// The first frame index of this output frame (frame k of the average is `first + k`).
    pub first_frame: u64,
}

impl Chain {
    /// The output value's largest possible value, DN: the ADC's full scale, b² times for
    /// `digital` binning.
    pub(crate) fn output_full_scale_dn(&self) -> f64 {
        self.readout.full_scale_dn * self.digital_sum_count()
    }

    /// The black level of an output value, DN (b² times for `digital` binning).
    pub(crate) fn output_black_dn(&self) -> f64 {
        self.readout.black_level_dn * self.digital_sum_count()
    }

    fn digital_sum_count(&self) -> f64 {
        match self.binning_mode {
            BinningMode::Digital => f64::from(self.binning) * f64::from(self.binning),
            BinningMode::Charge => 1.0,
        }
    }

    /// Simulate output row `y` (`out.len()` output pixels wide): `signal_e[x]` is the mean
    /// signal electrons of each physical pixel of output pixel x. Writes the frame-averaged
    /// output values, DN.
    ///
    /// The PRNU and DSNU maps are drawn per physical row from streams keyed by the seed and the
    /// row alone, so a pixel's fixed pattern is the same in every frame and at every frame
    /// size; the temporal noise of frame k comes from the stream (noise.kind, y, first + k).
    pub(crate) fn row(&self, y: u32, signal_e: &[f64], noise: NoiseKey, out: &mut [f64]) {
        let b = self.binning.max(1);
        let frames = self.frames_averaged.max(1);
        let width = out.len().min(signal_e.len());
        for v in out.iter_mut() {
            *v = 0.0;
        }
        let first_phys_row = u64::from(y) * u64::from(b);
        let prnu_on = self.response.prnu > 0.0;
        let dsnu_on = self.response.dsnu_e > 0.0;
        let charge_binning = self.binning_mode == BinningMode::Charge;
        for k in 0..frames {
            // The maps restart at the row's beginning in every frame: same pattern each time.
            let mut prnu: Vec<Source> = (0..u64::from(b))
                .filter(|_| prnu_on)
                .map(|j| Source::new(noise.seed, Stream::PrnuMap, first_phys_row + j, 0))
                .collect();
            let mut dsnu: Vec<Source> = (0..u64::from(b))
                .filter(|_| dsnu_on)
                .map(|j| Source::new(noise.seed, Stream::DsnuMap, first_phys_row + j, 0))
                .collect();
            let mut temporal = Source::new(
                noise.seed,
                noise.kind,
                u64::from(y),
                noise.first_frame.wrapping_add(u64::from(k)),
            );
            for (value, s) in out.iter_mut().zip(signal_e).take(width) {
                let mut charge_sum = 0.0;
                let mut offset_sum = 0.0;
                let mut dn_sum = 0.0;
                for j in 0..b as usize {
                    for _ in 0..b {
                        let z = prnu.get_mut(j).map_or(0.0, Source::normal);
                        let offset = dsnu
                            .get_mut(j)
                            .map_or(0.0, |d| self.response.dsnu_e * d.normal());
                        let mean = self.response.mean_e(*s, z);
                        let charge = self.well.collect(mean, &mut temporal);
                        if charge_binning {
                            charge_sum += charge;
                            offset_sum += offset;
                        } else {
                            dn_sum += self.readout.read(charge + offset, &mut temporal);
                        }
                    }
                }
                if charge_binning {
                    let summed = match self.well.summing_well_e {
                        Some(w) => charge_sum.min(w),
                        None => charge_sum,
                    };
                    dn_sum = self.readout.read(summed + offset_sum, &mut temporal);
                }
                *value += dn_sum;
            }
        }
        if frames > 1 {
            let n = f64::from(frames);
            for v in out.iter_mut() {
                *v /= n;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code

    use super::*;

    fn chain() -> Chain {
        Chain {
            response: Response {
                background_e: 0.0,
                dark_e: 0.0,
                prnu: 0.0,
                dsnu_e: 0.0,
            },
            well: Well {
                full_well_e: 1000.0,
                summing_well_e: None,
            },
            readout: Readout {
                analog_noise_e: 0.0,
                gain_dn_per_e: 1.0,
                black_level_dn: 10.0,
                full_scale_dn: 4095.0,
            },
            binning: 1,
            binning_mode: BinningMode::Digital,
            frames_averaged: 1,
        }
    }

    fn key() -> NoiseKey {
        NoiseKey {
            seed: 5,
            kind: Stream::SceneNoise,
            first_frame: 0,
        }
    }

    fn run(c: &Chain, signal: f64, width: usize) -> Vec<f64> {
        let mut out = vec![0.0; width];
        c.row(0, &vec![signal; width], key(), &mut out);
        out
    }

    #[test]
    fn without_noise_sources_the_chain_is_exact() {
        // No light: black level exactly. Full well clips: 10 + 1000.
        assert!(run(&chain(), 0.0, 50).iter().all(|v| *v == 10.0));
        assert!(run(&chain(), 1e9, 50).iter().all(|v| *v == 1010.0));
        // The ADC clips at full scale and at 0.
        let mut c = chain();
        c.readout.gain_dn_per_e = 100.0;
        assert!(run(&c, 1e9, 10).iter().all(|v| *v == 4095.0));
        c.readout.black_level_dn = 0.0;
        c.response.dsnu_e = 50.0;
        c.well.full_well_e = 1e-9;
        let v = run(&c, 0.0, 2000);
        assert!(v
            .iter()
            .all(|x| (0.0..=4095.0).contains(x) && x.fract() == 0.0));
        assert!(v.contains(&0.0) && v.iter().any(|x| *x > 0.0));
    }

    #[test]
    fn binning_sums_and_averaging_divides() {
        // 2 × 2 digital: four black levels; charge: one.
        let mut c = chain();
        c.binning = 2;
        assert!(run(&c, 0.0, 5).iter().all(|v| *v == 40.0));
        assert_eq!(c.output_black_dn(), 40.0);
        assert_eq!(c.output_full_scale_dn(), 4.0 * 4095.0);
        c.binning_mode = BinningMode::Charge;
        assert!(run(&c, 0.0, 5).iter().all(|v| *v == 10.0));
        // Charge binning: four pixels at their full well sum to 4000, unless a summing well
        // of 2500 holds less.
        assert!(run(&c, 1e9, 5).iter().all(|v| *v == 4010.0));
        c.well.summing_well_e = Some(2500.0);
        assert!(run(&c, 1e9, 5).iter().all(|v| *v == 2510.0));
        // Averaging four frames of a read-noise-only camera gives quarter-DN steps.
        let mut c = chain();
        c.frames_averaged = 4;
        c.readout.analog_noise_e = 3.0;
        let v = run(&c, 0.0, 400);
        assert!(v.iter().all(|x| (x * 4.0).fract() == 0.0));
        assert!(v.iter().any(|x| x.fract() != 0.0));
    }

    #[test]
    fn the_fixed_pattern_repeats_and_the_noise_does_not() {
        let mut c = chain();
        c.response.prnu = 0.05;
        c.response.dsnu_e = 20.0;
        c.readout.gain_dn_per_e = 1e-8;
        c.readout.full_scale_dn = 4_294_967_295.0;
        let mut a = vec![0.0; 300];
        let mut b = vec![0.0; 300];
        let k0 = key();
        let k1 = NoiseKey {
            first_frame: 1,
            ..key()
        };
        // A noiseless readout and a huge signal (10¹¹ e⁻ read as ~1000 DN): shot noise is
        // 1/√(10¹¹) ≈ 3·10⁻⁶ of the value, 0.003 DN, so two frames differ by at most the one DN
        // a rounding can flip …
        c.well.full_well_e = 1e12;
        let big = vec![1e11; 300];
        c.row(3, &big, k0, &mut a);
        c.row(3, &big, k1, &mut b);
        assert!(a.iter().zip(&b).all(|(x, y)| (x - y).abs() <= 1.0));
        // … while the pattern itself varies by ~5 % across the row.
        let mean = a.iter().sum::<f64>() / 300.0;
        let sd = (a.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / 299.0).sqrt();
        assert!((sd / mean - 0.05).abs() < 0.015, "{}", sd / mean);
        // The same row of another seed has another pattern.
        let other = NoiseKey { seed: 6, ..key() };
        c.row(3, &big, other, &mut b);
        assert!(a.iter().zip(&b).any(|(x, y)| (x - y).abs() / x > 0.01));
    }
}
