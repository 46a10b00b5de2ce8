//! The invented test scene: where each light level falls in an output frame of any size.
//!
//! The scene is a map from an output pixel to a *light factor*: the pixel's signal light as a
//! multiple of the reference level (the scenario's own signal, see `frame.rs`). Background light
//! and dark charge are not part of it; they fall on every pixel alike. Bands, top to bottom:
//!
//! | rows of the frame | what | light factor |
//! |---|---|---|
//! | 0 – 50 % | 12 uniform patches, 6 across × 2 down: one dark, then whole stops from 2⁻⁸ to 2² | 0, 1/256, 1/128, …, 1, 2, 4 |
//! | 50 – 70 % | a smooth ramp, left to right, even in stops | 2⁻⁸ … 2³ |
//! | 70 – 85 % | bar groups at ±50 % contrast around the reference, periods 2, 4, 6, 8, 12, 16 px | 0.5 and 1.5 |
//! | 85 – 100 % | the same bars at ±10 % contrast | 0.9 and 1.1 |
//!
//! The reference patch (factor 1) is the fourth of the second row; patches darker than it show
//! how the scene falls to the detection limit, the two brighter ones and the ramp's right end
//! show saturation. The bars answer "is this SNR enough to see detail": ±10 % bars vanish into
//! noise once the SNR at the reference falls below about 10 (20 dB).
//!
//! Positions are in output pixels (after binning) and scale with the frame; bar periods are in
//! output pixels at every size, since fine detail is about pixels. Nothing here is random and
//! nothing reads a scenario.

use serde::Serialize;

/// A rectangle of output pixels, from the top-left corner.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Rect {
    /// First column.
    pub x: u32,
    /// First row.
    pub y: u32,
    /// Columns.
    pub width: u32,
    /// Rows.
    pub height: u32,
}

impl Rect {
    /// Number of pixels.
    #[must_use]
    pub fn pixels(&self) -> u64 {
        u64::from(self.width) * u64::from(self.height)
    }

    fn contains(&self, x: u32, y: u32) -> bool {
        x >= self.x && x - self.x < self.width && y >= self.y && y - self.y < self.height
    }
}

/// Patch columns and rows.
pub const PATCH_COLUMNS: u32 = 6;
/// Patch rows.
pub const PATCH_ROWS: u32 = 2;

/// Light factors of the patches, row by row: a dark patch, then whole stops 2⁻⁸ … 2².
pub const PATCH_FACTORS: [f64; 12] = [
    0.0,
    1.0 / 256.0,
    1.0 / 128.0,
    1.0 / 64.0,
    1.0 / 32.0,
    1.0 / 16.0,
    1.0 / 8.0,
    1.0 / 4.0,
    1.0 / 2.0,
    1.0,
    2.0,
    4.0,
];

/// The ramp's ends, in stops from the reference.
pub const RAMP_STOPS: (f64, f64) = (-8.0, 3.0);

/// Bar periods, output pixels, one group each across the width.
pub const BAR_PERIODS_PX: [u32; 6] = [2, 4, 6, 8, 12, 16];

/// Bar contrasts: the bars are 1 ± c times the reference.
pub const BAR_CONTRASTS: [f64; 2] = [0.5, 0.1];

/// Band edges as fractions of the height: patches, ramp, strong bars, faint bars.
const BAND_EDGES: [f64; 5] = [0.0, 0.5, 0.7, 0.85, 1.0];

/// Share of a patch's width and height left out on each side when it is measured, so a label
/// drawn on its edge, or a neighbour, never enters the statistics (common practice, no source).
const MEASURE_INSET: f64 = 0.125;

/// What a region of the scene is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Region {
    /// A uniform patch.
    Patch {
        /// Index in [`PATCH_FACTORS`].
        index: usize,
        /// Its light factor.
        factor: f64,
    },
    /// The ramp.
    Ramp,
    /// A band of bar groups.
    Bars {
        /// The bars are 1 ± contrast times the reference.
        contrast: f64,
    },
}

