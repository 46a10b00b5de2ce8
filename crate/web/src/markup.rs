//! The scenario form's field markup, made from the key catalogue (`engine::keys`): a field per
//! key with its label, unit, help (quoting the rule the engine checks) and default, grouped in
//! the sections and choice boxes the catalogue names. The light and the background light are
//! the same keys at two places, so they come from one function.
//!
//! Text only, run natively at build time: `tests/markup.rs` writes it into the marked region of
//! `www/index.html` and fails when the page is stale. The page itself stays static. What is
//! page layout rather than a key's metadata (the sections' legends, where a plot goes, the
//! examples in the pasted-pairs boxes, the light choice's words) is stated here.

use std::fmt::Write as _;

use engine::keys::{self, Key, Object, Presence, Rule, Section, When};

use crate::ids;
use crate::svg::escape;

/// The marker lines around the generated region in `www/index.html`.
pub const BEGIN: &str = "<!-- generated fields: begin (crate/web/src/markup.rs, from engine::keys; \
                         write it with NOISE_BUDGET_WRITE_MARKUP=1 cargo test -p noise-budget-web --test markup) -->";
/// The end marker.
pub const END: &str = "<!-- generated fields: end -->";

/// The choices of format version 1 (SCENARIO.md), always written into the scenario.
const VERSION_1_CHOICES: [&str; 2] = ["sensor.readout", "exposure.binning_mode"];

/// A place a light object occurs at, as the form shows it.
struct LightPlace {
    /// Dot path (`light`, `background_light`).
    path: &'static str,
    /// The fieldset's legend.
    legend: &'static str,
    /// Prefix of its fields' ids (`""`, `bg-`).
    id_prefix: &'static str,
    /// The kind choice's id, label, help and problem ids' stem.
    choice_id: &'static str,
    choice_label: &'static str,
    choice_help: &'static str,
    choice_stem: &'static str,
    /// Whether the choice offers none at all (an optional light).
    none: bool,
    /// The id of the plot of its spectrum.
    plot: &'static str,
}

const LIGHT_PLACES: [LightPlace; 2] = [
    LightPlace {
        path: "light",
        legend: "The light",
        id_prefix: "",
        choice_id: ids::LIGHT_KIND,
        choice_label: "Light given as",
        choice_help: "How you know the light: at the sensor surface, or on the scene the lens \
                      looks at (the camera equation carries it to the sensor). Photons per pixel \
                      do not depend on the exposure time.",
        choice_stem: "light",
        none: false,
        plot: ids::PLOT_LIGHT,
    },
    LightPlace {
        path: "background_light",
        legend: "Background light",
        id_prefix: "bg-",
        choice_id: ids::BACKGROUND_KIND,
        choice_label: "Background given as",
        choice_help: "Ambient, sky or stray light that adds photons and shot noise but is not \
                      signal.",
        choice_stem: "bg",
        none: true,
        plot: ids::PLOT_BACKGROUND,
    },
];

/// The sections of keys of their own, in the page's order, with their legends.
const SECTIONS: [(Section, &str); 4] = [
    (Section::Sensor, "The sensor"),
    (Section::Readout, "Its readout"),
    (Section::Exposure, "The exposure"),
    (Section::Conditions, "The conditions"),
];

/// A box of pasted pairs: rows and the example in its placeholder.
fn pairs_box(path: &str) -> (u32, &'static str) {
    match path {
        "sensor.quantum_efficiency_curve" => (4, "optional: 400&#9;0.35&#10;600&#9;0.66"),
        _ => (5, "450&#9;1.0&#10;550&#9;0.6"),
    }
}

/// The plot shown after a key's field, if any.
fn plot_after(path: &str) -> Option<&'static str> {
    (path == "sensor.quantum_efficiency_curve").then_some(ids::PLOT_QE)
}

/// Deepest indentation written, in spaces: the markup is made, not edited (this file is its
/// source), and the 2.6 KB that deeper nesting would cost are kept out of the single file.
const MAX_INDENT: usize = 4;

