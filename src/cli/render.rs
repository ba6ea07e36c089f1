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
    /// Print the files written as JSON (`{"written": [...]}`).
    #[arg(long)]
    json: bool,
}

/// Runs the command: prints the files written, one per line (or as JSON).
pub fn run(args: &RenderArgs) -> Result<ExitCode, Failure> {
    let written = report::render(&args.run).map_err(|e| match e {
        RenderError::Saved(_) => Failure::Input(e.into()),
        RenderError::Write { .. } => Failure::Internal(e.into()),
    })?;
    let text = if args.json {
        serde_json::json!({ "written": written }).to_string() + "\n"
    } else {
        written
            .iter()
            .map(|p| format!("{}\n", p.display()))
            .collect()
    };
    super::emit(&text, args.json)?;
    Ok(ExitCode::SUCCESS)
}
