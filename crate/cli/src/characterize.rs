//! `noise-budget characterize MANIFEST`: measure a camera from dark and flat frames on disk.
//!
//! Reads the manifest file and hands it to the engine (`engine::ptc::parse_manifest`, every
//! problem at once, each with its key path), reads each
//! frame file once, stack by stack, hands the bytes to the engine's decoders and stack
//! accumulators, and prints the engine's characterization as JSON or a table. It computes no
//! statistic itself and never holds more than the stack being read.

use std::fmt::Write as _;
use std::io::{self, Write};
use std::path::Path;
use std::process::ExitCode;

use engine::ptc::{self, Characterization};

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
    let manifest = match ptc::parse_manifest(&text) {
        Ok(m) => m,
        Err(problems) => {
            for p in problems {
                eprintln!("{p}");
            }
            return ExitCode::from(2);
        }
    };
    // Paths are relative to the manifest's folder.
    let mut read = |f: &ptc::FrameEntry| {
        let resolved = base.join(&f.path);
        std::fs::read(&resolved).map_err(|e| format!("cannot read {}: {e}", resolved.display()))
    };
    let result = match ptc::measure(&manifest, &mut read, &mut |_, _| {}) {
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

    #[test]
    fn significant_digits() {
        assert_eq!(sig(0.25), "0.2500");
        assert_eq!(sig(2.5), "2.500");
        assert_eq!(sig(10000.0), "10000");
        assert_eq!(sig(1.5e7), "1.500e7");
    }
}