/// The field markup of the whole form, between the markers (without them).
#[must_use]
pub fn fields() -> String {
    let nested = nested_fields();
    let mut o = String::with_capacity(nested.len());
    for line in nested.lines() {
        let text = line.trim_start();
        let depth = (line.len() - text.len()).min(MAX_INDENT);
        if !text.is_empty() {
            o.push_str(&" ".repeat(depth));
        }
        o.push_str(text);
        o.push('\n');
    }
    o
}

/// The field markup, indented by nesting.
fn nested_fields() -> String {
    let mut o = String::new();
    for k in keys::all().filter(|k| k.section == Section::Scenario) {
        field(&mut o, 1, k, k.path, "");
    }
    for (i, (section, legend)) in SECTIONS.iter().enumerate() {
        let _ = write!(o, "\n  <fieldset>\n    <legend>{legend}</legend>\n");
        let list: Vec<&Key> = keys::all()
            .filter(|k| k.section == *section && !is_container(k))
            .collect();
        for k in list {
            // A key that belongs to a choice of its own object sits in that choice's box.
            let boxed = match k.when {
                When::Choice { key, values } => keys::find(&parent_of(k.path, key)).map(|choice| {
                    (
                        format!("in-{}", stem(choice, choice.path, "")),
                        values.join(" "),
                    )
                }),
                _ => None,
            };
            if let Some((choice, values)) = &boxed {
                let _ = writeln!(
                    o,
                    "    <div data-if=\"{choice}\" data-in=\"{values}\" hidden>"
                );
            }
            field(&mut o, if boxed.is_some() { 3 } else { 2 }, k, k.path, "");
            if boxed.is_some() {
                o.push_str("    </div>\n");
            }
            if let Some(plot) = plot_after(k.path) {
                let _ = writeln!(o, "    <div class=\"plot\" id=\"{plot}\"></div>");
            }
        }
        o.push_str("  </fieldset>\n");
        // The lights come after the readout; colour and HDR after the conditions.
        if i == 1 {
            for place in &LIGHT_PLACES {
                light(&mut o, place);
            }
        }
    }
    colour(&mut o);
    hdr(&mut o);
    o
}

/// An object key whose fields are written by its object's own section (channels, processing,
/// the HDR readout, its exposures and low gain), not a field itself.
fn is_container(k: &Key) -> bool {
    matches!(k.rule, Rule::Object { .. } | Rule::List { .. })
        && !matches!(
            k.rule,
            Rule::Object {
                object: Object::Spectrum,
                ..
            }
        )
}

/// The dot path of the sibling `key` of the key at `path` (`sensor.dark_current_law` for
/// `sensor.band_gap_parameters` and `dark_current_law`).
fn parent_of(path: &str, key: &str) -> String {
    match path.rsplit_once('.') {
        Some((parent, _)) => format!("{parent}.{key}"),
        None => key.to_string(),
    }
}

/// The colour channels and the colour processing: shown while the sensor has a Bayer pattern.
fn colour(o: &mut String) {
    let bayer = match keys::CFA.rule {
        Rule::Choice { values, .. } => values
            .iter()
            .filter(|v| **v != "mono")
            .copied()
            .collect::<Vec<_>>()
            .join(" "),
        _ => String::new(),
    };
    let cfa = format!("in-{}", stem(&keys::CFA, keys::CFA.path, ""));
    let _ = write!(
        o,
        "\n  <div data-if=\"{cfa}\" data-in=\"{bayer}\" hidden>\n  <fieldset>\n    <legend>Colour channels and processing</legend>\n"
    );
    for (place, legend) in Object::Channel
        .places()
        .iter()
        .zip(["Red", "Green", "Blue"])
    {
        let prefix = format!("{}-", place.rsplit('.').next().unwrap_or("").to_lowercase());
        let _ = writeln!(o, "    <p class=\"sub\">{legend} pixels</p>");
        for k in keys::all().filter(|k| k.object == Object::Channel) {
            field(o, 2, k, &at_object_place(k, place), &prefix);
        }
    }
    let _ = writeln!(
        o,
        "    <p class=\"sub\">White balance and colour matrix</p>"
    );
    for k in keys::all().filter(|k| k.object == Object::Processing) {
        field(o, 2, k, k.path, "");
    }
    o.push_str("  </fieldset>\n  </div>\n");
}

