//! The frame manifest: which files form which stacks, checked with every problem at once
//! (the measurement that reads them is `measurement.rs`).
//!
//! Shared by `noise-budget characterize` (files on disk) and the page's frame worker (files the
//! user chose), so both get the same rules and messages. Paths are text here; resolving them
//! against a folder is the caller's business.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use serde_json::Value;

use super::{Cfa, FrameKind, Roi, CFA_NAMES};
use crate::frames::RawGeometry;
pub use crate::input::Problem;
use crate::input::{self, show_value, type_name, Fields, Need, Problems, Range};

/// The manifest format version this module reads.
pub const MANIFEST_VERSION: u64 = 1;

/// One frame entry of a checked manifest.
#[derive(Debug, Clone, PartialEq)]
pub struct FrameEntry {
    /// Index in the manifest's `frames` list.
    pub index: usize,
    /// The path as written in the manifest (the caller resolves it; the page uses the name).
    pub path: String,
    /// Dark or flat.
    pub kind: FrameKind,
    /// Exposure time, s.
    pub exposure_time_s: f64,
    /// Optional level label.
    pub level: Option<String>,
    /// Optional photons per pixel.
    pub photons_per_pixel: Option<f64>,
    /// Raw geometry, for headerless files.
    pub raw: Option<RawGeometry>,
    /// The camera's bits per sample, when this entry or the manifest states them.
    pub significant_bits: Option<u8>,
}

/// A checked manifest: its stacks in first-appearance order, and the region of interest.
#[derive(Debug, Clone, PartialEq)]
pub struct Manifest {
    /// Frames grouped into stacks (kind, exposure time, level).
    pub stacks: Vec<Vec<FrameEntry>>,
    /// Optional region of interest.
    pub roi: Option<Roi>,
    /// The colour filter layout (`"cfa"`, default mono).
    pub cfa: Cfa,
    /// The camera's bits per sample (`"significant_bits"`, at the top or on every frame; one
    /// value for the whole series).
    pub significant_bits: Option<u8>,
}

// ---- parsing -----------------------------------------------------------------------------

/// Parse and check a manifest (paths stay as written; the caller resolves them).
///
/// # Errors
/// Every problem found, each naming its key path.
pub fn parse_manifest(text: &str) -> Result<Manifest, Vec<Problem>> {
    let mut p = Problems::default();
    let v = input::parse_json(text, "manifest").map_err(|problem| vec![problem])?;
    let Some(top) = v.as_object() else {
        p.push(
            "manifest",
            format!("must be a JSON object, got {}", type_name(&v)),
        );
        return Err(p.into_problems());
    };
    let mut top = Fields::new("", top);
    match top.get("version") {
        None => p.push(
            "version",
            "required: this tool reads manifest version 1".into(),
        ),
        Some(Value::Number(n)) if n.as_u64() == Some(MANIFEST_VERSION) => {}
        Some(other) => p.push("version", format!("must be 1, got {}", show_value(other))),
    }
    let default_raw = top
        .object(&mut p, "raw", false)
        .and_then(|mut f| raw(&mut p, &mut f));
    let roi = top
        .object(&mut p, "roi", false)
        .and_then(|mut f| roi(&mut p, &mut f));
    let cfa = top
        .choice(&mut p, "cfa", &CFA_NAMES, Some("mono"))
        .and_then(Cfa::from_name)
        .unwrap_or_default();
    let default_bits = significant_bits(&mut p, &mut top);
    let mut entries = Vec::new();
    match top.get("frames") {
        None => p.push("frames", "required: the list of frame files".into()),
        Some(Value::Array(list)) if list.is_empty() => {
            p.push("frames", "must list at least one frame".into());
        }
        Some(Value::Array(list)) => {
            for (i, item) in list.iter().enumerate() {
                let path = format!("frames[{i}]");
                match item.as_object() {
                    None => p.push(&path, format!("must be an object, got {}", type_name(item))),
                    Some(m) => {
                        let mut f = Fields::new(&path, m);
                        if let Some(e) = frame(&mut p, &mut f, i, default_raw, default_bits) {
                            entries.push(e);
                        }
                    }
                }
            }
        }
        Some(other) => p.push(
            "frames",
            format!("must be a list, got {}", type_name(other)),
        ),
    }
    top.finish(&mut p);

    // Rules across frames: distinct files, stacks of two or more, one photon count per stack.
    let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
    for e in &entries {
        if let Some(first) = seen.insert(e.path.as_str(), e.index) {
            p.push(
                &format!("frames[{}].path", e.index),
                format!(
                    "the same file as frames[{first}]: a frame paired with itself has no temporal \
                     noise"
                ),
            );
        }
    }
    let mut stacks: Vec<Vec<FrameEntry>> = Vec::new();
    for e in entries {
        let same = stacks.iter_mut().find(|s| {
            s.first().is_some_and(|f| {
                f.kind == e.kind && f.exposure_time_s == e.exposure_time_s && f.level == e.level
            })
        });
        match same {
            Some(s) => s.push(e),
            None => stacks.push(vec![e]),
        }
    }
    for s in &stacks {
        let Some(first) = s.first() else { continue };
        let what = stack_name(first);
        if s.len() < 2 {
            p.push(
                &format!("frames[{}]", first.index),
                format!(
                    "the only frame of its stack ({what}): a stack needs two or more frames with \
                     the same kind, exposure_time_s and level"
                ),
            );
        }
        if let Some(other) = s
            .iter()
            .find(|f| f.photons_per_pixel != first.photons_per_pixel)
        {
            p.push(
                &format!("frames[{}].photons_per_pixel", other.index),
                format!(
                    "differs from frames[{}] in the same stack ({what}): give one value per \
                     stack, or a level label to tell the stacks apart",
                    first.index
                ),
            );
        }
    }
    // One camera, one depth: every stated value the same.
    let stated: Vec<(usize, u8)> = stacks
        .iter()
        .flatten()
        .filter_map(|e| e.significant_bits.map(|b| (e.index, b)))
        .collect();
    if let Some(&(first, bits)) = stated.first() {
        if let Some(&(other, b)) = stated.iter().find(|(_, b)| *b != bits) {
            p.push(
                &format!("frames[{other}].significant_bits"),
                format!(
                    "{b} differs from the {bits} of frames[{first}]: one camera writes one bit \
                     depth; analyse the series separately"
                ),
            );
        }
        if stated.len() < stacks.iter().map(Vec::len).sum::<usize>() {
            let missing = stacks
                .iter()
                .flatten()
                .find(|e| e.significant_bits.is_none())
                .map_or(0, |e| e.index);
            p.push(
                &format!("frames[{missing}].significant_bits"),
                format!(
                    "missing, while frames[{first}] states {bits}: state it at the top level \
                     for the whole series, or on every frame"
                ),
            );
        }
    }
    let significant_bits = stated.first().map(|(_, b)| *b);
    if p.is_empty() {
        Ok(Manifest {
            stacks,
            roi,
            cfa,
            significant_bits,
        })
    } else {
        Err(p.into_problems())
    }
}

