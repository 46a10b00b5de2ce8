//! The page's standard curves: which key each view sweeps and over what range, chosen from the
//! scenario itself so that the interesting part (read-noise floor to saturation, or a span of
//! temperatures around the one given) is on the plot.
//!
//! A view is one [`sweep`](crate::sweep::sweep): the points are the engine's evaluations, the
//! range is a choice of presentation. Ranges that a calculator limit would refuse are pulled
//! towards the scenario's own value until both ends are accepted, never silently past it.

use serde::Serialize;
use serde_json::Value;

use crate::keys;
use crate::light::{Light, SceneQuantity};
use crate::scenario::Scenario;
use crate::sweep::{regimes, with_key, Spacing, Sweep, SweepRequest};
use crate::validate::{scenario_from_value, Problem, ScenarioError};

/// A standard view of the scenario.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum View {
    /// The light's amount, from far below the read-noise floor to twice saturation (log). The
    /// same sweep gives the curves against signal and against light level.
    Light,
    /// Exposure time, over the same span of signal (log).
    Exposure,
    /// Temperature, [`TEMPERATURE_SPAN_C`] either side of the scenario's (linear).
    Temperature,
}

impl View {
    /// Every view, in the order the page shows them.
    pub const ALL: [View; 3] = [View::Light, View::Exposure, View::Temperature];

    /// The view's name in the page and in file names.
    #[must_use]
    pub fn as_str(self) -> &'static str {
        match self {
            View::Light => "light",
            View::Exposure => "exposure",
            View::Temperature => "temperature",
        }
    }

    /// The view named `name` ([`View::as_str`]).
    #[must_use]
    pub fn from_name(name: &str) -> Option<View> {
        View::ALL.into_iter().find(|v| v.as_str() == name)
    }
}

/// Decades of signal below the top of a light or exposure view (six: from twice a 10 ke⁻
/// well down to 0.02 e⁻, well under any read-noise floor). Common practice, no source.
pub const SIGNAL_DECADES: f64 = 6.0;
/// The top of a light or exposure view, as a multiple of the saturation signal.
pub const PAST_SATURATION: f64 = 2.0;
/// Half-width of the temperature view, °C (a cooled camera against one at room temperature
/// and one in a hot enclosure). Common practice, no source.
pub const TEMPERATURE_SPAN_C: f64 = 40.0;
/// Decades above the scenario's value when there is no signal or no saturation to aim at.
const FALLBACK_DECADES: f64 = 3.0;
/// Steps taken towards the scenario's value when a calculator limit refuses an end.
const MAX_PULLS: u32 = 60;

/// The key the light's amount is set by, for each light kind (the key a light view sweeps):
/// [`keys::LightKind::amount`] of the light's kind.
#[must_use]
pub fn amount_key(light: &Light) -> &'static str {
    let kind = keys::light_kind_name(light);
    keys::LIGHT_KIND_AMOUNTS
        .iter()
        .find(|(name, _, _)| *name == kind)
        .map_or(
            const { keys::PHOTON_FLUX_PER_UM2_S.path },
            |(_, amount, _)| amount,
        )
}

/// The light's amount, in the unit of [`amount_key`].
#[must_use]
pub fn amount(light: &Light) -> f64 {
    match light {
        Light::PhotonFlux {
            photon_flux_per_um2_s,
        } => *photon_flux_per_um2_s,
        Light::Irradiance {
            irradiance_w_per_m2,
            ..
        }
        | Light::SpectralIrradiance {
            irradiance_w_per_m2,
            ..
        } => *irradiance_w_per_m2,
        Light::PhotonsPerPixel { photons_per_pixel } => *photons_per_pixel,
        Light::Illuminance {
            illuminance_lux, ..
        } => *illuminance_lux,
        Light::Scene { quantity, .. } => match quantity {
            SceneQuantity::Illuminance { lux, .. } => *lux,
            SceneQuantity::Irradiance { w_per_m2, .. } => *w_per_m2,
            SceneQuantity::Luminance { cd_per_m2 } => *cd_per_m2,
            SceneQuantity::Radiance { w_per_m2_sr } => *w_per_m2_sr,
        },
    }
}

