//! Checks of the catalogue: its entries agree with each other, and the validator checks every
//! key with exactly the rule its entry states (so a help text quoting the entry quotes the
//! validator).

#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use std::collections::BTreeSet;

use serde_json::{json, Value};

use super::{
    all, find, light_kind, light_kind_name, Key, Object, Presence, Rule, Section, When,
    LIGHT_AMOUNTS, LIGHT_KINDS, SWEEPABLE,
};
use crate::validate::scenario_from_value;

fn base() -> Value {
    json!({
        "version": 1,
        "sensor": {"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6, "full_well_e": 10000,
            "read_noise_e": 2.5, "dark_current_e_per_s": 1, "adc_bits": 12,
            "system_gain_dn_per_e": 0.25},
        "light": {"photon_flux_per_um2_s": 1000},
        "exposure": {"time_s": 0.01}
    })
}

/// A valid light object of each kind (invented values).
fn light_of(kind: &str) -> Value {
    let lens = |mut v: Value| {
        v["spectrum"] = json!({"kind": "cie_a"});
        v["f_number"] = json!(2.8);
        v["lens_transmission"] = json!(0.9);
        v
    };
    match kind {
        "photon_flux_per_um2_s" => json!({"photon_flux_per_um2_s": 1000}),
        "irradiance_w_per_m2" => json!({"irradiance_w_per_m2": 0.01, "wavelength_nm": 550}),
        "irradiance_spectrum" => {
            json!({"irradiance_w_per_m2": 0.01, "spectrum": {"kind": "cie_a"}})
        }
        "illuminance_lux" => json!({"illuminance_lux": 10, "spectrum": {"kind": "cie_a"}}),
        "photons_per_pixel" => json!({"photons_per_pixel": 100}),
        "scene_illuminance_lux" => lens(json!({"scene_illuminance_lux": 300, "reflectance": 0.2})),
        "scene_irradiance_w_per_m2" => {
            lens(json!({"scene_irradiance_w_per_m2": 2, "reflectance": 0.2}))
        }
        "scene_luminance_cd_per_m2" => lens(json!({"scene_luminance_cd_per_m2": 100})),
        "scene_radiance_w_per_m2_sr" => lens(json!({"scene_radiance_w_per_m2_sr": 0.5})),
        other => panic!("no example light of kind {other}"),
    }
}

/// A valid spectrum of each kind (invented values).
fn spectrum_of(kind: &str) -> Value {
    match kind {
        "blackbody" => json!({"kind": "blackbody", "temperature_k": 3000}),
        "monochromatic" => json!({"kind": "monochromatic", "wavelength_nm": 550}),
        "gaussian" => json!({"kind": "gaussian", "centre_nm": 550, "fwhm_nm": 30}),
        "table" => json!({"kind": "table", "points": [[400, 1], [700, 0.5]]}),
        other => json!({ "kind": other }),
    }
}

/// A valid scenario in which `key` is read, at place `at` of its object.
fn scenario_reading(key: &Key, at: &str) -> Value {
    let mut v = base();
    let light = match (key.object, key.when) {
        // The last kind: for the spectrum, one where leaving it out changes nothing else.
        (Object::Light, When::LightKind(kinds)) => kinds.last().map(|k| light_of(k)),
        (Object::Spectrum, When::Choice { values, .. }) => {
            let mut l = light_of("illuminance_lux");
            l["spectrum"] = spectrum_of(values[0]);
            Some(l)
        }
        (Object::Light | Object::Spectrum, _) => Some(light_of("illuminance_lux")),
        _ => None,
    };
    if let Some(l) = light {
        let place = at.split('.').next().unwrap();
        v[place] = l;
    }
    // A key that belongs to a choice of its own object: make that choice.
    if let (
        When::Choice {
            key: choice,
            values,
        },
        Object::Sensor,
    ) = (key.when, key.object)
    {
        v["sensor"][choice] = json!(values[0]);
    }
    // Colour keys need a colour sensor (invented QEs).
    let colour = matches!(
        key.object,
        Object::Channels | Object::Channel | Object::Processing
    ) || key.path == "processing";
    if colour {
        v["sensor"]
            .as_object_mut()
            .unwrap()
            .remove("quantum_efficiency");
        v["sensor"]["cfa"] = json!("RGGB");
        v["sensor"]["channels"] = json!({"R": {"quantum_efficiency": 0.4},
            "G": {"quantum_efficiency": 0.6}, "B": {"quantum_efficiency": 0.5}});
        if key.object == Object::Processing {
            v["processing"] = json!({});
        }
    }
    // HDR keys need an HDR readout (invented values; the low gain below the base K 0.25).
    let dual_gain = key.object == Object::HdrLowGain
        || matches!(
            key.when,
            When::Choice {
                values: ["dual_gain"],
                ..
            }
        );
    if dual_gain {
        v["hdr"] = json!({"kind": "dual_gain", "low_gain": {"system_gain_dn_per_e": 0.05,
            "read_noise_e": 10, "full_well_e": 60000}});
    } else if matches!(key.object, Object::Hdr | Object::HdrExposure) {
        v["hdr"] = json!({"kind": "exposures", "exposures": [{"ratio": 16}]});
    }
    v
}

