//! One complete run of a target file: checksums, analysis, run folder.

use std::io;
use std::path::{Path, PathBuf};

use crate::pipeline::{self, Analysis, PipelineError};
use crate::sample::Progress;
use crate::target::{self, TargetError};

/// Why a run failed.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The target file is unreadable or invalid.
    #[error(transparent)]
    Target(#[from] TargetError),
    /// The requested output folder is in use.
    #[error("{0} exists and is not empty; choose a new folder")]
    OutNotEmpty(PathBuf),
    /// A file named by the target could not be read for its checksum.
    #[error("reading the target's files for their checksums: {0}")]
    Checksum(io::Error),
    /// The analysis failed (bad data, failed fit).
    #[error(transparent)]
    Pipeline(#[from] PipelineError),
    /// The run would need more memory than `max_memory_mb` allows.
    #[error(
        "{path}: settings.max_memory_mb: the run needs an estimated {need_mb:.0} MB, more than the {cap_mb} MB allowed; lower draws, walkers or max_steps, or raise the limit"
    )]
    Memory {
        /// The target file.
        path: PathBuf,
        /// Estimated peak memory, MB.
        need_mb: f64,
        /// The limit, MB.
        cap_mb: f64,
    },
    /// The run folder could not be written; earlier runs are untouched.
    #[error("writing the run folder: {0}")]
    Write(io::Error),
}

impl RunError {
    /// Whether the user's input is at fault (exit 2) rather than heft or the machine.
    pub fn is_input(&self) -> bool {
        !matches!(self, RunError::Write(_))
    }
}

/// A finished run.
#[derive(Debug)]
pub struct Completed {
    /// The analysis.
    pub analysis: Analysis,
    /// The run folder written.
    pub dir: PathBuf,
}

/// Settings given for one run that replace the target file's.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Overrides {
    /// Time budget, seconds (replaces `settings.time_budget_s`).
    pub time_budget_s: Option<f64>,
}

/// Runs `target_file` end to end into `out` (or a new folder under `runs/`); `progress`
/// hears from the sampler.
///
/// # Errors
/// [`RunError`]; nothing earlier is overwritten in any case.
pub fn execute(
    target_file: &Path,
    out: Option<&Path>,
    progress: &mut dyn FnMut(&Progress),
) -> Result<Completed, RunError> {
    execute_with(target_file, out, Overrides::default(), progress)
}

/// As [`execute`], with `overrides` replacing the target file's settings (the manifest
/// records the settings in force).
///
/// # Errors
/// As [`execute`]; also [`RunError::Memory`] when the estimated peak memory exceeds
/// `settings.max_memory_mb`.
pub fn execute_with(
    target_file: &Path,
    out: Option<&Path>,
    overrides: Overrides,
    progress: &mut dyn FnMut(&Progress),
) -> Result<Completed, RunError> {
    let mut target = target::load(target_file)?;
    if let Some(b) = overrides.time_budget_s {
        target.settings.time_budget_s = Some(b);
    }
    if let Some(cap_mb) = target.settings.max_memory_mb {
        let need_mb = super::memory_estimate_mb(&target);
        if need_mb > cap_mb {
            return Err(RunError::Memory {
                path: target_file.to_path_buf(),
                need_mb,
                cap_mb,
            });
        }
    }
    if let Some(out) = out
        && out.exists()
        && std::fs::read_dir(out)
            .map(|mut d| d.next().is_some())
            .unwrap_or(true)
    {
        return Err(RunError::OutNotEmpty(out.to_path_buf()));
    }
    let manifest = super::manifest(&target).map_err(RunError::Checksum)?;
    // The latest complete run's solution, when asked for and readable (a run that cannot
    // be read just means a cold start).
    let previous = if target.settings.warm_start {
        super::complete_runs(target_file)
            .ok()
            .and_then(|runs| runs.last().cloned())
            .and_then(|dir| {
                let text = std::fs::read_to_string(dir.join("results.json")).ok()?;
                let doc: serde_json::Value = serde_json::from_str(&text).ok()?;
                let name = dir.file_name()?.to_string_lossy().into_owned();
                Some((name, pipeline::WarmPlanet::from_results(&doc)))
            })
    } else {
        None
    };
    let warm = previous.as_ref().map_or(&[][..], |p| p.1.as_slice());
    let mut analysis = pipeline::run_target_from(&target, warm, progress)?;
    analysis.warm_from = previous.map(|p| p.0);
    let dir = crate::report::write_run(
        &analysis,
        &manifest,
        out,
        target_file,
        target.settings.draws_csv,
    )
    .map_err(RunError::Write)?;
    Ok(Completed { analysis, dir })
}
