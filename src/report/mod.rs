//! Outputs of an analysis: `results.json` (schema `heft-results/1`), the printed summary,
//! and the run folder they are written into.

mod files;
mod json;
mod text;

pub use files::{create_run_dir, write_atomic};
pub use json::{SCHEMA, results_json};
pub use text::{format_summary, summary_text};

use std::path::{Path, PathBuf};

use crate::pipeline::Analysis;

/// Writes `results.json` and `summary.txt` of `analysis` into a new run folder (see
/// [`create_run_dir`]) and returns the folder; with a periodogram report also
/// `periodogram.svg`, `periodogram.json` (peaks, FAPs, aliases, window peaks) and
/// `periodograms.csv` (RV, window, residual and indicator periodograms on one grid).
///
/// # Errors
/// I/O errors; files already written stay complete (each is written atomically).
pub fn write_run(
    analysis: &Analysis,
    out: Option<&Path>,
    target_file: &Path,
) -> std::io::Result<PathBuf> {
    let dir = create_run_dir(out, target_file)?;
    let json = serde_json::to_vec_pretty(&results_json(analysis)).map_err(std::io::Error::other)?;
    write_atomic(&dir.join("summary.txt"), summary_text(analysis).as_bytes())?;
    if let Some(ov) = &analysis.periodograms {
        let title = format!("{}: GLS periodogram", analysis.name);
        write_atomic(
            &dir.join("periodogram.svg"),
            crate::periodogram::svg(ov, &title).as_bytes(),
        )?;
        write_atomic(&dir.join("periodograms.csv"), ov.table().as_bytes())?;
        let peaks = serde_json::to_vec_pretty(&ov.to_json()).map_err(std::io::Error::other)?;
        write_atomic(&dir.join("periodogram.json"), &peaks)?;
    }
    // results.json last: its presence marks a complete run.
    write_atomic(&dir.join("results.json"), &json)?;
    Ok(dir)
}
