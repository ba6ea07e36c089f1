//! `heft plan`: forecast the K and mass errors after more epochs, and the dates where one
//! more epoch helps most.

use std::fmt::Write as _;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::anyhow;
use heft::runs::{self, PlanRequest};

use super::Failure;

/// Arguments of `heft plan`.
#[derive(clap::Args, Debug)]
pub struct PlanArgs {
    /// The target file (TOML).
    #[arg(value_name = "TARGET.toml")]
    target: PathBuf,
    /// Instrument of the new epochs.
    #[arg(long)]
    instrument: String,
    /// Number of new epochs (spread evenly over the window at the instrument's usual hour).
    #[arg(long, default_value_t = 20)]
    epochs: usize,
    /// Start of the window, full BJD_TDB.
    #[arg(long, value_name = "BJD")]
    from: f64,
    /// End of the window, full BJD_TDB.
    #[arg(long, value_name = "BJD")]
    to: f64,
    /// Write the figure (value of one epoch per date) to this SVG file.
    #[arg(long, value_name = "OUT.svg")]
    plot: Option<PathBuf>,
    /// Print the plan as JSON.
    #[arg(long)]
    json: bool,
}

/// Dates listed in the text output.
const BEST_DATES: usize = 10;

/// Runs the command: fits the target (maximum likelihood, no audit) and forecasts.
pub fn run(args: &PlanArgs) -> Result<ExitCode, Failure> {
    let mut target = heft::target::load(&args.target).map_err(|e| Failure::Input(e.into()))?;
    target.settings.sample = false;
    target.settings.audit = false;
    let busy = super::spinner("fitting the target");
    let analysis = heft::pipeline::run_target(&target, &mut |_| {});
    busy.finish_and_clear();
    let analysis = analysis.map_err(|e| Failure::Input(e.into()))?;
    let set = &analysis.set;
    let instrument = set
        .instruments
        .iter()
        .position(|n| *n == args.instrument)
        .ok_or_else(|| {
            Failure::Input(anyhow!(
                "--instrument {}: not in the data ({})",
                args.instrument,
                set.instruments.join(", ")
            ))
        })?;
    let request = PlanRequest {
        instrument,
        epochs: args.epochs,
        window_d: (args.from - set.epoch_bjd, args.to - set.epoch_bjd),
        mstar_rel_err: target.star.mass_err_msun / target.star.mass_msun,
    };
    let plan =
        runs::plan(&analysis.search.fit, set, &request).map_err(|e| Failure::Input(e.into()))?;
    if let Some(path) = &args.plot {
        heft::report::write_atomic(path, runs::plan_svg(&plan).as_bytes())
            .map_err(|e| Failure::Internal(e.into()))?;
    }
    let text = if args.json {
        let mut s = serde_json::to_string_pretty(&plan).map_err(|e| Failure::Internal(e.into()))?;
        s.push('\n');
        s
    } else {
        let mut s = format!(
            "{} new epochs of {} (σ = {:.2} m/s) between BJD_TDB {} and {}:\n",
            args.epochs, args.instrument, plan.new_error_mps, args.from, args.to
        );
        for p in &plan.planets {
            let _ = writeln!(
                s,
                "  {}: σ_K {:.2} → {:.2} m/s (K/σ_K {:.1}), mass error {:.1} % → {:.1} %",
                p.label,
                p.k_err_now_mps,
                p.k_err_after_mps,
                p.k_over_sigma_after,
                100.0 * p.mass_rel_err_now,
                100.0 * p.mass_rel_err_after
            );
        }
        let mut best: Vec<&runs::DateValue> = plan.dates.iter().collect();
        let value = |d: &runs::DateValue| d.var_k_reduction.iter().sum::<f64>();
        best.sort_by(|a, b| value(b).total_cmp(&value(a)));
        let _ = writeln!(s, "best single dates (Var K reduction per planet; phases):");
        for d in best.iter().take(BEST_DATES) {
            let red: Vec<String> = d
                .var_k_reduction
                .iter()
                .map(|r| format!("{:.1} %", 100.0 * r))
                .collect();
            let ph: Vec<String> = d.phase.iter().map(|p| format!("{p:.2}")).collect();
            let _ = writeln!(
                s,
                "  BJD_TDB {:.3}: {}; {}",
                d.bjd,
                red.join(", "),
                ph.join(", ")
            );
        }
        s
    };
    super::emit(&text, args.json)?;
    Ok(ExitCode::SUCCESS)
}
