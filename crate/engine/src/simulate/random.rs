//! The simulator's random sources: one documented generator, streams derived from the seed, and
//! the draws (Poisson counts, standard normal deviates).
//!
//! # Generator
//! Xoshiro256++ (Blackman and Vigna, "Scrambled linear pseudorandom number generators", ACM
//! TOMS 47(4), 2021), as `rand::rngs::Xoshiro256PlusPlus`: one of rand's *named portable*
//! generators, whose output for a given state is fixed across versions and platforms (rand
//! book, "Reproducibility"). No OS entropy is ever read: every stream's state comes from the
//! user's seed.
//!
//! # Streams
//! Each stream is one kind (the PRNU map, the DSNU map, a frame's temporal noise) at one place
//! (a pixel row) and time (a frame index). Its 256-bit state is four words, each the SplitMix64
//! finaliser of one of (seed, kind, row, frame) offset by a distinct constant; the finaliser is
//! a bijection of 64-bit words, so two different (seed, kind, row, frame) give two different
//! states (no collisions, unlike hashing them into one 64-bit seed). A few outputs are
//! discarded so that states differing in one word are well mixed before use.
//!
//! # Draws
//! `rand_distr` 0.6's `Poisson` (Knuth's multiplication method below a mean of 12, Ahrens and
//! Dieter's 1982 PTRD rejection above) and `StandardNormal` (ziggurat). The distributions'
//! algorithms are pinned by Cargo.lock; rand_distr may change them between versions, which
//! would change the pictures a seed gives but not their statistics.
//!
//! No image, no scene and no sensor here: see `chain.rs` for how the draws make a pixel.

use rand::rngs::Xoshiro256PlusPlus;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Poisson, StandardNormal};

/// What a stream is used for; the discriminant is part of the stream's state.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Stream {
    /// The PRNU map of one physical pixel row (the same in every frame).
    PrnuMap = 1,
    /// The DSNU map of one physical pixel row (the same in every frame).
    DsnuMap = 2,
    /// The temporal noise of one output row of one frame of the test scene.
    SceneNoise = 3,
    /// The temporal noise of one pixel row of one frame of a photon transfer series.
    SeriesNoise = 4,
}

/// Outputs discarded after seeding (see the module doc): enough for every state word to have
/// influenced every other (xoshiro256's state transition mixes all four words within two
/// steps; 8 is common practice, no source).
const WARM_UP_OUTPUTS: u32 = 8;

/// SplitMix64's output function (Steele, Lea and Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014; constants as in Vigna's splitmix64.c): a bijection of u64.
fn mix64(x: u64) -> u64 {
    let mut z = x;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// A seeded source of draws for one stream.
pub(crate) struct Source {
    rng: Xoshiro256PlusPlus,
}

impl Source {
    /// The stream `kind` at `row` and `frame` of the simulation seeded with `seed`.
    pub(crate) fn new(seed: u64, kind: Stream, row: u64, frame: u64) -> Source {
        // Distinct odd offsets (the golden ratio's multiples) keep the words of equal inputs
        // (seed = row, say) different.
        const G: u64 = 0x9e37_79b9_7f4a_7c15;
        let words = [
            mix64(seed),
            mix64((kind as u64).wrapping_add(G)),
            mix64(row.wrapping_add(G.wrapping_mul(3))),
            mix64(frame.wrapping_add(G.wrapping_mul(5))),
        ];
        let mut bytes = [0u8; 32];
        for (chunk, w) in bytes.chunks_exact_mut(8).zip(words) {
            chunk.copy_from_slice(&w.to_le_bytes());
        }
        let mut rng = Xoshiro256PlusPlus::from_seed(bytes);
        for _ in 0..WARM_UP_OUTPUTS {
            let _ = rng.next_u64();
        }
        Source { rng }
    }

    /// A standard normal deviate (mean 0, variance 1).
    pub(crate) fn normal(&mut self) -> f64 {
        StandardNormal.sample(&mut self.rng)
    }

    /// A Poisson count of mean `mean`; 0 for a mean that is not positive.
    ///
    /// Means beyond rand_distr's limit (1.8·10¹⁹) give the mean itself: the chain never asks
    /// for them, since any mean that far above a full well (at most 10¹² e⁻, the scenario's
    /// limit) is clipped to the full well without a draw.
    pub(crate) fn poisson(&mut self, mean: f64) -> f64 {
        if mean.is_nan() || mean <= 0.0 {
            return 0.0;
        }
        match Poisson::new(mean) {
            Ok(p) => p.sample(&mut self.rng),
            Err(_) => mean,
        }
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code

    use super::*;

    #[test]
    fn a_stream_is_a_function_of_its_key() {
        let draws = |s: &mut Source| -> Vec<f64> { (0..5).map(|_| s.normal()).collect() };
        let a = draws(&mut Source::new(7, Stream::SceneNoise, 3, 1));
        let b = draws(&mut Source::new(7, Stream::SceneNoise, 3, 1));
        assert_eq!(a, b);
        for other in [
            Source::new(8, Stream::SceneNoise, 3, 1),
            Source::new(7, Stream::SeriesNoise, 3, 1),
            Source::new(7, Stream::SceneNoise, 4, 1),
            Source::new(7, Stream::SceneNoise, 3, 2),
            // Swapped row and frame must not coincide.
            Source::new(7, Stream::SceneNoise, 1, 3),
        ] {
            let mut other = other;
            assert_ne!(a, draws(&mut other));
        }
    }

    #[test]
    fn poisson_of_nothing_is_zero() {
        let mut s = Source::new(1, Stream::SceneNoise, 0, 0);
        assert_eq!(s.poisson(0.0), 0.0);
        assert_eq!(s.poisson(-3.0), 0.0);
        assert_eq!(s.poisson(f64::NAN), 0.0);
        assert_eq!(s.poisson(1e30), 1e30);
        assert!(s.poisson(4.5) >= 0.0);
    }

    /// Mean and variance of many draws against the distributions' own: Poisson(λ) has mean and
    /// variance λ, the standard normal 0 and 1 (textbook facts). With n = 40 000 draws the
    /// sample mean's standard error is √(λ/n) and the sample variance's is about
    /// σ²·√(2/n) = 0.7 % (plus a 1/(λn) term for the Poisson's excess kurtosis); 5 standard
    /// errors bound a correct sampler's deviation (the seed is fixed anyway).
    #[test]
    fn draws_have_their_distributions_moments() {
        let n = 40_000;
        let mut s = Source::new(2026, Stream::SeriesNoise, 1, 1);
        for lambda in [0.3, 5.0, 11.9, 12.1, 400.0] {
            let x: Vec<f64> = (0..n).map(|_| s.poisson(lambda)).collect();
            let mean = x.iter().sum::<f64>() / n as f64;
            let var = x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
            assert!(
                (mean - lambda).abs() < 5.0 * (lambda / n as f64).sqrt(),
                "{lambda}"
            );
            let se_var = lambda * (2.0 / n as f64 + 1.0 / (lambda * n as f64)).sqrt();
            assert!((var - lambda).abs() < 5.0 * se_var, "{lambda}: {var}");
            assert!(x.iter().all(|v| *v >= 0.0 && v.fract() == 0.0));
        }
        let z: Vec<f64> = (0..n).map(|_| s.normal()).collect();
        let mean = z.iter().sum::<f64>() / n as f64;
        let var = z.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        assert!(mean.abs() < 5.0 / (n as f64).sqrt());
        assert!((var - 1.0).abs() < 5.0 * (2.0 / n as f64).sqrt());
    }
}
