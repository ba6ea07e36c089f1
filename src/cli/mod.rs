//! Command-line layer: one file per command; this file dispatches and maps failures to
//! exit codes (0 success, 1 internal failure, 2 bad input or usage, 3 not converged,
//! 4 audit not robust).

use std::process::ExitCode;

use clap::{Parser, Subcommand};

mod mass;

/// heft: weighs exoplanets from the reflex motion of their star.
#[derive(Parser)]
#[command(name = "heft", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Planet mass (and density, with a radius) from P, K, e and the stellar mass.
    Mass(mass::MassArgs),
}

/// A command's failure, sorted by who is at fault.
pub enum Failure {
    /// Bad input or usage (exit 2).
    Input(anyhow::Error),
    /// Something went wrong inside heft (exit 1).
    Internal(anyhow::Error),
}

/// Entry point of the binary.
pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = match cli.command {
        Command::Mass(args) => mass::run(&args),
    };
    match result {
        Ok(code) => code,
        Err(Failure::Input(e)) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
        Err(Failure::Internal(e)) => {
            eprintln!("internal error: {e:#}");
            ExitCode::from(1)
        }
    }
}
