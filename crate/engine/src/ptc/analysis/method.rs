//! The method for one set of pixels (a mono sensor, one Bayer channel or the pooled greens),
//! step by step in the standard's order: photon transfer points, saturation, gain, dark
//! current, read noise, DSNU and PRNU, linearity, responsivity; and the points of the curve.

use super::super::fit::{fit_line, fit_line_weighted};
use super::super::formulas::{
    dark_current_e_per_s, dark_current_from_variance_e_per_s, dsnu_e, linearity_error_percent,
    prnu_percent, quantum_efficiency, read_noise_e, read_noise_upper_bound_e,
    saturation_capacity_e, QUANTIZATION_VARIANCE_DN2, SMALL_DARK_VARIANCE_DN2,
};
use super::super::stack::{FrameKind, StackStats};
use super::darks::{spatial_uncertainty, variance_uncertainty, DarkRef, Darks, RESOLVED_SIGMAS};
use super::spatial_fit::spatial_fit;
use super::{
    diag, same_time, AnalysisError, DarkCurrentFit, FitReport, GainFit, LinearityFit,
    MeasuredSensor, NonUniformityFit, PtcPoint, ReadNoiseFit, ResponsivityFit, SaturationFit,
    Single, GAIN_FIT_MAX_FRACTION, LINEARITY_RANGE_FRACTION, PRNU_FRACTION,
    PRNU_FRACTION_TOLERANCE,
};
use crate::decimal::{Fixed, Plain};

