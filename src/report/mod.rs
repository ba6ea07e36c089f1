//! Outputs of an analysis: `results.json` (schema `heft-results/1`), the printed summary,
//! the draws, the data as used, and the report (figures, results tables, `report.html`)
//! rebuilt from those saved files by [`render`].

mod audit_plot;
mod corner;
mod density;
mod draws;
pub(crate) mod figure;
mod files;
mod html;
mod json;
mod mass_radius;
mod pgram;
mod phase;
mod render;
mod saved;
mod table;
mod text;

pub use audit_plot::audit_svg;
pub use corner::corner_svg;
pub use density::density_markdown;
pub use draws::{draw_columns, write_draws};
pub(crate) use files::write_in;
pub use files::{FAULT_ENV, create_run_dir, write_atomic};
pub use json::{SCHEMA, audit_json, results_json};
pub use mass_radius::{PlanetCloud, mass_radius_svg};
pub use pgram::{overview_svg, periodogram_meta, periodogram_svg};
pub use phase::{ModelPlanet, phase_svg, residuals_time_svg};
pub use render::{RenderError, figures, render, report_files};
pub use saved::{
    ACTIVITY_FILE, POINTS_FILE, Point, Points, SavedError, SavedRun, activity_csv, points_csv,
    read_run,
};
pub use table::{ResultsTable, Rounded, decimals_for, round_to_uncertainty};
pub use text::{audit_text, format_summary, summary_text};

use std::path::{Path, PathBuf};

use crate::pipeline::Analysis;

/// Writes `manifest.json` (inputs' checksums, settings, version, seed), `results.json`,
/// `summary.txt`, `data_used.csv` (the points as used, with model and residuals) and,
/// where planets have radii, `density.md` of `analysis` into a new run folder (see
/// [`create_run_dir`]), then the report from those files ([`render`]), and returns the
/// folder; a run under `runs/` also becomes `LATEST`. With a periodogram report also
/// `periodogram.json` (peaks, FAPs, aliases, window peaks, false-alarm levels) and
/// `periodograms.csv` (RV, window, residual and indicator periodograms on one grid); with
/// draws also `draws.parquet` (and `draws.csv` when `draws_csv`); with an activity GP
/// also `activity_model.csv` (the GP's mean and standard deviation against time).
///
/// # Errors
/// I/O errors, naming the file; the incomplete run folder is then removed, so no
/// half-written run looks complete and earlier runs and `LATEST` are untouched.
pub fn write_run(
    analysis: &Analysis,
    manifest: &crate::runs::Manifest,
    out: Option<&Path>,
    target_file: &Path,
    draws_csv: bool,
) -> std::io::Result<PathBuf> {
    let dir = create_run_dir(out, target_file)?;
    let fill = || -> std::io::Result<()> {
        let manifest = serde_json::to_vec_pretty(manifest).map_err(std::io::Error::other)?;
        write_in(&dir, "manifest.json", &manifest)?;
        write_draws(analysis, &dir, draws_csv)?;
        write_in(&dir, POINTS_FILE, points_csv(analysis).as_bytes())?;
        if let Some(curve) = activity_csv(analysis) {
            write_in(&dir, ACTIVITY_FILE, curve.as_bytes())?;
        }
        let json =
            serde_json::to_vec_pretty(&results_json(analysis)).map_err(std::io::Error::other)?;
        write_in(&dir, "summary.txt", summary_text(analysis).as_bytes())?;
        if let Some(md) = density_markdown(analysis) {
            write_in(&dir, "density.md", md.as_bytes())?;
        }
        if let Some(ov) = &analysis.periodograms {
            write_in(&dir, "periodograms.csv", ov.table().as_bytes())?;
            let peaks =
                serde_json::to_vec_pretty(&periodogram_meta(ov)).map_err(std::io::Error::other)?;
            write_in(&dir, "periodogram.json", &peaks)?;
        }
        // results.json marks a complete run; the report is drawn from the saved files.
        write_in(&dir, "results.json", &json)?;
        render(&dir).map_err(std::io::Error::other)?;
        if out.is_none() {
            crate::runs::mark_latest(&dir)?;
        }
        Ok(())
    };
    fill().map_err(|e| {
        // No half-written run may look complete: the folder goes, whatever it holds.
        let fate = match std::fs::remove_dir_all(&dir) {
            Ok(()) => "removed".to_string(),
            Err(r) => format!("left behind ({r}); delete it"),
        };
        std::io::Error::new(
            e.kind(),
            format!(
                "{e}; the incomplete run folder {} was {fate}",
                dir.display()
            ),
        )
    })?;
    Ok(dir)
}
