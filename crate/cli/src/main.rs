//! The `noise-budget` command: evaluate scenario files and print reports.
//!
//! The only crate that touches files and the terminal. It computes nothing itself: every
//! figure comes from the engine; this file reads input, picks an output form, sets the exit code.

mod characterize;
mod demos;
mod frame;
mod human;
mod png_write;
mod simulate;
mod table;

use std::io::{self, Read, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Image-sensor pixel noise budgets: SNR, detection limit, saturation and exposure for a
/// planned measurement, from a scenario file (format version 1).
#[derive(Parser)]
#[command(name = "noise-budget", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Evaluate a scenario and print its report (JSON by default).
    ///
    /// Exit status: 0 on success, 2 when the scenario is invalid (every problem is printed on
    /// standard error, one a line, each naming its key), 1 when the file cannot be read.
    Eval {
        /// Print a readable noise budget table instead of JSON.
        #[arg(long)]
        table: bool,
        /// The scenario file (JSON); `-` reads standard input.
        file: PathBuf,
    },
    /// Vary one numeric key of a scenario over a range and print the report's figures along it.
    ///
    /// CSV (RFC 4180, a header row naming each column with its unit) or JSON. Exit status as
    /// for `eval`; a bad range is an invalid scenario (2).
    Sweep {
        /// The key to vary, as a dot path (e.g. exposure.time_s, light.photon_flux_per_um2_s).
        #[arg(long, value_name = "KEY")]
        vary: String,
        /// First value.
        #[arg(long, allow_negative_numbers = true)]
        from: f64,
        /// Last value.
        #[arg(long, allow_negative_numbers = true)]
        to: f64,
        /// Number of points (2 to 100000).
        #[arg(long, default_value_t = 50)]
        points: u32,
        /// Space the points by equal ratios instead of equal steps (both ends > 0).
        #[arg(long)]
        log: bool,
        /// Output form.
        #[arg(long, value_enum, default_value_t = SweepFormat::Csv)]
        format: SweepFormat,
        /// The scenario file (JSON); `-` reads standard input.
        file: PathBuf,
    },
    /// Measure a camera from dark and flat frames (photon transfer method, EMVA 1288 linear
    /// model) and print the measured `sensor` section with its fit (JSON by default).
    ///
    /// MANIFEST is JSON: {"version": 1, "frames": [{"path", "kind": "dark"|"flat",
    /// "exposure_time_s", optional "level", "photons_per_pixel", "significant_bits", "raw":
    /// {"width", "height", "bits"}}], optional "roi": {"x", "y", "width", "height"}, "raw",
    /// "cfa": "mono"|"RGGB"|"BGGR"|"GRBG"|"GBRG", "significant_bits"}; paths are relative to
    /// the manifest (docs/frame-manifest.md). Exit status: 0 on success, 2 for an invalid
    /// manifest, an undecodable frame or frames that cannot be analysed, 1 when a file cannot
    /// be read or written.
    Characterize {
        /// Print a readable table instead of JSON.
        #[arg(long)]
        table: bool,
        /// Also write the profiles, spectrograms and histograms of the averaged dark and flat
        /// images to this CSV file.
        #[arg(long, value_name = "FILE")]
        spatial_csv: Option<PathBuf>,
        /// The manifest file (JSON).
        manifest: PathBuf,
    },
    /// Decode one frame file (PGM, PNG or TIFF) and print its size and depths as JSON.
    ///
    /// --raw writes its samples as little-endian 16-bit raw, to compare with another
    /// program's reading. Exit status: 0 on success, 2 for a file that cannot be decoded, 1
    /// when a file cannot be read or written.
    Frame {
        /// Also write the samples to this file, little-endian 16-bit, row by row.
        #[arg(long, value_name = "OUT")]
        raw: Option<PathBuf>,
        /// The frame file.
        file: PathBuf,
    },
    /// Simulate the scenario's camera: a frame of an invented test scene, and a photon transfer
    /// series of its sensor to measure with `characterize`.
    ///
    /// --frame writes the test scene (patches a stop apart around the scenario's level, a
    /// ramp, bars at 50 % and 10 % contrast) as a 16-bit greyscale PNG, or PGM when OUT ends
    /// in .pgm; samples are DN times the power of two that fills 16 bits. --series writes dark
    /// and flat pairs from a few electrons to 1.2 × saturation as 16-bit PGM with
    /// manifest.json. Prints what was written, with each patch's SNR measured on the frame
    /// beside the model's (JSON by default). Exit status as for `eval`; a simulation the
    /// engine refuses (too much work, more than 16 ADC bits for a series) is 2.
    Simulate {
        /// Write the test-scene frame to this file (.png or .pgm).
        #[arg(long, value_name = "OUT")]
        frame: Option<PathBuf>,
        /// Write a photon transfer series (PGM files and manifest.json) into this folder,
        /// created when missing.
        #[arg(long, value_name = "DIR")]
        series: Option<PathBuf>,
        /// The seed: the same seed gives the same frames.
        #[arg(long, value_name = "N", default_value_t = 1)]
        seed: u64,
        /// Output pixels, WIDTHxHEIGHT (after binning); 640x480 for --frame and 256x256 for
        /// --series when not given.
        #[arg(long, value_name = "WxH", value_parser = simulate::parse_size)]
        size: Option<(u32, u32)>,
        /// Print a readable summary instead of JSON.
        #[arg(long)]
        table: bool,
        /// The scenario file (JSON); `-` reads standard input.
        file: PathBuf,
    },
    /// Print an invented demo scenario, valid input for `eval`.
    Example {
        /// Which demo to print (see --list); the first one by default.
        name: Option<String>,
        /// List the demo names and what each shows.
        #[arg(long)]
        list: bool,
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Command::Eval { table, file } => eval(&file, table),
        Command::Example { name, list } => example(name.as_deref(), list),
        Command::Characterize {
            table,
            spatial_csv,
            manifest,
        } => characterize::run(&manifest, table, spatial_csv.as_deref()),
        Command::Frame { raw, file } => frame::run(&file, raw.as_deref()),
        Command::Simulate {
            frame,
            series,
            seed,
            size,
            table,
            file,
        } => simulate::run(&simulate::Request {
            scenario: &file,
            frame: frame.as_ref(),
            series: series.as_ref(),
            seed,
            size,
            table,
        }),
        Command::Sweep {
            vary,
            from,
            to,
            points,
            log,
            format,
            file,
        } => {
            let request = engine::sweep::SweepRequest {
                key: vary,
                from,
                to,
                points,
                spacing: if log {
                    engine::sweep::Spacing::Log
                } else {
                    engine::sweep::Spacing::Linear
                },
            };
            sweep(&file, &request, format)
        }
    }
}

