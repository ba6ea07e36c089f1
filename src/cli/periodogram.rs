//! `heft periodogram`: GLS power on a grid, peaks with their false-alarm probability.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, anyhow};
use heft::data::RvSet;
use heft::periodogram::{self, Grid};
use heft::report::write_atomic;
use serde_json::json;

use super::Failure;
use super::input::InputArgs;

/// Oversampling of the automatic grid: step = 1/(10 × time span) (common practice: 5–10).
const AUTO_OVERSAMPLE: f64 = 10.0;
/// Highest frequency of the automatic grid, 1/day (periods down to 1 d).
const AUTO_FMAX: f64 = 1.0;
/// Peaks listed.
const N_PEAKS: usize = 5;

/// Arguments of `heft periodogram`.
#[derive(clap::Args, Debug)]
pub struct PeriodogramArgs {
    #[command(flatten)]
    input: InputArgs,
    /// Lowest frequency, 1/day (default: 1/time span).
    #[arg(long)]
    fmin: Option<f64>,
    /// Highest frequency, 1/day (default: 1, i.e. periods down to one day).
    #[arg(long)]
    fmax: Option<f64>,
    /// Number of frequencies, both ends included (default: step 1/(10 × span)).
    #[arg(long)]
    nfreq: Option<usize>,
    /// Write the table `frequency,period,power` here.
    #[arg(long, value_name = "OUT.csv")]
    table: Option<PathBuf>,
    /// Print the peaks as JSON.
    #[arg(long)]
    json: bool,
}

/// The grid the arguments ask for, automatic where left out.
fn grid(args: &PeriodogramArgs, set: &RvSet) -> Result<Grid, Failure> {
    let span = set.baseline_d();
    let fmin = args
        .fmin
        .unwrap_or(if span > 0.0 { 1.0 / span } else { 0.0 });
    let fmax = args.fmax.unwrap_or(AUTO_FMAX.max(2.0 * fmin));
    let result = match args.nfreq {
        Some(n) => Grid::new(fmin, fmax, n),
        None => Grid::with_oversampling(fmin, fmax, span, AUTO_OVERSAMPLE),
    };
    result.map_err(|e| Failure::Input(e.into()))
}

/// Runs the command.
pub fn run(args: &PeriodogramArgs) -> Result<ExitCode, Failure> {
    let set = args.input.load()?;
    let grid = grid(args, &set)?;
    let pg = periodogram::compute(&set, &[], &grid).map_err(|e| Failure::Input(e.into()))?;
    if let Some(path) = &args.table {
        let mut text = String::with_capacity(40 * grid.n + 32);
        text.push_str("frequency,period,power\n");
        for (j, p) in pg.power.iter().enumerate() {
            let f = grid.frequency(j);
            text.push_str(&format!("{f:.12e},{:.12e},{p:.15e}\n", 1.0 / f));
        }
        write_atomic(path, text.as_bytes())
            .with_context(|| format!("writing {}", path.display()))
            .map_err(Failure::Input)?;
    }
    let min_sep = 1.0 / set.baseline_d();
    let peaks = pg.peaks(N_PEAKS, min_sep);
    let mut out = std::io::stdout().lock();
    let written = if args.json {
        let doc = json!({
            "schema": "heft-results/1",
            "n_points": set.len(),
            "instruments": set.instruments,
            "grid": {"fmin": grid.fmin, "fmax": grid.fmax(), "n": grid.n, "df": grid.df},
            "fap_method": "Baluev 2008, for the grid's fmax",
            "peaks": peaks,
        });
        writeln!(
            out,
            "{}",
            serde_json::to_string_pretty(&doc).map_err(|e| Failure::Internal(e.into()))?
        )
    } else {
        let mut text = format!(
            "GLS periodogram of {} points ({} instruments), {} frequencies from {:.6} to {:.6} 1/d\n\n  {:>14} {:>12} {:>8} {:>10}\n",
            set.len(),
            set.n_instruments(),
            grid.n,
            grid.fmin,
            grid.fmax(),
            "period [d]",
            "freq [1/d]",
            "power",
            "FAP"
        );
        for p in &peaks {
            text.push_str(&format!(
                "  {:>14.6} {:>12.8} {:>8.4} {:>10.3e}\n",
                p.period, p.frequency, p.power, p.fap
            ));
        }
        write!(out, "{text}")
    };
    written.map_err(|e| Failure::Internal(anyhow!(e)))?;
    Ok(ExitCode::SUCCESS)
}
