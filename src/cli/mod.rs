//! Command-line interface: argument definitions (clap derive), dispatch and error reporting.
//!
//! Exit codes: 0 success, 1 runtime or I/O failure, 2 usage error (bad option or value).

mod args;
mod audit_cmd;
mod bench_cmd;
mod common;
mod lattice_cmd;
mod laws_cmd;
mod loops_cmd;
mod measure_cmd;
mod merge_cmd;
mod radial_trace;
mod radii_cmd;
mod runs;
mod tour;
mod trace_cmd;

use args::{Cli, Command};
use clap::Parser;
use std::process::ExitCode;

/// A failure, classified for the exit code.
pub enum Failure {
    /// Bad options or values (exit 2).
    Usage(String),
    /// Something failed while running (exit 1).
    Runtime(String),
    /// Stopped by a signal with the work saved (exit 130).
    Interrupted(String),
    /// Standard output was closed by its reader: stop without a message (exit 0).
    Quiet,
}

impl From<sleek::Error> for Failure {
    fn from(e: sleek::Error) -> Self {
        match e {
            sleek::Error::InvalidParameter { .. } | sleek::Error::Unavailable(_) => {
                Failure::Usage(e.to_string())
            }
            _ => Failure::Runtime(e.to_string()),
        }
    }
}

impl From<anyhow::Error> for Failure {
    fn from(e: anyhow::Error) -> Self {
        Failure::Runtime(format!("{e:#}"))
    }
}

/// Entry point of the binary.
pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            use clap::error::ErrorKind;
            if matches!(
                e.kind(),
                ErrorKind::DisplayHelp
                    | ErrorKind::DisplayVersion
                    | ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand
            ) {
                let _ = e.print();
                return ExitCode::SUCCESS;
            }
            // clap's message spans several lines; keep it on one, without the usage block.
            let text = e.render().to_string();
            let msg: Vec<&str> = text
                .lines()
                .take_while(|l| !l.starts_with("Usage:") && !l.starts_with("For more information"))
                .map(str::trim)
                .filter(|l| !l.is_empty())
                .collect();
            let msg = msg.join(" ");
            let msg = msg.strip_prefix("error: ").unwrap_or(&msg);
            eprintln!("sleek: error: {msg} (see 'sleek --help')");
            return ExitCode::from(2);
        }
    };
    let result = match &cli.command {
        None => tour::run(&cli.global),
        Some(Command::Trace(a)) => trace_cmd::run(&cli.global, a),
        Some(Command::Laws(a)) => laws_cmd::run(&cli.global, a),
        Some(Command::Audit(a)) => audit_cmd::run(&cli.global, a),
        Some(Command::Radii(a)) => radii_cmd::run(&cli.global, a),
        Some(Command::Loops(a)) => loops_cmd::run(&cli.global, a),
        Some(Command::Bench(a)) => bench_cmd::run(&cli.global, a),
        Some(Command::Measure(a)) => measure_cmd::run(&cli.global, a),
        Some(Command::Lattice(a)) => lattice_cmd::run(&cli.global, a),
        Some(Command::Merge(a)) => merge_cmd::run(&cli.global, a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Usage(m)) => {
            eprintln!("sleek: error: {m}");
            ExitCode::from(2)
        }
        Err(Failure::Runtime(m)) => {
            eprintln!("sleek: error: {m}");
            ExitCode::from(1)
        }
        Err(Failure::Interrupted(m)) => {
            eprintln!("sleek: {m}");
            ExitCode::from(130)
        }
        Err(Failure::Quiet) => ExitCode::SUCCESS,
    }
}
