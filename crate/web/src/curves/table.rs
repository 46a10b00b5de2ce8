//! The comparison table's markup: a column per pinned scenario (and the one on screen when it
//! is not pinned), a row per key figure of `engine::compare`, with differences and ratios from
//! the first column.
//!
//! Pure, natively tested: every figure, difference and ratio is the engine's; here they are
//! written in cells (rounded for reading, in full in `data-` attributes). No DOM.

use engine::compare::{Change, Row};

use crate::display::{Numbers, Style};
use crate::svg::escape;

/// The unit as a cell writes it after a figure (empty for a ratio or a fraction).
fn unit_words(unit: &str) -> String {
    match unit {
        "ratio" | "fraction" => String::new(),
        "e-" => " e⁻".into(),
        "e- rms" => " e⁻ rms".into(),
        u => format!(" {u}"),
    }
}

/// The head row: the figure column, then one per scenario, the first `pins` with Show and Unpin
/// buttons.
#[must_use]
pub fn head(names: &[&str], pins: usize) -> String {
    let mut h = String::from("<tr><th scope=\"col\">figure</th>");
    for (i, name) in names.iter().enumerate() {
        h.push_str(&format!("<th scope=\"col\">{}", escape(name)));
        if i < pins {
            h.push_str(&format!(
                " <button type=\"button\" data-pin-load=\"{i}\">Show</button><button type=\"button\" data-pin-drop=\"{i}\">Unpin</button>"
            ));
        }
        h.push_str("</th>");
    }
    h.push_str("</tr>");
    h
}

/// The body: a row per figure.
#[must_use]
pub fn body(rows: &[Row], numbers: &dyn Numbers) -> String {
    let mut b = String::new();
    for row in rows {
        let unit = unit_words(row.unit);
        b.push_str(&format!(
            "<tr data-figure=\"{}\"><th scope=\"row\">{}{}</th>",
            row.key,
            row.label,
            if unit.is_empty() {
                String::new()
            } else {
                format!(",{unit}")
            }
        ));
        for (i, v) in row.values.iter().enumerate() {
            let shown = |x: f64| {
                if row.unit == "fraction" {
                    numbers.rounded(x, Style::Percent)
                } else {
                    numbers.rounded(x, Style::Number)
                }
            };
            let text = v.map_or_else(|| "—".to_string(), shown);
            let data = v.map_or_else(|| "null".to_string(), |x| numbers.full(x));
            let diff = row.differences.get(i).copied().flatten();
            let ratio = row.ratios.get(i).copied().flatten();
            let change = match (i, row.change, diff, ratio) {
                (0, _, _, _) => String::new(),
                (_, Change::Ratio, _, Some(r)) => format!(
                    "<span class=\"diff\" data-ratio=\"{}\">×{}</span>",
                    numbers.full(r),
                    numbers.rounded(r, Style::Number)
                ),
                (_, _, Some(d), _) => {
                    let sign = if d > 0.0 { "+" } else { "" };
                    // A change of a fraction is in percentage points, not relative.
                    let d_text = if row.unit == "fraction" {
                        format!("{sign}{} points", numbers.rounded(d, Style::Percent))
                    } else {
                        format!("{sign}{}{unit}", numbers.rounded(d, Style::Number))
                    };
                    format!(
                        "<span class=\"diff\" data-difference=\"{}\">{d_text}</span>",
                        numbers.full(d)
                    )
                }
                _ => String::new(),
            };
            b.push_str(&format!("<td data-value=\"{data}\">{text}{change}</td>"));
        }
        b.push_str("</tr>");
    }
    b
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::indexing_slicing)]
mod tests {
    use super::{body, head};
    use crate::display::{Numbers, Style};

    struct Plain;
    impl Numbers for Plain {
        fn rounded(&self, x: f64, style: Style) -> String {
            match style {
                Style::Number => format!("{x}"),
                Style::Percent => format!("{} %", x * 100.0),
            }
        }
        fn full(&self, x: f64) -> String {
            format!("{x}")
        }
    }

    fn report(read_noise: f64) -> engine::Report {
        engine::evaluate_json(&format!(
            r#"{{"version": 1, "sensor": {{"pixel_pitch_um": 3.45, "quantum_efficiency": 0.6,
            "full_well_e": 10000, "read_noise_e": {read_noise}, "dark_current_e_per_s": 1,
            "adc_bits": 12, "system_gain_dn_per_e": 0.25}},
            "light": {{"photon_flux_per_um2_s": 1000}}, "exposure": {{"time_s": 0.01}}}}"#
        ))
        .unwrap()
    }

    #[test]
    fn the_head_names_each_scenario_and_buttons_only_the_pins() {
        let h = head(&["A: <bench>", "on screen"], 1);
        assert!(h.contains("<th scope=\"col\">A: &lt;bench&gt; <button"));
        assert!(h.contains("data-pin-drop=\"0\""));
        assert!(!h.contains("data-pin-load=\"1\""));
    }

    #[test]
    fn cells_carry_the_engines_figures_differences_and_ratios() {
        let (a, b) = (report(2.0), report(4.0));
        let rows = engine::compare::rows(&[&a, &b]);
        let html = body(&rows, &Plain);
        let temporal = rows.iter().find(|r| r.key == "noise_e.temporal").unwrap();
        let ratio = temporal.ratios[1].unwrap();
        assert!(
            html.contains(&format!("data-ratio=\"{ratio}\">×{ratio}</span>")),
            "{html}"
        );
        assert!(html.contains(
            "<tr data-figure=\"noise_e.temporal\"><th scope=\"row\">temporal noise, e⁻ rms</th>"
        ));
        // dB figures change by a difference; a figure that does not exist is a dash.
        assert!(html.contains("data-difference=\""));
        assert_eq!(html.matches("<tr ").count(), rows.len());
    }
}
