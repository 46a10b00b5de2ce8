//! `noise-budget frame FILE`: what the engine reads from one frame file, to check a file.
//!
//! Prints the decoded frame's size and depths as JSON and, with `--raw OUT`, writes its
//! samples as little-endian 16-bit raw (the geometry `characterize` takes for raw frames), so
//! that another program can compare them with its own reading. It computes nothing itself: the
//! decoding is `engine::frames::decode`.

use std::path::Path;
use std::process::ExitCode;

use serde_json::json;

/// Run the command; the exit status is 0 on success, 2 for a file the engine cannot decode, 1
/// when a file cannot be read or written.
pub fn run(file: &Path, raw_out: Option<&Path>) -> ExitCode {
    let shown = file.display();
    let bytes = match std::fs::read(file) {
        Ok(b) => b,
        Err(e) => {
            eprintln!("noise-budget: cannot read {shown}: {e}");
            return ExitCode::from(1);
        }
    };
    let frame = match engine::frames::decode(&bytes, None) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("{shown}: {e}");
            return ExitCode::from(2);
        }
    };
    if let Some(out) = raw_out {
        let raw: Vec<u8> = frame
            .pixels()
            .iter()
            .flat_map(|v| v.to_le_bytes())
            .collect();
        if let Err(e) = std::fs::write(out, raw) {
            eprintln!("noise-budget: cannot write {}: {e}", out.display());
            return ExitCode::from(1);
        }
    }
    let format = engine::frames::sniff(&bytes).map(engine::frames::Format::as_str);
    let info = json!({
        "format": format,
        "width": frame.width(),
        "height": frame.height(),
        "sample_bits": frame.sample_bits(),
        "significant_bits": frame.significant_bits(),
        "msb_bits": frame.msb_bits(),
    });
    println!("{info}");
    ExitCode::SUCCESS
}
