//! Data-driven checks of the validator's messages: one `check` helper, one line per case.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::indexing_slicing)]

use serde_json::{json, Value};

fn valid() -> Value {
    json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
            "read_noise_e": 2.5, "dark_current_e_per_s": 1, "adc_bits": 12,
            "system_gain_dn_per_e": 0.25},
        "light": {"photon_flux_per_um2_s": 1000},
        "exposure": {"time_s": 0.01}
    })
}

/// Apply `edit` to a valid scenario and check the problems, rendered one a line.
fn check(edit: impl FnOnce(&mut Value), expected: &[&str]) {
    let mut v = valid();
    edit(&mut v);
    let got: Vec<String> = match super::scenario_from_value(&v) {
        Ok(_) => vec![],
        Err(e) => e.problems().iter().map(ToString::to_string).collect(),
    };
    assert_eq!(got, expected, "for {v}");
}

#[test]
fn a_valid_scenario_passes_with_defaults() {
    let s = super::scenario_from_value(&valid()).unwrap();
    assert_eq!(s.temperature_c, 25.0); // SCENARIO.md default
    assert_eq!(s.snr_threshold, 1.0);
    assert_eq!(s.sensor.dark_current_doubling_c, 6.5);
    assert_eq!(s.exposure.frames_averaged, 1);
}

#[test]
fn rules_name_the_key_and_the_value() {
    check(
        |v| v["sensor"]["full_well_e"] = json!(-5),
        &["sensor.full_well_e: must be > 0, got -5"],
    );
    check(
        |v| v["sensor"]["summing_well_e"] = json!(0),
        &["sensor.summing_well_e: must be > 0, got 0"],
    );
    check(
        |v| v["sensor"]["quantum_efficiency"] = json!(1.2),
        &["sensor.quantum_efficiency: must be ≤ 1, got 1.2"],
    );
    check(
        |v| v["sensor"]["adc_bits"] = json!(12.5),
        &["sensor.adc_bits: must be a whole number, got 12.5"],
    );
    check(
        |v| v["sensor"]["adc_bits"] = json!(33),
        &["sensor.adc_bits: must be a whole number from 1 to 32, got 33"],
    );
    check(
        |v| v["sensor"]["readout"] = json!("ccd"),
        &["sensor.readout: must be one of \"cds\", \"dds\", \"single\", got \"ccd\""],
    );
    check(
        |v| v["exposure"]["time_s"] = json!("10 ms"),
        &["exposure.time_s: must be a number, got \"10 ms\""],
    );
    check(
        |v| v["temperature_c"] = json!(-300),
        &["temperature_c: must be > -273.15, got -300"],
    );
    check(
        |v| v["exposure"]["time_s"] = json!(1e7),
        &["exposure.time_s: must be at most 1e6 (this calculator's limit), got 1e7"],
    );
    // A wavelength of 2e-308 nm passed the format's rule (λ > 0) and made the minimum
    // detectable irradiance infinite (a case the property test found); the calculator's lower
    // limit refuses it.
    check(
        |v| v["light"] = json!({"irradiance_w_per_m2": 0.0, "wavelength_nm": 2e-308}),
        &["light.wavelength_nm: must be at least 0.001 (this calculator's limit), got 2e-308"],
    );
}

#[test]
fn every_problem_is_reported_at_once() {
    check(
        |v| {
            v["sensor"]["full_well_e"] = json!(0);
            v["sensor"]["read_noise_e"] = json!(-1);
            v["exposure"]["binning"] = json!(0);
            v["snr_threshold"] = json!(0);
        },
        &[
            "sensor.full_well_e: must be > 0, got 0",
            "sensor.read_noise_e: must be ≥ 0, got -1",
            "exposure.binning: must be a whole number from 1 to 1000, got 0",
            "snr_threshold: must be > 0, got 0",
        ],
    );
}

#[test]
fn unknown_keys_are_errors_except_x_keys() {
    check(
        |v| v["sensor"]["x_vendor_note"] = json!("kept and ignored"),
        &[],
    );
    check(|v| v["x_project"] = json!({"anything": [1, 2]}), &[]);
    check(
        |v| v["sensor"]["full_well"] = json!(1),
        &["sensor.full_well: unknown key (did you mean \"full_well_e\"?); keys of your own must start with \"x_\""],
    );
    check(
        |v| v["colour"] = json!("red"),
        &[
            "colour: unknown key; the keys here are background_light, detection, exposure, hdr, light, \
           processing, sensor, snr_threshold, temperature_c, title, version; keys of your own \
           must start with \"x_\"",
        ],
    );
}

