//! `heft run`: the whole pipeline for a target file, written to a new run folder.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use heft::{pipeline, report, target};

use super::{Failure, print_results};

/// Arguments of `heft run`.
#[derive(clap::Args, Debug)]
pub struct RunArgs {
    /// The target file (TOML).
    #[arg(value_name = "TARGET.toml")]
    target: PathBuf,
    /// Folder to write into (created; refused if it exists and is not empty). Default: a
    /// new folder under `runs/` beside the target file.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Print results as JSON instead of the summary.
    #[arg(long)]
    json: bool,
}

/// Runs the command.
pub fn run(args: &RunArgs) -> Result<ExitCode, Failure> {
    let target = target::load(&args.target).map_err(|e| Failure::Input(e.into()))?;
    if let Some(out) = &args.out
        && out.exists()
        && std::fs::read_dir(out)
            .map(|mut d| d.next().is_some())
            .unwrap_or(true)
    {
        return Err(Failure::Input(anyhow::anyhow!(
            "{} exists and is not empty; choose a new folder",
            out.display()
        )));
    }
    let (bar, mut progress) = super::sampler_progress();
    let analysis = pipeline::run_target(&target, &mut progress);
    bar.finish_and_clear();
    let analysis = analysis.map_err(|e| Failure::Input(e.into()))?;
    let dir = report::write_run(
        &analysis,
        args.out.as_deref(),
        &args.target,
        target.settings.draws_csv,
    )
    .with_context(|| "writing the run folder")
    .map_err(Failure::Internal)?;
    let code = print_results(&analysis, args.json)?;
    if !args.json {
        eprintln!("results written to {}", dir.display());
    }
    Ok(code)
}