/// A catalogue path at a real place: the first element of a list (`hdr.exposures[]` →
/// `hdr.exposures[0]`).
fn real(path: &str) -> String {
    path.replace("[]", "[0]")
}

fn path_parts(path: &str) -> Vec<&str> {
    path.split('.').collect()
}

/// The value at a path's parent; `name[0]` parts index a list.
fn parent<'a>(v: &'a mut Value, parts: &[&str]) -> &'a mut Value {
    let mut cur = v;
    for p in parts {
        cur = match p.strip_suffix("[0]") {
            Some(name) => &mut cur[name][0],
            None => &mut cur[*p],
        };
    }
    cur
}

fn set(v: &mut Value, path: &str, x: Value) {
    let path = real(path);
    let parts = path_parts(&path);
    parent(v, &parts[..parts.len() - 1])[*parts.last().unwrap()] = x;
}

fn remove(v: &mut Value, path: &str) {
    let path = real(path);
    let parts = path_parts(&path);
    parent(v, &parts[..parts.len() - 1])
        .as_object_mut()
        .unwrap()
        .remove(*parts.last().unwrap());
}

fn problems(v: &Value) -> Vec<String> {
    match scenario_from_value(v) {
        Ok(_) => vec![],
        Err(e) => e.problems().iter().map(ToString::to_string).collect(),
    }
}

/// Values just outside a number rule, each with the message the rule gives for it.
fn outside(rule: Rule) -> Vec<(f64, String)> {
    let Rule::Number { range, .. } = rule else {
        return vec![];
    };
    let mut bad = Vec::new();
    let r = range.rule();
    if let Some((a, inclusive)) = r.min() {
        bad.push(if inclusive { a - 1.0 - a.abs() } else { a });
    }
    if let Some((b, inclusive)) = r.max() {
        bad.push(if inclusive { b + 1.0 + b.abs() } else { b });
    }
    if let Some(l) = range.low_limit() {
        let floor = r.min().map_or(l - 1.0 - l.abs(), |(a, _)| (a + l) / 2.0);
        bad.push(floor);
    }
    if let Some(h) = range.high_limit() {
        bad.push(h * 10.0);
    }
    bad.into_iter()
        .map(|x| (x, range.check(x).expect("outside its own range")))
        .collect()
}

#[test]
fn paths_are_unique_and_name_their_object() {
    let mut seen = BTreeSet::new();
    for k in all() {
        assert!(seen.insert(k.path), "{} is in the catalogue twice", k.path);
        let at = k.object.places()[0];
        let expected = if at.is_empty() {
            k.name.to_string()
        } else {
            format!("{at}.{}", k.name)
        };
        assert_eq!(k.path, expected, "{}: path against object and name", k.path);
        assert!(
            !k.label.is_empty() && !k.quantity.is_empty() && !k.about.is_empty(),
            "{}",
            k.path
        );
        assert_eq!(find(k.path).map(|f| f.path), Some(k.path));
        for p in k.paths() {
            assert_eq!(find(&p).map(|f| f.path), Some(k.path), "{p}");
        }
    }
    assert!(seen.len() >= 40, "only {} keys", seen.len());
    assert_eq!(find("sensor.no_such_key"), None);
    assert_eq!(
        find("background_light.spectrum.fwhm_nm").map(|k| k.path),
        Some("light.spectrum.fwhm_nm")
    );
}

#[test]
fn choices_list_each_value_once_with_the_default_first() {
    for k in all() {
        match k.rule {
            Rule::Choice { values, default } => {
                let listed: BTreeSet<&str> = k.options.iter().map(|o| o.0).collect();
                let allowed: BTreeSet<&str> = values.iter().copied().collect();
                assert_eq!(
                    listed, allowed,
                    "{}: the form's options are the rule's values",
                    k.path
                );
                assert_eq!(listed.len(), k.options.len(), "{}: an option twice", k.path);
                if let Some(d) = default {
                    assert_eq!(k.options[0].0, d, "{}: the default first", k.path);
                }
            }
            _ => assert!(k.options.is_empty(), "{}: options without a choice", k.path),
        }
    }
}

