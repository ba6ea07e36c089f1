//! What a run folder keeps so that its report can be rebuilt without refitting: the data
//! points as used with the model and residuals (`data_used.csv`), and the readers of
//! everything the report draws on (`results.json`, `periodograms.csv`,
//! `periodogram.json`, `draws.parquet`).

use std::fmt::Write as _;
use std::fs;
use std::path::{Path, PathBuf};

use polars::prelude::*;
use serde_json::Value;

use crate::pipeline::Analysis;

/// Name of the table of data points as used.
pub const POINTS_FILE: &str = "data_used.csv";

/// Name of the table of the activity model's curve (with an activity GP only).
pub const ACTIVITY_FILE: &str = "activity_model.csv";

/// Times at which the activity model's curve is saved.
const ACTIVITY_CURVE_POINTS: usize = 1500;

/// A file of a run folder that could not be used, and why.
#[derive(Debug, thiserror::Error)]
#[error("{}: {problem}", file.display())]
pub struct SavedError {
    /// The file.
    pub file: PathBuf,
    /// What is wrong with it.
    pub problem: String,
}

impl SavedError {
    fn new(file: &Path, problem: impl Into<String>) -> SavedError {
        SavedError {
            file: file.to_path_buf(),
            problem: problem.into(),
        }
    }
}

/// `data_used.csv`: one row per data point read, in time order, columns `file`, `row`,
/// `instrument` (era name where an instrument was split), `time_bjd` (BJD_TDB), `rv_mps`,
/// `rv_err_mps`, `model_mps` (planets + offset + trend of the maximum-likelihood fit),
/// `residual_mps` (with an activity GP also minus the activity model), `status` (`used`,
/// or why the point was left out: `outlier`, `in-transit`), `n_combined` (points binned
/// into this one; `row` is the first of them), with an activity GP `activity_mps` (the
/// GP's conditional mean at the point, given the points used), then one
/// `signal_<label>_mps` column per planet (its Keplerian alone).
pub fn points_csv(a: &Analysis) -> String {
    let fit = &a.search.fit;
    let params = &fit.params;
    let with_activity = fit.layout.activity.is_some();
    let mut s = String::from(
        "file,row,instrument,time_bjd,rv_mps,rv_err_mps,model_mps,residual_mps,status,n_combined",
    );
    if with_activity {
        s.push_str(",activity_mps");
    }
    for p in &fit.planets {
        let _ = write!(s, ",signal_{}_mps", p.label.replace([',', '"', '\n'], " "));
    }
    s.push('\n');
    let combined = |file: &str, row: usize| {
        a.data_log.binning.as_ref().map_or(1, |b| {
            b.bins
                .iter()
                .find(|bin| bin.rows[0].0 == file && bin.rows[0].1 == row)
                .map_or(1, |bin| bin.rows.len())
        })
    };
    let mut rows: Vec<(f64, String)> = Vec::new();
    let parts =
        std::iter::once((&a.set, "used")).chain(a.data_log.left_out.iter().map(|(s, w)| (s, *w)));
    for (set, status) in parts {
        let model = params.predict(set);
        // Each point's activity at its own instrument's amplitude.
        let activity = fit.activity_prediction(&a.set, &set.time_d).map(|p| {
            p.0.iter()
                .zip(&set.instrument)
                .map(|(m, &k)| m * fit.activity_scale(k))
                .collect::<Vec<f64>>()
        });
        for (i, m) in model.iter().enumerate() {
            let o = set.origin[i];
            let file = set.files.get(o.file).map_or(String::new(), |f| {
                f.file_name()
                    .map_or(String::new(), |n| n.to_string_lossy().into_owned())
            });
            let t = set.time_d[i];
            // In-transit points are left out before binning, so belong to no bin.
            let n = combined(&file, o.row);
            let mut line = format!(
                "{},{},{},{:.8},{},{},{},{},{status},{n}",
                file.replace([',', '"', '\n'], " "),
                o.row,
                set.instruments[set.instrument[i]].replace([',', '"', '\n'], " "),
                set.epoch_bjd + t,
                set.rv_mps[i],
                set.err_mps[i],
                m,
                set.rv_mps[i] - m - activity.as_ref().map_or(0.0, |v| v[i])
            );
            if let Some(v) = &activity {
                let _ = write!(line, ",{}", v[i]);
            }
            for orbit in &params.planets {
                let _ = write!(line, ",{}", orbit.rv(t));
            }
            line.push('\n');
            rows.push((set.epoch_bjd + t, line));
        }
    }
    rows.sort_by(|x, y| x.0.total_cmp(&y.0));
    for (_, line) in rows {
        s.push_str(&line);
    }
    s
}

