//! The sweep against single evaluations, and the regime boundaries against the model.

use serde_json::{json, Value};

use super::{sweep, to_csv, Spacing, SweepRequest};
use crate::evaluate_json;
use crate::keys::SWEEPABLE;

/// Agreement where two computations are equal in exact arithmetic but differ in the order
/// of a few roundings (ε ≈ 2.2e-16 each): far below 1e-12.
const ROUNDING: f64 = 1e-12;
/// The floor is recovered as temporal² − shot², a difference of two nearly equal squares
/// that loses up to about three digits of the 1e-12 above.
const DIFFERENCE_ROUNDING: f64 = 1e-9;

fn base() -> Value {
    json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
            "read_noise_e": 2.5, "sense_node_capacitance_ff": 2.0, "readout": "dds",
            "dark_current_e_per_s": 30, "dsnu_e": 1.5, "prnu_percent": 1.0, "adc_bits": 12,
            "system_gain_dn_per_e": 0.25, "black_level_dn": 64},
        "light": {"photon_flux_per_um2_s": 500},
        "exposure": {"time_s": 0.01, "frames_averaged": 2, "binning": 2},
        "temperature_c": 40, "snr_threshold": 3,
        "detection": {"false_alarm_probability": 1e-3, "detection_probability": 0.5,
            "pixels": 100, "contrast": 0.1, "contrast_interval": 0.5}
    })
}

fn request(key: &str, from: f64, to: f64, points: u32, spacing: Spacing) -> SweepRequest {
    SweepRequest {
        key: key.into(),
        from,
        to,
        points,
        spacing,
    }
}

fn set(mut v: Value, key: &str, x: f64) -> Value {
    let mut cur = &mut v;
    let parts: Vec<&str> = key.split('.').collect();
    for (i, p) in parts.iter().enumerate() {
        if i + 1 == parts.len() {
            cur[*p] = json!(x);
        } else {
            cur = &mut cur[*p];
        }
    }
    v
}

/// A light that `key` (a light key) belongs to, or `None` for a key of another object.
fn light_for(key: &str) -> Option<Value> {
    let scene = |mut v: Value| {
        v["spectrum"] = json!({"kind": "cie_a"});
        v["f_number"] = json!(2.8);
        v["lens_transmission"] = json!(0.9);
        v
    };
    Some(match key {
        "light.irradiance_w_per_m2" | "light.wavelength_nm" => {
            json!({"irradiance_w_per_m2": 0.01, "wavelength_nm": 550})
        }
        "light.photons_per_pixel" => json!({"photons_per_pixel": 300}),
        "light.illuminance_lux" => {
            json!({"illuminance_lux": 10, "spectrum": {"kind": "cie_a"}})
        }
        "light.scene_illuminance_lux" | "light.f_number" => {
            scene(json!({"scene_illuminance_lux": 300, "reflectance": 0.2}))
        }
        "light.scene_irradiance_w_per_m2" => {
            scene(json!({"scene_irradiance_w_per_m2": 2, "reflectance": 0.2}))
        }
        "light.scene_luminance_cd_per_m2" => scene(json!({"scene_luminance_cd_per_m2": 50})),
        "light.scene_radiance_w_per_m2_sr" => scene(json!({"scene_radiance_w_per_m2_sr": 0.3})),
        _ => return None,
    })
}

#[test]
fn a_sweep_without_detection_differs_only_in_the_detection_figures() {
    // The same points and figures, the detection object empty (common practice: the
    // curves do not need it).
    let base = serde_json::json!({"version": 1,
        "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
            "read_noise_e": 1.0, "dark_current_e_per_s": 5, "adc_bits": 12,
            "system_gain_dn_per_e": 0.25},
        "light": {"photon_flux_per_um2_s": 100}, "exposure": {"time_s": 0.01}});
    let req = super::SweepRequest {
        key: "exposure.time_s".into(),
        from: 1e-4,
        to: 1.0,
        points: 9,
        spacing: super::Spacing::Log,
    };
    let full = super::sweep(&base, &req).unwrap();
    let lean = super::sweep_without_detection(&base, &req, true).unwrap();
    let snr_only = super::sweep_without_detection(&base, &req, false).unwrap();
    for (s, l) in snr_only.points.iter().zip(&lean.points) {
        assert_eq!(s.report.snr, l.report.snr);
        assert_eq!(s.report.detection.contrast_detection_probability, None);
    }
    assert_eq!(full.points.len(), lean.points.len());
    for (f, l) in full.points.iter().zip(&lean.points) {
        assert_eq!(f.value, l.value);
        assert_eq!(f.report.snr, l.report.snr);
        assert!(f.report.detection.signal_e.is_some());
        assert_eq!(l.report.detection.signal_e, None);
        assert_eq!(l.report.detection.detection_probability, None);
        // The contrast detection probability is kept: the page draws it against light level.
        assert!(f.report.detection.contrast_detection_probability.is_some());
        assert_eq!(
            f.report.detection.contrast_detection_probability,
            l.report.detection.contrast_detection_probability
        );
        let mut a = serde_json::to_value(&f.report).unwrap();
        let mut b = serde_json::to_value(&l.report).unwrap();
        a["detection"] = serde_json::Value::Null;
        b["detection"] = serde_json::Value::Null;
        a["warnings"] = serde_json::Value::Null;
        b["warnings"] = serde_json::Value::Null;
        assert_eq!(a, b);
    }
}