/// The sweep request of a view: key, range and spacing, before calculator limits.
///
/// Light and exposure views are log-spaced. Their top is where the photo-signal (which is
/// proportional to both the light's amount and the exposure time, SCENARIO.md's model) reaches
/// [`PAST_SATURATION`] times the saturation signal (of the combined output's top for an HDR
/// sensor), and their bottom [`SIGNAL_DECADES`] below the single readout's top.
/// Without signal or saturation to aim at, the view spans [`FALLBACK_DECADES`] either side of
/// the scenario's value. Photons per pixel do not depend on exposure time, so for that light
/// kind the exposure view spans the fallback range (only the dark charge changes along it).
#[must_use]
pub fn request(sc: &Scenario, view: View, points: u32) -> SweepRequest {
    let (key, value) = match view {
        View::Light => (amount_key(&sc.light), amount(&sc.light)),
        View::Exposure => (const { keys::TIME_S.path }, sc.exposure.time_s),
        View::Temperature => {
            return SweepRequest {
                key: const { keys::TEMPERATURE_C.path }.into(),
                from: sc.temperature_c - TEMPERATURE_SPAN_C,
                to: sc.temperature_c + TEMPERATURE_SPAN_C,
                points,
                spacing: Spacing::Linear,
            };
        }
    };
    // Signal and HDR top only: the detection figures are not needed for the range.
    let report = crate::model::evaluate_parts(
        sc,
        &crate::model::resolve_lights(sc),
        crate::model::Figures::Snr,
    );
    let signal = report.signal_e;
    let saturation = regimes(sc).saturation_signal_e;
    // An HDR output holds light past the first readout's saturation: the view goes on to twice
    // the combined output's top, so its transitions and their dips are on the curves.
    let hdr_top = report.hdr.as_ref().and_then(|h| h.top_level_e);
    let scales = !(view == View::Exposure && matches!(sc.light, Light::PhotonsPerPixel { .. }));
    let fallback = 10f64.powf(FALLBACK_DECADES);
    let (from, to) = match saturation {
        Some(sat) if scales && signal > 0.0 && value > 0.0 => {
            let top = value * PAST_SATURATION * sat / signal;
            let hdr = hdr_top
                .filter(|t| t.is_finite() && *t > sat)
                .map_or(top, |t| value * PAST_SATURATION * t / signal);
            (top / 10f64.powf(SIGNAL_DECADES), hdr)
        }
        _ if value > 0.0 => (value / fallback, value * fallback),
        // No light at all: a span of amounts that would give some (the view says it is zero now).
        _ => (1e-3, 1e3),
    };
    SweepRequest {
        key: key.into(),
        from,
        to,
        points,
        spacing: Spacing::Log,
    }
}

/// A view's sweep of the scenario given as JSON (`base`, valid), with the range of
/// [`request`] pulled towards the scenario's value wherever a calculator limit refuses an end.
/// Its points carry no exact detection figures (null), and the contrast detection probability
/// only on the light view; [`crate::sweep::sweep`] over the same range gives them all.
///
/// # Errors
/// The base scenario's problems, or the sweep's (for `points` out of range), naming the field.
pub fn view_sweep(base: &Value, view: View, points: u32) -> Result<Sweep, ScenarioError> {
    let sc = scenario_from_value(base)?;
    let mut req = request(&sc, view, points);
    let anchor = match view {
        View::Light => amount(&sc.light),
        View::Exposure => sc.exposure.time_s,
        View::Temperature => sc.temperature_c,
    };
    req.from = accepted_end(base, &req, req.from, anchor);
    req.to = accepted_end(base, &req, req.to, anchor);
    if req.from == req.to {
        return Err(ScenarioError::from_problems(vec![Problem {
            path: req.key.clone(),
            message: format!(
                "a {} view needs a range of values the calculator accepts around {}",
                view.as_str(),
                crate::decimal::Plain(anchor)
            ),
        }]));
    }
    // The curves draw SNR, and the contrast detection probability against light level: the
    // exact detection figures are left out, and the CDP off the light view
    // (sweep::sweep_without_detection).
    crate::sweep::sweep_without_detection(base, &req, view == View::Light)
}

/// `end`, or the nearest value towards `anchor` (by factors of ten on a log view, by halves on
/// a linear one) that the scenario's rules accept.
fn accepted_end(base: &Value, req: &SweepRequest, end: f64, anchor: f64) -> f64 {
    let ok = |v: f64| scenario_from_value(&with_key(base, &req.key, v)).is_ok();
    let mut v = end;
    for _ in 0..MAX_PULLS {
        if ok(v) {
            return v;
        }
        v = match req.spacing {
            Spacing::Log if anchor > 0.0 && v > 0.0 => {
                let next = if v > anchor { v / 10.0 } else { v * 10.0 };
                if (next - anchor).signum() == (v - anchor).signum() {
                    next
                } else {
                    anchor
                }
            }
            _ => anchor + (v - anchor) / 2.0,
        };
    }
    anchor
}

