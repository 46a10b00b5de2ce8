//! Colour filter array layouts: which of the four 2×2 phases of a frame is which colour channel.
//!
//! A phase is the pixel's position in its 2×2 cell, counted from the frame's top-left pixel
//! (not from a region of interest): phase = 2·(row mod 2) + (column mod 2). This file names
//! layouts and channels; it computes no statistic (see [`super::stack`]).

use serde::Serialize;

/// The sensor's colour filter layout, as the manifest's `cfa` key states it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub enum Cfa {
    /// No colour filter (or one colour everywhere): every pixel is one channel.
    #[default]
    #[serde(rename = "mono")]
    Mono,
    /// Bayer, red at the top-left pixel: R Gr / Gb B.
    #[serde(rename = "RGGB")]
    Rggb,
    /// Bayer, blue at the top-left pixel: B Gb / Gr R.
    #[serde(rename = "BGGR")]
    Bggr,
    /// Bayer, green then red on the first row: Gr R / B Gb.
    #[serde(rename = "GRBG")]
    Grbg,
    /// Bayer, green then blue on the first row: Gb B / R Gr.
    #[serde(rename = "GBRG")]
    Gbrg,
}

/// The manifest's names of the layouts, in the order the page offers them.
pub const CFA_NAMES: [&str; 5] = ["mono", "RGGB", "BGGR", "GRBG", "GBRG"];

/// Channel names in reporting order. Gr is the green on the red rows, Gb the green on the blue
/// rows (common practice, no source).
pub const CHANNEL_NAMES: [&str; 4] = ["R", "Gr", "Gb", "B"];

impl Cfa {
    /// The layout of a manifest name (`"mono"`, `"RGGB"`, …).
    #[must_use]
    pub fn from_name(name: &str) -> Option<Cfa> {
        match name {
            "mono" => Some(Cfa::Mono),
            "RGGB" => Some(Cfa::Rggb),
            "BGGR" => Some(Cfa::Bggr),
            "GRBG" => Some(Cfa::Grbg),
            "GBRG" => Some(Cfa::Gbrg),
            _ => None,
        }
    }

    /// The manifest name.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            Cfa::Mono => "mono",
            Cfa::Rggb => "RGGB",
            Cfa::Bggr => "BGGR",
            Cfa::Grbg => "GRBG",
            Cfa::Gbrg => "GBRG",
        }
    }

    /// Whether the layout has four colour channels.
    #[must_use]
    pub fn is_bayer(self) -> bool {
        self != Cfa::Mono
    }

    /// The 2×2 phase (0–3, see the module doc) of each channel in [`CHANNEL_NAMES`] order:
    /// R, Gr, Gb, B. `None` for mono.
    #[must_use]
    pub fn phases(self) -> Option<[usize; 4]> {
        // Phases: 0 top-left, 1 top-right, 2 bottom-left, 3 bottom-right.
        match self {
            Cfa::Mono => None,
            Cfa::Rggb => Some([0, 1, 2, 3]),
            Cfa::Bggr => Some([3, 2, 1, 0]),
            Cfa::Grbg => Some([1, 0, 3, 2]),
            Cfa::Gbrg => Some([2, 3, 0, 1]),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_greens_sit_on_a_diagonal() {
        for name in CFA_NAMES {
            let cfa = Cfa::from_name(name);
            assert_eq!(cfa.map(Cfa::as_str), Some(name));
            if let Some([r, gr, gb, b]) = cfa.and_then(Cfa::phases) {
                // A Bayer cell: the two greens diagonal (phases 0+3 or 1+2), as are R and B;
                // Gr shares a row with R (common practice, no source).
                assert_eq!(gr + gb, 3);
                assert_eq!(r + b, 3);
                assert_eq!(r / 2, gr / 2);
            }
        }
        assert_eq!(Cfa::from_name("rggb"), None);
    }
}