/// Rows offered for an HDR readout's shorter exposures (the rule's most).
const EXPOSURE_ROWS: u32 = match keys::EXPOSURES.rule {
    Rule::List { max, .. } => max,
    _ => 3,
};

/// The HDR readout: its kind (none by default), then the fields of the kind chosen.
fn hdr(o: &mut String) {
    let _ = write!(
        o,
        "\n  <fieldset>\n    <legend>High dynamic range</legend>\n"
    );
    field(o, 2, &keys::HDR_KIND, keys::HDR_KIND.path, "");
    let kind = format!("in-{}", stem(&keys::HDR_KIND, keys::HDR_KIND.path, ""));
    let kinds = keys::HDR_KIND
        .options
        .iter()
        .map(|(v, _)| *v)
        .collect::<Vec<_>>()
        .join(" ");
    let _ = writeln!(o, "    <div data-if=\"{kind}\" data-in=\"{kinds}\" hidden>");
    for k in keys::all()
        .filter(|k| k.object == Object::Hdr && !is_container(k) && k.path != keys::HDR_KIND.path)
    {
        field(o, 3, k, k.path, "");
    }
    o.push_str("    </div>\n");
    let _ = writeln!(
        o,
        "    <div data-if=\"{kind}\" data-in=\"exposures\" hidden>"
    );
    for row in 0..EXPOSURE_ROWS {
        let _ = writeln!(o, "      <p class=\"sub\">Exposure {}</p>", row + 2);
        let place = format!("hdr.exposures[{row}]");
        for k in keys::all().filter(|k| k.object == Object::HdrExposure) {
            field(
                o,
                3,
                k,
                &format!("{place}.{}", k.name),
                &format!("x{}-", row + 2),
            );
        }
    }
    o.push_str("    </div>\n");
    let _ = writeln!(
        o,
        "    <div data-if=\"{kind}\" data-in=\"dual_gain\" hidden>"
    );
    for k in keys::all().filter(|k| k.object == Object::HdrLowGain) {
        field(o, 3, k, k.path, "low-");
    }
    o.push_str("    </div>\n  </fieldset>\n");
}

/// A key's path at one place of its object (`sensor.channels.G.quantum_efficiency`).
fn at_object_place(k: &Key, place: &str) -> String {
    format!("{place}.{}", k.name)
}

/// The parts of a key's name that only say its unit (`_um`, `_e_per_s`, `_w_per_m2_sr`).
const UNIT_PARTS: &[&str] = &[
    "c", "cd", "deg", "dn", "e", "ff", "k", "lux", "m2", "nm", "per", "percent", "s", "sr", "um",
    "um2", "uv", "w",
];

/// The id stem of a key's field at `path`: the key's name without the parts that only say its
/// unit (`pixel-pitch`, `dark-current`), within a light with its place's prefix and the nested
/// object's name (`bg-spectrum-centre`). The tidy test checks that the ids are unique.
fn stem(k: &Key, path: &str, id_prefix: &str) -> String {
    let mut words: Vec<&str> = k.name.split('_').collect();
    while words.len() > 1 && words.last().is_some_and(|w| UNIT_PARTS.contains(w)) {
        words.pop();
    }
    let nested = match k.object {
        Object::Spectrum => path
            .rsplit('.')
            .nth(1)
            .map_or(String::new(), |object| format!("{object}-")),
        Object::Hdr => "hdr-".to_string(),
        _ => String::new(),
    };
    format!("{id_prefix}{nested}{}", words.join("-"))
}

fn indent(level: usize) -> String {
    "  ".repeat(level)
}

/// What an empty field shows in grey: the default, or that it may be left out (a key required
/// only in some cases is shown so only when it is derived otherwise: the page shows the
/// derived value while the field is empty).
fn placeholder(k: &Key) -> Option<String> {
    match k.rule {
        Rule::Numbers { default_words, .. } => Some(default_words.into()),
        Rule::Number { presence, .. } => match presence {
            // A default from the sensor's own key (an HDR exposure's read noise) is that key.
            Presence::DefaultFrom { words, .. } if words.starts_with("sensor.") => {
                Some(words.trim_start_matches("sensor.").replace('_', " "))
            }
            Presence::Default(v) | Presence::DefaultFrom { value: v, .. } => Some(format!("{v}")),
            Presence::Optional => Some("optional".into()),
            Presence::RequiredWhen(_) if k.derived.is_some() => Some("optional".into()),
            _ => None,
        },
        Rule::Whole {
            default: Some(d), ..
        } => Some(d.to_string()),
        _ => None,
    }
}

