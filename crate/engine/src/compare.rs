//! Side-by-side comparison: the key figures of several reports and their differences from the
//! first, and the comparison as CSV text (RFC 4180).
//!
//! Figures are copied from the reports; a difference is a subtraction (for figures in dB, that
//! is the ratio in dB) and a ratio a division, nothing else.

use serde::Serialize;

use crate::report::Report;
use crate::sweep::Getter;

/// How a difference is best read for a figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Change {
    /// As a ratio to the first (and a difference): most figures.
    Ratio,
    /// As a difference only: figures in dB (whose difference is already a ratio) and fractions.
    Difference,
}

/// The figures compared: report dot path, label, unit, how a change reads, getter.
pub const FIGURES: &[(&str, &str, &str, Change, Getter)] = &[
    ("snr.total", "SNR, total", "ratio", Change::Ratio, |r| {
        Some(r.snr.total)
    }),
    (
        "snr.total_db",
        "SNR, total",
        "dB",
        Change::Difference,
        |r| r.snr.total_db,
    ),
    (
        "snr.temporal",
        "SNR, temporal",
        "ratio",
        Change::Ratio,
        |r| Some(r.snr.temporal),
    ),
    ("signal_e", "signal", "e-", Change::Ratio, |r| {
        Some(r.signal_e)
    }),
    (
        "noise_e.temporal",
        "temporal noise",
        "e- rms",
        Change::Ratio,
        |r| Some(r.noise_e.temporal),
    ),
    (
        "noise_e.total",
        "total noise",
        "e- rms",
        Change::Ratio,
        |r| Some(r.noise_e.total),
    ),
    ("dark_e", "dark charge", "e-", Change::Ratio, |r| {
        Some(r.dark_e)
    }),
    (
        "min_detectable.signal_e",
        "smallest detectable signal",
        "e-",
        Change::Ratio,
        |r| Some(r.min_detectable.signal_e),
    ),
    (
        "min_detectable.photons_per_pixel",
        "smallest detectable signal",
        "photons",
        Change::Ratio,
        |r| Some(r.min_detectable.photons_per_pixel),
    ),
    (
        "exposure_for_threshold_s",
        "exposure to reach the threshold",
        "s",
        Change::Ratio,
        |r| r.exposure_for_threshold_s,
    ),
    (
        "saturation.level_e",
        "usable level",
        "e-",
        Change::Ratio,
        |r| Some(r.saturation.level_e),
    ),
    (
        "saturation.fill_fraction",
        "pixel filled to",
        "fraction",
        Change::Difference,
        |r| Some(r.saturation.fill_fraction),
    ),
    (
        "dynamic_range.db",
        "dynamic range",
        "dB",
        Change::Difference,
        |r| r.dynamic_range.db,
    ),
    (
        "max_snr",
        "best SNR, at saturation",
        "ratio",
        Change::Ratio,
        |r| r.max_snr,
    ),
    // Colour and HDR: empty for a scenario without them.
    (
        "colour.luminance.snr.total_db",
        "luminance SNR, total",
        "dB",
        Change::Difference,
        |r| r.colour.as_ref().and_then(|c| c.luminance.snr.total_db),
    ),
    (
        "hdr.snr.total_db",
        "HDR output SNR, total",
        "dB",
        Change::Difference,
        |r| r.hdr.as_ref().and_then(|h| h.snr.total_db),
    ),
    (
        "hdr.dynamic_range.db",
        "HDR dynamic range",
        "dB",
        Change::Difference,
        |r| r.hdr.as_ref().and_then(|h| h.dynamic_range.db),
    ),
    // Detection (exact Poisson–Gaussian, for the scenario's `detection` task).
    (
        "detection.signal_e",
        "signal detected at the required probability",
        "e-",
        Change::Ratio,
        |r| r.detection.signal_e,
    ),
    (
        "detection.detection_probability",
        "detection probability of the signal",
        "fraction",
        Change::Difference,
        |r| r.detection.detection_probability,
    ),
];

/// One figure across the scenarios compared.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    /// Report dot path of the figure.
    pub key: &'static str,
    /// Its label.
    pub label: &'static str,
    /// Its unit.
    pub unit: &'static str,
    /// How a change is best read.
    pub change: Change,
    /// The figure in each scenario (`None` where it does not exist).
    pub values: Vec<Option<f64>>,
    /// Each scenario's value minus the first's (`None` for the first, or where either is
    /// missing).
    pub differences: Vec<Option<f64>>,
    /// Each scenario's value divided by the first's (`None` for the first, where either is
    /// missing, where the first is zero, or for [`Change::Difference`] figures).
    pub ratios: Vec<Option<f64>>,
}

/// Report sections only colour or HDR scenarios have: their rows are left out of a comparison
/// in which no scenario has them.
const OPTIONAL_SECTIONS: [&str; 2] = ["colour.", "hdr."];

