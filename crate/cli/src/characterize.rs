//! `noise-budget characterize MANIFEST`: measure a camera from dark and flat frames on disk.
//!
//! Reads and checks the manifest (every problem at once, each with its key path), reads each
//! frame file once, stack by stack, hands the bytes to the engine's decoders and stack
//! accumulators, and prints the engine's characterization as JSON or a table. It computes no
//! statistic itself and never holds more than the stack being read.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use engine::frames::{self, RawGeometry};
use engine::ptc::{self, Characterization, FrameKind, Roi, StackAccumulator, StackSpec};
use serde_json::{Map, Value};

/// The manifest format version this command reads.
const MANIFEST_VERSION: u64 = 1;

/// One problem in a manifest, naming its key.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problem {
    /// Dot path of the key (`frames[2].kind`), or `manifest` for the document.
    pub path: String,
    /// What is wrong, lower case.
    pub message: String,
}

impl std::fmt::Display for Problem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.path, self.message)
    }
}

/// One frame entry of a checked manifest.
#[derive(Debug, Clone, PartialEq)]
pub struct FrameEntry {
    /// Index in the manifest's `frames` list.
    pub index: usize,
    /// The path as written in the manifest.
    pub path: String,
    /// The path resolved against the manifest's folder.
    pub resolved: PathBuf,
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
}

/// A checked manifest: its stacks in first-appearance order, and the region of interest.
#[derive(Debug, Clone, PartialEq)]
pub struct Manifest {
    /// Frames grouped into stacks (kind, exposure time, level).
    pub stacks: Vec<Vec<FrameEntry>>,
    /// Optional region of interest.
    pub roi: Option<Roi>,
}

/// Run the command; the exit status is 0 on success, 2 for an invalid manifest, an
/// undecodable frame or frames that cannot be analysed, 1 when a file cannot be read.
pub fn run(manifest_path: &Path, as_table: bool) -> ExitCode {
    let shown = manifest_path.display();
    let text = match std::fs::read(manifest_path) {
        Ok(b) => match String::from_utf8(b) {
            Ok(t) => t,
            Err(_) => {
                eprintln!("manifest: {shown} is not UTF-8 text");
                return ExitCode::from(2);
            }
        },
        Err(e) => {
            eprintln!("noise-budget: cannot read {shown}: {e}");
            return ExitCode::from(1);
        }
    };
    let base = manifest_path.parent().unwrap_or(Path::new(""));
    let manifest = match parse_manifest(&text, base) {
        Ok(m) => m,
        Err(problems) => {
            for p in problems {
                eprintln!("{p}");
            }
            return ExitCode::from(2);
        }
    };
    let result = match measure(&manifest, &|p| std::fs::read(p)) {
        Ok(c) => c,
        Err(failure) => {
            for m in &failure.messages {
                eprintln!("{m}");
            }
            return ExitCode::from(if failure.io { 1 } else { 2 });
        }
    };
    let out = if as_table {
        render_table(&result)
    } else {
        match serde_json::to_string_pretty(&result) {
            Ok(s) => s + "\n",
            Err(e) => {
                eprintln!("noise-budget: cannot write the result as JSON: {e}");
                return ExitCode::from(1);
            }
        }
    };
    let mut stdout = io::stdout().lock();
    match stdout
        .write_all(out.as_bytes())
        .and_then(|()| stdout.flush())
    {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("noise-budget: cannot write to standard output: {e}");
            ExitCode::from(1)
        }
    }
}

/// Why frames could not be measured: the messages, and whether a file could not be read.
#[derive(Debug)]
pub struct Failure {
    /// One line each, naming the file or key.
    pub messages: Vec<String>,
    /// True when any file could not be read (exit status 1).
    pub io: bool,
}

