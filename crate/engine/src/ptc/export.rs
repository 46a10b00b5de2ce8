//! The spatial series of a characterization (profiles, spectrograms, histograms) as plot-ready
//! lists and as one RFC 4180 CSV table, for the command's `--spatial-csv` and the page's plots.
//!
//! Pure formatting of numbers the analysis already computed; no statistic and no I/O here.

use std::fmt::Write as _;

use serde::{Deserialize, Serialize};

use super::analysis::{Characterization, FitReport};
use super::spatial::{Histogram, SpatialSummary};

/// One series of one image of one channel.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpatialSeries {
    /// `all` for a mono sensor, else R, Gr, Gb or B.
    pub channel: String,
    /// `dark` or `flat` (the flat used for PRNU).
    pub image: String,
    /// `row_profile`, `column_profile`, `horizontal_spectrogram`, `vertical_spectrogram`,
    /// `histogram` or `high_noise_histogram`.
    pub series: String,
    /// What x is, with its unit.
    pub x_label: String,
    /// What the values are, with their unit.
    pub value_label: String,
    /// The points (x, value).
    pub points: Vec<(f64, f64)>,
}

/// Read a list of series from JSON without serde's derived `Deserialize` (see
/// [`super::curve_series_from_json`]); `None` where any field is missing or of the wrong type.
#[must_use]
pub fn spatial_series_from_json(v: &serde_json::Value) -> Option<Vec<SpatialSeries>> {
    let text = |s: &serde_json::Value, k: &str| s.get(k)?.as_str().map(str::to_string);
    v.as_array()?
        .iter()
        .map(|s| {
            Some(SpatialSeries {
                channel: text(s, "channel")?,
                image: text(s, "image")?,
                series: text(s, "series")?,
                x_label: text(s, "x_label")?,
                value_label: text(s, "value_label")?,
                points: super::curve::pairs_from_json(s.get("points")?)?,
            })
        })
        .collect()
}

fn profile(v: &[f64]) -> Vec<(f64, f64)> {
    v.iter().enumerate().map(|(i, m)| (i as f64, *m)).collect()
}

/// Frequency k/P cycles per pixel of each bin of a spectrogram of length P.
fn spectrum(v: &[f64], len: u32) -> Vec<(f64, f64)> {
    let p = f64::from(len.max(1));
    v.iter()
        .enumerate()
        .map(|(k, s)| (k as f64 / p, *s))
        .collect()
}

fn histogram(h: &Histogram) -> Vec<(f64, f64)> {
    h.counts
        .iter()
        .enumerate()
        .map(|(i, c)| (h.first_edge + h.bin_width * i as f64, *c as f64))
        .collect()
}

fn image_series(
    out: &mut Vec<SpatialSeries>,
    channel: &str,
    image: &str,
    s: &SpatialSummary,
    histogram_unit: (&str, Option<&Histogram>),
) {
    let mut push = |series: &str, x: &str, value: &str, points: Vec<(f64, f64)>| {
        out.push(SpatialSeries {
            channel: channel.into(),
            image: image.into(),
            series: series.into(),
            x_label: x.into(),
            value_label: value.into(),
            points,
        });
    };
    push(
        "row_profile",
        "row",
        "row mean [DN]",
        profile(&s.row_means_dn),
    );
    push(
        "column_profile",
        "column",
        "column mean [DN]",
        profile(&s.column_means_dn),
    );
    push(
        "horizontal_spectrogram",
        "frequency [cycles/pixel]",
        "power [DN²]",
        spectrum(&s.horizontal_spectrogram_dn2, s.horizontal_length),
    );
    push(
        "vertical_spectrogram",
        "frequency [cycles/pixel]",
        "power [DN²]",
        spectrum(&s.vertical_spectrogram_dn2, s.vertical_length),
    );
    let (unit, h) = histogram_unit;
    push(
        "histogram",
        unit,
        "pixels",
        histogram(h.unwrap_or(&s.histogram)),
    );
}

fn fit_series(out: &mut Vec<SpatialSeries>, channel: &str, fit: &FitReport) {
    let Some(sp) = &fit.spatial else { return };
    image_series(
        out,
        channel,
        "dark",
        &sp.dark_image,
        ("deviation from the mean [DN]", Some(&sp.dark_histogram_dn)),
    );
    if let Some(h) = &sp.high_noise_histogram {
        out.push(SpatialSeries {
            channel: channel.into(),
            image: "dark".into(),
            series: "high_noise_histogram".into(),
            x_label: "pixel temporal variance / the channel's".into(),
            value_label: "pixels".into(),
            points: histogram(h),
        });
    }
    if let Some(f) = &sp.flat_image {
        image_series(
            out,
            channel,
            "flat",
            f,
            (
                "deviation from the mean [% of the mean above dark]",
                sp.flat_histogram_percent.as_ref(),
            ),
        );
    }
}

/// Every spatial series of a characterization: the whole sensor for mono, each channel for a
/// Bayer sensor.
#[must_use]
pub fn spatial_series(c: &Characterization) -> Vec<SpatialSeries> {
    let mut out = Vec::new();
    if c.channels.is_empty() {
        fit_series(&mut out, "all", &c.fit);
    }
    for ch in &c.channels {
        fit_series(&mut out, ch.name, &ch.fit);
    }
    out
}

/// The spatial series as one CSV table: `channel,image,series,x,value,x_label,value_label`,
/// one row a point, RFC 4180 quoting.
#[must_use]
pub fn spatial_csv(c: &Characterization) -> String {
    let quote = |s: &str| {
        if s.contains([',', '"', '\n']) {
            format!("\"{}\"", s.replace('"', "\"\""))
        } else {
            s.to_string()
        }
    };
    let mut o = String::from("channel,image,series,x,value,x_label,value_label\r\n");
    for s in spatial_series(c) {
        let tail = format!("{},{}", quote(&s.x_label), quote(&s.value_label));
        for (x, v) in &s.points {
            let _ = write!(
                o,
                "{},{},{},{},{},{tail}\r\n",
                quote(&s.channel),
                quote(&s.image),
                quote(&s.series),
                crate::decimal::Plain(*x),
                crate::decimal::Plain(*v)
            );
        }
    }
    o
}
