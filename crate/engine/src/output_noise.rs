//! The variance of one output pixel as a function of its signal: SCENARIO.md's noise model in
//! one place, for the model's report and for what combines several readouts (HDR, colour).
//!
//! Plain arithmetic on numbers the model resolved (dark charge, per-read variances, binning,
//! averaging); no light, no scenario and no saturation here.

/// The noise terms of one output pixel (b × b physical pixels combined, N frames averaged).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputNoise {
    /// N, frames averaged.
    pub frames: f64,
    /// n, reads summed into the output pixel: 1 for `charge` binning, b² for `digital`.
    pub reads: f64,
    /// b², physical pixels combined.
    pub pixels: f64,
    /// D = b²·d, dark charge of the output pixel, e⁻.
    pub dark_e: f64,
    /// B, background-light charge of the output pixel, e⁻.
    pub background_e: f64,
    /// Read noise variance of one read, e⁻².
    pub read_e2: f64,
    /// Reset (kTC) variance of one read, e⁻².
    pub reset_e2: f64,
    /// Quantization variance of one read, 1/(12K²), e⁻².
    pub quantization_e2: f64,
    /// Dark signal non-uniformity of one physical pixel, spatial variance, e⁻².
    pub dsnu_e2: f64,
    /// p, photo-response non-uniformity as a fraction of the signal.
    pub prnu: f64,
}

/// The variances of one output pixel, each part separately, e⁻².
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Variances {
    /// Photon shot noise of the signal, S/N.
    pub photon_shot: f64,
    /// Dark-current shot noise, D/N.
    pub dark_shot: f64,
    /// Shot noise of the background light, B/N.
    pub background_shot: f64,
    /// Read noise, n·σr²/N.
    pub read: f64,
    /// Reset noise, n·σk²/N.
    pub reset: f64,
    /// Quantization, n·σq²/N.
    pub quantization: f64,
    /// Dark signal non-uniformity, b²·DSNU² (not reduced by averaging).
    pub dsnu: f64,
    /// Photo-response non-uniformity, (p·(S + B))²/b² (not reduced by averaging).
    pub prnu: f64,
}

impl Variances {
    /// The temporal variance: every part that averaging reduces.
    #[must_use]
    pub fn temporal(&self) -> f64 {
        self.photon_shot
            + self.dark_shot
            + self.background_shot
            + self.read
            + self.reset
            + self.quantization
    }

    /// The shot-noise part (signal, dark and background charge): what two reads of the same
    /// charge share.
    #[must_use]
    pub fn shot(&self) -> f64 {
        self.photon_shot + self.dark_shot + self.background_shot
    }

    /// Temporal plus fixed-pattern variance.
    #[must_use]
    pub fn total(&self) -> f64 {
        self.temporal() + self.dsnu + self.prnu
    }
}

impl OutputNoise {
    /// The variances at an output-pixel signal S (e⁻, dark excluded).
    ///
    /// # Formula
    /// ```text
    /// temporal = (S + D + B + n(σr² + σk² + σq²)) / N
    /// dsnu = b²·DSNU²,   prnu = (p·(S + B))² / b²
    /// ```
    ///
    /// # Source
    /// SCENARIO.md, "The model" (per output pixel); the background light's charge is this
    /// implementation's addition (docs/scenario-format.md).
    ///
    /// ```
    /// use engine::output_noise::OutputNoise;
    /// // REFERENCES.md §9: S = 10 e⁻ per pixel, σr = 3 e⁻, 2×2 charge-binned: SNR 5.714.
    /// let charge = OutputNoise { frames: 1.0, reads: 1.0, pixels: 4.0, dark_e: 0.0,
    ///     background_e: 0.0, read_e2: 9.0, reset_e2: 0.0, quantization_e2: 0.0,
    ///     dsnu_e2: 0.0, prnu: 0.0 };
    /// let v = charge.at(40.0);
    /// assert!((40.0 / v.temporal().sqrt() - 5.714).abs() < 5e-4);
    /// ```
    #[must_use]
    pub fn at(&self, signal_e: f64) -> Variances {
        let (n, frames) = (self.reads, self.frames);
        let photo = self.prnu * (signal_e + self.background_e);
        Variances {
            photon_shot: signal_e / frames,
            dark_shot: self.dark_e / frames,
            background_shot: self.background_e / frames,
            read: n * self.read_e2 / frames,
            reset: n * self.reset_e2 / frames,
            quantization: n * self.quantization_e2 / frames,
            dsnu: self.pixels * self.dsnu_e2,
            prnu: photo * photo / self.pixels,
        }
    }

    /// The variance of one read, σr² + σk² + σq², e⁻².
    #[must_use]
    pub fn per_read_e2(&self) -> f64 {
        self.read_e2 + self.reset_e2 + self.quantization_e2
    }
}
