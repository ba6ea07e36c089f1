//! The draws of a run as a table (Parquet through polars, CSV on request).

use std::io;
use std::path::Path;

use polars::prelude::*;

use super::files::write_in;
use crate::pipeline::Analysis;

/// Columns of the draws table. With posterior draws: `ensemble`, `walker`, `step`,
/// `ln_posterior` and the physical parameters (see
/// [`crate::sample::Posterior::columns`]). With a star, each planet's `msini_mearth` (and
/// `mass_mearth`, `radius_rearth`, `density_gcc` where known), draw by draw (without
/// posterior draws, the Monte Carlo draws of the derivation). `None` when there is
/// neither.
pub fn draw_columns(a: &Analysis) -> Option<Vec<(String, Vec<f64>)>> {
    let mut cols = match &a.posterior {
        Some(post) => chain_columns(a, post),
        None => Vec::new(),
    };
    for (p, d) in a.search.fit.planets.iter().zip(&a.derived) {
        let Some(d) = d else { continue };
        let l = &p.label;
        cols.push((format!("{l}.msini_mearth"), d.draws.msini_mearth.clone()));
        for (name, v) in [
            ("mass_mearth", &d.draws.mass_mearth),
            ("radius_rearth", &d.draws.radius_rearth),
            ("density_gcc", &d.draws.density_gcc),
        ] {
            if let Some(v) = v {
                cols.push((format!("{l}.{name}"), v.clone()));
            }
        }
    }
    (!cols.is_empty()).then_some(cols)
}

/// Chain bookkeeping and physical parameters of the posterior draws.
fn chain_columns(a: &Analysis, post: &crate::sample::Posterior) -> Vec<(String, Vec<f64>)> {
    let c = &post.chains;
    let mut cols = vec![
        (
            "ensemble".to_string(),
            c.ensemble.iter().map(|&x| f64::from(x)).collect(),
        ),
        (
            "walker".to_string(),
            c.walker.iter().map(|&x| f64::from(x)).collect(),
        ),
        (
            "step".to_string(),
            c.step.iter().map(|&x| f64::from(x)).collect(),
        ),
        ("ln_posterior".to_string(), c.ln_p.clone()),
    ];
    cols.extend(post.columns(&a.set.instruments));
    cols
}

/// Writes `draws.parquet` (and `draws.csv` when `csv`) of [`draw_columns`] into `dir`;
/// nothing when there are no draws.
///
/// # Errors
/// I/O and encoding errors.
pub fn write_draws(a: &Analysis, dir: &Path, csv: bool) -> io::Result<()> {
    let Some(cols) = draw_columns(a) else {
        return Ok(());
    };
    let columns: Vec<Column> = cols
        .iter()
        .map(|(name, v)| {
            if matches!(name.as_str(), "ensemble" | "walker" | "step") {
                let ints: Vec<u32> = v.iter().map(|&x| x as u32).collect();
                Column::new(name.as_str().into(), ints)
            } else {
                Column::new(name.as_str().into(), v.as_slice())
            }
        })
        .collect();
    let mut df = DataFrame::new_infer_height(columns).map_err(io::Error::other)?;
    let mut bytes = Vec::new();
    ParquetWriter::new(&mut bytes)
        .finish(&mut df)
        .map_err(io::Error::other)?;
    write_in(dir, "draws.parquet", &bytes)?;
    if csv {
        let mut bytes = Vec::new();
        CsvWriter::new(&mut bytes)
            .finish(&mut df)
            .map_err(io::Error::other)?;
        write_in(dir, "draws.csv", &bytes)?;
    }
    Ok(())
}
