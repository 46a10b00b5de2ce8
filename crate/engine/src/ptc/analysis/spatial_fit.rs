//! The spatial report of a fit: DSNU and PRNU split into row, column and pixel parts, defect
//! and high-noise pixels, histograms and the averaged images, from the dark stack and the flat
//! stack used for PRNU.

use super::super::spatial::{HighNoise, Histogram};
use super::super::stack::StackStats;
use super::{diag, Diagnostic, SpatialFit};

/// The spatial report from the dark stack and the flat stack used for PRNU.
pub(super) fn spatial_fit(
    dark: &StackStats,
    flat: Option<&StackStats>,
    flat_above_dark_dn: f64,
    k: f64,
    (dsnu_resolved, prnu_resolved): (bool, bool),
    diagnostics: &mut Vec<Diagnostic>,
) -> Option<SpatialFit> {
    let d = dark.spatial.as_ref()?;
    let f = flat.and_then(|s| s.spatial.as_ref());
    let root = |v: f64| v.max(0.0).sqrt();
    let prnu_part = |fp: f64, dp: f64| {
        (flat_above_dark_dn > 0.0).then(|| root(fp - dp) / flat_above_dark_dn * 100.0)
    };
    let fs = f.and_then(|f| f.split);
    let ds = d.split;
    // The parts are reported only where the whole is resolved: a part of a DSNU or PRNU below
    // what the frames resolve would be sampling noise given a name.
    let both = ds.zip(fs).filter(|_| prnu_resolved);
    let dsr = ds.filter(|_| dsnu_resolved);
    let high: Option<&HighNoise> = d.high_noise.as_ref();
    if high.is_some_and(|h| h.count.is_none()) {
        diag(
            diagnostics,
            "high_noise_not_counted",
            format!(
                "high-noise pixels are counted with 8 or more dark frames in one stack ({} \
                 here): with fewer, a pixel's own temporal variance is too uncertain to tell a \
                 noisy pixel from chance",
                dark.spec.frames
            ),
        );
    }
    let percent = |h: &Histogram| Histogram {
        first_edge: h.first_edge / flat_above_dark_dn * 100.0,
        bin_width: h.bin_width / flat_above_dark_dn * 100.0,
        counts: h.counts.clone(),
    };
    Some(SpatialFit {
        dark_frames: dark.spec.frames,
        dark_exposure_time_s: dark.spec.exposure_time_s,
        flat_frames: flat.map(|s| s.spec.frames),
        dark_split_dn2: ds,
        flat_split_dn2: fs,
        dsnu_row_e: dsr.map(|s| root(s.row_dn2) / k),
        dsnu_column_e: dsr.map(|s| root(s.column_dn2) / k),
        dsnu_pixel_e: dsr.map(|s| root(s.pixel_dn2) / k),
        prnu_row_percent: both.and_then(|(d, f)| prnu_part(f.row_dn2, d.row_dn2)),
        prnu_column_percent: both.and_then(|(d, f)| prnu_part(f.column_dn2, d.column_dn2)),
        prnu_pixel_percent: both.and_then(|(d, f)| prnu_part(f.pixel_dn2, d.pixel_dn2)),
        hot_pixels: d.above_threshold,
        hot_threshold_dn: d.defect_threshold_dn,
        dark_pixels: f.map(|f| f.below_threshold),
        dark_threshold_percent: f
            .filter(|_| flat_above_dark_dn > 0.0)
            .map(|f| f.defect_threshold_dn / flat_above_dark_dn * 100.0),
        high_noise_pixels: high.and_then(|h| h.count),
        dark_histogram_dn: d.histogram.clone(),
        flat_histogram_percent: f
            .filter(|_| flat_above_dark_dn > 0.0)
            .map(|f| percent(&f.histogram)),
        high_noise_histogram: high.map(|h| h.histogram.clone()),
        dark_image: d.clone(),
        flat_image: f.cloned(),
    })
}

/// Defect thresholds as a reader sees them (for documentation and tables).
pub const DEFECT_RULE: &str = "beyond 6 standard deviations of the averaged image from its mean";
