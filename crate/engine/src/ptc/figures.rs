//! The measured figures as one list (name, unit, value, uncertainty, clause), which the
//! command's table and the page both render, so neither leaves a figure or an uncertainty out.
//!
//! Built from a finished analysis; computes nothing new. Clause names are the EMVA 1288
//! Release 4.0 Linear sections by title, from memory (REFERENCES.md §4: the standard's text was
//! not available to re-read), or "this tool" where the standard fixes no rule.

use serde::Serialize;

use super::analysis::{ChannelResult, ColourSummary, FitReport, MeasuredSensor};

/// One measured figure.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Figure {
    /// Stable identifier, snake case (the `sensor` key where there is one).
    pub key: &'static str,
    /// What it is, for people.
    pub name: &'static str,
    /// Unit, as shown (empty for a pure number).
    pub unit: &'static str,
    /// The value; `None` when it was not measured (the diagnostics say why).
    pub value: Option<f64>,
    /// Standard uncertainty, same unit, when estimated.
    pub uncertainty: Option<f64>,
    /// True when the value is an upper bound only.
    pub upper_bound: bool,
    /// Where the definition comes from.
    pub clause: &'static str,
}

const GAIN: &str = "EMVA 1288 4.0 Linear, photon transfer: system gain K (from memory)";
const READ: &str =
    "EMVA 1288 4.0 Linear, temporal dark noise σ_d; bound below 0.24 DN² (from memory)";
const SAT: &str = "EMVA 1288 4.0 Linear, saturation capacity μ_e.sat (from memory)";
const DARK: &str = "EMVA 1288 4.0 Linear, dark current from μ_y.dark against t_exp (from memory)";
const DSNU: &str = "EMVA 1288 4.0 Linear, spatial nonuniformity: DSNU_1288 (from memory)";
const PRNU: &str = "EMVA 1288 4.0 Linear, spatial nonuniformity: PRNU_1288 (from memory)";
const SPLIT: &str = "EMVA 1288 4.0 Linear, row, column and pixel spatial variances (from memory; \
                     split by two-way analysis of variance)";
const QE: &str = "EMVA 1288 4.0 Linear, responsivity R = ηK (from memory)";
const LIN: &str = "EMVA 1288 4.0 Linear, linearity error over 5–95 % of saturation (from memory)";
const BLACK: &str = "EMVA 1288 4.0 Linear, linear model: μ_y.dark at t_exp = 0 (from memory)";
const DEPTH: &str = "this tool: stated by the manifest or file, else found in the samples";
const DEFECT: &str = "EMVA 1288 4.0 Linear, defect pixels (from memory); threshold 6σ of the \
                      averaged image: this tool's";
const NOISY: &str = "EMVA 1288 4.0 Linear, defect pixels (from memory); threshold 10× the \
                     channel's temporal variance: this tool's";
const COLOUR: &str = "this tool: channel means above dark at the green PRNU level";

fn f(
    key: &'static str,
    name: &'static str,
    unit: &'static str,
    value: Option<f64>,
    uncertainty: Option<f64>,
    clause: &'static str,
) -> Figure {
    Figure {
        key,
        name,
        unit,
        value: value.filter(|v| v.is_finite()),
        uncertainty: uncertainty.filter(|v| v.is_finite()),
        upper_bound: false,
        clause,
    }
}

/// A count as a figure (counts up to 2^53 are exact in f64; a frame has at most 2^28 pixels).
fn count(v: Option<u64>) -> Option<f64> {
    v.map(|c| c as f64)
}