/// One data point as saved.
#[derive(Clone, Debug, PartialEq)]
pub struct Point {
    /// Instrument name.
    pub instrument: String,
    /// Time, BJD_TDB.
    pub time_bjd: f64,
    /// Radial velocity, m/s.
    pub rv_mps: f64,
    /// Its uncertainty, m/s.
    pub err_mps: f64,
    /// Model (planets + offset + trend), m/s.
    pub model_mps: f64,
    /// Observed − model (− activity model, with a GP), m/s.
    pub residual_mps: f64,
    /// The activity GP's conditional mean at this time, m/s (0 without a GP).
    pub activity_mps: f64,
    /// Each planet's Keplerian at this time, m/s (order of `signals`).
    pub signals_mps: Vec<f64>,
}

/// The data points of a run and the planet labels of their signal columns.
#[derive(Clone, Debug, PartialEq)]
pub struct Points {
    /// Planet labels, in column order.
    pub signals: Vec<String>,
    /// The points, in time order.
    pub points: Vec<Point>,
}

impl Points {
    /// Instrument names in order of first appearance.
    pub fn instruments(&self) -> Vec<String> {
        let mut names: Vec<String> = Vec::new();
        for p in &self.points {
            if !names.contains(&p.instrument) {
                names.push(p.instrument.clone());
            }
        }
        names
    }
}

/// Splits a CSV line written by heft (no quoting).
fn fields(line: &str) -> Vec<&str> {
    line.split(',').collect()
}

/// Reads `data_used.csv`: the points used in the fit (rows with `status` other than
/// `used` are skipped; files without the `status` and `n_combined` columns, written
/// before they existed, are read as all used).
///
/// # Errors
/// [`SavedError`] naming the file and, for a bad row, its line.
pub fn read_points(path: &Path) -> Result<Points, SavedError> {
    let text = fs::read_to_string(path).map_err(|e| SavedError::new(path, e.to_string()))?;
    let mut lines = text.lines();
    let header = fields(lines.next().unwrap_or_default());
    let fixed = [
        "file",
        "row",
        "instrument",
        "time_bjd",
        "rv_mps",
        "rv_err_mps",
        "model_mps",
        "residual_mps",
    ];
    if header.len() < fixed.len() || header[..fixed.len()] != fixed {
        return Err(SavedError::new(
            path,
            format!("line 1: expected the columns {}", fixed.join(",")),
        ));
    }
    let extra = ["status", "n_combined"];
    let with_status = header.len() >= fixed.len() + 2 && header[fixed.len()..][..2] == extra;
    let activity_column = fixed.len() + if with_status { 2 } else { 0 };
    let with_activity = header.get(activity_column) == Some(&"activity_mps");
    let first_signal = activity_column + usize::from(with_activity);
    let signals: Vec<String> = header[first_signal..]
        .iter()
        .map(|h| {
            h.strip_prefix("signal_")
                .and_then(|h| h.strip_suffix("_mps"))
                .map(str::to_string)
                .ok_or_else(|| SavedError::new(path, format!("line 1: unknown column '{h}'")))
        })
        .collect::<Result<_, _>>()?;
    let mut points = Vec::new();
    for (k, line) in lines.enumerate() {
        let f = fields(line);
        let bad = |what: &str| SavedError::new(path, format!("line {}: {what}", k + 2));
        if f.len() != header.len() {
            return Err(bad(&format!(
                "{} fields, expected {}",
                f.len(),
                header.len()
            )));
        }
        let num = |j: usize| {
            f[j].parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| {
                    bad(&format!(
                        "'{}' in column {} is not a number",
                        f[j], header[j]
                    ))
                })
        };
        if with_status && f[fixed.len()] != "used" {
            continue;
        }
        points.push(Point {
            instrument: f[2].to_string(),
            time_bjd: num(3)?,
            rv_mps: num(4)?,
            err_mps: num(5)?,
            model_mps: num(6)?,
            residual_mps: num(7)?,
            activity_mps: if with_activity {
                num(activity_column)?
            } else {
                0.0
            },
            signals_mps: (first_signal..f.len()).map(num).collect::<Result<_, _>>()?,
        });
    }
    if points.is_empty() {
        return Err(SavedError::new(path, "no data points"));
    }
    Ok(Points { signals, points })
}

