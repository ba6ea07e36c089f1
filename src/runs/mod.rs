//! Run history of a target: what each run read (checksums, settings, version, seed), which
//! runs are complete, what changed between two runs, new epochs, and planning the next.
//!
//! A run folder is complete when it holds `results.json` (written last, atomically);
//! `runs/LATEST` names the newest complete run.

mod batch;
mod changes;
mod epochs;
mod execute;
mod plan;

pub use batch::{
    BatchOutcome, Discovery, Shard, ShardError, discover, gather, memory_estimate_mb, run_batch,
    shard_from_env, summary_csv, summary_parquet,
};
pub use changes::{Changes, PlanetChange, changes_text, compare};
pub use epochs::{AddError, Added, add_epochs};
pub use execute::{Completed, Overrides, RunError, execute, execute_with};
pub use plan::{DateValue, Plan, PlanError, PlanRequest, PlanetForecast, plan, plan_svg};

use std::fs;
use std::io;
use std::path::{Path, PathBuf};

use serde::Serialize;
use sha2::{Digest, Sha256};

use crate::target::Target;

/// Name of the pointer file to the newest complete run, inside `runs/`.
pub const LATEST: &str = "LATEST";

/// A file a run read, with its checksum.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FileRecord {
    /// Path as given in the target file (resolved).
    pub path: String,
    /// SHA-256 of the contents, lower-case hex.
    pub sha256: String,
    /// Size, bytes.
    pub bytes: u64,
}

/// What a run was made from.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Manifest {
    /// Schema tag, `heft-run/1`.
    pub schema: &'static str,
    /// Start time of the run, UTC, ISO 8601.
    pub created_utc: String,
    /// heft version.
    pub software_version: &'static str,
    /// Seed of the run.
    pub seed: u64,
    /// The target file.
    pub target: FileRecord,
    /// The RV files.
    pub inputs: Vec<FileRecord>,
    /// The analysis settings in force.
    pub settings: serde_json::Value,
}

/// Checksum record of one file.
///
/// # Errors
/// I/O errors reading the file, naming it.
pub fn file_record(path: &Path) -> io::Result<FileRecord> {
    let bytes = fs::read(path)
        .map_err(|e| io::Error::new(e.kind(), format!("{}: cannot read: {e}", path.display())))?;
    let digest = Sha256::digest(&bytes);
    Ok(FileRecord {
        path: path.display().to_string(),
        sha256: digest.iter().map(|b| format!("{b:02x}")).collect(),
        bytes: bytes.len() as u64,
    })
}

/// The manifest of a run of `target`.
///
/// # Errors
/// I/O errors reading the target or data files.
pub fn manifest(target: &Target) -> io::Result<Manifest> {
    Ok(Manifest {
        schema: "heft-run/1",
        created_utc: chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true),
        software_version: env!("CARGO_PKG_VERSION"),
        seed: target.settings.seed,
        target: file_record(&target.path)?,
        inputs: target
            .data
            .iter()
            .map(|d| file_record(&d.path))
            .collect::<io::Result<_>>()?,
        settings: serde_json::to_value(&target.settings).map_err(io::Error::other)?,
    })
}

/// The `runs/` folder beside a target file.
pub fn runs_dir(target_file: &Path) -> PathBuf {
    target_file
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
        .join("runs")
}

/// Complete runs (folders holding `results.json`) beside a target file, oldest first
/// (folder names sort in time).
///
/// # Errors
/// I/O errors listing the folder; a missing `runs/` folder is an empty list.
pub fn complete_runs(target_file: &Path) -> io::Result<Vec<PathBuf>> {
    let dir = runs_dir(target_file);
    if !dir.exists() {
        return Ok(Vec::new());
    }
    let mut runs: Vec<PathBuf> = fs::read_dir(&dir)?
        .filter_map(Result::ok)
        .map(|e| e.path())
        .filter(|p| p.is_dir() && p.join("results.json").is_file())
        .collect();
    runs.sort();
    Ok(runs)
}

/// Points `runs/LATEST` at `run_dir` (atomically).
///
/// # Errors
/// I/O errors.
pub fn mark_latest(run_dir: &Path) -> io::Result<()> {
    let Some(parent) = run_dir.parent() else {
        return Ok(());
    };
    let name = run_dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    crate::report::write_in(parent, LATEST, format!("{name}\n").as_bytes())
}
