//! The `noise-budget` command: evaluate scenario files and print reports.
//!
//! The only crate that touches files and the terminal. It computes nothing itself: every
//! figure comes from the engine; this file reads input, picks an output form, sets the exit code.

mod demos;
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
    }
}

fn eval(file: &PathBuf, as_table: bool) -> ExitCode {
    let shown = file.display().to_string();
    let bytes = match read_input(file) {
        Ok(b) => b,
        Err(e) => {
            eprintln!("noise-budget: cannot read {shown}: {e}");
            return ExitCode::from(1);
        }
    };
    let Ok(text) = String::from_utf8(bytes) else {
        eprintln!("scenario: {shown} is not UTF-8 text");
        return ExitCode::from(2);
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
