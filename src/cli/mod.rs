//! Command-line layer: one file per command; this file dispatches and maps failures to
//! exit codes (0 success, 1 internal failure, 2 bad input or usage, 3 not converged,
//! 4 audit not robust; 3 also when a time budget cut the run short).

use std::process::ExitCode;

use clap::{Parser, Subcommand};

mod add_epochs;
mod audit;
mod batch;
mod changes;
mod fit;
mod input;
mod mass;
mod periodogram;
mod plan;
mod render;
mod run;

/// heft: weighs exoplanets from the reflex motion of their star.
#[derive(Parser)]
#[command(name = "heft", version, about)]
struct Cli {
    /// Print nothing but JSON (when asked for) and errors; no progress display.
    #[arg(short, long, global = true)]
    quiet: bool,
    /// Also report on stderr what was read and how long each command took.
    #[arg(short, long, global = true, conflicts_with = "quiet")]
    verbose: bool,
    #[command(subcommand)]
    command: Command,
}

/// How much a command says: 0 quiet, 1 normal, 2 verbose.
static VERBOSITY: std::sync::atomic::AtomicU8 = std::sync::atomic::AtomicU8::new(1);

fn verbosity() -> u8 {
    VERBOSITY.load(std::sync::atomic::Ordering::Relaxed)
}

/// Writes a command's result to stdout: JSON always, text unless quiet.
pub fn emit(text: &str, json: bool) -> Result<(), Failure> {
    if !json && verbosity() == 0 {
        return Ok(());
    }
    use std::io::Write;
    std::io::stdout()
        .lock()
        .write_all(text.as_bytes())
        .map_err(|e| Failure::Internal(e.into()))
}

/// A note for the user on stderr (not when quiet).
pub fn note(text: &str) {
    if verbosity() > 0 {
        eprintln!("{text}");
    }
}

/// A detail on stderr, only when verbose.
pub fn detail(text: &str) {
    if verbosity() > 1 {
        eprintln!("{text}");
    }
}

/// Whether progress displays may be drawn: stderr is a terminal and not quiet.
fn show_progress() -> bool {
    use std::io::IsTerminal;
    verbosity() > 0 && std::io::stderr().is_terminal()
}

/// A spinner with a message on stderr for a long step (hidden when progress is not shown);
/// finish it with `finish_and_clear`.
pub fn spinner(message: &str) -> indicatif::ProgressBar {
    if !show_progress() {
        return indicatif::ProgressBar::hidden();
    }
    let bar = indicatif::ProgressBar::new_spinner();
    bar.set_message(message.to_string());
    bar.enable_steady_tick(std::time::Duration::from_millis(120));
    bar
}

#[derive(Subcommand)]
enum Command {
    /// Generalised Lomb–Scargle periodogram of RV tables, with peaks and FAPs.
    Periodogram(periodogram::PeriodogramArgs),
    /// Find the signals in RV tables and fit them jointly.
    Fit(fit::FitArgs),
    /// Planet mass (and density, with a radius) from P, K, e and the stellar mass.
    Mass(mass::MassArgs),
    /// Is a claimed signal, and its mass, robust to aliases, the model, the data subset
    /// and stellar activity?
    Audit(audit::AuditArgs),
    /// Run the whole pipeline for a target file into a new run folder.
    Run(run::RunArgs),
    /// Add a new RV file to a target, checked against the epochs it already has.
    AddEpochs(add_epochs::AddEpochsArgs),
    /// Forecast the K and mass errors after more epochs; the best dates for one more.
    Plan(plan::PlanArgs),
    /// Rebuild a run folder's report (figures, tables, report.html) from its saved results.
    Render(render::RenderArgs),
    /// What changed between the latest two runs of a target.
    Changes(changes::ChangesArgs),
    /// Run every target file under a folder (sharded for job arrays), or gather shards.
    Batch(batch::BatchArgs),
}

