//! Detection beyond the Gaussian picture: exact Poisson–Gaussian probabilities of one output
//! pixel, the Neyman–Pearson threshold and detection signal, photon counting, and contrast
//! detection probability.
//!
//! Pure functions on plain numbers (electrons and probabilities); nothing here reads a
//! scenario or writes a report: [`evaluate`] is the one call the model, the report, the
//! tables and the page are meant to make, with figures that are all finite or `None`.
//!
//! # The model
//! The output pixel's charge, in electrons, is
//! ```text
//! x = N + R,   N ~ Poisson(μ),  μ = s + d   (signal and dark electrons)
//!              R ~ Normal(0, σ²), σ² = σ_read² + σ_reset² + σ_quant²
//! ```
//! (REFERENCES.md §8). The dark charge belongs in the Poisson mean, not in σ², because it is
//! made of whole electrons like the signal: its shot noise has the Poisson's skew and
//! discreteness, which is exactly what the Gaussian picture loses at low counts. Read,
//! reset (kTC left after CDS) and quantization noise are continuous and independent of the
//! charge, so they add as one Gaussian variance (quantization, uniform of variance
//! 1/(12K²), is not Gaussian; treating it so is accurate while σ_quant is not the largest
//! term, and errs by the uniform's lighter tails otherwise).
//!
//! **Binned and averaged outputs.** Sums of independent Poisson variables are Poisson and
//! sums of independent normals are normal, so every combination below is again
//! Poisson–Gaussian and the same exact formulas apply with (μ, σ²) set as follows (b² pixels
//! binned, N frames):
//! - charge binning (summed before one read): μ = b²(s + d), σ² = σ_r² + σ_k² + σ_q²
//!   (the read happens once);
//! - digital binning (summed after b² reads): μ = b²(s + d), σ² = b²(σ_r² + σ_k² + σ_q²);
//!   an average of the b² values is the sum divided by b², so threshold the sum;
//! - N averaged frames: the sum of the N frames is Poisson–Gaussian with μN and σ²N.
//!   The average is not (its support is the whole numbers divided by N, blurred), but it is
//!   the sum scaled by 1/N, a one-to-one map: detect on the sum with threshold Nτ_avg, and
//!   every probability is the same.
//!
//! **Error bounds.** Every probability is an exact sum or integral cut with a proven bound:
//! the Poisson window by Bernstein's inequality (e⁻⁶⁴ per side, `poisson::window`), tail
//! sums by a geometric-series remainder (`poisson::upper_tail`), the Gaussian window at
//! ±11σ (Q(11) = 1.9e-28), and, where σ and √μ are both large, the contour integral's
//! aliasing and truncation bounds (`contour`). Together the absolute truncation error is
//! below 1e-27, so any probability ≥ 1e-15 (the smallest the solvers accept) is right to
//! 1e-12 relative, and the pmf recurrences add at most ~1e-11 relative rounding at μ = 1e7.
//! Thresholds and signals are solved by Brent's method inside proven brackets to 1e-12
//! relative ([`neyman_pearson::SOLVE_REL_TOL`]).
//!
//! **Where the Gaussian picture misleads.** (REFERENCES.md §8 and its pitfall 8.) Below
//! about 0.5 e⁻ read noise the charge is visibly a comb of whole electrons: the threshold
//! then sits between two whole numbers and the signal for a detection probability jumps
//! with it; at σ = 0.3 e⁻ the Gaussian answer for 50 % detection is 0.98 e⁻ against an exact
//! 1.59 e⁻. At very small dark the Gaussian threshold is too low and its false alarms are
//! not what was asked. At σ = 0 the charge is a whole number and only some false-alarm
//! probabilities can be had exactly; the next lower one is used and reported. The exact and
//! Gaussian answers converge when σ² ≫ 1 e⁻² (tested). [`DetectionCaution`] says which of
//! these applies.

