//! `heft render`: rebuilds a run folder's report from its saved results, without refitting.

use std::path::PathBuf;
use std::process::ExitCode;

use heft::report::{self, RenderError};

use super::Failure;

/// Arguments of `heft render`.
#[derive(clap::Args, Debug)]
pub struct RenderArgs {
    /// The run folder (holding results.json and data_used.csv).
    #[arg(value_name = "RUN_FOLDER")]
    run: PathBuf,
}

/// Runs the command: prints the files written, one per line.
pub fn run(args: &RenderArgs) -> Result<ExitCode, Failure> {
    let written = report::render(&args.run).map_err(|e| match e {
        RenderError::Saved(_) => Failure::Input(e.into()),
        RenderError::Write { .. } => Failure::Internal(e.into()),
    })?;
    for path in written {
        println!("{}", path.display());
    }
    Ok(ExitCode::SUCCESS)
}