#[test]
fn every_point_equals_a_single_evaluation() {
    for k in &SWEEPABLE {
        let (key, whole) = (k.path, k.whole);
        // A light key is swept on a light of a kind it belongs to (invented values).
        let mut b = base();
        if let Some(light) = light_for(key) {
            b["light"] = light;
        }
        // A range inside every key's rules, from the base value to 1.5 × it.
        let v0 = {
            let parts: Vec<&str> = key.split('.').collect();
            let mut cur = &b;
            for p in &parts {
                cur = &cur[*p];
            }
            cur.as_f64().unwrap_or(1.0)
        };
        let v0 = if v0 == 0.0 { 1.0 } else { v0 };
        let to = match key {
            "sensor.quantum_efficiency" => 0.9,
            "sensor.prnu_percent" => 2.0,
            "sensor.adc_bits" => 16.0,
            _ => v0 * 1.5,
        };
        let s = sweep(&b, &request(key, v0, to, 7, Spacing::Linear))
            .unwrap_or_else(|e| panic!("{key}: {e}"));
        assert_eq!(s.points.len(), 7);
        for p in &s.points {
            let single = evaluate_json(&set(b.clone(), key, p.value).to_string())
                .unwrap_or_else(|e| panic!("{key} = {}: {e}", p.value));
            assert_eq!(p.report, single, "{key} = {}", p.value);
            if whole {
                assert_eq!(p.value.fract(), 0.0);
            }
        }
    }
}

#[test]
fn sweeping_scene_light_equals_single_evaluations() {
    // The spectral integrals are re-done at each point only when a light key varies; both
    // paths must agree with a fresh evaluation.
    let mut b = base();
    b["light"] = json!({"scene_illuminance_lux": 300, "reflectance": 0.2,
        "spectrum": {"kind": "cie_a"}, "f_number": 2.8, "lens_transmission": 0.9});
    b["background_light"] = json!({"illuminance_lux": 0.5, "spectrum": {"kind": "cie_d65"}});
    for (key, from, to) in [
        ("light.scene_illuminance_lux", 1.0, 1e4),
        ("light.f_number", 1.4, 16.0),
        ("exposure.time_s", 1e-4, 1.0),
        ("temperature_c", -20.0, 60.0),
    ] {
        let s = sweep(
            &b,
            &request(
                key,
                from,
                to,
                6,
                if from <= 0.0 {
                    Spacing::Linear
                } else {
                    Spacing::Log
                },
            ),
        )
        .unwrap();
        for p in &s.points {
            let single = evaluate_json(&set(b.clone(), key, p.value).to_string()).unwrap();
            assert_eq!(p.report, single, "{key} = {}", p.value);
        }
    }
    let e = sweep(
        &b,
        &request("light.illuminance_lux", 1.0, 2.0, 3, Spacing::Linear),
    )
    .unwrap_err();
    assert!(e
        .to_string()
        .starts_with("sweep.key: light.illuminance_lux is not part of this scenario's light"));
}

#[test]
fn log_spacing_hits_the_decades_and_the_ends() {
    let s = sweep(
        &base(),
        &request("exposure.time_s", 1e-4, 1.0, 5, Spacing::Log),
    )
    .unwrap();
    let values: Vec<f64> = s.points.iter().map(|p| p.value).collect();
    assert_eq!(values, [1e-4, 1e-3, 1e-2, 1e-1, 1.0]);
}

