//! Many targets: discovery under a folder, sharding for job arrays, parallel runs with a
//! bound on threads, one summary table, and the gather step that merges shards' tables.

use std::fmt::Write;
use std::path::{Path, PathBuf};
use std::str::FromStr;

use rayon::prelude::*;
use serde::Serialize;

use super::execute::execute;

/// Header of the summary table: one row per planet (or one row per target without
/// planets or with an error).
pub const SUMMARY_HEADER: &str = "target,name,status,n_points,planet,period_d,k_mps,k_err_mps,msini_mearth,mass_mearth,radius_rearth,density_gcc,class,verdict,run_dir,error";

/// One shard of a job array: targets `i` with `i mod count == index − 1`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub struct Shard {
    /// 1-based shard number.
    pub index: usize,
    /// Number of shards.
    pub count: usize,
}

/// A shard specification that does not parse.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("shard '{0}': expected K/N with 1 <= K <= N, e.g. 2/8")]
pub struct ShardError(pub String);

impl FromStr for Shard {
    type Err = ShardError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let err = || ShardError(s.to_string());
        let (k, n) = s.split_once('/').ok_or_else(err)?;
        let (index, count): (usize, usize) = (
            k.trim().parse().map_err(|_| err())?,
            n.trim().parse().map_err(|_| err())?,
        );
        if index == 0 || index > count {
            return Err(err());
        }
        Ok(Shard { index, count })
    }
}

impl Shard {
    /// Whether target number `i` (0-based, in sorted order) belongs to this shard.
    pub fn contains(&self, i: usize) -> bool {
        i % self.count == self.index - 1
    }
}

/// The shard chosen by a batch scheduler's array variables, when present: Slurm
/// (`SLURM_ARRAY_TASK_ID`, `SLURM_ARRAY_TASK_MIN`, `SLURM_ARRAY_TASK_COUNT`) or Grid
/// Engine (`SGE_TASK_ID`, `SGE_TASK_FIRST`, `SGE_TASK_LAST`, step 1). `lookup` reads a
/// variable (e.g. `|k| std::env::var(k).ok()`).
///
/// # Errors
/// [`ShardError`] when the variables are present but inconsistent.
pub fn shard_from_env(
    lookup: impl Fn(&str) -> Option<String>,
) -> Result<Option<Shard>, ShardError> {
    let num = |k: &str| lookup(k).and_then(|v| v.trim().parse::<i64>().ok());
    let (id, first, count) = if let Some(id) = num("SLURM_ARRAY_TASK_ID") {
        (
            id,
            num("SLURM_ARRAY_TASK_MIN").unwrap_or(0),
            num("SLURM_ARRAY_TASK_COUNT"),
        )
    } else if let Some(id) = num("SGE_TASK_ID") {
        let first = num("SGE_TASK_FIRST").unwrap_or(1);
        (id, first, num("SGE_TASK_LAST").map(|last| last - first + 1))
    } else {
        return Ok(None);
    };
    let bad = || ShardError(format!("array task {id} (first {first}, count {count:?})"));
    let count = count.ok_or_else(bad)?;
    let index = id - first + 1;
    if count < 1 || index < 1 || index > count {
        return Err(bad());
    }
    Ok(Some(Shard {
        index: index as usize,
        count: count as usize,
    }))
}

/// What [`discover`] found.
#[derive(Debug, Default)]
pub struct Discovery {
    /// Target files, sorted by path.
    pub targets: Vec<PathBuf>,
    /// `.toml` files that are not targets, with the reason.
    pub skipped: Vec<(PathBuf, String)>,
}

/// Every `*.toml` under `folder` (recursively, `runs/` folders skipped) that parses as a
/// target, sorted by path; and the `.toml` files that do not, with the reason.
///
/// # Errors
/// I/O errors listing the folders.
pub fn discover(folder: &Path) -> std::io::Result<Discovery> {
    let mut files = Vec::new();
    let mut stack = vec![folder.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir)? {
            let path = entry?.path();
            if path.is_dir() {
                if path.file_name().is_some_and(|n| n != "runs") {
                    stack.push(path);
                }
            } else if path.extension().is_some_and(|e| e == "toml") {
                files.push(path);
            }
        }
    }
    files.sort();
    let mut found = Discovery::default();
    for f in files {
        match crate::target::load(&f) {
            Ok(_) => found.targets.push(f),
            Err(e) => found.skipped.push((f, e.to_string())),
        }
    }
    Ok(found)
}

