//! `heft run`: the whole pipeline for a target file, written to a new run folder.

use std::path::PathBuf;
use std::process::ExitCode;

use heft::runs;

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
    /// Time budget in seconds (replaces the target's `time_budget_s`): when it runs out
    /// the sampler stops early and later stages are skipped; the results say so (exit 3).
    #[arg(long, value_name = "SECONDS", value_parser = positive_seconds)]
    time_budget_s: Option<f64>,
    /// Print results as JSON instead of the summary.
    #[arg(long)]
    json: bool,
}

/// A positive, finite number of seconds.
fn positive_seconds(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v.is_finite() && v > 0.0 => Ok(v),
        _ => Err(format!("must be a positive number of seconds, got '{s}'")),
    }
}

/// Runs the command.
pub fn run(args: &RunArgs) -> Result<ExitCode, Failure> {
    let (bar, mut progress) = super::sampler_progress();
    let overrides = runs::Overrides {
        time_budget_s: args.time_budget_s,
    };
    let done = runs::execute_with(&args.target, args.out.as_deref(), overrides, &mut progress);
    bar.finish_and_clear();
    let done = done.map_err(|e| {
        if e.is_input() {
            Failure::Input(e.into())
        } else {
            Failure::Internal(e.into())
        }
    })?;
    if let Some(from) = &done.analysis.warm_from {
        let s = &done.analysis.search;
        super::note(&format!(
            "warm start from run {from}: {} started from their previous solution; fits took {:.2} s, about {:.2} s less than a cold start ({} optimiser starts spared)",
            match s.warm_started.as_slice() {
                [] => "no signal".to_string(),
                labels => labels.join(", "),
            },
            s.fit_s,
            s.saved_s,
            s.starts_spared
        ));
    }
    let code = print_results(&done.analysis, args.json)?;
    if !args.json {
        super::note(&format!("results written to {}", done.dir.display()));
    }
    Ok(code)
}