/// The independent variable of the linearity fit: its name and how to read it from a stack.
type Abscissa = (&'static str, fn(&StackStats) -> f64);

#[allow(clippy::too_many_lines)] // one method, read top to bottom in the standard's order
pub(super) fn analyse_one(stacks: &[StackStats]) -> Result<Single, AnalysisError> {
    let mut diagnostics = Vec::new();
    if let Some(first) = stacks.first() {
        if let Some(o) = stacks.iter().find(|s| s.pixels != first.pixels) {
            return Err(AnalysisError::SizeMismatch {
                first: first.pixels,
                other: o.pixels,
            });
        }
    }
    let darks = Darks::new(
        stacks
            .iter()
            .filter(|s| s.spec.kind == FrameKind::Dark)
            .collect(),
    );
    if darks.stacks.is_empty() {
        return Err(AnalysisError::NoDarkStack);
    }
    let flats: Vec<&StackStats> = stacks
        .iter()
        .filter(|s| s.spec.kind == FrameKind::Flat)
        .collect();
    if flats.len() < 2 {
        return Err(AnalysisError::TooFewFlatStacks { found: flats.len() });
    }

    // ---- photon transfer points: mean and variance above dark (EMVA item 10) ---------------
    struct Flat<'a> {
        s: &'a StackStats,
        dark: DarkRef,
        x: f64,
        y: f64,
        uy: f64,
    }
    let mut pts: Vec<Flat> = flats
        .iter()
        .map(|s| {
            let dark = darks.at(s.spec.exposure_time_s);
            let uy = variance_uncertainty(s).hypot(dark.variance_uncertainty_dn2);
            Flat {
                s,
                dark,
                x: s.mean_dn - dark.mean_dn,
                y: s.temporal_variance_dn2 - dark.variance_dn2,
                uy,
            }
        })
        .collect();
    crate::small_sort::sort_by(&mut pts, |a, b| a.x.total_cmp(&b.x));
    let brighter = pts.iter().filter(|p| p.x > 0.0).count();
    if brighter < 2 {
        return Err(AnalysisError::FlatsNotAboveDark { found: brighter });
    }
    if brighter < pts.len() {
        diag(
            &mut diagnostics,
            "flat_not_above_dark",
            format!(
                "{} flat stack(s) are not brighter than the dark and are left out of the fits",
                pts.len() - brighter
            ),
        );
    }
    if let Some(p) = pts.iter().find(|p| !p.dark.matched) {
        diag(
            &mut diagnostics,
            "dark_exposure_mismatch",
            format!(
                "no dark stack at {} s (a flat's exposure time) and too few dark exposure times \
                 to interpolate: the dark at {} s was used",
                Plain(p.s.spec.exposure_time_s),
                Plain(p.dark.exposure_time_s)
            ),
        );
    }

    // ---- saturation: where the variance peaks, then collapses (EMVA item 7) ----------------
    let peak = pts
        .iter()
        .enumerate()
        .max_by(|a, b| {
            a.1.s
                .temporal_variance_dn2
                .total_cmp(&b.1.s.temporal_variance_dn2)
        })
        .map_or(0, |(i, _)| i);
    // Found when a brighter level's variance falls clearly below the peak: by more than
    // three standard uncertainties of the peak variance (a dip within sampling noise between
    // two close levels is not a collapse; 3σ: common practice, no source).
    let found = pts.get(peak).is_some_and(|p| {
        let floor = p.s.temporal_variance_dn2 - 3.0 * variance_uncertainty(p.s);
        pts.iter()
            .skip(peak + 1)
            .any(|q| q.s.temporal_variance_dn2 < floor)
    });
    let (sat_x, sat_var) = pts
        .get(peak)
        .map_or((0.0, 0.0), |p| (p.x, p.s.temporal_variance_dn2));
    let reference_x = if found {
        sat_x
    } else {
        pts.last().map_or(0.0, |p| p.x)
    };
    if !found {
        diag(
            &mut diagnostics,
            "saturation_not_reached",
            "the temporal variance still rises at the brightest level: saturation (full well) \
             was not reached, so it is not reported and every level is used in the gain fit"
                .into(),
        );
    }

    // ---- gain: least squares over the linear range (EMVA item 10) --------------------------
    let fit_max = if found {
        GAIN_FIT_MAX_FRACTION * sat_x
    } else {
        f64::INFINITY
    };
    let in_range: Vec<usize> = pts
        .iter()
        .enumerate()
        .filter(|(i, p)| p.x > 0.0 && p.x <= fit_max && (!found || *i < peak))
        .map(|(i, _)| i)
        .collect();
    if in_range.len() < 2 {
        return Err(AnalysisError::TooFewPointsInRange {
            found: in_range.len(),
        });
    }
    let pick = |f: &dyn Fn(&Flat) -> f64| -> Vec<f64> {
        in_range.iter().filter_map(|i| pts.get(*i)).map(f).collect()
    };
    let (fx, fy, fu) = (pick(&|p| p.x), pick(&|p| p.y), pick(&|p| p.uy));
    let line = fit_line(&fx, &fy, &fu).ok_or(AnalysisError::GainFitFailed)?;
    let k = line.slope;
    if k <= 0.0 {
        return Err(AnalysisError::GainNotPositive { slope: k });
    }
    let u_k = line.slope_uncertainty();
    if in_range.len() == 2 {
        diag(
            &mut diagnostics,
            "gain_from_two_levels",
            "the gain comes from two levels only: its uncertainty is from sampling alone, the \
             line's straightness is not checked; take three or more levels"
                .into(),
        );
    }
    let fit_max_reported = if found {
        fit_max
    } else {
        pts.last().map_or(0.0, |p| p.x)
    };

    // ---- dark current from dark stacks at several exposure times (EMVA items 12, 13) -------
    let dark_current = match (&darks.mean_line, &darks.variance_line) {
        (Some(m), Some(v)) => {
            let value = dark_current_e_per_s(m.slope, k);
            let u = m
                .slope_uncertainty()
                .map(|us| (us / k).hypot(u_k.map_or(0.0, |uk| value * uk / k)));
            Some(DarkCurrentFit {
                value_e_per_s: value,
                standard_uncertainty_e_per_s: u,
                from_variance_e_per_s: dark_current_from_variance_e_per_s(v.slope, k),
                mean_line: m.clone(),
            })
        }
        _ => {
            diag(
                &mut diagnostics,
                "dark_current_not_measured",
                "all dark stacks have the same exposure time: dark current needs darks at two or \
                 more exposure times"
                    .into(),
            );
            None
        }
    };
    if let Some(d) = &dark_current {
        if d.value_e_per_s < 0.0 {
            diag(
                &mut diagnostics,
                "dark_current_negative",
                format!(
                    "the dark mean falls with exposure time ({} e⁻/s): dark current is below \
                     what these frames resolve and is not reported",
                    Plain(d.value_e_per_s)
                ),
            );
        }
    }

    // ---- read noise from the dark variance, quantization removed (EMVA item 3) -------------
    let t0 = darks.shortest_time();
    let d0 = darks.at(t0);
    // The dark shot noise of the shortest dark, K·(dμ_dark/dt)·t, is removed when the dark mean
    // rises with time (item 13: σ²_y.dark = K²(σ²_d + μ_I t) + σ_q²).
    let dark_shot_dn2 = darks
        .mean_line
        .as_ref()
        .map_or(0.0, |m| (k * m.slope * t0).max(0.0));
    let v0 = d0.variance_dn2 - dark_shot_dn2;
    let read_noise = if v0 < SMALL_DARK_VARIANCE_DN2 {
        diag(
            &mut diagnostics,
            "read_noise_upper_bound",
            format!(
                "the dark temporal variance {} DN² is below {} DN²: \
                 quantization dominates and only the bound read noise < 0.40/K is reported \
                 (EMVA 1288)",
                Fixed(v0, 4),
                Plain(SMALL_DARK_VARIANCE_DN2)
            ),
        );
        ReadNoiseFit {
            dark_variance_dn2: v0,
            dark_exposure_time_s: t0,
            value_e: read_noise_upper_bound_e(k),
            standard_uncertainty_e: None,
            upper_bound_only: true,
        }
    } else {
        let value = read_noise_e(v0, k);
        // ∂σ_d/∂v = 1/(2K√(v − 1/12)), ∂σ_d/∂K = −σ_d/K.
        let root = (v0 - QUANTIZATION_VARIANCE_DN2).sqrt();
        let from_v = d0.variance_uncertainty_dn2 / (2.0 * k * root);
        let u = from_v.hypot(u_k.map_or(0.0, |uk| value * uk / k));
        ReadNoiseFit {
            dark_variance_dn2: v0,
            dark_exposure_time_s: t0,
            value_e: value,
            standard_uncertainty_e: Some(u),
            upper_bound_only: false,
        }
    };

    // ---- saturation capacity --------------------------------------------------------------
    let capacity = (found && sat_x > 0.0).then(|| saturation_capacity_e(sat_x, k));
    let saturation = SaturationFit {
        found,
        mean_above_dark_dn: reference_x,
        peak_variance_dn2: sat_var,
        capacity_e: capacity,
        capacity_uncertainty_e: capacity.and_then(|c| u_k.map(|uk| c * uk / k)),
    };

    // ---- DSNU and PRNU from averaged frames, temporal part removed (EMVA item 11) ----------
    let mut nonuniformity_u: (Option<f64>, Option<f64>) = (None, None);
    let target = PRNU_FRACTION * reference_x;
    let prnu_point = pts
        .iter()
        .enumerate()
        .filter(|(i, p)| p.x > 0.0 && (!found || *i <= peak))
        .min_by(|a, b| (a.1.x - target).abs().total_cmp(&(b.1.x - target).abs()))
        .map(|(_, p)| p);
    let dsnu_dark = match prnu_point {
        Some(p)
            if p.dark.matched && same_time(p.dark.exposure_time_s, p.s.spec.exposure_time_s) =>
        {
            darks.at(p.s.spec.exposure_time_s)
        }
        _ => d0,
    };
    let dark_s2 = dsnu_dark.spatial_dn2;
    let dark_u2 = dsnu_dark.spatial_uncertainty_dn2;
    let dsnu = if dark_s2 > RESOLVED_SIGMAS * dark_u2 {
        let value = dsnu_e(dark_s2, k);
        // ∂DSNU/∂s² = 1/(2K√s²), ∂DSNU/∂K = −DSNU/K.
        nonuniformity_u.0 = Some(
            (dark_u2 / (2.0 * k * dark_s2.sqrt())).hypot(u_k.map_or(0.0, |uk| value * uk / k)),
        );
        Some(value)
    } else {
        diag(
            &mut diagnostics,
            "dsnu_not_resolved",
            format!(
                "the dark spatial variance with the temporal part removed is {} ± \
                 {} DN²: DSNU is below what these frames resolve (average more dark \
                 frames) and is not reported",
                Fixed(dark_s2, 4),
                Fixed(dark_u2, 4)
            ),
        );
        None
    };
    let mut nonuniformity = NonUniformityFit {
        dark_spatial_variance_dn2: dark_s2,
        dark_exposure_time_s: dsnu_dark.exposure_time_s,
        flat_spatial_variance_dn2: None,
        flat_mean_above_dark_dn: None,
        flat_fraction_of_saturation: None,
        dsnu_uncertainty_e: nonuniformity_u.0,
        prnu_uncertainty_percent: None,
    };
    let prnu = match prnu_point {
        None => {
            diag(
                &mut diagnostics,
                "prnu_not_measured",
                "no flat level lies above the dark level: PRNU is not measured".into(),
            );
            None
        }
        Some(p) => {
            let fraction = if reference_x > 0.0 {
                p.x / reference_x
            } else {
                0.0
            };
            nonuniformity.flat_spatial_variance_dn2 = Some(p.s.spatial_variance_dn2);
            nonuniformity.flat_mean_above_dark_dn = Some(p.x);
            nonuniformity.flat_fraction_of_saturation = Some(fraction);
            if (fraction - PRNU_FRACTION).abs() > PRNU_FRACTION_TOLERANCE {
                diag(
                    &mut diagnostics,
                    "prnu_level_far_from_half",
                    format!(
                        "PRNU was measured at {} % of {}, the level closest to the 50 % the \
                         standard asks for",
                        Fixed(fraction * 100.0, 0),
                        if found {
                            "saturation"
                        } else {
                            "the brightest level"
                        }
                    ),
                );
            }
            let ds2 = p.dark.spatial_dn2;
            let excess = p.s.spatial_variance_dn2 - ds2;
            let u_excess = spatial_uncertainty(p.s).hypot(p.dark.spatial_uncertainty_dn2);
            if excess > RESOLVED_SIGMAS * u_excess {
                let value = prnu_percent(p.s.spatial_variance_dn2, ds2, p.x);
                // ∂PRNU/∂excess = 100/(2x√excess); the mean above dark is known far better.
                nonuniformity.prnu_uncertainty_percent =
                    Some(u_excess / (2.0 * p.x * excess.sqrt()) * 100.0);
                Some(value)
            } else {
                diag(
                    &mut diagnostics,
                    "prnu_not_resolved",
                    format!(
                        "the flat spatial variance exceeds the dark one by {} ± \
                         {} DN²: PRNU is below what these frames resolve and is not \
                         reported",
                        Fixed(excess, 4),
                        Fixed(u_excess, 4)
                    ),
                );
                None
            }
        }
    };
    diag(
        &mut diagnostics,
        "illumination_nonuniformity_included",
        "spatial variances are computed on the frames as taken: a non-uniform illumination \
         (vignetting, a gradient) counts as PRNU; use a region of interest to limit it"
            .into(),
    );

    // ---- linearity error over 5–95 % of saturation (EMVA, from memory) --------------------
    let all_photons = pts.iter().all(|p| p.s.spec.photons_per_pixel.is_some());
    let any_level = pts.iter().any(|p| p.s.spec.level.is_some());
    let abscissa: Option<Abscissa> = if all_photons {
        Some(("photons_per_pixel", |s| {
            s.spec.photons_per_pixel.unwrap_or(0.0)
        }))
    } else if !any_level {
        Some(("exposure_time_s", |s| s.spec.exposure_time_s))
    } else {
        None
    };
    let (lo, hi) = (
        LINEARITY_RANGE_FRACTION.0 * reference_x,
        LINEARITY_RANGE_FRACTION.1 * reference_x,
    );
    let linearity = abscissa.and_then(|(name, h)| {
        let used: Vec<&Flat> = pts
            .iter()
            .enumerate()
            .filter(|(i, p)| p.x >= lo && p.x <= hi && (!found || *i <= peak))
            .map(|(_, p)| p)
            .collect();
        let hx: Vec<f64> = used.iter().map(|p| h(p.s)).collect();
        let my: Vec<f64> = used.iter().map(|p| p.x).collect();
        if used.len() < 3 {
            return None;
        }
        // Weights 1/μ²: the line that minimises the squared relative deviations, the
        // quantity LE is made of (see LINEARITY_FIT).
        let w: Vec<f64> = my.iter().map(|m| 1.0 / (m * m)).collect();
        let l = fit_line_weighted(&hx, &my, &w)?;
        let dev: Option<Vec<f64>> = hx
            .iter()
            .zip(&my)
            .map(|(xv, yv)| {
                let fitted = l.intercept + l.slope * xv;
                (fitted > 0.0).then(|| (yv - fitted) / fitted * 100.0)
            })
            .collect();
        let dev = dev?;
        Some(LinearityFit {
            fit: LINEARITY_FIT,
            error_percent: linearity_error_percent(&dev)?,
            abscissa: name,
            deviations_percent: dev,
            points_used: used.len(),
        })
    });
    if linearity.is_none() {
        diag(
            &mut diagnostics,
            "linearity_not_measured",
            "linearity needs three or more flat levels between 5 % and 95 % of saturation, with \
             photons per pixel given or levels set by exposure time alone"
                .into(),
        );
    }

    // ---- responsivity and quantum efficiency (EMVA item 10) --------------------------------
    let responsivity = {
        let mu_p: Option<Vec<f64>> = in_range
            .iter()
            .filter_map(|i| pts.get(*i))
            .map(|p| p.s.spec.photons_per_pixel)
            .collect();
        mu_p.and_then(|mu_p| fit_line(&mu_p, &fx, &[])).map(|l| {
            let r = l.slope;
            let qe = quantum_efficiency(r, k);
            let u_r = l.slope_uncertainty();
            let u_qe = u_r.map(|ur| qe * (ur / r).hypot(u_k.map_or(0.0, |uk| uk / k)));
            ResponsivityFit {
                value_dn_per_photon: r,
                standard_uncertainty_dn_per_photon: u_r,
                quantum_efficiency: qe,
                quantum_efficiency_uncertainty: u_qe,
            }
        })
    };
    if let Some(r) = &responsivity {
        let in_range = r.quantum_efficiency > 0.0 && r.quantum_efficiency <= 1.0;
        if !in_range {
            diag(
                &mut diagnostics,
                "quantum_efficiency_out_of_range",
                format!(
                    "the quantum efficiency comes out as {}, outside (0, 1]: check the photons \
                     per pixel; it is not reported",
                    Plain(r.quantum_efficiency)
                ),
            );
        }
    }

    // ---- the sensor section -----------------------------------------------------------------
    let black = match &darks.mean_line {
        Some(m) => m.intercept,
        None => d0.mean_dn,
    };
    let sensor = MeasuredSensor {
        system_gain_dn_per_e: k,
        read_noise_e: Some(read_noise.value_e),
        full_well_e: capacity,
        dark_current_e_per_s: dark_current
            .as_ref()
            .map(|d| d.value_e_per_s)
            .filter(|v| *v >= 0.0),
        dsnu_e: dsnu,
        prnu_percent: prnu,
        quantum_efficiency: responsivity
            .as_ref()
            .map(|r| r.quantum_efficiency)
            .filter(|q| *q > 0.0 && *q <= 1.0),
        adc_bits: None,
        black_level_dn: Some(black).filter(|b| *b >= 0.0),
    };

    let mut points: Vec<PtcPoint> = darks.stacks.iter().map(|s| point(s, None, false)).collect();
    crate::small_sort::sort_by(&mut points, |a, b| {
        a.exposure_time_s.total_cmp(&b.exposure_time_s)
    });
    points.extend(
        pts.iter()
            .enumerate()
            .map(|(i, p)| point(p.s, Some((p.x, p.y)), in_range.contains(&i))),
    );

    // ---- row/column/pixel parts and defect pixels (EMVA 4.0 Linear, from memory) -----------
    let dark_stack = darks
        .stacks
        .iter()
        .copied()
        .find(|s| same_time(s.spec.exposure_time_s, dsnu_dark.exposure_time_s))
        .or_else(|| darks.stacks.first().copied());
    let spatial_from: Vec<_> = dark_stack
        .map(|d| d.spec.clone())
        .into_iter()
        .chain(dark_stack.and(prnu_point).map(|p| p.s.spec.clone()))
        .collect();
    let spatial = dark_stack.and_then(|d| {
        spatial_fit(
            d,
            prnu_point.map(|p| p.s),
            prnu_point.map_or(0.0, |p| p.x),
            k,
            (dsnu.is_some(), prnu.is_some()),
            &mut diagnostics,
        )
    });

    Ok(Single {
        sensor,
        spatial_from,
        fit: FitReport {
            pixels_per_frame: stacks.first().map_or(0, |s| s.pixels),
            system_gain: GainFit {
                value_dn_per_e: k,
                standard_uncertainty_dn_per_e: u_k,
                fit_max_mean_above_dark_dn: fit_max_reported,
                line,
            },
            read_noise,
            saturation,
            dark_current,
            nonuniformity,
            linearity,
            responsivity,
            points,
            spatial,
            diagnostics,
        },
    })
}