/// One field: label, control, unit, help (with the rule), a derived value, the problem slot.
fn field(o: &mut String, level: usize, k: &Key, path: &str, id_prefix: &str) {
    let i = indent(level);
    let s = stem(k, path, id_prefix);
    let help = escape(&k.help());
    let mut described = Vec::new();
    let unit_after =
        !k.unit.shown.is_empty() && !matches!(k.rule, Rule::Pairs { .. } | Rule::Matrix { .. });
    if unit_after {
        described.push(format!("u-{s}"));
    }
    described.push(format!("h-{s}"));
    described.push(format!("p-{s}"));
    if k.derived.is_some() {
        described.push(format!("d-{s}"));
    }
    let described = described.join(" ");
    let class = match k.rule {
        Rule::Pairs { .. } | Rule::Matrix { .. } => "field wide pairs",
        Rule::Text => "field wide",
        _ => "field",
    };
    let also = match k.rule {
        // A choice of an object's kind stands for the object too (a missing spectrum).
        Rule::Choice { .. } if k.object == Object::Spectrum => {
            let parent = path.rsplit_once('.').map_or(path, |(p, _)| p);
            format!(" data-also=\"{parent}\"")
        }
        _ => String::new(),
    };
    let _ = writeln!(o, "{i}<div class=\"{class}\" data-path=\"{path}\"{also}>");
    let label = escape(k.label);
    match k.rule {
        Rule::Matrix { rows, .. } => {
            let _ = writeln!(o, "{i}  <label for=\"in-{s}\">{label}</label>");
            let _ = writeln!(
                o,
                "{i}  <span class=\"control\"><textarea id=\"in-{s}\" name=\"{path}\" data-kind=\"matrix\" rows=\"{rows}\" spellcheck=\"false\" placeholder=\"identity: 1 0 0&#10;0 1 0&#10;0 0 1\" aria-describedby=\"{described}\"></textarea></span>"
            );
        }
        Rule::Pairs { .. } => {
            let (rows, example) = pairs_box(k.path);
            let _ = writeln!(
                o,
                "{i}  <label for=\"in-{s}\">{label} <span class=\"unit\">{}</span></label>",
                escape(k.unit.shown)
            );
            let _ = writeln!(
                o,
                "{i}  <span class=\"control\"><textarea id=\"in-{s}\" name=\"{path}\" data-kind=\"pairs\" rows=\"{rows}\" spellcheck=\"false\" placeholder=\"{example}\" aria-describedby=\"{described}\"></textarea></span>"
            );
        }
        Rule::Choice { default, .. } => {
            // A choice added to the format (a colour filter, a dark-current law) is left out of
            // the scenario while it shows its default, so that a scenario without it reads back
            // unchanged; the version-1 choices are written as they always were.
            let omit = match default {
                Some(d) if !VERSION_1_CHOICES.contains(&k.path) => {
                    format!(" data-omit-default=\"{d}\"")
                }
                _ => String::new(),
            };
            let _ = writeln!(o, "{i}  <label for=\"in-{s}\">{label}</label>");
            let _ = writeln!(o, "{i}  <span class=\"control\">");
            let _ = writeln!(
                o,
                "{i}    <select id=\"in-{s}\" name=\"{path}\"{omit} aria-describedby=\"{described}\">"
            );
            if matches!(k.rule, Rule::Choice { default: None, .. }) {
                let _ = writeln!(o, "{i}      <option value=\"\">none</option>");
            }
            for (value, words) in k.options {
                let _ = writeln!(
                    o,
                    "{i}      <option value=\"{value}\">{}</option>",
                    escape(words)
                );
            }
            let _ = writeln!(o, "{i}    </select>\n{i}  </span>");
        }
        _ => {
            let kind = match k.rule {
                Rule::Text => " data-kind=\"text\"".to_string(),
                Rule::Numbers { .. } => " data-kind=\"numbers\"".to_string(),
                Rule::Whole { .. } => " inputmode=\"numeric\"".to_string(),
                _ => " inputmode=\"decimal\"".to_string(),
            };
            let hint = placeholder(k).map_or(String::new(), |p| format!(" placeholder=\"{p}\""));
            let unit = if unit_after {
                format!(
                    "<span class=\"unit\" id=\"u-{s}\">{}</span>",
                    escape(k.unit.shown)
                )
            } else {
                String::new()
            };
            let _ = writeln!(o, "{i}  <label for=\"in-{s}\">{label}</label>");
            let _ = writeln!(
                o,
                "{i}  <span class=\"control\"><input id=\"in-{s}\" name=\"{path}\"{kind}{hint} aria-describedby=\"{described}\">{unit}</span>"
            );
        }
    }
    let _ = writeln!(o, "{i}  <span class=\"help\" id=\"h-{s}\">{help}</span>");
    if let Some(report) = k.derived {
        let _ = writeln!(
            o,
            "{i}  <span class=\"derived\" id=\"d-{s}\">derived: <span data-report=\"{report}\" data-unit=\" {}\">—</span></span>",
            escape(k.unit.shown)
        );
    }
    let _ = writeln!(o, "{i}  <span class=\"problem\" id=\"p-{s}\"></span>");
    let _ = writeln!(o, "{i}</div>");
}