// `!(x >= 0.0)` is true for NaN as well as for negatives: the guard every input check here
// wants, written once instead of `x.is_nan() || x < 0.0`.
#![allow(clippy::neg_cmp_op_on_partial_ord)]
// Constants and reference values are written with the digits they were computed or published
// with, even where f64 keeps fewer.
#![allow(clippy::excessive_precision)]

pub mod brent;
pub mod contour;
pub mod contrast;
pub mod counting;
pub mod neyman_pearson;
pub mod normal;
pub mod poisson;
pub mod poisson_gaussian;

pub use poisson_gaussian::PoissonGaussian;

/// Default per-pixel false-alarm probability (issue 13's default).
pub const DEFAULT_FALSE_ALARM_PROBABILITY: f64 = 1e-3;
/// Default detection probability (issue 13's default).
pub const DEFAULT_DETECTION_PROBABILITY: f64 = 0.5;

/// Relative difference between the exact and the Gaussian detection signal above which the
/// Gaussian picture is flagged as misleading: 10 % (common practice, no source: a tenth is
/// where a planning figure starts to change a decision).
pub const GAUSSIAN_DISAGREEMENT: f64 = 0.10;

/// Per-frame false-alarm probability above which a false alarm in most frames is flagged.
pub const FRAME_FALSE_ALARM_LIKELY: f64 = 0.5;

/// What [`evaluate`] needs: the output pixel's charges and noise, and the detection task.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DetectionInputs {
    /// The signal at the output pixel [e⁻], dark excluded (binned or summed as the output is).
    pub signal_e: f64,
    /// The mean dark charge at the output pixel [e⁻].
    pub dark_e: f64,
    /// Read, reset and quantization variance together at the output pixel [e⁻²].
    pub read_variance_e2: f64,
    /// False-alarm probability per pixel, p_fa, in (0, 1).
    pub false_alarm_probability: f64,
    /// Detection probability for the detection signal, p_d, in (0, 1).
    pub detection_probability: f64,
    /// Pixels M searched per frame (≥ 1), for the per-frame false-alarm probability.
    pub pixels: u64,
}

/// One problem with [`DetectionInputs`], naming the field and its rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum InputProblem {
    /// A probability is not strictly between 0 and 1 (limits [1e-15, 1 − 1e-15]).
    ProbabilityOutOfRange(&'static str),
    /// `pixels` is 0: it must be a positive whole number.
    NoPixels,
    /// A charge or variance is negative, not finite, or above the calculator's limit.
    ChargeOutOfRange(&'static str),
}

impl std::fmt::Display for InputProblem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Self::ProbabilityOutOfRange(field) => write!(
                f,
                "{field} must be a probability between 1e-15 and 1 − 1e-15 (strictly between 0 and 1)"
            ),
            Self::NoPixels => write!(f, "pixels must be a positive whole number (at least 1)"),
            Self::ChargeOutOfRange(field) => write!(
                f,
                "{field} must be a finite number of electrons from 0 to 1e9 (e⁻, or e⁻² for a variance)"
            ),
        }
    }
}