/// The scene laid out on a frame of a given size.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Layout {
    /// Frame width, output pixels.
    pub width: u32,
    /// Frame height, output pixels.
    pub height: u32,
    /// Each patch's whole cell, in [`PATCH_FACTORS`] order.
    pub patches: Vec<Rect>,
    /// The ramp band.
    pub ramp: Rect,
    /// The bar bands, in [`BAR_CONTRASTS`] order.
    pub bars: Vec<Rect>,
    /// Each bar group's columns (the same in both bands), in [`BAR_PERIODS_PX`] order.
    pub bar_groups: Vec<(u32, u32)>,
}

/// `n · a / b` rounded down, without overflow.
fn split(n: u32, a: u32, b: u32) -> u32 {
    u32::try_from(u64::from(n) * u64::from(a) / u64::from(b.max(1))).unwrap_or(n)
}

/// A band edge in rows.
fn edge(height: u32, fraction: f64) -> u32 {
    // OK because fraction is in [0, 1] and the product at most height.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let rows = (f64::from(height) * fraction).floor() as u32;
    rows.min(height)
}

impl Layout {
    /// The scene on a `width` × `height` frame. Tiny frames get empty regions, not errors.
    #[must_use]
    pub fn new(width: u32, height: u32) -> Layout {
        let rows: Vec<u32> = BAND_EDGES.iter().map(|f| edge(height, *f)).collect();
        let row = |i: usize| rows.get(i).copied().unwrap_or(height);
        let band = |i: usize| Rect {
            x: 0,
            y: row(i),
            width,
            height: row(i + 1) - row(i),
        };
        let patch_band = band(0);
        let mut patches = Vec::new();
        for r in 0..PATCH_ROWS {
            let y0 = patch_band.y + split(patch_band.height, r, PATCH_ROWS);
            let y1 = patch_band.y + split(patch_band.height, r + 1, PATCH_ROWS);
            for c in 0..PATCH_COLUMNS {
                let x0 = split(width, c, PATCH_COLUMNS);
                let x1 = split(width, c + 1, PATCH_COLUMNS);
                patches.push(Rect {
                    x: x0,
                    y: y0,
                    width: x1 - x0,
                    height: y1 - y0,
                });
            }
        }
        let groups = u32::try_from(BAR_PERIODS_PX.len()).unwrap_or(1);
        let bar_groups = (0..groups)
            .map(|g| (split(width, g, groups), split(width, g + 1, groups)))
            .collect();
        Layout {
            width,
            height,
            patches,
            ramp: band(1),
            bars: vec![band(2), band(3)],
            bar_groups,
        }
    }

    /// The part of a patch that is measured: its cell without [`MEASURE_INSET`] on each side
    /// (the whole cell when that would leave nothing).
    #[must_use]
    pub fn measured(cell: Rect) -> Rect {
        // OK because the inset is a fraction of a u32 below it.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let inset = |n: u32| (f64::from(n) * MEASURE_INSET).floor() as u32;
        let (dx, dy) = (inset(cell.width), inset(cell.height));
        Rect {
            x: cell.x + dx,
            y: cell.y + dy,
            width: cell.width - 2 * dx,
            height: cell.height - 2 * dy,
        }
    }

    /// Which region an output pixel is in (`None` only outside the frame).
    #[must_use]
    pub fn region(&self, x: u32, y: u32) -> Option<Region> {
        if let Some((index, _)) = self
            .patches
            .iter()
            .enumerate()
            .find(|(_, r)| r.contains(x, y))
        {
            let factor = PATCH_FACTORS.get(index).copied().unwrap_or(0.0);
            return Some(Region::Patch { index, factor });
        }
        if self.ramp.contains(x, y) {
            return Some(Region::Ramp);
        }
        self.bars
            .iter()
            .zip(BAR_CONTRASTS)
            .find(|(r, _)| r.contains(x, y))
            .map(|(_, contrast)| Region::Bars { contrast })
    }