fn stack_name(f: &FrameEntry) -> String {
    let mut s = format!(
        "{} at {} s",
        f.kind.as_str(),
        crate::decimal::Plain(f.exposure_time_s)
    );
    if let Some(l) = &f.level {
        let _ = write!(s, ", level \"{l}\"");
    }
    s
}

/// `significant_bits`: a whole number of bits from 1 to 16.
fn significant_bits(p: &mut Problems, f: &mut Fields<'_>) -> Option<u8> {
    f.optional_integer(p, "significant_bits", 1, 16)
        .and_then(|b| u8::try_from(b).ok())
}

fn frame(
    p: &mut Problems,
    f: &mut Fields<'_>,
    index: usize,
    default_raw: Option<RawGeometry>,
    default_bits: Option<u8>,
) -> Option<FrameEntry> {
    let path = match f.get("path") {
        None => {
            p.push(&f.path_of("path"), "required, missing".into());
            None
        }
        Some(Value::String(s)) if !s.trim().is_empty() => Some(s.clone()),
        Some(v) => {
            p.push(
                &f.path_of("path"),
                format!("must be a file path (text), got {}", show_value(v)),
            );
            None
        }
    };
    let kind = match f.get("kind") {
        None => {
            p.push(&f.path_of("kind"), "required, missing".into());
            None
        }
        Some(Value::String(s)) if s == "dark" => Some(FrameKind::Dark),
        Some(Value::String(s)) if s == "flat" => Some(FrameKind::Flat),
        Some(v) => {
            p.push(
                &f.path_of("kind"),
                format!("must be one of \"dark\", \"flat\", got {}", show_value(v)),
            );
            None
        }
    };
    let exposure = f.number(
        p,
        "exposure_time_s",
        Need::Required,
        Range::new().above(0.0),
    );
    let level = match f.get("level") {
        None => None,
        Some(Value::String(s)) if !s.is_empty() => Some(s.clone()),
        Some(v) => {
            p.push(
                &f.path_of("level"),
                format!("must be a non-empty label (text), got {}", show_value(v)),
            );
            None
        }
    };
    let photons = f.number(
        p,
        "photons_per_pixel",
        Need::Optional,
        Range::new().at_least(0.0),
    );
    if photons.is_some() && kind == Some(FrameKind::Dark) {
        p.push(
            &f.path_of("photons_per_pixel"),
            "only for flat frames: a dark frame receives no photons".into(),
        );
    }
    let raw_here = f.object(p, "raw", false).and_then(|mut g| raw(p, &mut g));
    let bits_here = significant_bits(p, f);
    f.finish(p);
    let path = path?;
    Some(FrameEntry {
        index,
        path,
        kind: kind?,
        exposure_time_s: exposure?,
        level,
        photons_per_pixel: photons,
        raw: raw_here.or(default_raw),
        significant_bits: bits_here.or(default_bits),
    })
}