#[test]
fn regime_boundaries_sit_where_the_variances_are_equal() {
    // At S = read_to_shot_signal_e the photon shot variance equals the rest of the temporal
    // variance; at S = shot_to_prnu_signal_e the PRNU variance equals the photon shot
    // variance (SCENARIO.md's model; derived).
    let b = base();
    let s = sweep(
        &b,
        &request("exposure.time_s", 0.01, 0.02, 2, Spacing::Linear),
    )
    .unwrap();
    let r = s.regimes;
    let signal = |e: f64| {
        // S = b² η μp with b = 2, η = 0.6: light given per pixel to land on S exactly.
        let v = set(b.clone(), "light.photons_per_pixel", e / (4.0 * 0.6));
        let mut v = v;
        v["light"]
            .as_object_mut()
            .unwrap()
            .remove("photon_flux_per_um2_s");
        evaluate_json(&v.to_string()).unwrap()
    };
    let at = signal(r.read_to_shot_signal_e);
    let shot = at.noise_e.photon_shot.powi(2);
    let rest = at.noise_e.temporal.powi(2) - shot;
    assert!(
        (shot - rest).abs() <= DIFFERENCE_ROUNDING * shot,
        "shot {shot} vs floor {rest}"
    );
    let p = r.shot_to_prnu_signal_e.unwrap();
    let at = signal(p);
    let (prnu, shot) = (at.noise_e.prnu, at.noise_e.photon_shot);
    assert!(
        (prnu - shot).abs() <= DIFFERENCE_ROUNDING * shot,
        "prnu {prnu} vs shot {shot}"
    );
    // Saturation: b²(L − d).
    let cap = at.saturation.capacity_e * 4.0;
    assert!((r.saturation_signal_e.unwrap() - cap).abs() <= ROUNDING * cap);
}

#[test]
fn bad_requests_name_the_field() {
    let b = base();
    let msg = |r: SweepRequest| sweep(&b, &r).unwrap_err().to_string();
    assert!(msg(request("sensor.colour", 1.0, 2.0, 5, Spacing::Linear))
        .starts_with("sweep.key: \"sensor.colour\" is not a numeric scenario key"));
    assert_eq!(
        msg(request("exposure.time_s", -1.0, 1.0, 5, Spacing::Log)),
        "sweep.from: log spacing needs both ends > 0, got -1 and 1"
    );
    assert_eq!(
        msg(request("exposure.time_s", 1.0, 2.0, 1, Spacing::Linear)),
        "sweep.points: must be a whole number from 2 to 100000, got 1"
    );
    assert_eq!(
        msg(request(
            "sensor.quantum_efficiency",
            0.5,
            1.5,
            5,
            Spacing::Linear
        )),
        "sweep.to: at 1.5: sensor.quantum_efficiency: must be ≤ 1, got 1.5"
    );
    assert_eq!(
        msg(request(
            "exposure.time_s",
            f64::NAN,
            1.0,
            5,
            Spacing::Linear
        )),
        "sweep.from: must be a finite number, got NaN"
    );
    let mut bad = b.clone();
    bad["sensor"]["full_well_e"] = json!(-1);
    assert_eq!(
        sweep(
            &bad,
            &request("exposure.time_s", 1.0, 2.0, 5, Spacing::Linear)
        )
        .unwrap_err()
        .to_string(),
        "sensor.full_well_e: must be > 0, got -1"
    );
}

#[test]
fn csv_has_a_header_with_units_and_one_row_a_point() {
    let s = sweep(
        &base(),
        &request("temperature_c", -20.0, 60.0, 9, Spacing::Linear),
    )
    .unwrap();
    let csv = to_csv(&s);
    let lines: Vec<&str> = csv.split("\r\n").collect();
    assert_eq!(
        lines.len(),
        9 + 2,
        "header, 9 rows, and the empty string after the last CRLF"
    );
    assert!(lines[0].starts_with("temperature_c [°C],photons_per_pixel [photons],signal_e [e-],"));
    let columns = lines[0].split(',').count();
    for row in &lines[1..10] {
        assert_eq!(row.split(',').count(), columns, "{row}");
    }
    assert!(lines[1].starts_with("-20,"));
}

#[test]
fn detection_keys_sweep_and_a_contrast_sweep_may_not_cross_zero() {
    // The detection figures along a sweep of the false-alarm probability: a lower p_fa puts
    // the threshold higher (Neyman–Pearson: the false-alarm tail shrinks as τ rises).
    let b = base();
    let s = sweep(
        &b,
        &request(
            "detection.false_alarm_probability",
            1e-6,
            1e-2,
            5,
            Spacing::Log,
        ),
    )
    .unwrap();
    let tau: Vec<f64> = s
        .points
        .iter()
        .map(|p| p.report.detection.threshold_e.unwrap())
        .collect();
    assert!(tau.windows(2).all(|w| w[0] > w[1]), "{tau:?}");
    let csv = to_csv(&s);
    assert!(
        csv.starts_with("detection.false_alarm_probability [1],"),
        "{}",
        csv.lines().next().unwrap_or_default()
    );
    // A contrast sweep through 0 is refused by name; each sign on its own is swept.
    let e = sweep(
        &b,
        &request("detection.contrast", -0.5, 0.5, 5, Spacing::Linear),
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains(
            "sweep.from: detection.contrast must not be 0, so a sweep of it may not cross 0"
        ),
        "{e}"
    );
    assert!(sweep(
        &b,
        &request("detection.contrast", -0.5, -0.05, 5, Spacing::Linear)
    )
    .is_ok());
}