    /// One output row's light factors into `out` (cleared first).
    pub fn row_factors(&self, y: u32, out: &mut Vec<f64>) {
        out.clear();
        out.extend((0..self.width).map(|x| self.factor(x, y)));
    }

    /// The light factor at an output pixel (0 outside the frame).
    #[must_use]
    pub fn factor(&self, x: u32, y: u32) -> f64 {
        match self.region(x, y) {
            Some(Region::Patch { factor, .. }) => factor,
            Some(Region::Ramp) => {
                let u = (f64::from(x) + 0.5) / f64::from(self.width.max(1));
                libm::exp2(RAMP_STOPS.0 + (RAMP_STOPS.1 - RAMP_STOPS.0) * u)
            }
            Some(Region::Bars { contrast }) => {
                let group = self
                    .bar_groups
                    .iter()
                    .zip(BAR_PERIODS_PX)
                    .find(|((a, b), _)| x >= *a && x < *b);
                match group {
                    Some(((start, _), period)) => {
                        let bright = 2 * ((x - start) % period) < period;
                        if bright {
                            1.0 + contrast
                        } else {
                            1.0 - contrast
                        }
                    }
                    None => 1.0,
                }
            }
            None => 0.0,
        }
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code

    use super::*;

    #[test]
    fn the_regions_tile_the_frame() {
        for (w, h) in [(640, 480), (61, 47), (7, 3), (1, 1), (4000, 3000)] {
            let l = Layout::new(w, h);
            let mut area: u64 = l.patches.iter().map(Rect::pixels).sum();
            area += l.ramp.pixels() + l.bars.iter().map(Rect::pixels).sum::<u64>();
            assert_eq!(area, u64::from(w) * u64::from(h), "{w}×{h}");
            for y in [0, h / 2, h - 1] {
                for x in [0, w / 2, w - 1] {
                    assert!(l.region(x, y).is_some(), "{w}×{h} at {x},{y}");
                }
            }
            assert_eq!(l.region(w, 0), None);
        }
    }

    #[test]
    fn patches_ramp_and_bars_have_their_levels() {
        let l = Layout::new(600, 400);
        // Patch cells are 100 × 100; the reference (factor 1) is the 10th.
        assert_eq!(
            l.patches[9],
            Rect {
                x: 300,
                y: 100,
                width: 100,
                height: 100
            }
        );
        assert_eq!(l.factor(350, 150), 1.0);
        assert_eq!(l.factor(10, 10), 0.0);
        assert_eq!(l.factor(599, 199), 4.0);
        // The ramp runs from 2^-8 to 2^3 in equal stops.
        let left = l.factor(0, 250);
        let right = l.factor(599, 250);
        assert!((left.log2() - (-8.0 + 11.0 * 0.5 / 600.0)).abs() < 1e-12);
        assert!((right.log2() - (3.0 - 11.0 * 0.5 / 600.0)).abs() < 1e-12);
        // First bar group, period 2: bright, dark, bright …
        assert_eq!(l.factor(0, 300), 1.5);
        assert_eq!(l.factor(1, 300), 0.5);
        assert_eq!(l.factor(2, 300), 1.5);
        // Last group (period 16) starts at column 500: 8 bright, 8 dark.
        assert_eq!(l.factor(507, 300), 1.5);
        assert_eq!(l.factor(508, 300), 0.5);
        assert_eq!(l.factor(507, 390), 1.1);
        assert_eq!(l.factor(508, 390), 0.9);
    }

    #[test]
    fn the_measured_part_leaves_an_eighth_on_each_side() {
        let m = Layout::measured(Rect {
            x: 300,
            y: 100,
            width: 100,
            height: 100,
        });
        assert_eq!(
            m,
            Rect {
                x: 312,
                y: 112,
                width: 76,
                height: 76
            }
        );
        let tiny = Layout::measured(Rect {
            x: 0,
            y: 0,
            width: 3,
            height: 1,
        });
        assert_eq!(
            tiny,
            Rect {
                x: 0,
                y: 0,
                width: 3,
                height: 1
            }
        );
    }
}