fn raw(p: &mut Problems, f: &mut Fields<'_>) -> Option<RawGeometry> {
    let width = f.integer(p, "width", None, 1, u32::MAX);
    let height = f.integer(p, "height", None, 1, u32::MAX);
    let bits = f.integer(p, "bits", None, 1, 16);
    f.finish(p);
    Some(RawGeometry {
        width: width?,
        height: height?,
        bits: u8::try_from(bits?).ok()?,
    })
}

fn roi(p: &mut Problems, f: &mut Fields<'_>) -> Option<Roi> {
    let x = f.integer(p, "x", None, 0, u32::MAX);
    let y = f.integer(p, "y", None, 0, u32::MAX);
    let width = f.integer(p, "width", None, 1, u32::MAX);
    let height = f.integer(p, "height", None, 1, u32::MAX);
    f.finish(p);
    Some(Roi {
        x: x?,
        y: y?,
        width: width?,
        height: height?,
    })
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::expect_used, clippy::indexing_slicing)] // test code

    use super::*;

    fn problems(text: &str) -> Vec<String> {
        match parse_manifest(text) {
            Ok(_) => Vec::new(),
            Err(ps) => ps.iter().map(ToString::to_string).collect(),
        }
    }

    #[test]
    fn a_good_manifest_groups_stacks() {
        let m = parse_manifest(
            r#"{"version": 1, "roi": {"x": 0, "y": 0, "width": 4, "height": 4},
                "frames": [
                  {"path": "d1.pgm", "kind": "dark", "exposure_time_s": 0.01},
                  {"path": "f1.pgm", "kind": "flat", "exposure_time_s": 0.01, "level": "a"},
                  {"path": "d2.pgm", "kind": "dark", "exposure_time_s": 0.01, "x_note": 1},
                  {"path": "f2.pgm", "kind": "flat", "exposure_time_s": 0.01, "level": "a"}
                ]}"#,
        );
        let Ok(m) = m else { unreachable!("{m:?}") };
        assert_eq!(m.stacks.len(), 2);
        let paths: Vec<Vec<&str>> = m
            .stacks
            .iter()
            .map(|s| s.iter().map(|f| f.path.as_str()).collect())
            .collect();
        assert_eq!(paths, [["d1.pgm", "d2.pgm"], ["f1.pgm", "f2.pgm"]]);
        assert_eq!(m.roi.map(|r| r.width), Some(4));
    }

    #[test]
    fn every_problem_is_reported_with_its_key() {
        let got = problems(
            r#"{"version": 2, "typo": 1, "raw": {"width": 0, "height": 2, "bits": 17},
                "frames": [
                  {"path": "", "kind": "bright", "exposure_time_s": -1},
                  {"path": "a.raw", "kind": "dark", "exposure_time_s": 1, "photons_per_pixel": 5},
                  {"path": "a.raw", "kind": "dark", "exposure_time_s": 1, "photons_per_pixel": 5},
                  {"path": "b.raw", "kind": "flat", "exposure_time_s": 1, "photons_per_pixel": 5},
                  {"path": "c.raw", "kind": "flat", "exposure_time_s": 1, "photons_per_pixel": 6},
                  {"path": "e.raw", "kind": "flat", "exposure_time_s": 2}
                ]}"#,
        );
        for want in [
            "version: must be 1, got 2",
            "raw.width: must be a whole number from 1",
            "raw.bits: must be a whole number from 1 to 16, got 17",
            "frames[0].path: must be a file path",
            "frames[0].kind: must be one of \"dark\", \"flat\", got \"bright\"",
            "frames[0].exposure_time_s: must be > 0, got -1",
            "frames[1].photons_per_pixel: only for flat frames",
            "frames[2].path: the same file as frames[1]",
            "frames[4].photons_per_pixel: differs from frames[3]",
            "frames[5]: the only frame of its stack (flat at 2 s)",
            "typo: unknown key",
        ] {
            assert!(
                got.iter().any(|g| g.starts_with(want)),
                "missing {want:?} in {got:#?}"
            );
        }
    }

    #[test]
    fn not_json_and_not_an_object() {
        assert!(problems("{")
            .iter()
            .any(|p| p.starts_with("manifest: not valid JSON")));
        assert!(problems("[1]")
            .iter()
            .any(|p| p.starts_with("manifest: must be a JSON object")));
        assert!(problems(r#"{"version": 1}"#)
            .iter()
            .any(|p| p.starts_with("frames: required")));
    }
}