/// How the linearity line is fitted.
///
/// # Source
/// EMVA 1288 Release 3.1 and 4.0 Linear, linearity: a straight line through the mean above
/// dark against the irradiation (here photons per pixel, else exposure time) over 5–95 % of
/// saturation, the relative deviations δ_i from it, LE = (max δ − min δ)/2 (REFERENCES.md §4
/// item 10). The standard's text was not available to re-read: the weighting is from memory
/// (a fit that minimises the relative deviations, i.e. weights 1/μ_i², which the LE then
/// measures); an unweighted fit lets the brightest points dominate and inflates δ at the dim
/// end.
pub const LINEARITY_FIT: &str =
    "weighted least squares, weights 1/μ² (the squared relative deviations minimised)";

fn point(s: &StackStats, above: Option<(f64, f64)>, used: bool) -> PtcPoint {
    PtcPoint {
        kind: s.spec.kind,
        exposure_time_s: s.spec.exposure_time_s,
        level: s.spec.level.clone(),
        photons_per_pixel: s.spec.photons_per_pixel,
        frames: s.spec.frames,
        mean_dn: s.mean_dn,
        temporal_variance_dn2: s.temporal_variance_dn2,
        spatial_variance_dn2: s.spatial_variance_dn2,
        mean_above_dark_dn: above.map(|a| a.0),
        variance_above_dark_dn2: above.map(|a| a.1),
        temporal_variance_uncertainty_dn2: variance_uncertainty(s),
        used_in_gain_fit: used,
    }
}