/// Read, decode and accumulate every stack, then analyse. `read` returns a file's bytes.
///
/// Every stack is attempted, so that all undecodable files are reported at once.
///
/// # Errors
/// A [`Failure`] listing each unreadable or undecodable file, or why the analysis is impossible.
pub fn measure(
    manifest: &Manifest,
    read: &dyn Fn(&Path) -> io::Result<Vec<u8>>,
) -> Result<Characterization, Failure> {
    let mut messages = Vec::new();
    let mut io_error = false;
    let mut stats = Vec::new();
    for stack in &manifest.stacks {
        let Some(first) = stack.first() else { continue };
        let spec = StackSpec {
            kind: first.kind,
            exposure_time_s: first.exposure_time_s,
            level: first.level.clone(),
            photons_per_pixel: first.photons_per_pixel,
            frames: u32::try_from(stack.len()).unwrap_or(u32::MAX),
        };
        let mut acc = match StackAccumulator::new(spec, manifest.roi) {
            Ok(a) => a,
            Err(e) => {
                messages.push(format!("frames[{}]: {e}", first.index));
                continue;
            }
        };
        let mut ok = true;
        for f in stack {
            let name = format!("frames[{}] ({})", f.index, f.path);
            let bytes = match read(&f.resolved) {
                Ok(b) => b,
                Err(e) => {
                    messages.push(format!("{name}: cannot read {}: {e}", f.resolved.display()));
                    io_error = true;
                    ok = false;
                    continue;
                }
            };
            let frame = match frames::decode(&bytes, f.raw) {
                Ok(fr) => fr,
                Err(e) => {
                    messages.push(format!("{name}: {e}"));
                    ok = false;
                    continue;
                }
            };
            drop(bytes);
            if ok {
                if let Err(e) = acc.push(frame) {
                    messages.push(format!("{name}: {e}"));
                    ok = false;
                }
            }
        }
        if ok {
            match acc.finish() {
                Ok(s) => stats.push(s),
                Err(e) => messages.push(format!("frames[{}]: {e}", first.index)),
            }
        }
    }
    if !messages.is_empty() {
        return Err(Failure {
            messages,
            io: io_error,
        });
    }
    ptc::analyse(&stats).map_err(|e| Failure {
        messages: vec![format!("analysis: {e}")],
        io: false,
    })
}

// ---- manifest -----------------------------------------------------------------------------