/// The saved periodograms: `periodograms.csv` columns and `periodogram.json`.
#[derive(Clone, Debug, PartialEq)]
pub struct SavedPeriodograms {
    /// Period of each grid point, days.
    pub period_d: Vec<f64>,
    /// Named power columns (`power`, `window`, residuals, indicators).
    pub columns: Vec<(String, Vec<f64>)>,
    /// Peaks, aliases, window peaks and false-alarm levels.
    pub meta: Value,
}

/// Parses a periodogram table (`frequency,period,<column>...`, as
/// [`crate::periodogram::Overview::table`] writes it) into periods and named columns;
/// errors name the line.
pub fn parse_periodogram_table(text: &str) -> Result<SavedColumns, String> {
    let mut lines = text.lines();
    let header = fields(lines.next().unwrap_or_default());
    if header.len() < 3 || header[..2] != ["frequency", "period"] {
        return Err("line 1: expected frequency,period and power columns".into());
    }
    let mut period_d = Vec::new();
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); header.len() - 2];
    for (k, line) in lines.enumerate() {
        let values: Option<Vec<f64>> = fields(line).iter().map(|x| x.parse().ok()).collect();
        match values {
            Some(v) if v.len() == header.len() => {
                period_d.push(v[1]);
                for (c, x) in cols.iter_mut().zip(&v[2..]) {
                    c.push(*x);
                }
            }
            _ => return Err(format!("line {}: expected {} numbers", k + 2, header.len())),
        }
    }
    let names = header[2..].iter().map(|h| h.to_string());
    Ok((period_d, names.zip(cols).collect()))
}

/// Periods (days) and named power columns of a periodogram table.
pub type SavedColumns = (Vec<f64>, Vec<(String, Vec<f64>)>);

/// Reads `periodograms.csv` and `periodogram.json`.
///
/// # Errors
/// [`SavedError`] naming the file and, for a bad row, its line.
pub fn read_periodograms(csv: &Path, json: &Path) -> Result<SavedPeriodograms, SavedError> {
    let meta = read_json(json)?;
    let text = fs::read_to_string(csv).map_err(|e| SavedError::new(csv, e.to_string()))?;
    let (period_d, columns) =
        parse_periodogram_table(&text).map_err(|e| SavedError::new(csv, e))?;
    Ok(SavedPeriodograms {
        period_d,
        columns,
        meta,
    })
}

/// Reads and parses a JSON file.
///
/// # Errors
/// [`SavedError`] for a missing, unreadable or malformed file.
pub fn read_json(path: &Path) -> Result<Value, SavedError> {
    let text = fs::read_to_string(path).map_err(|e| SavedError::new(path, e.to_string()))?;
    serde_json::from_str(&text).map_err(|e| SavedError::new(path, format!("not valid JSON: {e}")))
}

/// Reads the floating-point columns of `draws.parquet`.
///
/// # Errors
/// [`SavedError`] for an unreadable file.
pub fn read_draws(path: &Path) -> Result<Vec<(String, Vec<f64>)>, SavedError> {
    let bytes = fs::read(path).map_err(|e| SavedError::new(path, e.to_string()))?;
    crate::data::check_parquet(&bytes)
        .map_err(|e| SavedError::new(path, format!("damaged Parquet file: {e}")))?;
    let df = crate::contain::contain(|| ParquetReader::new(std::io::Cursor::new(bytes)).finish())
        .map_err(|e| format!("damaged Parquet file (the decoder failed: {e})"))
        .and_then(|r| r.map_err(|e| format!("not readable as Parquet: {e}")))
        .map_err(|e| SavedError::new(path, e))?;
    Ok(df
        .columns()
        .iter()
        .filter_map(|c| {
            let v = c.f64().ok()?;
            Some((
                c.name().to_string(),
                v.iter().map(|x| x.unwrap_or(f64::NAN)).collect(),
            ))
        })
        .collect())
}