impl DetectionInputs {
    /// Every problem with these inputs, each naming its field (empty when all are usable).
    ///
    /// ```
    /// use engine::detection::{DetectionInputs, InputProblem};
    /// let bad = DetectionInputs { signal_e: 1.0, dark_e: 0.1, read_variance_e2: 1.0,
    ///     false_alarm_probability: 1.5, detection_probability: 0.5, pixels: 0 };
    /// assert_eq!(bad.problems().len(), 2);
    /// ```
    #[must_use]
    pub fn problems(&self) -> Vec<InputProblem> {
        let mut out = Vec::new();
        let p_ok = |p: f64| {
            (neyman_pearson::MIN_PROBABILITY..=1.0 - neyman_pearson::MIN_PROBABILITY).contains(&p)
        };
        let e_ok = |x: f64| (0.0..=poisson_gaussian::MAX_MEAN_E).contains(&x);
        if !e_ok(self.signal_e) {
            out.push(InputProblem::ChargeOutOfRange("signal_e"));
        }
        if !e_ok(self.dark_e) {
            out.push(InputProblem::ChargeOutOfRange("dark_e"));
        }
        if !e_ok(self.signal_e + self.dark_e) && e_ok(self.signal_e) && e_ok(self.dark_e) {
            out.push(InputProblem::ChargeOutOfRange("signal_e + dark_e"));
        }
        let max_var = poisson_gaussian::MAX_SIGMA_E * poisson_gaussian::MAX_SIGMA_E;
        if !(0.0..=max_var).contains(&self.read_variance_e2) {
            out.push(InputProblem::ChargeOutOfRange("read_variance_e2"));
        }
        if !p_ok(self.false_alarm_probability) {
            out.push(InputProblem::ProbabilityOutOfRange(
                "false_alarm_probability",
            ));
        }
        if !p_ok(self.detection_probability) {
            out.push(InputProblem::ProbabilityOutOfRange("detection_probability"));
        }
        if self.pixels == 0 {
            out.push(InputProblem::NoPixels);
        }
        out
    }
}

/// A plain warning about the detection figures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum DetectionCaution {
    /// The Gaussian detection signal differs from the exact one by more than
    /// [`GAUSSIAN_DISAGREEMENT`]: use the exact figure.
    GaussianMisleads,
    /// Read noise below 0.5 e⁻: the charge comes in visible whole electrons, the threshold
    /// sits between two of them, and small changes of the settings move the figures in steps.
    WholeElectrons,
    /// No Gaussian noise at all: the charge is a whole number, and the false-alarm
    /// probability achieved is the largest one possible below the request.
    FalseAlarmNotExact,
    /// Over the pixels searched, a false alarm is more likely than not in each frame.
    FrameFalseAlarmLikely,
}

/// The detection figures of one output pixel; every number finite or `None`.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DetectionFigures {
    /// Decision threshold τ on the charge [e⁻], dark included, for the per-pixel p_fa.
    pub threshold_e: Option<f64>,
    /// The false-alarm probability that τ gives (= p_fa except at σ = 0).
    pub false_alarm_probability_achieved: Option<f64>,
    /// The signal [e⁻], dark excluded, detected with probability p_d at τ (exact).
    pub signal_e: Option<f64>,
    /// The Gaussian approximation's threshold [e⁻] (REFERENCES.md §8), for comparison.
    pub threshold_e_gaussian: Option<f64>,
    /// The Gaussian approximation's signal for p_d at its own threshold [e⁻].
    pub signal_e_gaussian: Option<f64>,
    /// The probability that the given signal exceeds τ (exact).
    pub detection_probability: Option<f64>,
    /// The same in the Gaussian approximation (at the Gaussian threshold).
    pub detection_probability_gaussian: Option<f64>,
    /// Probability of at least one false alarm among the M pixels of a frame.
    pub frame_false_alarm_probability: Option<f64>,
    /// The per-pixel false-alarm probability that would make p_fa the per-frame probability
    /// over the M pixels.
    pub pixel_false_alarm_for_frame: Option<f64>,
    /// The Gaussian noise used, σ [e⁻ rms].
    pub read_noise_e: Option<f64>,
    /// Photon-counting figures at the given signal plus dark.
    pub counting: Option<counting::CountingFigures>,
    /// Plain warnings where a figure could mislead.
    pub cautions: Vec<DetectionCaution>,
}