/// Parse and check a manifest; paths are resolved against `base` (the manifest's folder).
///
/// # Errors
/// Every problem found, each naming its key path.
pub fn parse_manifest(text: &str, base: &Path) -> Result<Manifest, Vec<Problem>> {
    let mut p = Problems::default();
    let v: Value = match serde_json::from_str(text) {
        Ok(v) => v,
        Err(e) => {
            p.push(
                "manifest",
                format!(
                    "not valid JSON: line {}, column {}: {}",
                    e.line(),
                    e.column(),
                    e.to_string().split(" at line ").next().unwrap_or_default()
                ),
            );
            return Err(p.0);
        }
    };
    let Some(top) = v.as_object() else {
        p.push(
            "manifest",
            format!("must be a JSON object, got {}", type_name(&v)),
        );
        return Err(p.0);
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
        .object(&mut p, "raw")
        .and_then(|mut f| raw(&mut p, &mut f));
    let roi = top
        .object(&mut p, "roi")
        .and_then(|mut f| roi(&mut p, &mut f));
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
                        if let Some(e) = frame(&mut p, &mut f, i, base, default_raw) {
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
    if p.0.is_empty() {
        Ok(Manifest { stacks, roi })
    } else {
        Err(p.0)
    }
}

fn stack_name(f: &FrameEntry) -> String {
    let mut s = format!("{} at {} s", f.kind.as_str(), f.exposure_time_s);
    if let Some(l) = &f.level {
        let _ = write!(s, ", level \"{l}\"");
    }
    s
}

fn frame(
    p: &mut Problems,
    f: &mut Fields<'_>,
    index: usize,
    base: &Path,
    default_raw: Option<RawGeometry>,
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
    let exposure = f.number(p, "exposure_time_s", true, |x| {
        (x <= 0.0).then(|| format!("must be > 0, got {x}"))
    });
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
    let photons = f.number(p, "photons_per_pixel", false, |x| {
        (x < 0.0).then(|| format!("must be ≥ 0, got {x}"))
    });
    if photons.is_some() && kind == Some(FrameKind::Dark) {
        p.push(
            &f.path_of("photons_per_pixel"),
            "only for flat frames: a dark frame receives no photons".into(),
        );
    }
    let raw_here = f.object(p, "raw").and_then(|mut g| raw(p, &mut g));
    f.finish(p);
    let path = path?;
    Some(FrameEntry {
        index,
        resolved: base.join(&path),
        path,
        kind: kind?,
        exposure_time_s: exposure?,
        level,
        photons_per_pixel: photons,
        raw: raw_here.or(default_raw),
    })
}

fn raw(p: &mut Problems, f: &mut Fields<'_>) -> Option<RawGeometry> {
    let width = f.whole(p, "width", 1, u64::from(u32::MAX));
    let height = f.whole(p, "height", 1, u64::from(u32::MAX));
    let bits = f.whole(p, "bits", 1, 16);
    f.finish(p);
    Some(RawGeometry {
        width: u32::try_from(width?).ok()?,
        height: u32::try_from(height?).ok()?,
        bits: u8::try_from(bits?).ok()?,
    })
}

fn roi(p: &mut Problems, f: &mut Fields<'_>) -> Option<Roi> {
    let max = u64::from(u32::MAX);
    let x = f.whole(p, "x", 0, max);
    let y = f.whole(p, "y", 0, max);
    let width = f.whole(p, "width", 1, max);
    let height = f.whole(p, "height", 1, max);
    f.finish(p);
    Some(Roi {
        x: u32::try_from(x?).ok()?,
        y: u32::try_from(y?).ok()?,
        width: u32::try_from(width?).ok()?,
        height: u32::try_from(height?).ok()?,
    })
}

#[derive(Default)]
struct Problems(Vec<Problem>);

impl Problems {
    fn push(&mut self, path: &str, message: String) {
        self.0.push(Problem {
            path: path.to_string(),
            message,
        });
    }
}

/// The keys of one JSON object, tracking which were read so unknown ones can be reported.
struct Fields<'v> {
    prefix: String,
    map: &'v Map<String, Value>,
    used: Vec<&'static str>,
}

impl<'v> Fields<'v> {
    fn new(prefix: &str, map: &'v Map<String, Value>) -> Self {
        Fields {
            prefix: prefix.to_string(),
            map,
            used: Vec::new(),
        }
    }

    fn path_of(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            key.to_string()
        } else {
            format!("{}.{key}", self.prefix)
        }
    }

    fn get(&mut self, key: &'static str) -> Option<&'v Value> {
        self.used.push(key);
        self.map.get(key).filter(|v| !v.is_null())
    }

    fn number(
        &mut self,
        p: &mut Problems,
        key: &'static str,
        required: bool,
        rule: impl Fn(f64) -> Option<String>,
    ) -> Option<f64> {
        let path = self.path_of(key);
        let v = match self.get(key) {
            None if required => {
                p.push(&path, "required, missing".into());
                return None;
            }
            None => return None,
            Some(v) => v,
        };
        let Some(x) = v.as_f64().filter(|x| x.is_finite()) else {
            p.push(&path, format!("must be a number, got {}", show_value(v)));
            return None;
        };
        match rule(x) {
            Some(m) => {
                p.push(&path, m);
                None
            }
            None => Some(x),
        }
    }

    fn whole(&mut self, p: &mut Problems, key: &'static str, min: u64, max: u64) -> Option<u64> {
        let path = self.path_of(key);
        let Some(v) = self.get(key) else {
            p.push(&path, "required, missing".into());
            return None;
        };
        match v.as_u64() {
            Some(n) if (min..=max).contains(&n) => Some(n),
            _ => {
                p.push(
                    &path,
                    format!(
                        "must be a whole number from {min} to {max}, got {}",
                        show_value(v)
                    ),
                );
                None
            }
        }
    }

    fn object(&mut self, p: &mut Problems, key: &'static str) -> Option<Fields<'v>> {
        let path = self.path_of(key);
        match self.get(key) {
            None => None,
            Some(Value::Object(m)) => Some(Fields::new(&path, m)),
            Some(v) => {
                p.push(&path, format!("must be an object, got {}", show_value(v)));
                None
            }
        }
    }

    /// Report every key not read, except those starting with `x_`.
    fn finish(&self, p: &mut Problems) {
        for key in self.map.keys() {
            if key.starts_with("x_") || self.used.iter().any(|u| u == key) {
                continue;
            }
            p.push(
                &self.path_of(key),
                format!(
                    "unknown key; the keys here are {}; keys of your own must start with \"x_\"",
                    self.used.join(", ")
                ),
            );
        }
    }
}

fn type_name(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true or false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

fn show_value(v: &Value) -> String {
    match v {
        Value::Number(n) => n.to_string(),
        Value::String(s) if s.chars().count() <= 40 => format!("\"{s}\""),
        Value::String(_) => "long text".into(),
        Value::Bool(b) => b.to_string(),
        other => type_name(other).into(),
    }
}

// ---- table ----------------------------------------------------------------------------------

fn with_u(value: Option<f64>, u: Option<f64>, unit: &str) -> String {
    match (value, u) {
        (Some(v), Some(u)) => format!("{} ± {} {unit}", sig(v), sig(u)),
        (Some(v), None) => format!("{} {unit}", sig(v)),
        (None, _) => "not measured".into(),
    }
}

/// A number to 4 significant digits, plain for everyday magnitudes.
fn sig(x: f64) -> String {
    let a = x.abs();
    if a != 0.0 && !(1e-3..1e6).contains(&a) {
        format!("{x:.3e}")
    } else {
        let digits = if a == 0.0 {
            0
        } else {
            // OK because a is within [1e-3, 1e6): log10 is within [-3, 6).
            #[allow(clippy::cast_possible_truncation)]
            let d = 3 - a.log10().floor() as i32;
            usize::try_from(d.max(0)).unwrap_or(0)
        };
        format!("{x:.digits$}")
    }
}

/// The characterization for people: measured figures with uncertainties, the points, and
/// the diagnostics.
#[must_use]
pub fn render_table(c: &Characterization) -> String {
    let s = &c.sensor;
    let f = &c.fit;
    let mut o = String::new();
    let _ = writeln!(
        o,
        "measured sensor ({} pixels per frame)",
        f.pixels_per_frame
    );
    let rows: Vec<(&str, String)> = vec![
        (
            "system gain K",
            with_u(
                Some(s.system_gain_dn_per_e),
                f.system_gain.standard_uncertainty_dn_per_e,
                "DN/e⁻",
            ),
        ),
        (
            "read noise",
            if f.read_noise.upper_bound_only {
                format!("< {} e⁻ (upper bound)", sig(f.read_noise.value_e))
            } else {
                with_u(s.read_noise_e, f.read_noise.standard_uncertainty_e, "e⁻")
            },
        ),
        (
            "full well",
            with_u(s.full_well_e, f.saturation.capacity_uncertainty_e, "e⁻"),
        ),
        (
            "dark current",
            with_u(
                s.dark_current_e_per_s,
                f.dark_current
                    .as_ref()
                    .and_then(|d| d.standard_uncertainty_e_per_s),
                "e⁻/s",
            ),
        ),
        ("DSNU", with_u(s.dsnu_e, None, "e⁻")),
        ("PRNU", with_u(s.prnu_percent, None, "%")),
        (
            "quantum efficiency",
            with_u(
                s.quantum_efficiency,
                f.responsivity
                    .as_ref()
                    .and_then(|r| r.quantum_efficiency_uncertainty),
                "",
            ),
        ),
        (
            "linearity error",
            with_u(f.linearity.as_ref().map(|l| l.error_percent), None, "%"),
        ),
        ("black level", with_u(s.black_level_dn, None, "DN")),
    ];
    for (label, value) in rows {
        let _ = writeln!(o, "  {label:<20} {}", value.trim_end());
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "photon transfer points");
    let _ = writeln!(
        o,
        "  {:<5} {:>10} {:<10} {:>6} {:>12} {:>12} {:>12} {:>12}  fit",
        "kind", "t [s]", "level", "frames", "mean [DN]", "above dark", "σ² [DN²]", "s² [DN²]"
    );
    for p in &f.points {
        let _ = writeln!(
            o,
            "  {:<5} {:>10} {:<10} {:>6} {:>12} {:>12} {:>12} {:>12}  {}",
            p.kind.as_str(),
            sig(p.exposure_time_s),
            p.level.as_deref().unwrap_or("-"),
            p.frames,
            sig(p.mean_dn),
            p.mean_above_dark_dn.map_or_else(|| "-".into(), sig),
            sig(p.temporal_variance_dn2),
            sig(p.spatial_variance_dn2),
            if p.used_in_gain_fit { "yes" } else { "" }
        );
    }
    if !f.diagnostics.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "diagnostics");
        for d in &f.diagnostics {
            let _ = writeln!(o, "  {}: {}", d.code, d.message);
        }
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    fn problems(text: &str) -> Vec<String> {
        match parse_manifest(text, Path::new("/data")) {
            Ok(_) => Vec::new(),
            Err(ps) => ps.iter().map(ToString::to_string).collect(),
        }
    }

    #[test]
    fn a_good_manifest_groups_stacks_and_resolves_paths() {
        let m = parse_manifest(
            r#"{"version": 1, "roi": {"x": 0, "y": 0, "width": 4, "height": 4},
                "frames": [
                  {"path": "d1.pgm", "kind": "dark", "exposure_time_s": 0.01},
                  {"path": "f1.pgm", "kind": "flat", "exposure_time_s": 0.01, "level": "a"},
                  {"path": "d2.pgm", "kind": "dark", "exposure_time_s": 0.01, "x_note": 1},
                  {"path": "f2.pgm", "kind": "flat", "exposure_time_s": 0.01, "level": "a"}
                ]}"#,
            Path::new("/data"),
        );
        let Ok(m) = m else { unreachable!("{m:?}") };
        assert_eq!(m.stacks.len(), 2);
        let paths: Vec<Vec<&str>> = m
            .stacks
            .iter()
            .map(|s| s.iter().map(|f| f.path.as_str()).collect())
            .collect();
        assert_eq!(paths, [["d1.pgm", "d2.pgm"], ["f1.pgm", "f2.pgm"]]);
        assert_eq!(
            m.stacks
                .first()
                .and_then(|s| s.first())
                .map(|f| f.resolved.clone()),
            Some(PathBuf::from("/data/d1.pgm"))
        );
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

    #[test]
    fn significant_digits() {
        assert_eq!(sig(0.25), "0.2500");
        assert_eq!(sig(2.5), "2.500");
        assert_eq!(sig(10000.0), "10000");
        assert_eq!(sig(1.5e7), "1.500e7");
    }
}
