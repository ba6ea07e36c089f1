//! Command-line layer: one file per command; this file dispatches and maps failures to
//! exit codes (0 success, 1 internal failure, 2 bad input or usage, 3 not converged,
//! 4 audit not robust).

use std::process::ExitCode;

use clap::{Parser, Subcommand};

mod batch;
mod changes;
mod fit;
mod input;
mod mass;
mod periodogram;
mod run;

/// heft: weighs exoplanets from the reflex motion of their star.
#[derive(Parser)]
#[command(name = "heft", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Generalised Lomb–Scargle periodogram of RV tables, with peaks and FAPs.
    Periodogram(periodogram::PeriodogramArgs),
    /// Find the signals in RV tables and fit them jointly.
    Fit(fit::FitArgs),
    /// Planet mass (and density, with a radius) from P, K, e and the stellar mass.
    Mass(mass::MassArgs),
    /// Run the whole pipeline for a target file into a new run folder.
    Run(run::RunArgs),
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
    use std::io::IsTerminal;
    let bar = if std::io::stderr().is_terminal() {
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
/// and did not converge (the results are printed all the same).
pub fn print_results(analysis: &heft::pipeline::Analysis, json: bool) -> Result<ExitCode, Failure> {
    let text = if json {
        let doc = heft::report::results_json(analysis);
        let mut s = serde_json::to_string_pretty(&doc).map_err(|e| Failure::Internal(e.into()))?;
        s.push('\n');
        s
    } else {
        heft::report::summary_text(analysis)
    };
    use std::io::Write;
    std::io::stdout()
        .lock()
        .write_all(text.as_bytes())
        .map_err(|e| Failure::Internal(e.into()))?;
    match &analysis.posterior {
        Some(p) if !p.chains.diagnostics.converged => {
            eprintln!("warning: the sampler {}", p.chains.diagnostics.reason);
            Ok(ExitCode::from(3))
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
    let result = match cli.command {
        Command::Periodogram(args) => periodogram::run(&args),
        Command::Fit(args) => fit::run(&args),
        Command::Mass(args) => mass::run(&args),
        Command::Run(args) => run::run(&args),
        Command::Changes(args) => changes::run(&args),
        Command::Batch(args) => batch::run(&args),
    };
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