/// All detection figures of one output pixel.
///
/// Never panics; figures that cannot be computed (inputs out of range: see
/// [`DetectionInputs::problems`]) are `None`. Runs in well under a millisecond (see the
/// `detection` benchmark).
///
/// ```
/// use engine::detection::{evaluate, DetectionInputs};
/// // REFERENCES.md §8, σ_r = 1 e⁻, d = 0.01 e⁻, P_FA = 1e-3, P_D = 50 %.
/// let f = evaluate(&DetectionInputs { signal_e: 3.26, dark_e: 0.01, read_variance_e2: 1.0,
///     false_alarm_probability: 1e-3, detection_probability: 0.5, pixels: 1 });
/// assert!((f.threshold_e.unwrap() - 3.1409).abs() < 5e-5);
/// assert!((f.signal_e.unwrap() - 3.2600).abs() < 5e-5);
/// assert!((f.signal_e_gaussian.unwrap() - 3.1056).abs() < 5e-5);
/// ```
#[must_use]
pub fn evaluate(inputs: &DetectionInputs) -> DetectionFigures {
    let i = inputs;
    let usable = i.problems().is_empty();
    let sigma = (usable && i.read_variance_e2 >= 0.0).then(|| i.read_variance_e2.sqrt());
    let thr = sigma.and_then(|s| neyman_pearson::threshold(i.dark_e, s, i.false_alarm_probability));
    let tau = thr.map(|t| t.threshold_e);
    let signal = sigma.zip(tau).and_then(|(s, t)| {
        neyman_pearson::signal_for_detection(i.dark_e, s, t, i.detection_probability)
    });
    let pd = sigma
        .zip(tau)
        .and_then(|(s, t)| neyman_pearson::detection_probability(i.signal_e, i.dark_e, s, t));
    let tau_g = usable
        .then(|| {
            neyman_pearson::gaussian_threshold(
                i.dark_e,
                i.read_variance_e2,
                i.false_alarm_probability,
            )
        })
        .flatten();
    let signal_g = tau_g.and_then(|t| {
        neyman_pearson::gaussian_signal(i.dark_e, i.read_variance_e2, t, i.detection_probability)
    });
    let pd_g = tau_g.and_then(|t| {
        neyman_pearson::gaussian_detection_probability(i.signal_e, i.dark_e, i.read_variance_e2, t)
    });
    let frame = usable
        .then(|| neyman_pearson::frame_false_alarm(i.false_alarm_probability, i.pixels))
        .flatten();
    let per_pixel = usable
        .then(|| neyman_pearson::pixel_false_alarm_for_frame(i.false_alarm_probability, i.pixels))
        .flatten();
    let counting = sigma.and_then(|s| counting::figures(s, i.signal_e + i.dark_e));

    let mut cautions = Vec::new();
    if let (Some(s), Some(g)) = (signal, signal_g) {
        let scale = s.abs().max(g.abs());
        if scale > 0.0 && (s - g).abs() > GAUSSIAN_DISAGREEMENT * scale {
            cautions.push(DetectionCaution::GaussianMisleads);
        }
    }
    if let Some(s) = sigma {
        if s < counting::DEEP_SUB_ELECTRON_E {
            cautions.push(DetectionCaution::WholeElectrons);
        }
        if s == 0.0 {
            cautions.push(DetectionCaution::FalseAlarmNotExact);
        }
    }
    if frame.is_some_and(|p| p > FRAME_FALSE_ALARM_LIKELY) {
        cautions.push(DetectionCaution::FrameFalseAlarmLikely);
    }
    let finite = |x: Option<f64>| x.filter(|v| v.is_finite());
    DetectionFigures {
        threshold_e: finite(tau),
        false_alarm_probability_achieved: finite(thr.map(|t| t.false_alarm_probability)),
        signal_e: finite(signal),
        threshold_e_gaussian: finite(tau_g),
        signal_e_gaussian: finite(signal_g),
        detection_probability: finite(pd),
        detection_probability_gaussian: finite(pd_g),
        frame_false_alarm_probability: finite(frame),
        pixel_false_alarm_for_frame: finite(per_pixel),
        read_noise_e: finite(sigma),
        counting: counting.filter(|c| {
            c.miscount_interior.is_finite()
                && c.miscount_zero.is_finite()
                && c.miscount_average.is_finite()
        }),
        cautions,
    }
}
