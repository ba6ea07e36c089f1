//! Outputs of an analysis: `results.json` (schema `heft-results/1`), the printed summary,
//! the posterior draws and their corner plot, and the run folder they are written into.

mod draws;
mod files;
mod json;
mod text;

pub use draws::{corner_svg, draw_columns, write_draws};
pub use files::{create_run_dir, write_atomic};
pub use json::{SCHEMA, results_json};
pub use text::{format_summary, summary_text};

use std::path::{Path, PathBuf};

use crate::pipeline::Analysis;

/// Writes `results.json` and `summary.txt` of `analysis` into a new run folder (see
/// [`create_run_dir`]) and returns the folder; with posterior draws also `draws.parquet`
/// (and `draws.csv` when `draws_csv`) and `corner.svg`.
///
/// # Errors
/// I/O errors; files already written stay complete (each is written atomically).
pub fn write_run(
    analysis: &Analysis,
    out: Option<&Path>,
    target_file: &Path,
    draws_csv: bool,
) -> std::io::Result<PathBuf> {
    let dir = create_run_dir(out, target_file)?;
    write_draws(analysis, &dir, draws_csv)?;
    if let Some(svg) = corner_svg(analysis) {
        write_atomic(&dir.join("corner.svg"), svg.as_bytes())?;
    }
    let json = serde_json::to_vec_pretty(&results_json(analysis)).map_err(std::io::Error::other)?;
    write_atomic(&dir.join("summary.txt"), summary_text(analysis).as_bytes())?;
    // results.json last: its presence marks a complete run.
    write_atomic(&dir.join("results.json"), &json)?;
    Ok(dir)
}
