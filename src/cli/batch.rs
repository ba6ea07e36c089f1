//! `heft batch`: every target under a folder, sharded for job arrays; `--gather` merges
//! the shards' summary tables.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, anyhow};
use heft::report::write_atomic;
use heft::runs::{self, Shard};
use serde_json::json;

use super::Failure;

/// Arguments of `heft batch`.
#[derive(clap::Args, Debug)]
pub struct BatchArgs {
    /// Folder searched (recursively) for target files.
    #[arg(value_name = "FOLDER")]
    folder: PathBuf,
    /// Run only shard K of N (targets i with i mod N = K − 1, in path order). Without it,
    /// a Slurm or Grid Engine array task's variables choose the shard when present.
    #[arg(long, value_name = "K/N")]
    shard: Option<Shard>,
    /// Most targets run at once (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// Run fewer targets at once so that their estimated peak memory stays under this
    /// many MB (see docs/batch.md for the estimate).
    #[arg(long, value_name = "MB")]
    max_memory_mb: Option<f64>,
    /// Merge the shards' summary tables in FOLDER into batch-summary.csv instead of running.
    #[arg(long, conflicts_with = "shard")]
    gather: bool,
    /// Print the outcome as JSON.
    #[arg(long)]
    json: bool,
}

fn input(e: anyhow::Error) -> Failure {
    Failure::Input(e)
}

/// Runs the command. Exit 2 when any target failed (the others still ran).
pub fn run(args: &BatchArgs) -> Result<ExitCode, Failure> {
    if args.gather {
        return gather(args);
    }
    let shard = match args.shard {
        Some(s) => Some(s),
        None => runs::shard_from_env(|k| std::env::var(k).ok()).map_err(|e| input(e.into()))?,
    };
    let runs::Discovery { targets, skipped } = runs::discover(&args.folder)
        .with_context(|| format!("searching {}", args.folder.display()))
        .map_err(input)?;
    let mine: Vec<PathBuf> = targets
        .iter()
        .enumerate()
        .filter(|(i, _)| shard.is_none_or(|s| s.contains(*i)))
        .map(|(_, t)| t.clone())
        .collect();
    let mut threads = args
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    if let Some(budget) = args.max_memory_mb {
        if !(budget.is_finite() && budget > 0.0) {
            return Err(input(anyhow!(
                "--max-memory-mb must be positive, got {budget}"
            )));
        }
        // Targets that do not load fail later with their own message; they count as small.
        let largest = mine
            .iter()
            .filter_map(|t| heft::target::load(t).ok())
            .map(|t| runs::memory_estimate_mb(&t))
            .fold(0.0_f64, f64::max);
        let fit = ((budget / largest.max(1.0)).floor() as usize).max(1);
        if fit < threads {
            super::note(&format!(
                "running {fit} target(s) at once: each may need about {largest:.0} MB of the {budget:.0} MB allowed"
            ));
            threads = fit;
        }
    }
    let busy = super::spinner(&format!("running {} target(s)", mine.len()));
    let outcomes = runs::run_batch(&mine, threads);
    busy.finish_and_clear();
    let name = match shard {
        Some(s) => format!("batch-summary-{}-of-{}.csv", s.index, s.count),
        None => "batch-summary.csv".to_string(),
    };
    let summary = args.folder.join(name);
    write_tables(&summary, &runs::summary_csv(&outcomes))?;
    let failed: Vec<_> = outcomes.iter().filter(|o| o.error.is_some()).collect();
    if args.json {
        let doc = json!({
            "shard": shard,
            "targets": outcomes.iter().map(|o| json!({"target": o.target, "error": o.error})).collect::<Vec<_>>(),
            "skipped": skipped.iter().map(|(p, why)| json!({"file": p, "reason": why})).collect::<Vec<_>>(),
            "summary": summary,
        });
        let text =
            serde_json::to_string_pretty(&doc).map_err(|e| Failure::Internal(e.into()))? + "\n";
        super::emit(&text, true)?;
    } else {
        super::emit(
            &format!(
                "{} target(s) run, {} failed; summary in {}\n",
                outcomes.len(),
                failed.len(),
                summary.display()
            ),
            false,
        )?;
        for o in &failed {
            eprintln!(
                "failed: {}: {}",
                o.target.display(),
                o.error.as_deref().unwrap_or_default()
            );
        }
        for (p, why) in &skipped {
            super::note(&format!(
                "skipped (not a target file): {}: {why}",
                p.display()
            ));
        }
    }
    Ok(if failed.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(2)
    })
}

/// Writes a summary table as CSV at `csv_path` and as Parquet beside it (same name,
/// `.parquet`).
fn write_tables(csv_path: &std::path::Path, csv: &str) -> Result<(), Failure> {
    write_atomic(csv_path, csv.as_bytes())
        .with_context(|| format!("writing {}", csv_path.display()))
        .map_err(Failure::Internal)?;
    let parquet_path = csv_path.with_extension("parquet");
    let bytes = runs::summary_parquet(csv)
        .map_err(|e| Failure::Internal(anyhow!("{}: {e}", parquet_path.display())))?;
    write_atomic(&parquet_path, &bytes)
        .with_context(|| format!("writing {}", parquet_path.display()))
        .map_err(Failure::Internal)
}

fn gather(args: &BatchArgs) -> Result<ExitCode, Failure> {
    let mut tables = Vec::new();
    for entry in std::fs::read_dir(&args.folder)
        .with_context(|| format!("reading {}", args.folder.display()))
        .map_err(input)?
    {
        let path = entry.map_err(|e| input(e.into()))?.path();
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        if name.starts_with("batch-summary-") && name.ends_with(".csv") {
            let text = std::fs::read_to_string(&path)
                .with_context(|| format!("reading {}", path.display()))
                .map_err(input)?;
            tables.push((path, text));
        }
    }
    if tables.is_empty() {
        return Err(input(anyhow!(
            "{}: no shard tables batch-summary-K-of-N.csv",
            args.folder.display()
        )));
    }
    tables.sort();
    let merged = runs::gather(&tables).map_err(|e| input(anyhow!(e)))?;
    let out = args.folder.join("batch-summary.csv");
    write_tables(&out, &merged)?;
    let text = if args.json {
        format!("{}\n", json!({"merged": tables.len(), "summary": out}))
    } else {
        format!(
            "merged {} shard table(s) into {}\n",
            tables.len(),
            out.display()
        )
    };
    super::emit(&text, args.json)?;
    Ok(ExitCode::SUCCESS)
}