/// A command's failure, sorted by who is at fault.
pub enum Failure {
    /// Bad input or usage (exit 2).
    Input(anyhow::Error),
    /// Something went wrong inside heft (exit 1).
    Internal(anyhow::Error),
}

/// A progress display for the sampler: a bar on stderr when stderr is a terminal,
/// nothing otherwise. The returned closure is handed to the pipeline.
pub fn sampler_progress() -> (indicatif::ProgressBar, impl FnMut(&heft::sample::Progress)) {
    let bar = if show_progress() {
        let bar = indicatif::ProgressBar::new(0);
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "sampling {bar:30} {pos}/{len} steps {msg} [{elapsed}]",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        bar
    } else {
        indicatif::ProgressBar::hidden()
    };
    let handle = bar.clone();
    let update = move |p: &heft::sample::Progress| {
        handle.set_length(p.max_steps as u64);
        handle.set_position(p.step as u64);
        match (p.tau_multiple, p.max_rhat) {
            (Some(t), Some(r)) => handle.set_message(format!("chain {t:.0} τ, max R̂ {r:.3}")),
            (Some(t), None) => handle.set_message(format!("chain {t:.0} τ")),
            _ => {}
        }
    };
    (bar, update)
}

/// Prints an analysis as JSON or as the text summary. Exit status 3 when the sampler ran
/// and did not converge, else 4 when an audit ran and its verdict is not `robust` (the
/// results are printed all the same).
pub fn print_results(analysis: &heft::pipeline::Analysis, json: bool) -> Result<ExitCode, Failure> {
    let text = if json {
        let doc = heft::report::results_json(analysis);
        let mut s = serde_json::to_string_pretty(&doc).map_err(|e| Failure::Internal(e.into()))?;
        s.push('\n');
        s
    } else {
        heft::report::summary_text(analysis)
    };
    emit(&text, json)?;
    if let Some(b) = analysis.budget.as_ref().filter(|b| b.cut_short()) {
        let mut parts = Vec::new();
        if b.sampler_stopped_early {
            parts.push("the sampler was stopped early".to_string());
        }
        if !b.skipped.is_empty() {
            parts.push(format!("skipped: {}", b.skipped.join(", ")));
        }
        note(&format!(
            "warning: the time budget of {} s ran out; {}",
            b.time_budget_s,
            parts.join("; ")
        ));
        return Ok(ExitCode::from(3));
    }
    if let Some(p) = &analysis.posterior
        && !p.chains.diagnostics.converged
    {
        note(&format!(
            "warning: the sampler {}",
            p.chains.diagnostics.reason
        ));
        return Ok(ExitCode::from(3));
    }
    match &analysis.audit {
        Some(a) if !a.is_robust() => {
            note(&format!("audit verdict: {}", a.verdict));
            Ok(ExitCode::from(4))
        }
        _ => Ok(ExitCode::SUCCESS),
    }
}

/// Entry point of the binary.
pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let level = if cli.quiet {
        0
    } else if cli.verbose {
        2
    } else {
        1
    };
    VERBOSITY.store(level, std::sync::atomic::Ordering::Relaxed);
    let start = std::time::Instant::now();
    let result = match cli.command {
        Command::Periodogram(args) => periodogram::run(&args),
        Command::Fit(args) => fit::run(&args),
        Command::Mass(args) => mass::run(&args),
        Command::Audit(args) => audit::run(&args),
        Command::Run(args) => run::run(&args),
        Command::AddEpochs(args) => add_epochs::run(&args),
        Command::Plan(args) => plan::run(&args),
        Command::Render(args) => render::run(&args),
        Command::Changes(args) => changes::run(&args),
        Command::Batch(args) => batch::run(&args),
    };
    detail(&format!("done in {:.1} s", start.elapsed().as_secs_f64()));
    match result {
        Ok(code) => code,
        Err(Failure::Input(e)) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
        Err(Failure::Internal(e)) => {
            eprintln!("internal error: {e:#}");
            ExitCode::from(1)
        }
    }
}