/// Outcome of one target in a batch.
#[derive(Debug, Serialize)]
pub struct BatchOutcome {
    /// Target file.
    pub target: PathBuf,
    /// Summary rows (CSV lines without the header).
    pub rows: Vec<String>,
    /// The error, if the run failed.
    pub error: Option<String>,
}

/// Quotes a CSV field when needed.
fn field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn rows_of(target: &Path, done: &super::Completed) -> Vec<String> {
    let a = &done.analysis;
    let fit = &a.search.fit;
    let base = |status: &str| {
        format!(
            "{},{},{status},{}",
            field(&target.display().to_string()),
            field(&a.name),
            a.set.len()
        )
    };
    let dir = field(&done.dir.display().to_string());
    if fit.planets.is_empty() {
        return vec![format!("{},,,,,,,,,,,{dir},", base("ok"))];
    }
    fit.planets
        .iter()
        .zip(&a.derived)
        .map(|(p, d)| {
            let opt = |v: Option<f64>| v.map_or(String::new(), |x| format!("{x}"));
            let (msini, mass, radius, rho, class) = match d {
                Some(d) => (
                    Some(d.msini_mearth.value),
                    d.mass_mearth.map(|s| s.value),
                    d.radius_rearth.map(|s| s.value),
                    d.density_gcc.map(|s| s.value),
                    d.class.map_or(String::new(), |c| c.name().to_string()),
                ),
                None => (None, None, None, None, String::new()),
            };
            let verdict = a
                .audit
                .as_ref()
                .and_then(|au| au.planets.iter().find(|pa| pa.label == p.label))
                .map_or("", |pa| pa.verdict.as_str());
            format!(
                "{},{},{},{},{},{},{},{},{},{},{verdict},{dir},",
                base("ok"),
                field(&p.label),
                p.period_d.value,
                p.k_mps.value,
                0.5 * (p.k_mps.minus + p.k_mps.plus),
                opt(msini),
                opt(mass),
                opt(radius),
                opt(rho),
                class
            )
        })
        .collect()
}

/// Chain steps assumed for a sampled target in [`memory_estimate_mb`] (a converged
/// multi-planet posterior takes about 20 000, bounded by `max_steps`).
const TYPICAL_STEPS: usize = 30_000;

/// Rough peak memory of one run of `target`, MB: 64 MB for the process's share, tables
/// and periodograms; the derived-quantity draws (about 40 columns); with sampling, the
/// chains (steps × walkers × ensembles × parameters, 8 bytes each) for
/// `min(max_steps, 30 000)` steps and up to `max_signals` planets.
pub fn memory_estimate_mb(target: &crate::target::Target) -> f64 {
    let s = &target.settings;
    let draws = s.draws as f64 * 40.0 * 8.0;
    let chains = if s.sample {
        let dim = 5 * s.max_signals.max(target.transits.len()) + 2 * target.data.len() + s.trend;
        let walkers = if s.walkers > 0 {
            s.walkers
        } else {
            (2 * dim + 2).max(16)
        };
        (s.max_steps.min(TYPICAL_STEPS) * walkers * s.ensembles.max(2) * dim) as f64 * 8.0
    } else {
        0.0
    };
    64.0 + (draws + chains) / 1e6
}

/// Runs every target (each into a new folder under its own `runs/`) on a pool of at most
/// `threads` threads; a failed target is reported in its outcome and the others go on.
/// Outcomes are in the order of `targets`.
pub fn run_batch(targets: &[PathBuf], threads: usize) -> Vec<BatchOutcome> {
    let work = || {
        targets
            .par_iter()
            .map(|t| match execute(t, None, &mut |_| {}) {
                Ok(done) => BatchOutcome {
                    target: t.clone(),
                    rows: rows_of(t, &done),
                    error: None,
                },
                Err(e) => {
                    let msg = e.to_string();
                    BatchOutcome {
                        target: t.clone(),
                        rows: vec![format!(
                            "{},,failed,,,,,,,,,,,,,{}",
                            field(&t.display().to_string()),
                            field(&msg)
                        )],
                        error: Some(msg),
                    }
                }
            })
            .collect()
    };
    match rayon::ThreadPoolBuilder::new()
        .num_threads(threads.max(1))
        .build()
    {
        Ok(pool) => pool.install(work),
        Err(_) => work(),
    }
}