/// The fieldset of a light at one of its places: the kind choice, then each key in a box shown
/// while the kinds it belongs to are chosen, the spectrum's keys in boxes of their own kinds.
fn light(o: &mut String, place: &LightPlace) {
    let _ = write!(o, "\n  <fieldset>\n    <legend>{}</legend>\n", place.legend);
    let st = place.choice_stem;
    let _ = writeln!(o, "    <div class=\"field\" data-path=\"{}\">", place.path);
    let _ = writeln!(
        o,
        "      <label for=\"{}\">{}</label>\n      <span class=\"control\">\n        <select id=\"{}\" aria-describedby=\"h-{st} p-{st}\">",
        place.choice_id, place.choice_label, place.choice_id
    );
    if place.none {
        o.push_str("          <option value=\"\">none</option>\n");
    }
    for kind in keys::LIGHT_KINDS {
        let _ = writeln!(
            o,
            "          <option value=\"{}\">{}</option>",
            kind.name,
            escape(kind.label)
        );
    }
    let _ = writeln!(
        o,
        "        </select>\n      </span>\n      <span class=\"help\" id=\"h-{st}\">{}</span>\n      <span class=\"problem\" id=\"p-{st}\"></span>\n    </div>",
        escape(place.choice_help)
    );
    let light_keys: Vec<&Key> = keys::all().filter(|k| k.object == Object::Light).collect();
    let mut i = 0;
    while let Some(first) = light_keys.get(i) {
        // Keys in a row that belong to the same kinds share a box.
        let group: Vec<&Key> = light_keys
            .get(i..)
            .unwrap_or_default()
            .iter()
            .take_while(|k| k.when == first.when)
            .copied()
            .collect();
        i += group.len();
        let kinds = match first.when {
            When::LightKind(kinds) => kinds.join(" "),
            _ => String::new(),
        };
        let _ = writeln!(
            o,
            "    <div data-if=\"{}\" data-in=\"{kinds}\" hidden>",
            place.choice_id
        );
        for k in group {
            let path = at_place(k.path, place.path);
            if matches!(
                k.rule,
                Rule::Object {
                    object: Object::Spectrum,
                    ..
                }
            ) {
                spectrum(o, place, &path);
            } else {
                field(o, 3, k, &path, place.id_prefix);
            }
        }
        o.push_str("    </div>\n");
    }
    o.push_str("  </fieldset>\n");
}