#[test]
fn light_kinds_agree_with_the_light_keys() {
    let names: BTreeSet<&str> = LIGHT_KINDS.iter().map(|k| k.name).collect();
    assert_eq!(names.len(), LIGHT_KINDS.len());
    for kind in LIGHT_KINDS {
        let amount = find(kind.amount).unwrap_or_else(|| panic!("{}: no key", kind.amount));
        assert_eq!(amount.object, Object::Light);
        assert!(amount.sweep, "{}: a light view sweeps it", kind.amount);
        let with = |key: &Key| matches!(key.when, When::LightKind(ks) if ks.contains(&kind.name));
        assert!(with(amount), "{}: its amount belongs to it", kind.name);
        assert_eq!(
            with(&super::SPECTRUM),
            kind.spectrum,
            "{}: spectrum",
            kind.name
        );
        // The example of the kind is valid and is told to be of this kind.
        let mut v = base();
        v["light"] = light_of(kind.name);
        let sc = scenario_from_value(&v).unwrap_or_else(|e| panic!("{}: {e}", kind.name));
        assert_eq!(light_kind_name(sc.light()), kind.name);
        assert_eq!(light_kind(sc.light()).map(|k| k.name), Some(kind.name));
        assert_eq!(crate::curves::amount_key(sc.light()), kind.amount);
    }
    // Every light key belongs to some kind; the amounts are one per kind's amount key.
    for k in all().filter(|k| k.object == Object::Light) {
        let When::LightKind(kinds) = k.when else {
            panic!("{}: a light key belongs to light kinds", k.path)
        };
        assert!(kinds.iter().all(|n| names.contains(n)), "{}", k.path);
    }
    let amounts: BTreeSet<String> = LIGHT_KINDS
        .iter()
        .map(|k| k.amount.replace("light.", ""))
        .collect();
    assert_eq!(
        amounts,
        LIGHT_AMOUNTS.iter().map(ToString::to_string).collect()
    );
}

#[test]
fn sweepable_keys_are_numbers_with_units_and_words() {
    assert_eq!(SWEEPABLE.len(), all().filter(|k| k.sweep).count());
    for s in &SWEEPABLE {
        let k = find(s.path).unwrap();
        assert!(
            matches!(k.rule, Rule::Number { .. } | Rule::Whole { .. }),
            "{}",
            s.path
        );
        assert!(
            !s.unit.csv.is_empty() && !s.unit.shown.is_empty(),
            "{}: units",
            s.path
        );
        assert_eq!(s.whole, matches!(k.rule, Rule::Whole { .. }));
        assert_eq!(s.quantity, k.quantity);
        assert!(
            k.object != Object::Light || k.path.starts_with("light."),
            "{}: a sweep varies the light",
            s.path
        );
    }
}

#[test]
fn help_texts_quote_the_rule() {
    for k in all() {
        let help = k.help();
        assert!(help.starts_with(k.about), "{}", k.path);
        let chars: Vec<char> = help.chars().collect();
        let e_notation = chars.windows(3).any(|w| {
            w[0].is_ascii_digit() && w[1] == 'e' && (w[2].is_ascii_digit() || w[2] == '-')
        });
        assert!(!e_notation, "{}: no E-notation in help: {help}", k.path);
        if let Rule::Number { range, .. } = k.rule {
            let bounds = [
                range.rule().min().map(|b| b.0),
                range.rule().max().map(|b| b.0),
            ];
            for b in bounds
                .into_iter()
                .flatten()
                .chain(range.low_limit())
                .chain(range.high_limit())
            {
                let words = super::number_words(b);
                assert!(
                    help.contains(&words),
                    "{}: {help} should state {words}",
                    k.path
                );
            }
        }
        if let Rule::Whole { min, max, .. } = k.rule {
            let words = format!(
                "from {} to {}",
                super::number_words(f64::from(min)),
                super::number_words(f64::from(max))
            );
            assert!(help.contains(&words), "{}: {help}", k.path);
        }
    }
    assert_eq!(
        super::FIELD_ANGLE_DEG.help(),
        "Angle off the lens axis of the pixel considered: light falls off as cos⁴. Default: 0. \
         From 0, below 90."
    );
    assert_eq!(
        super::QUANTUM_EFFICIENCY_CURVE.rule_words(),
        "Optional. 2 to 10\u{202f}000 points, wavelengths increasing; values from 0 to 1, not all 0."
    );
}