#[test]
fn missing_required_keys_are_named() {
    check(
        |v| {
            v["sensor"].as_object_mut().unwrap().remove("read_noise_e");
            v.as_object_mut().unwrap().remove("exposure");
        },
        &[
            "sensor.read_noise_e: required, missing",
            "exposure: required, missing",
        ],
    );
}

#[test]
fn versions_other_than_one() {
    check(
        |v| v["version"] = json!(2),
        &["version: this scenario is format version 2, newer than this calculator reads (version 1)"],
    );
    check(
        |v| v["version"] = json!("1"),
        &["version: must be 1, got \"1\""],
    );
    check(
        |v| {
            v.as_object_mut().unwrap().remove("version");
        },
        &["version: required: this calculator reads format version 1"],
    );
}

#[test]
fn light_needs_exactly_one_kind() {
    check(
        |v| v["light"] = json!({}),
        &["light: give exactly one light kind: photon_flux_per_um2_s, irradiance_w_per_m2 (with wavelength_nm or a spectrum), photons_per_pixel, illuminance_lux, or a scene_… quantity with a lens; got none"],
    );
    check(
        |v| v["light"] = json!({"photon_flux_per_um2_s": 1, "photons_per_pixel": 5}),
        &["light: give exactly one light kind; got photon_flux_per_um2_s and photons_per_pixel"],
    );
    check(
        |v| v["light"] = json!({"irradiance_w_per_m2": 1}),
        &["light.wavelength_nm: required, missing: give wavelength_nm for monochromatic light, or a spectrum"],
    );
    check(
        |v| v["light"] = json!({"wavelength_nm": 550}),
        &["light.irradiance_w_per_m2: required, missing"],
    );
}

#[test]
fn joined_rules() {
    check(
        |v| v["sensor"]["readout"] = json!("dds"),
        &["sensor.sense_node_capacitance_ff: required when sensor.readout is \"dds\": reset noise needs the sense-node capacitance; give it, or sensor.conversion_gain_uv_per_e to derive it"],
    );
    check(
        |v| {
            v["sensor"]["readout"] = json!("single");
            v["sensor"]["conversion_gain_uv_per_e"] = json!(60);
        },
        &[],
    );
    check(
        |v| v["sensor"]["black_level_dn"] = json!(4095),
        &["sensor.black_level_dn: must be below the ADC's full scale 2^adc_bits − 1 = 4095, got 4095"],
    );
    check(
        |v| {
            v["sensor"]["dark_current_doubling_c"] = json!(0.1);
            v["temperature_c"] = json!(100);
        },
        &["sensor.dark_current_doubling_c: the dark current would double 750 times between sensor.dark_current_reference_c and temperature_c; at most 200 (this calculator's limit)"],
    );
}

#[test]
fn malformed_documents() {
    let e = super::scenario_from_json("{\"version\": 1,").unwrap_err();
    assert_eq!(e.problems().len(), 1);
    assert!(
        e.to_string()
            .starts_with("scenario: not valid JSON: EOF while parsing"),
        "{e}"
    );
    let e = super::scenario_from_json("[1, 2]").unwrap_err();
    assert_eq!(e.to_string(), "scenario: must be a JSON object, got a list");
    check(
        |v| v["sensor"] = json!(5),
        &["sensor: must be an object, got 5"],
    );
}

#[test]
fn null_counts_as_absent() {
    check(
        |v| v["sensor"]["sense_node_capacitance_ff"] = Value::Null,
        &[],
    );
    check(
        |v| v["sensor"]["read_noise_e"] = Value::Null,
        &["sensor.read_noise_e: required, missing"],
    );
}

fn scene() -> Value {
    json!({"scene_illuminance_lux": 300, "reflectance": 0.2, "spectrum": {"kind": "cie_d65"},
           "f_number": 2.8, "lens_transmission": 0.9})
}

