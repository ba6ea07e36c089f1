//! Outputs of an analysis: `results.json` (schema `heft-results/1`), the printed summary,
//! the posterior draws and their corner plot, and the run folder they are written into.

mod density;
mod draws;
mod files;
mod json;
mod mass_radius;
mod text;

pub use density::density_markdown;
pub use draws::{corner_svg, draw_columns, write_draws};
pub use files::{create_run_dir, write_atomic};
pub use json::{SCHEMA, audit_json, results_json};
pub use mass_radius::{PlanetCloud, mass_radius_svg};
pub use text::{audit_text, format_summary, summary_text};

use std::path::{Path, PathBuf};

use crate::pipeline::Analysis;

/// Writes `manifest.json` (inputs' checksums, settings, version, seed), `results.json`,
/// `summary.txt` and, where planets have radii, `density.md` and `mass_radius.svg` of
/// `analysis` into a new run folder (see [`create_run_dir`]) and returns the folder; a
/// run under `runs/` also becomes `LATEST`. With a periodogram report also
/// `periodogram.svg`, `periodogram.json` (peaks, FAPs, aliases, window peaks) and
/// `periodograms.csv` (RV, window, residual and indicator periodograms on one grid);
/// with posterior draws also `draws.parquet` (and `draws.csv` when `draws_csv`) and
/// `corner.svg`; with an audit also `audit.svg` (mass under each model variant).
///
/// # Errors
/// I/O errors; files already written stay complete (each is written atomically).
pub fn write_run(
    analysis: &Analysis,
    manifest: &crate::runs::Manifest,
    out: Option<&Path>,
    target_file: &Path,
    draws_csv: bool,
) -> std::io::Result<PathBuf> {
    let dir = create_run_dir(out, target_file)?;
    let manifest = serde_json::to_vec_pretty(manifest).map_err(std::io::Error::other)?;
    write_atomic(&dir.join("manifest.json"), &manifest)?;
    write_draws(analysis, &dir, draws_csv)?;
    if let Some(svg) = corner_svg(analysis) {
        write_atomic(&dir.join("corner.svg"), svg.as_bytes())?;
    }
    let json = serde_json::to_vec_pretty(&results_json(analysis)).map_err(std::io::Error::other)?;
    write_atomic(&dir.join("summary.txt"), summary_text(analysis).as_bytes())?;
    if let Some(md) = density_markdown(analysis) {
        write_atomic(&dir.join("density.md"), md.as_bytes())?;
    }
    let clouds: Vec<PlanetCloud> = analysis
        .search
        .fit
        .planets
        .iter()
        .zip(&analysis.derived)
        .filter_map(|(p, d)| {
            let d = d.as_ref()?;
            Some(PlanetCloud {
                label: &p.label,
                mass_mearth: d.draws.mass_mearth.as_deref()?,
                radius_rearth: d.draws.radius_rearth.as_deref()?,
            })
        })
        .collect();
    if !clouds.is_empty() {
        write_atomic(
            &dir.join("mass_radius.svg"),
            mass_radius_svg(&clouds).as_bytes(),
        )?;
    }
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
    if let Some(audit) = &analysis.audit {
        write_atomic(&dir.join("audit.svg"), crate::audit::svg(audit).as_bytes())?;
    }
    // results.json last: its presence marks a complete run.
    write_atomic(&dir.join("results.json"), &json)?;
    if out.is_none() {
        crate::runs::mark_latest(&dir)?;
    }
    Ok(dir)
}
