//! `heft periodogram`: GLS power on a grid, peaks with their false-alarm probabilities
//! (Baluev and bootstrap) and aliases, the spectral window's peaks; optional table and
//! SVG figure.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use heft::data::RvSet;
use heft::periodogram::{self, Grid, Method, OverviewSettings};
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
/// Aliases printed per peak in the text output (all are in the JSON).
const TEXT_ALIASES: usize = 3;

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
    /// Fast method: non-uniform FFTs, O(N + M log M), power within ~1e-11 of the exact
    /// sums at the default accuracy.
    #[arg(long)]
    fast: bool,
    /// Relative accuracy of the fast method's sums (1e-14 to 0.1).
    #[arg(long, value_name = "EPS", requires = "fast", default_value_t = periodogram::DEFAULT_TOLERANCE)]
    accuracy: f64,
    /// Bootstrap replicates for the bootstrap FAP (0: none).
    #[arg(long, value_name = "N", default_value_t = 200)]
    bootstrap: usize,
    /// Seed of the bootstrap.
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Stellar rotation period, days: peaks near it and its first two harmonics are
    /// flagged (`near_rotation`; so are peaks near a significant indicator peak).
    #[arg(long)]
    rotation_d: Option<f64>,
    /// Write the table `frequency,period,power` here.
    #[arg(long, value_name = "OUT.csv")]
    table: Option<PathBuf>,
    /// Write the figure (periodogram, FAP levels, peaks and aliases, window) here.
    #[arg(long, value_name = "OUT.svg")]
    plot: Option<PathBuf>,
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

/// Writes `text` to `path` atomically; a failure is the user's (bad path).
fn write_file(path: &std::path::Path, text: &str) -> Result<(), Failure> {
    write_atomic(path, text.as_bytes())
        .with_context(|| format!("writing {}", path.display()))
        .map_err(Failure::Input)
}

/// Runs the command.
pub fn run(args: &PeriodogramArgs) -> Result<ExitCode, Failure> {
    if let Some(p) = args.rotation_d
        && !(p.is_finite() && p > 0.0)
    {
        return Err(Failure::Input(anyhow::anyhow!(
            "--rotation-d must be positive, got {p}"
        )));
    }
    let set = args.input.load()?;
    let grid = grid(args, &set)?;
    let settings = OverviewSettings {
        method: if args.fast {
            Method::Fast {
                tolerance: args.accuracy,
            }
        } else {
            Method::Exact
        },
        peaks: N_PEAKS,
        bootstrap: args.bootstrap,
        seed: args.seed,
        rotation_d: args.rotation_d,
        ..OverviewSettings::default()
    };
    let ov =
        periodogram::overview(&set, &[], &grid, &settings).map_err(|e| Failure::Input(e.into()))?;
    if let Some(path) = &args.table {
        write_file(
            path,
            &periodogram::table_csv(&grid, &[("power", &ov.periodogram.power)]),
        )?;
    }
    if let Some(path) = &args.plot {
        let names: Vec<String> = set.files.iter().map(|f| f.display().to_string()).collect();
        let title = format!("GLS periodogram of {}", names.join(", "));
        let svg = heft::report::overview_svg(&ov, &title)
            .ok_or_else(|| Failure::Input(anyhow::anyhow!("no periods to plot on this grid")))?;
        write_file(path, &svg)?;
    }
    let text = if args.json {
        let mut doc = json!({
            "schema": "heft-results/1",
            "n_points": set.len(),
            "instruments": set.instruments,
        });
        if let (Some(doc), serde_json::Value::Object(rest)) = (doc.as_object_mut(), ov.to_json()) {
            doc.extend(rest);
        }
        serde_json::to_string_pretty(&doc).map_err(|e| Failure::Internal(e.into()))? + "\n"
    } else {
        text_report(&set, &ov)
    };
    super::emit(&text, args.json)?;
    Ok(ExitCode::SUCCESS)
}

/// The peaks, their aliases and the window peaks as text.
fn text_report(set: &RvSet, ov: &periodogram::Overview) -> String {
    let grid = &ov.periodogram.grid;
    let mut text = format!(
        "GLS periodogram of {} points ({} instruments), {} frequencies from {:.6} to {:.6} 1/d\n\n  {:>14} {:>12} {:>8} {:>10} {:>18}\n",
        set.len(),
        set.n_instruments(),
        grid.n,
        grid.fmin,
        grid.fmax(),
        "period [d]",
        "freq [1/d]",
        "power",
        "FAP",
        "FAP (bootstrap)"
    );
    for c in &ov.candidates {
        let p = &c.peak;
        let boot = match (c.fap_bootstrap, c.fap_bootstrap_err) {
            (Some(f), Some(e)) => format!("{f:.3} ± {e:.3}"),
            _ => "-".into(),
        };
        text.push_str(&format!(
            "  {:>14.6} {:>12.8} {:>8.4} {:>10.3e} {:>18}\n",
            p.period, p.frequency, p.power, p.fap, boot
        ));
        if let Some(r) = &c.near_rotation {
            text.push_str(&format!("      near {r}\n"));
        }
        for a in c.aliases.iter().take(TEXT_ALIASES) {
            text.push_str(&format!(
                "      alias {:>12.6} d  (f {:+} × {:.6} 1/d)  predicted power {:.4}, observed {:.4}\n",
                a.period, a.order, a.window_frequency, a.predicted_power, a.observed_power
            ));
        }
    }
    text.push_str("\nSpectral window peaks:\n");
    for w in &ov.window_peaks {
        text.push_str(&format!(
            "  {:>14.6} d {:>12.8} 1/d  |W|² = {:.4}\n",
            w.period, w.frequency, w.power
        ));
    }
    text
}
