//! `heft changes`: what changed between the latest two runs of a target.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, anyhow};
use heft::runs;
use serde_json::Value;

use super::Failure;

/// Arguments of `heft changes`.
#[derive(clap::Args, Debug)]
pub struct ChangesArgs {
    /// The target file (TOML) whose runs are compared.
    #[arg(value_name = "TARGET.toml")]
    target: PathBuf,
    /// Print the changes as JSON.
    #[arg(long)]
    json: bool,
}

fn read(dir: &std::path::Path) -> Result<Value, Failure> {
    let path = dir.join("results.json");
    let text = std::fs::read_to_string(&path)
        .with_context(|| format!("reading {}", path.display()))
        .map_err(Failure::Input)?;
    serde_json::from_str(&text)
        .with_context(|| format!("{}: not a results document", path.display()))
        .map_err(Failure::Input)
}

/// Runs the command.
pub fn run(args: &ChangesArgs) -> Result<ExitCode, Failure> {
    let runs = runs::complete_runs(&args.target)
        .with_context(|| format!("listing the runs of {}", args.target.display()))
        .map_err(Failure::Input)?;
    let [.., before, after] = runs.as_slice() else {
        return Err(Failure::Input(anyhow!(
            "{}: needs at least two complete runs under {}, found {}",
            args.target.display(),
            runs::runs_dir(&args.target).display(),
            runs.len()
        )));
    };
    let name = |p: &std::path::Path| {
        p.file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default()
    };
    let changes = runs::compare(&name(before), &read(before)?, &name(after), &read(after)?);
    let text = if args.json {
        serde_json::to_string_pretty(&changes).map_err(|e| Failure::Internal(e.into()))? + "\n"
    } else {
        runs::changes_text(&changes)
    };
    super::emit(&text, args.json)?;
    Ok(ExitCode::SUCCESS)
}