/// The spectrum's keys of a light at `place`, its kind choice first.
fn spectrum(o: &mut String, place: &LightPlace, light_path: &str) {
    let keys: Vec<&Key> = keys::all()
        .filter(|k| k.object == Object::Spectrum)
        .collect();
    let mut choice_id = String::new();
    let mut i = 0;
    while let Some(first) = keys.get(i) {
        let group: Vec<&Key> = keys
            .get(i..)
            .unwrap_or_default()
            .iter()
            .take_while(|k| k.when == first.when)
            .copied()
            .collect();
        i += group.len();
        let boxed = match first.when {
            When::Choice { values, .. } => Some(values.join(" ")),
            _ => None,
        };
        if let Some(values) = &boxed {
            let _ = writeln!(
                o,
                "      <div data-if=\"{choice_id}\" data-in=\"{values}\" hidden>"
            );
        }
        for k in group {
            let path = format!("{light_path}.{}", k.name);
            let level = if boxed.is_some() { 4 } else { 3 };
            field(o, level, k, &path, place.id_prefix);
            if matches!(k.rule, Rule::Choice { .. }) {
                choice_id = format!("in-{}", stem(k, &path, place.id_prefix));
            }
        }
        if boxed.is_some() {
            o.push_str("      </div>\n");
        }
    }
    let _ = writeln!(o, "      <div class=\"plot\" id=\"{}\"></div>", place.plot);
}

/// A light key's path (written for `light`) at another place of a light.
fn at_place(path: &str, place: &str) -> String {
    match path.split_once('.') {
        Some((_, rest)) => format!("{place}.{rest}"),
        None => path.to_string(),
    }
}

/// The page with its generated region replaced by [`fields`], or `None` when the markers are
/// not there (once each, in order).
#[must_use]
pub fn page_with_fields(page: &str) -> Option<String> {
    let (before, rest) = page.split_once(BEGIN)?;
    let (_, after) = rest.split_once(END)?;
    if after.contains(BEGIN) || after.contains(END) {
        return None;
    }
    Some(format!("{before}{BEGIN}\n{}  {END}{after}", fields()))
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::{fields, page_with_fields, BEGIN, END};

    #[test]
    fn every_key_of_the_form_has_one_field_at_each_of_its_places() {
        let html = fields();
        for k in engine::keys::all() {
            if k.section == engine::keys::Section::Hidden
                || matches!(k.rule, engine::keys::Rule::Object { .. })
            {
                continue;
            }
            if matches!(k.rule, engine::keys::Rule::List { .. }) {
                continue;
            }
            for path in k.paths() {
                // An element of a list of objects has a row of fields per element.
                let rows: Vec<String> = if path.contains("[]") {
                    (0..super::EXPOSURE_ROWS)
                        .map(|i| path.replace("[]", &format!("[{i}]")))
                        .collect()
                } else {
                    vec![path]
                };
                for path in rows {
                    assert_eq!(
                        html.matches(&format!(" name=\"{path}\"")).count(),
                        1,
                        "{path}"
                    );
                }
            }
        }
    }

    #[test]
    fn help_quotes_the_engines_rule_and_units_come_from_the_catalogue() {
        let html = fields();
        assert!(html.contains("Above 0; this calculator takes 1 to 10¹²."));
        assert!(html.contains("<span class=\"unit\" id=\"u-photon-flux\">photons/(µm²·s)</span>"));
        assert!(
            html.contains("<span class=\"unit\" id=\"u-bg-photon-flux\">photons/(µm²·s)</span>")
        );
        assert!(html.contains("data-if=\"in-bg-spectrum-kind\" data-in=\"gaussian\""));
        assert!(html.contains("<option value=\"\">none</option>"));
        assert!(html.contains("data-report=\"sense_node_capacitance_ff\" data-unit=\" fF\""));
    }

    #[test]
    fn the_region_is_replaced_between_its_markers_only() {
        let page = format!("a\n  {BEGIN}\nSTALE TEXT\n  {END}\nb");
        let new = page_with_fields(&page).unwrap();
        assert!(new.starts_with(&format!("a\n  {BEGIN}\n")));
        assert!(new.ends_with(&format!("  {END}\nb")));
        assert!(!new.contains("STALE TEXT"));
        assert_eq!(page_with_fields(&new).unwrap(), new, "stable");
        assert_eq!(page_with_fields("no markers"), None);
    }
}
