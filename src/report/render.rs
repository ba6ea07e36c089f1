//! Rebuilds a run's report — figures (SVG), results tables (LaTeX, Markdown) and
//! `report.html` — from the files saved in its folder, without refitting.

use std::io;
use std::path::{Path, PathBuf};

use super::corner::{corner_columns, corner_svg};
use super::files::write_atomic;
use super::html::{PageFigure, report_html};
use super::mass_radius::{PlanetCloud, mass_radius_svg};
use super::pgram::periodogram_svg;
use super::phase::{
    ModelPlanet, activity_scales, activity_svg, jitters, phase_svg, residuals_time_svg,
};
use super::saved::{SavedError, SavedRun, read_run};
use super::table::ResultsTable;

/// Why a report could not be rebuilt.
#[derive(Debug, thiserror::Error)]
pub enum RenderError {
    /// A saved file is missing or malformed.
    #[error(transparent)]
    Saved(#[from] SavedError),
    /// A report file could not be written.
    #[error("{}: cannot write: {source}", path.display())]
    Write {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: io::Error,
    },
}

/// A file name made of letters, digits, `-` and `_` only.
fn file_stem(label: &str) -> String {
    label
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The report's figures from the saved run, in page order.
pub fn figures(run: &SavedRun) -> Vec<PageFigure> {
    let r = &run.results;
    let target = r["target"].as_str().unwrap_or("target");
    let mut figs = Vec::new();
    if let Some(svg) = run
        .periodograms
        .as_ref()
        .and_then(|pg| periodogram_svg(pg, &format!("{target}: GLS periodogram")))
    {
        figs.push(PageFigure {
            section: "periodogram",
            file: "periodogram.svg".into(),
            svg,
            caption: "Generalised Lomb–Scargle power of the RVs against period (top; dashed lines: power at the Baluev false-alarm probabilities shown; triangles: candidate peaks; circles: aliases of the highest peak through the window), then the spectral window and the periodograms of the residuals and activity indicators.".into(),
            wide: false,
        });
    }
    let jit = jitters(r);
    let planets: Vec<ModelPlanet> = r["model"]["planets"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(ModelPlanet::from_json)
        .collect();
    let activity_note = if run.activity.is_some() {
        " (the activity model removed)"
    } else {
        ""
    };
    for planet in &planets {
        let Some(index) = run.points.signals.iter().position(|l| *l == planet.label) else {
            continue;
        };
        figs.push(PageFigure {
            section: "orbits",
            file: format!("phase_{}.svg", file_stem(&planet.label)),
            svg: phase_svg(&run.points, planet, index, &jit),
            caption: format!(
                "Planet {}: RVs minus the other planets, offsets and trend{activity_note}, folded on P = {:.6} d from conjunction, one marker per epoch (error bars: uncertainty and jitter in quadrature), with the maximum-likelihood Keplerian (line), weighted means in 0.1-wide phase bins (open circles) and residuals of the full model below.",
                planet.label,
                planet.orbit.period_d()
            ),
            wide: false,
        });
    }
    figs.push(PageFigure {
        section: "residuals",
        file: "residuals_time.svg".into(),
        svg: residuals_time_svg(&run.points, &jit),
        caption: format!("Residuals of the full maximum-likelihood model{activity_note} against time, one panel per instrument (error bars: uncertainty and jitter in quadrature)."),
        wide: false,
    });
    if let Some(curve) = &run.activity {
        figs.push(PageFigure {
            section: "residuals",
            file: "activity.svg".into(),
            svg: activity_svg(&run.points, curve, &jit, &activity_scales(r)),
            caption: "The stellar-activity model: RVs minus the planets, offsets and trend against time, one marker per epoch (error bars: uncertainty and jitter in quadrature; with one activity amplitude per instrument, each instrument's points and error bars divided by its amplitude factor), with the activity Gaussian process's conditional mean at the first instrument's amplitude (line) and ±1σ (thin lines).".into(),
            wide: false,
        });
    }
    if let Some(draws) = &run.draws
        && let Some(svg) = corner_svg(draws)
    {
        figs.push(PageFigure {
            section: "posterior",
            file: "corner.svg".into(),
            svg,
            caption: "Posterior draws of each planet's period, semi-amplitude, eccentricity and m sin i: histograms on the diagonal, pairs below (axes span the 0.5–99.5 percentiles).".into(),
            wide: corner_columns(draws).len() > 3,
        });
    }
    if let Some(draws) = &run.draws {
        let column = |name: String| {
            draws
                .iter()
                .find(|(n, _)| *n == name)
                .map(|(_, v)| v.as_slice())
        };
        let clouds: Vec<PlanetCloud> = run
            .points
            .signals
            .iter()
            .filter_map(|l| {
                Some(PlanetCloud {
                    label: l,
                    mass_mearth: column(format!("{l}.mass_mearth"))?,
                    radius_rearth: column(format!("{l}.radius_rearth"))?,
                })
            })
            .collect();
        if !clouds.is_empty() {
            figs.push(PageFigure {
                section: "mass-radius",
                file: "mass_radius.svg".into(),
                svg: mass_radius_svg(&clouds),
                caption: "Mass against radius: each planet's draws with 1σ and 2σ contours (Gaussian in log mass and log radius), composition curves, lines of constant density and the solar-system planets.".into(),
                wide: false,
            });
        }
    }
    if r["audit"].is_object() {
        figs.push(PageFigure {
            section: "audit",
            file: "audit.svg".into(),
            svg: super::audit_svg(&r["audit"]),
            caption: "Each audited planet's mass (K without a stellar mass) under every model variant and without each instrument and season: maximum-likelihood values with 1σ bars; band: the audited fit's 1σ; filled: the audited fit (black) and variants within the competitive ΔBIC of the best (blue); open: the others.".into(),
            wide: false,
        });
    }
    figs
}

/// Every report file of a saved run as (file name, contents): the figures, the results
/// table in LaTeX and Markdown, and `report.html`. Deterministic.
pub fn report_files(run: &SavedRun) -> Vec<(String, String)> {
    let figs = figures(run);
    let table = ResultsTable::from_results(&run.results);
    let mut files: Vec<(String, String)> = figs
        .iter()
        .map(|f| (f.file.clone(), f.svg.clone()))
        .collect();
    files.push(("results_table.tex".into(), table.latex()));
    files.push(("results_table.md".into(), table.markdown()));
    files.push(("report.html".into(), report_html(run, &figs, &table)));
    files
}

/// Reads the run folder `dir` and (re)writes its report files; returns their paths.
///
/// # Errors
/// [`RenderError`] naming the saved file that is missing or malformed, or the report
/// file that could not be written.
pub fn render(dir: &Path) -> Result<Vec<PathBuf>, RenderError> {
    let run = read_run(dir)?;
    let mut written = Vec::new();
    for (name, text) in report_files(&run) {
        let path = dir.join(name);
        write_atomic(&path, text.as_bytes()).map_err(|source| RenderError::Write {
            path: path.clone(),
            source,
        })?;
        written.push(path);
    }
    Ok(written)
}