fn eval(file: &PathBuf, as_table: bool) -> ExitCode {
    let text = match read_text(file) {
        Ok(t) => t,
        Err(code) => return code,
    };
    let scenario = match engine::validate::scenario_from_json(&text) {
        Ok(s) => s,
        Err(e) => {
            for p in e.problems() {
                eprintln!("{p}");
            }
            return ExitCode::from(2);
        }
    };
    let report = engine::evaluate(&scenario);
    let out = if as_table {
        table::render(&scenario, &report)
    } else {
        match serde_json::to_string_pretty(&report) {
            Ok(s) => s + "\n",
            Err(e) => {
                eprintln!("noise-budget: cannot write the report as JSON: {e}");
                return ExitCode::from(1);
            }
        }
    };
    write_stdout(&out)
}

/// Output forms of `sweep`.
#[derive(Clone, Copy, clap::ValueEnum)]
enum SweepFormat {
    /// Comma-separated values with a header row (RFC 4180).
    Csv,
    /// The sweep with the full report at every point.
    Json,
}

fn sweep(file: &PathBuf, request: &engine::sweep::SweepRequest, format: SweepFormat) -> ExitCode {
    let text = match read_text(file) {
        Ok(t) => t,
        Err(code) => return code,
    };
    let value: serde_json::Value = match serde_json::from_str(&text) {
        Ok(v) => v,
        Err(_) => {
            // Let the validator word the JSON error exactly as `eval` does.
            if let Err(e) = engine::validate::scenario_from_json(&text) {
                for p in e.problems() {
                    eprintln!("{p}");
                }
            }
            return ExitCode::from(2);
        }
    };
    match engine::sweep::sweep(&value, request) {
        Ok(s) => match format {
            SweepFormat::Csv => write_stdout(&engine::sweep::to_csv(&s)),
            SweepFormat::Json => match serde_json::to_string_pretty(&s) {
                Ok(j) => write_stdout(&(j + "\n")),
                Err(e) => {
                    eprintln!("noise-budget: cannot write the sweep as JSON: {e}");
                    ExitCode::from(1)
                }
            },
        },
        Err(e) => {
            for p in e.problems() {
                eprintln!("{p}");
            }
            ExitCode::from(2)
        }
    }
}

/// Read a file (or standard input for `-`) as UTF-8 text; on failure print the message and
/// give the exit code (1 for I/O, 2 for text that is not UTF-8).
fn read_text(file: &PathBuf) -> Result<String, ExitCode> {
    let shown = file.display().to_string();
    let bytes = read_input(file).map_err(|e| {
        eprintln!("noise-budget: cannot read {shown}: {e}");
        ExitCode::from(1)
    })?;
    String::from_utf8(bytes).map_err(|_| {
        eprintln!("scenario: {shown} is not UTF-8 text");
        ExitCode::from(2)
    })
}

fn example(name: Option<&str>, list: bool) -> ExitCode {
    if list {
        let mut out = String::new();
        for d in demos::DEMOS {
            out.push_str(&format!("{:<32} {}\n", d.name, d.summary));
        }
        return write_stdout(&out);
    }
    let chosen = match name {
        None => demos::DEMOS.first(),
        Some(n) => demos::DEMOS.iter().find(|d| d.name == n),
    };
    match chosen {
        Some(d) => write_stdout(d.json),
        None => {
            let names: Vec<&str> = demos::DEMOS.iter().map(|d| d.name).collect();
            eprintln!(
                "noise-budget: no demo named {:?}; the demos are: {}",
                name.unwrap_or_default(),
                names.join(", ")
            );
            ExitCode::from(2)
        }
    }
}

fn read_input(file: &PathBuf) -> io::Result<Vec<u8>> {
    let mut bytes = Vec::new();
    if file.as_os_str() == "-" {
        io::stdin().read_to_end(&mut bytes)?;
    } else {
        bytes = std::fs::read(file)?;
    }
    Ok(bytes)
}

fn write_stdout(text: &str) -> ExitCode {
    let mut out = io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => ExitCode::SUCCESS,
        // A closed pipe (`| head`) is not worth a message; any other write error is.
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("noise-budget: cannot write to standard output: {e}");
            ExitCode::from(1)
        }
    }
}
