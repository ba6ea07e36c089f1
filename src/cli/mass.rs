//! `heft mass`: the mass/density calculator.

use std::process::ExitCode;

use super::Failure;

/// Arguments of `heft mass`.
#[derive(clap::Args)]
pub struct MassArgs {}

/// Runs the calculator.
pub fn run(_args: &MassArgs) -> Result<ExitCode, Failure> {
    Err(Failure::Internal(anyhow::anyhow!("not yet wired")))
}