/// The figures of one analysis, and for a colour sensor the channels' relative responses and
/// the green mismatch.
pub(crate) fn figures(
    s: &MeasuredSensor,
    fit: &FitReport,
    colour: Option<(&[ChannelResult], &ColourSummary)>,
) -> Vec<Figure> {
    let sp = fit.spatial.as_ref();
    let nu = &fit.nonuniformity;
    let mut read = f(
        "read_noise_e",
        "read noise",
        "e⁻",
        Some(fit.read_noise.value_e),
        fit.read_noise.standard_uncertainty_e,
        READ,
    );
    read.upper_bound = fit.read_noise.upper_bound_only;
    let mut out = vec![
        f(
            "system_gain_dn_per_e",
            "system gain K",
            "DN/e⁻",
            Some(s.system_gain_dn_per_e),
            fit.system_gain.standard_uncertainty_dn_per_e,
            GAIN,
        ),
        read,
        f(
            "full_well_e",
            "saturation capacity",
            "e⁻",
            s.full_well_e,
            fit.saturation.capacity_uncertainty_e,
            SAT,
        ),
        f(
            "dark_current_e_per_s",
            "dark current",
            "e⁻/s",
            s.dark_current_e_per_s,
            fit.dark_current
                .as_ref()
                .and_then(|d| d.standard_uncertainty_e_per_s),
            DARK,
        ),
        f(
            "dsnu_e",
            "DSNU",
            "e⁻",
            s.dsnu_e,
            nu.dsnu_uncertainty_e,
            DSNU,
        ),
        f(
            "dsnu_row_e",
            "DSNU, row part",
            "e⁻",
            sp.and_then(|x| x.dsnu_row_e),
            None,
            SPLIT,
        ),
        f(
            "dsnu_column_e",
            "DSNU, column part",
            "e⁻",
            sp.and_then(|x| x.dsnu_column_e),
            None,
            SPLIT,
        ),
        f(
            "dsnu_pixel_e",
            "DSNU, pixel part",
            "e⁻",
            sp.and_then(|x| x.dsnu_pixel_e),
            None,
            SPLIT,
        ),
        f(
            "prnu_percent",
            "PRNU",
            "%",
            s.prnu_percent,
            nu.prnu_uncertainty_percent,
            PRNU,
        ),
        f(
            "prnu_row_percent",
            "PRNU, row part",
            "%",
            sp.and_then(|x| x.prnu_row_percent),
            None,
            SPLIT,
        ),
        f(
            "prnu_column_percent",
            "PRNU, column part",
            "%",
            sp.and_then(|x| x.prnu_column_percent),
            None,
            SPLIT,
        ),
        f(
            "prnu_pixel_percent",
            "PRNU, pixel part",
            "%",
            sp.and_then(|x| x.prnu_pixel_percent),
            None,
            SPLIT,
        ),
        f(
            "quantum_efficiency",
            "quantum efficiency",
            "",
            s.quantum_efficiency,
            fit.responsivity
                .as_ref()
                .and_then(|r| r.quantum_efficiency_uncertainty),
            QE,
        ),
        f(
            "linearity_error_percent",
            "linearity error",
            "%",
            fit.linearity.as_ref().map(|l| l.error_percent),
            None,
            LIN,
        ),
        f(
            "black_level_dn",
            "black level",
            "DN",
            s.black_level_dn,
            None,
            BLACK,
        ),
        f(
            "adc_bits",
            "bits per sample",
            "bits",
            s.adc_bits.map(f64::from),
            None,
            DEPTH,
        ),
        f(
            "hot_pixels",
            "hot pixels (dark)",
            "pixels",
            count(sp.map(|x| x.hot_pixels)),
            None,
            DEFECT,
        ),
        f(
            "dark_pixels",
            "dark pixels (flat)",
            "pixels",
            count(sp.and_then(|x| x.dark_pixels)),
            None,
            DEFECT,
        ),
        f(
            "high_noise_pixels",
            "high-noise pixels (dark)",
            "pixels",
            count(sp.and_then(|x| x.high_noise_pixels)),
            None,
            NOISY,
        ),
    ];
    if let Some((channels, c)) = colour {
        const KEYS: [(&str, &str); 4] = [
            ("relative_response_r", "R response / green"),
            ("relative_response_gr", "Gr response / green"),
            ("relative_response_gb", "Gb response / green"),
            ("relative_response_b", "B response / green"),
        ];
        for ((key, name), ch) in KEYS.iter().zip(channels) {
            out.push(f(key, name, "", ch.relative_response, None, COLOUR));
        }
        out.push(f(
            "green_mismatch_percent",
            "Gr − Gb mismatch",
            "%",
            c.green_mismatch_percent,
            c.green_mismatch_uncertainty_percent,
            COLOUR,
        ));
    }
    out
}