/// The summary table as Parquet (columns typed by polars' inference over all rows; empty
/// fields are nulls), from its CSV text.
///
/// # Errors
/// The CSV cannot be parsed or the Parquet not encoded (message from polars).
pub fn summary_parquet(csv: &str) -> Result<Vec<u8>, String> {
    use polars::prelude::*;
    let mut df = CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(None)
        .into_reader_with_file_handle(std::io::Cursor::new(csv.as_bytes().to_vec()))
        .finish()
        .map_err(|e| e.to_string())?;
    let mut bytes = Vec::new();
    ParquetWriter::new(&mut bytes)
        .finish(&mut df)
        .map_err(|e| e.to_string())?;
    Ok(bytes)
}

/// The summary table (CSV with [`SUMMARY_HEADER`]) of some outcomes, one row per planet.
pub fn summary_csv(outcomes: &[BatchOutcome]) -> String {
    let mut s = String::from(SUMMARY_HEADER);
    s.push('\n');
    for o in outcomes {
        for r in &o.rows {
            let _ = writeln!(s, "{r}");
        }
    }
    s
}

/// Merges shard tables (all with [`SUMMARY_HEADER`]) into one, rows sorted by target
/// (the first field) with each target's rows kept in order.
///
/// # Errors
/// A message naming a table whose header differs.
pub fn gather(tables: &[(PathBuf, String)]) -> Result<String, String> {
    let mut rows: Vec<(String, usize, String)> = Vec::new();
    for (path, text) in tables {
        let mut lines = text.lines();
        if lines.next() != Some(SUMMARY_HEADER) {
            return Err(format!(
                "{}: not a batch summary table (header differs)",
                path.display()
            ));
        }
        for (k, line) in lines.filter(|l| !l.is_empty()).enumerate() {
            let key = line.split(',').next().unwrap_or_default().to_string();
            rows.push((key, k, line.to_string()));
        }
    }
    rows.sort_by(|a, b| a.0.cmp(&b.0).then(a.1.cmp(&b.1)));
    let mut s = String::from(SUMMARY_HEADER);
    s.push('\n');
    for (_, _, line) in rows {
        let _ = writeln!(s, "{line}");
    }
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shard_assignment_is_round_robin() {
        let s: Shard = "2/3".parse().unwrap();
        let mine: Vec<usize> = (0..8).filter(|&i| s.contains(i)).collect();
        assert_eq!(mine, vec![1, 4, 7]);
        assert!(
            "0/3".parse::<Shard>().is_err()
                && "4/3".parse::<Shard>().is_err()
                && "x".parse::<Shard>().is_err()
        );
    }

    /// Slurm numbers array tasks from SLURM_ARRAY_TASK_MIN (often 0 or 1), Grid Engine
    /// from SGE_TASK_FIRST (common practice for both schedulers' documented variables).
    #[test]
    fn scheduler_variables_choose_the_shard() {
        let env = |pairs: &'static [(&'static str, &'static str)]| {
            move |k: &str| {
                pairs
                    .iter()
                    .find(|(n, _)| *n == k)
                    .map(|(_, v)| v.to_string())
            }
        };
        let slurm = env(&[
            ("SLURM_ARRAY_TASK_ID", "0"),
            ("SLURM_ARRAY_TASK_MIN", "0"),
            ("SLURM_ARRAY_TASK_COUNT", "4"),
        ]);
        assert_eq!(
            shard_from_env(slurm).unwrap(),
            Some(Shard { index: 1, count: 4 })
        );
        let sge = env(&[
            ("SGE_TASK_ID", "3"),
            ("SGE_TASK_FIRST", "1"),
            ("SGE_TASK_LAST", "3"),
        ]);
        assert_eq!(
            shard_from_env(sge).unwrap(),
            Some(Shard { index: 3, count: 3 })
        );
        assert_eq!(shard_from_env(env(&[])).unwrap(), None);
        assert!(shard_from_env(env(&[("SLURM_ARRAY_TASK_ID", "5")])).is_err());
    }

    #[test]
    fn gather_sorts_by_target_and_checks_headers() {
        let a = format!("{SUMMARY_HEADER}\nb.toml,x,ok\nb.toml,x,ok2\n");
        let b = format!("{SUMMARY_HEADER}\na.toml,y,ok\n");
        let merged = gather(&[("1".into(), a), ("2".into(), b)]).unwrap();
        let lines: Vec<&str> = merged.lines().skip(1).collect();
        assert_eq!(lines, vec!["a.toml,y,ok", "b.toml,x,ok", "b.toml,x,ok2"]);
        assert!(gather(&[("3".into(), "nope\n".into())]).is_err());
    }
}