/// The comparison of `reports` (the first is the reference), one row per figure of [`FIGURES`]
/// (a colour or HDR figure only when a scenario has it).
#[must_use]
pub fn rows(reports: &[&Report]) -> Vec<Row> {
    FIGURES
        .iter()
        .filter(|(key, .., get)| {
            !OPTIONAL_SECTIONS.iter().any(|s| key.starts_with(s))
                || reports.iter().any(|r| get(r).is_some())
        })
        .map(|&(key, label, unit, change, get)| {
            let values: Vec<Option<f64>> = reports.iter().map(|r| get(r)).collect();
            let first = values.first().copied().flatten();
            let differences = values
                .iter()
                .enumerate()
                .map(|(i, v)| match (i, first, v) {
                    (0, _, _) => None,
                    (_, Some(a), Some(b)) => Some(b - a),
                    _ => None,
                })
                .collect();
            let ratios = values
                .iter()
                .enumerate()
                .map(|(i, v)| match (i, change, first, v) {
                    (0, _, _, _) | (_, Change::Difference, _, _) => None,
                    (_, Change::Ratio, Some(a), Some(b)) if a != 0.0 => Some(b / a),
                    _ => None,
                })
                .collect();
            Row {
                key,
                label,
                unit,
                change,
                values,
                differences,
                ratios,
            }
        })
        .collect()
}

/// The comparison as CSV (RFC 4180: CRLF line ends, a header row, fields quoted where
/// needed). Columns: the figure's key and label, its unit, one column of values per scenario
/// (headed by its name), then for each scenario after the first its difference from the first
/// and its ratio to it. A figure that does not exist is an empty field.
#[must_use]
pub fn to_csv(names: &[&str], reports: &[&Report]) -> String {
    let first = names.first().copied().unwrap_or("first");
    let mut header: Vec<String> = vec!["figure".into(), "label".into(), "unit".into()];
    header.extend(names.iter().map(|n| (*n).to_string()));
    for n in names.iter().skip(1) {
        header.push(format!("{n} minus {first}"));
        header.push(format!("{n} / {first}"));
    }
    let mut out = crate::sweep::csv_row(&header);
    for row in rows(reports) {
        let mut fields: Vec<String> = vec![row.key.into(), row.label.into(), row.unit.into()];
        let num = |v: Option<f64>| {
            v.map(|x| crate::decimal::Plain(x).to_string())
                .unwrap_or_default()
        };
        fields.extend(row.values.iter().map(|v| num(*v)));
        for i in 1..row.values.len() {
            fields.push(num(row.differences.get(i).copied().flatten()));
            fields.push(num(row.ratios.get(i).copied().flatten()));
        }
        out.push_str(&crate::sweep::csv_row(&fields));
    }
    out
}

#[cfg(test)]
#[allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]
mod tests {
    use super::{rows, to_csv, Change};
    use crate::demos::DEMOS;
    use crate::evaluate_json;

    #[test]
    fn differences_and_ratios_are_taken_from_the_first() {
        let a = evaluate_json(DEMOS[0].json).unwrap();
        let b = evaluate_json(DEMOS[1].json).unwrap();
        let rows = rows(&[&a, &b]);
        let snr = rows.iter().find(|r| r.key == "snr.total").unwrap();
        assert_eq!(snr.values, vec![Some(a.snr.total), Some(b.snr.total)]);
        assert_eq!(snr.differences, vec![None, Some(b.snr.total - a.snr.total)]);
        assert_eq!(snr.ratios, vec![None, Some(b.snr.total / a.snr.total)]);
        let db = rows.iter().find(|r| r.key == "snr.total_db").unwrap();
        assert_eq!(db.change, Change::Difference);
        assert_eq!(db.ratios, vec![None, None]);
    }

    #[test]
    fn colour_and_hdr_rows_appear_when_a_scenario_has_them() {
        let mono = evaluate_json(DEMOS[0].json).unwrap();
        let hdr = DEMOS
            .iter()
            .find(|d| d.name == "automotive-hdr-colour")
            .unwrap();
        let hdr = evaluate_json(hdr.json).unwrap();
        let rows = rows(&[&mono, &hdr]);
        let row = rows
            .iter()
            .find(|r| r.key == "hdr.dynamic_range.db")
            .unwrap();
        assert_eq!(row.values[0], None);
        assert_eq!(row.values[1], hdr.hdr.as_ref().unwrap().dynamic_range.db);
        assert!(rows
            .iter()
            .any(|r| r.key == "colour.luminance.snr.total_db"));
    }

    #[test]
    fn csv_has_one_row_a_figure_and_quotes_names() {
        let a = evaluate_json(DEMOS[0].json).unwrap();
        let b = evaluate_json(DEMOS[1].json).unwrap();
        let csv = to_csv(&["A, cooled", "B"], &[&a, &b]);
        let lines: Vec<&str> = csv.split_terminator("\r\n").collect();
        // Two monochrome, single-readout demos: the colour and HDR rows are left out.
        let optional = super::FIGURES
            .iter()
            .filter(|f| super::OPTIONAL_SECTIONS.iter().any(|s| f.0.starts_with(s)))
            .count();
        assert_eq!(optional, 3);
        assert_eq!(lines.len(), 1 + super::FIGURES.len() - optional);
        assert_eq!(
            lines[0],
            "figure,label,unit,\"A, cooled\",B,\"B minus A, cooled\",\"B / A, cooled\""
        );
        assert!(lines[1].starts_with("snr.total,\"SNR, total\",ratio,"));
    }
}