#[test]
fn the_validator_checks_every_key_with_its_rule() {
    let mut checked = 0;
    for k in all().filter(|k| k.section != Section::Hidden) {
        for at in k.paths() {
            let good = scenario_reading(k, &at);
            assert_eq!(
                problems(&good),
                Vec::<String>::new(),
                "{at}: the example is valid"
            );
            let mut cases: Vec<(Value, String)> = outside(k.rule)
                .into_iter()
                .map(|(x, msg)| (json!(x), msg))
                .collect();
            match k.rule {
                Rule::Whole { min, max, .. } => {
                    cases.push((
                        json!(max + 1),
                        format!(
                            "must be a whole number from {min} to {max}, got {}",
                            crate::input::show(f64::from(max + 1))
                        ),
                    ));
                    cases.push((json!(1.5), "must be a whole number, got 1.5".into()));
                }
                Rule::Choice { values, .. } => {
                    let quoted: Vec<String> = values.iter().map(|v| format!("\"{v}\"")).collect();
                    cases.push((
                        json!("none of these"),
                        format!(
                            "must be one of {}, got \"none of these\"",
                            quoted.join(", ")
                        ),
                    ));
                }
                Rule::Pairs { max_value, .. } => {
                    let (y, rule) = match max_value {
                        Some(m) => (m + 1.0, format!("from 0 to {m}")),
                        None => (-1.0, "≥ 0".into()),
                    };
                    cases.push((
                        json!([[400, y], [500, 0.5]]),
                        format!("[0]: value must be {rule}, got {y}"),
                    ));
                }
                Rule::Text => cases.push((json!(5), "must be text, got 5".into())),
                Rule::Number { .. } => {
                    cases.push((json!("3 µm"), "must be a number, got \"3 µm\"".into()))
                }
                _ => {}
            }
            for (x, msg) in cases {
                let mut v = good.clone();
                set(&mut v, &at, x.clone());
                let (path, msg) = match msg.strip_prefix("[0]") {
                    Some(rest) => (
                        format!("{}[0]", real(&at)),
                        rest.trim_start_matches(": ").to_string(),
                    ),
                    None => (real(&at), msg),
                };
                assert_eq!(problems(&v), vec![format!("{path}: {msg}")], "{at} = {x}");
                checked += 1;
            }
            // Left out: a required key is named missing, in its own words where it has them
            // (a light's amount key is what tells its kind: left out, the kind is unknown).
            let is_amount = k.object == Object::Light && LIGHT_AMOUNTS.contains(&k.name);
            let missing = match k.rule {
                _ if is_amount => None,
                Rule::Number {
                    presence: Presence::Required,
                    ..
                }
                | Rule::Whole { default: None, .. }
                | Rule::Choice { default: None, .. }
                | Rule::Object { required: true, .. } => Some("required, missing".to_string()),
                Rule::Number {
                    presence: Presence::RequiredSaying(w),
                    ..
                }
                | Rule::Pairs {
                    presence: Presence::RequiredSaying(w),
                    ..
                } => Some(w.to_string()),
                _ => None,
            };
            if let Some(words) = missing {
                let mut v = good.clone();
                remove(&mut v, &at);
                assert_eq!(
                    problems(&v),
                    vec![format!("{}: {words}", real(&at))],
                    "{at} left out"
                );
                checked += 1;
            }
        }
    }
    assert!(checked > 150, "only {checked} cases");
}

#[test]
fn a_key_left_out_takes_its_default() {
    let mut checked = 0;
    for k in all() {
        // An HDR readout's defaults come from the sensor's keys, not from the fallback value.
        let from_sensor = matches!(k.object, Object::HdrExposure | Object::HdrLowGain);
        let default = match k.rule {
            Rule::Number {
                presence: Presence::DefaultFrom { .. },
                ..
            } if from_sensor => continue,
            Rule::Number {
                presence: Presence::Default(d) | Presence::DefaultFrom { value: d, .. },
                ..
            } => json!(d),
            Rule::Whole {
                default: Some(d), ..
            } => json!(d),
            Rule::Choice {
                default: Some(d), ..
            } => json!(d),
            _ => continue,
        };
        let at = k.paths().next().unwrap();
        let mut given = scenario_reading(k, &at);
        set(&mut given, &at, default.clone());
        let mut left_out = given.clone();
        remove(&mut left_out, &at);
        assert_eq!(
            crate::evaluate_json(&left_out.to_string()).unwrap(),
            crate::evaluate_json(&given.to_string()).unwrap(),
            "{at}: left out is {default}"
        );
        checked += 1;
    }
    assert!(checked >= 12, "only {checked} defaults");
}
