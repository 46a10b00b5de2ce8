//! Colour helpers of the analysis: the channels' responses relative to green and the green
//! mismatch of a Bayer sensor, and the check for a 2×2 pattern in a sensor analysed as mono.

use super::super::stack::{FrameKind, StackStats};
use super::{same_time, ChannelResult, ColourSummary, Diagnostic, FitReport, Single};
use crate::decimal::Fixed;

/// The flat level the green channels' PRNU used: its mean above dark per phase.
fn level_means(native: &[StackStats], fit: &FitReport) -> Option<([f64; 4], [f64; 4], u64)> {
    let x = fit.nonuniformity.flat_mean_above_dark_dn?;
    let t_dark = fit.nonuniformity.dark_exposure_time_s;
    // The flat stack whose whole-group mean above its dark matches; the phases' means above the
    // same dark stack.
    let dark = native
        .iter()
        .find(|s| s.spec.kind == FrameKind::Dark && same_time(s.spec.exposure_time_s, t_dark))?;
    let flat = native
        .iter()
        .filter(|s| s.spec.kind == FrameKind::Flat)
        .min_by(|a, b| {
            let da = (a.mean_dn - dark.mean_dn - x).abs();
            let db = (b.mean_dn - dark.mean_dn - x).abs();
            da.total_cmp(&db)
        })?;
    let mut above = [0.0; 4];
    let mut spread = [0.0; 4];
    for p in 0..4 {
        let (Some(f), Some(d)) = (flat.groups.get(p), dark.groups.get(p)) else {
            return None;
        };
        if let (Some(a), Some(s)) = (above.get_mut(p), spread.get_mut(p)) {
            *a = f.mean_dn - d.mean_dn;
            *s = f.spatial_variance_raw_dn2.max(0.0);
        }
    }
    Some((above, spread, flat.groups.first().map_or(0, |g| g.pixels)))
}

pub(super) fn colour_summary(
    native: &[StackStats],
    green: &Single,
    channels: &mut [ChannelResult],
    phases: [usize; 4],
) -> ColourSummary {
    let mut summary = ColourSummary {
        top_level: "the green pixels (Gr and Gb pooled): their means and temporal variances are \
                    the averages of the two green channels",
        green_mismatch_percent: None,
        green_mismatch_uncertainty_percent: None,
    };
    let Some((above, spread, n)) = level_means(native, &green.fit) else {
        return summary;
    };
    let [_, gr, gb, _] = phases;
    let (Some(&a), Some(&b)) = (above.get(gr), above.get(gb)) else {
        return summary;
    };
    let g = (a + b) / 2.0;
    if g > 0.0 {
        for (c, p) in channels.iter_mut().zip(phases) {
            c.relative_response = above.get(p).map(|v| v / g);
        }
        summary.green_mismatch_percent = Some((a - b) / g * 100.0);
        // u(mean) = s/√n per channel (spatial scatter of the averaged image), combined.
        let (Some(&sa), Some(&sb)) = (spread.get(gr), spread.get(gb)) else {
            return summary;
        };
        let n = (n.max(1)) as f64;
        summary.green_mismatch_uncertainty_percent = Some(((sa + sb) / n).sqrt() / g * 100.0);
    }
    summary
}

/// A 2×2-periodic pattern in a mono analysis's flat that stands well above the rest of its
/// PRNU: probably a colour sensor analysed as mono.
pub(super) fn cfa_pattern_suspected(native: &[StackStats], one: &Single) -> Option<Diagnostic> {
    let (above, _, _) = level_means(native, &one.fit)?;
    let mean = above.iter().sum::<f64>() / 4.0;
    if mean <= 0.0 {
        return None;
    }
    let periodic_var = above.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / 4.0;
    let nu = &one.fit.nonuniformity;
    let excess = nu.flat_spatial_variance_dn2? - nu.dark_spatial_variance_dn2;
    let rest = (excess - periodic_var).max(0.0).sqrt() / mean;
    let periodic = periodic_var.sqrt() / mean;
    (periodic > CFA_PATTERN_RATIO * rest && periodic > CFA_PATTERN_MIN_FRACTION).then(|| {
        Diagnostic {
            code: "cfa_pattern_suspected",
            message: format!(
                "the flat's 2×2 cells repeat a pattern of {} % rms (the four positions at \
                 {}, {}, {}, {} of their mean), well above the remaining PRNU of \
                 {} %: a colour sensor? State \"cfa\" (RGGB, BGGR, GRBG or GBRG) in the \
                 manifest to analyse each channel",
                Fixed(periodic * 100.0, 1),
                Fixed(above[0] / mean, 3),
                Fixed(above[1] / mean, 3),
                Fixed(above[2] / mean, 3),
                Fixed(above[3] / mean, 3),
                Fixed(rest * 100.0, 2)
            ),
        }
    })
}

/// A 2×2 pattern counts as "well above" the rest of the PRNU at three times its rms (common
/// practice, no source).
const CFA_PATTERN_RATIO: f64 = 3.0;

/// … and only when it is above 0.5 % of the signal, so that a sensor with almost no PRNU is not
/// flagged for a pattern nobody would see (common practice, no source).
const CFA_PATTERN_MIN_FRACTION: f64 = 0.005;
