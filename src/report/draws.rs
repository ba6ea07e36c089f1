//! The posterior draws of a run as a table (Parquet through polars, CSV on request), and
//! a corner-style SVG of the main parameters.

use std::io;
use std::path::Path;

use polars::prelude::*;

use super::files::write_atomic;
use crate::pipeline::Analysis;

/// Columns of the draws table: `ensemble`, `walker`, `step`, `ln_posterior`, the physical
/// parameters (see [`crate::sample::Posterior::columns`]) and, with a star, each planet's
/// `msini_mearth` (and `mass_mearth`, `density_gcc` where known), draw by draw. `None`
/// without posterior draws.
pub fn draw_columns(a: &Analysis) -> Option<Vec<(String, Vec<f64>)>> {
    let post = a.posterior.as_ref()?;
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
    for (spec, d) in post.layout.planets.iter().zip(&a.derived) {
        let Some(d) = d else { continue };
        let l = &spec.label;
        cols.push((format!("{l}.msini_mearth"), d.draws.msini_mearth.clone()));
        if let Some(m) = &d.draws.mass_mearth {
            cols.push((format!("{l}.mass_mearth"), m.clone()));
        }
        if let Some(rho) = &d.draws.density_gcc {
            cols.push((format!("{l}.density_gcc"), rho.clone()));
        }
    }
    Some(cols)
}

/// Writes `draws.parquet` (and `draws.csv` when `csv`) into `dir`; nothing without
/// posterior draws.
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
    write_atomic(&dir.join("draws.parquet"), &bytes)?;
    if csv {
        let mut bytes = Vec::new();
        CsvWriter::new(&mut bytes)
            .finish(&mut df)
            .map_err(io::Error::other)?;
        write_atomic(&dir.join("draws.csv"), &bytes)?;
    }
    Ok(())
}

/// Side of one panel of the corner plot, SVG pixels.
const CELL: f64 = 110.0;
/// Room for labels left of and below the panels.
const MARGIN: f64 = 60.0;
/// Most points drawn in a scatter panel.
const MAX_POINTS: usize = 1500;

/// Corner-style SVG of each planet's period, K, e (and m sin i with a star): histograms
/// on the diagonal, draws scattered below it. Hand-written SVG keeps the dependency list
/// short; axes span the 0.5–99.5 percentiles. `None` without posterior draws.
pub fn corner_svg(a: &Analysis) -> Option<String> {
    let cols = draw_columns(a)?;
    let wanted = |n: &str| {
        n.ends_with(".period_d")
            || n.ends_with(".k_mps")
            || n.ends_with(".ecc")
            || n.ends_with(".msini_mearth")
    };
    let fixed = |v: &[f64]| v.iter().all(|&x| x == v[0]);
    let chosen: Vec<&(String, Vec<f64>)> = cols
        .iter()
        .filter(|(n, v)| wanted(n) && !v.is_empty() && !fixed(v))
        .collect();
    let n = chosen.len();
    let size = MARGIN + CELL * n as f64 + 10.0;
    let ranges: Vec<(f64, f64)> = chosen
        .iter()
        .map(|(_, v)| {
            let mut s = v.clone();
            s.sort_by(f64::total_cmp);
            let lo = crate::summary::percentile_sorted(&s, 0.5);
            let hi = crate::summary::percentile_sorted(&s, 99.5);
            if hi > lo {
                (lo, hi)
            } else {
                (lo - 0.5, hi + 0.5)
            }
        })
        .collect();
    let stride = chosen[0].1.len().div_ceil(MAX_POINTS).max(1);
    let mut svg = format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{size:.0}\" height=\"{size:.0}\" font-family=\"sans-serif\" font-size=\"9\">\n<rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n"
    );
    for (i, (name_i, vi)) in chosen.iter().enumerate() {
        let y0 = 5.0 + CELL * i as f64;
        let x0 = MARGIN + CELL * i as f64;
        let frac = |v: f64, (lo, hi): (f64, f64)| ((v - lo) / (hi - lo)).clamp(0.0, 1.0);
        // Histogram on the diagonal.
        let bins = 30;
        let mut counts = vec![0usize; bins];
        for &v in vi.iter() {
            let b = (frac(v, ranges[i]) * bins as f64).min(bins as f64 - 1.0) as usize;
            counts[b] += 1;
        }
        let top = counts.iter().copied().max().unwrap_or(1).max(1) as f64;
        let w = (CELL - 10.0) / bins as f64;
        for (b, &c) in counts.iter().enumerate() {
            let h = (CELL - 10.0) * c as f64 / top;
            svg.push_str(&format!(
                "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"{w:.2}\" height=\"{h:.1}\" fill=\"#4a6fa5\"/>\n",
                x0 + b as f64 * w,
                y0 + CELL - 10.0 - h
            ));
        }
        for (j, (_, vj)) in chosen.iter().enumerate().take(i) {
            let xj = MARGIN + CELL * j as f64;
            svg.push_str(&format!(
                "<rect x=\"{xj:.1}\" y=\"{y0:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"none\" stroke=\"#999\"/>\n",
                CELL - 10.0,
                CELL - 10.0
            ));
            for k in (0..vi.len()).step_by(stride) {
                svg.push_str(&format!(
                    "<circle cx=\"{:.1}\" cy=\"{:.1}\" r=\"0.8\" fill=\"#23395d\" fill-opacity=\"0.25\"/>\n",
                    xj + frac(vj[k], ranges[j]) * (CELL - 10.0),
                    y0 + (1.0 - frac(vi[k], ranges[i])) * (CELL - 10.0)
                ));
            }
        }
        // Labels: the name under the bottom row and left of each row, with the range.
        let (lo, hi) = ranges[i];
        svg.push_str(&format!(
            "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">{name_i}</text>\n<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">{:.4} … {:.4}</text>\n",
            x0 + 0.5 * (CELL - 10.0),
            size - 28.0,
            x0 + 0.5 * (CELL - 10.0),
            size - 16.0,
            lo,
            hi
        ));
        if i > 0 {
            svg.push_str(&format!(
                "<text x=\"4\" y=\"{:.1}\">{name_i}</text>\n",
                y0 + 0.5 * CELL
            ));
        }
    }
    svg.push_str("</svg>\n");
    Some(svg)
}