#[cfg(test)]
#[allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]
mod tests {
    use serde_json::{json, Value};

    use super::{view_sweep, View, PAST_SATURATION, SIGNAL_DECADES, TEMPERATURE_SPAN_C};
    use crate::sweep::regimes;
    use crate::validate::scenario_from_value;

    /// Agreement of quantities equal in exact arithmetic but computed with different roundings.
    const ROUNDING: f64 = 1e-12;

    fn base() -> Value {
        json!({
            "version": 1,
            "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
                "read_noise_e": 2.5, "dark_current_e_per_s": 30, "dsnu_e": 1.5,
                "prnu_percent": 1.0, "adc_bits": 12, "system_gain_dn_per_e": 0.25},
            "light": {"photon_flux_per_um2_s": 1000},
            "exposure": {"time_s": 0.01},
            "temperature_c": 25
        })
    }

    #[test]
    fn light_and_exposure_views_end_at_twice_saturation_and_span_six_decades() {
        let b = base();
        let sat = regimes(&scenario_from_value(&b).unwrap())
            .saturation_signal_e
            .unwrap();
        for view in [View::Light, View::Exposure] {
            let s = view_sweep(&b, view, 50).unwrap();
            let last = s.points.last().unwrap();
            let first = s.points.first().unwrap();
            assert!(
                (last.report.signal_e / (PAST_SATURATION * sat) - 1.0).abs() < ROUNDING,
                "{view:?}: top signal {} against {}",
                last.report.signal_e,
                PAST_SATURATION * sat
            );
            assert!((last.value / first.value / 10f64.powf(SIGNAL_DECADES) - 1.0).abs() < 1e-9);
            assert!(last.report.saturation.saturated && !first.report.saturation.saturated);
        }
    }

    #[test]
    fn an_hdr_view_reaches_past_the_combined_top_and_crosses_every_transition() {
        // Two exposures 16 : 1 (SCENARIO.md, hdr): the combined output holds about 16 times
        // the single readout's top, so the view spans 6 + log10(16) decades. Common practice,
        // no source: the range is this calculator's choice.
        let mut b = base();
        b["hdr"] = json!({"kind": "exposures", "exposures": [{"ratio": 16}]});
        let sc = scenario_from_value(&b).unwrap();
        let top = crate::evaluate(&sc).hdr.unwrap().top_level_e.unwrap();
        let sat = regimes(&sc).saturation_signal_e.unwrap();
        let s = view_sweep(&b, View::Light, 200).unwrap();
        let last = s.points.last().unwrap();
        let first = s.points.first().unwrap();
        assert!((last.report.signal_e / (PAST_SATURATION * top) - 1.0).abs() < ROUNDING);
        let decades = (last.value / first.value).log10();
        assert!(
            (decades - SIGNAL_DECADES - (top / sat).log10()).abs() < 1e-9,
            "{decades}"
        );
        let used: Vec<usize> = s
            .points
            .iter()
            .map(|p| p.report.hdr.as_ref().unwrap().readout_in_use)
            .collect();
        assert_eq!((used[0], used[used.len() - 1]), (0, 1), "{used:?}");
    }

    #[test]
    fn the_temperature_view_is_centred_on_the_scenario() {
        let s = view_sweep(&base(), View::Temperature, 81).unwrap();
        assert_eq!(s.points.first().unwrap().value, 25.0 - TEMPERATURE_SPAN_C);
        assert_eq!(s.points.last().unwrap().value, 25.0 + TEMPERATURE_SPAN_C);
        assert_eq!(s.points[40].value, 25.0);
    }

    #[test]
    fn a_limit_pulls_an_end_towards_the_scenario_instead_of_failing() {
        // −300 °C is below absolute zero: the cold end is pulled in by halves until accepted.
        let mut b = base();
        b["temperature_c"] = json!(-250);
        let s = view_sweep(&b, View::Temperature, 11).unwrap();
        let from = s.points.first().unwrap().value;
        assert!(from > -273.15 && from < -250.0, "{from}");
        assert_eq!(s.points.last().unwrap().value, -210.0);
    }

    #[test]
    fn no_light_still_gives_a_light_view() {
        let mut b = base();
        b["light"] = json!({"photon_flux_per_um2_s": 0});
        let s = view_sweep(&b, View::Light, 5).unwrap();
        assert!(s.points.last().unwrap().report.signal_e > 0.0);
    }

    #[test]
    fn bad_points_are_named() {
        let e = view_sweep(&base(), View::Light, 1).unwrap_err();
        assert!(e.to_string().contains("sweep.points"), "{e}");
    }
}