#[test]
fn light_as_engineers_state_it() {
    check(|v| v["light"] = scene(), &[]);
    check(
        |v| v["light"] = json!({"illuminance_lux": 300, "spectrum": {"kind": "cie_a"}}),
        &[],
    );
    check(
        |v| v["light"] = json!({"irradiance_w_per_m2": 2, "spectrum": {"kind": "gaussian", "centre_nm": 530, "fwhm_nm": 30}}),
        &[],
    );
    check(
        |v| v["background_light"] = json!({"photon_flux_per_um2_s": 100}),
        &[],
    );
}

#[test]
fn bad_light_names_the_field() {
    check(
        |v| {
            v["light"] = scene();
            v["light"]["reflectance"] = json!(1.3);
            v["light"]["f_number"] = json!(0.4);
        },
        &[
            "light.reflectance: must be ≤ 1, got 1.3",
            "light.f_number: must be ≥ 0.5, got 0.4",
        ],
    );
    check(
        |v| v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "monochromatic", "wavelength_nm": 900}}),
        &["light.spectrum.wavelength_nm: 900 nm is outside the sensor's response band 380–780 nm (sensor.response_from_nm, sensor.response_to_nm)"],
    );
    check(
        |v| {
            v["sensor"]["response_to_nm"] = json!(1000);
            v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "monochromatic", "wavelength_nm": 900}});
        },
        &["light.spectrum: has no visible light (it is zero wherever V(λ) is not, 360–830 nm), so the light cannot be given in lux or cd/m²; give it in W/m² instead"],
    );
    check(
        |v| {
            v["sensor"]["response_to_nm"] = json!(1000);
            v["light"] = scene();
        },
        &["sensor.response_to_nm: light.spectrum cie_d65 is tabulated from 300 to 830 nm, but the sensor's response band 380–1000 nm goes beyond it; narrow sensor.response_from_nm/response_to_nm, or for daylight in the near infrared use a blackbody near 5800 K as a stand-in"],
    );
    check(
        |v| v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "table", "points": [[400, 1], [390, 2], [500, -1], [600, "x"]]}}),
        &[
            "light.spectrum.points[1]: wavelengths must increase, got 390 nm after 400 nm",
            "light.spectrum.points[2]: value must be ≥ 0, got -1",
            "light.spectrum.points[3]: must be a pair [wavelength_nm, value] of numbers, got a list",
        ],
    );
    check(
        |v| v["light"] = json!({"illuminance_lux": 10, "spectrum": {"kind": "rainbow"}}),
        &["light.spectrum.kind: must be one of \"cie_a\", \"cie_d65\", \"equal_energy\", \"blackbody\", \"monochromatic\", \"gaussian\", \"table\", got \"rainbow\""],
    );
    check(
        |v| v["light"] = json!({"illuminance_lux": 10}),
        &["light.spectrum: required, missing"],
    );
    check(
        |v| {
            v["light"] = scene();
            v["light"].as_object_mut().unwrap().remove("lens_transmission");
        },
        &["light.lens_transmission: required with a scene_… light: the lens transmission, 0 to 1 (typically 0.8 to 0.95)"],
    );
}

#[test]
fn qe_curves() {
    check(
        |v| {
            v["sensor"].as_object_mut().unwrap().remove("quantum_efficiency");
            v["sensor"]["quantum_efficiency_curve"] = json!([[400, 0.5], [700, 0.5]]);
        },
        &["sensor.quantum_efficiency: required: light has no spectrum or wavelength to weight sensor.quantum_efficiency_curve with"],
    );
    check(
        |v| {
            v["sensor"]["quantum_efficiency_curve"] = json!([[400, 0.5], [700, 1.5]]);
        },
        &["sensor.quantum_efficiency_curve[1]: value must be from 0 to 1, got 1.5"],
    );
    check(
        |v| {
            v["sensor"]["quantum_efficiency_curve"] = json!([[400, 0.5], [500, 0.0], [700, 0.0]]);
            v["light"] = json!({"irradiance_w_per_m2": 1, "wavelength_nm": 600});
        },
        &["light.wavelength_nm: sensor.quantum_efficiency_curve is zero at 600 nm: this sensor does not see this light"],
    );
}

#[test]
fn numbers_beyond_double_precision_are_refused_as_json() {
    let e = super::scenario_from_json(r#"{"version": 1, "temperature_c": 1e999}"#).unwrap_err();
    assert!(
        e.to_string()
            .starts_with("scenario: not valid JSON: number out of range"),
        "{e}"
    );
}