/// The activity model's curve: times (BJD_TDB), conditional mean and standard deviation
/// (m/s) of the activity GP.
pub type ActivityCurve = Vec<[f64; 3]>;

/// `activity_model.csv`, columns `time_bjd,mean_mps,sd_mps`: the activity GP's
/// conditional mean and standard deviation on an even grid from 2 % before the first
/// point to 2 % after the last; `None` without a GP.
pub fn activity_csv(a: &Analysis) -> Option<String> {
    let set = &a.set;
    let (t0, t1) = (set.time_d[0], set.time_d[set.len() - 1]);
    let pad = 0.02 * (t1 - t0);
    let n = ACTIVITY_CURVE_POINTS;
    let at: Vec<f64> = (0..n)
        .map(|k| t0 - pad + (t1 - t0 + 2.0 * pad) * k as f64 / (n - 1) as f64)
        .collect();
    let (mean, var) = a.search.fit.activity_prediction(set, &at)?;
    let mut s = String::from("time_bjd,mean_mps,sd_mps\n");
    for k in 0..n {
        let _ = writeln!(
            s,
            "{:.8},{},{}",
            set.epoch_bjd + at[k],
            mean[k],
            var[k].max(0.0).sqrt()
        );
    }
    Some(s)
}

/// Reads `activity_model.csv`.
///
/// # Errors
/// [`SavedError`] naming the file and, for a bad row, its line.
pub fn read_activity(path: &Path) -> Result<ActivityCurve, SavedError> {
    let text = fs::read_to_string(path).map_err(|e| SavedError::new(path, e.to_string()))?;
    let mut lines = text.lines();
    if lines.next() != Some("time_bjd,mean_mps,sd_mps") {
        return Err(SavedError::new(
            path,
            "line 1: expected the columns time_bjd,mean_mps,sd_mps",
        ));
    }
    lines
        .enumerate()
        .map(|(k, line)| {
            let v: Vec<f64> = fields(line)
                .iter()
                .filter_map(|x| x.parse::<f64>().ok().filter(|v| v.is_finite()))
                .collect();
            <[f64; 3]>::try_from(v)
                .map_err(|_| SavedError::new(path, format!("line {}: expected 3 numbers", k + 2)))
        })
        .collect()
}

/// Everything a report is drawn from, read from a run folder.
#[derive(Clone, Debug)]
pub struct SavedRun {
    /// The run folder.
    pub dir: PathBuf,
    /// `results.json`.
    pub results: Value,
    /// `data_used.csv`.
    pub points: Points,
    /// `periodograms.csv` and `periodogram.json`, when the run made them.
    pub periodograms: Option<SavedPeriodograms>,
    /// `draws.parquet`, when the run wrote draws.
    pub draws: Option<Vec<(String, Vec<f64>)>>,
    /// `activity_model.csv`, when the run had an activity GP.
    pub activity: Option<ActivityCurve>,
}

/// Reads a run folder: `results.json` and `data_used.csv` are required, the
/// periodograms, draws and activity model are read when present.
///
/// # Errors
/// [`SavedError`] naming the first file that is missing or malformed.
pub fn read_run(dir: &Path) -> Result<SavedRun, SavedError> {
    if !dir.is_dir() {
        return Err(SavedError::new(dir, "not a folder"));
    }
    let results_path = dir.join("results.json");
    let results = read_json(&results_path)?;
    if results.get("schema").and_then(Value::as_str) != Some(super::SCHEMA) {
        return Err(SavedError::new(
            &results_path,
            format!("not a results file of schema {}", super::SCHEMA),
        ));
    }
    let points = read_points(&dir.join(POINTS_FILE))?;
    let (csv, json) = (dir.join("periodograms.csv"), dir.join("periodogram.json"));
    let periodograms = if csv.exists() {
        Some(read_periodograms(&csv, &json)?)
    } else {
        None
    };
    let draws_path = dir.join("draws.parquet");
    let draws = if draws_path.exists() {
        Some(read_draws(&draws_path)?)
    } else {
        None
    };
    let activity_path = dir.join(ACTIVITY_FILE);
    let activity = if activity_path.exists() {
        Some(read_activity(&activity_path)?)
    } else {
        None
    };
    Ok(SavedRun {
        dir: dir.to_path_buf(),
        results,
        points,
        periodograms,
        draws,
        activity,
    })
}
