//! Reading and validating radial-velocity tables.
//!
//! Entry point: [`load`] turns a list of [`DataSpec`] (file, instrument, unit, time
//! standard) into one [`RvSet`], sorted by time, RVs in m/s, times in days from a common
//! reference epoch. The accepted table formats are described in `docs/input-formats.md`.
//!
//! # Examples
//! ```no_run
//! use heft::data::{load, DataSpec, RvUnit};
//!
//! let specs = [
//!     DataSpec::new("rv/loom.csv"),
//!     DataSpec {
//!         unit: RvUnit::KilometresPerSecond,
//!         time: "BJD-2450000".parse()?,
//!         ..DataSpec::new("rv/sedge.txt")
//!     },
//! ];
//! let set = load(&specs)?;
//! for warning in &set.warnings {
//!     eprintln!("warning: {warning}");
//! }
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

use std::fmt;
use std::path::PathBuf;
use std::str::FromStr;

mod error;
mod load;
mod parquet_check;
mod read;
mod time;
mod validate;

pub use error::{DataError, DataErrorKind};
pub use load::load;
pub(crate) use parquet_check::check as check_parquet;
pub use time::{TimeScale, TimeStandard, TimeStandardError};
pub(crate) use validate::median;

/// Unit of the RV and RV-error columns of an input file.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
pub enum RvUnit {
    /// Metres per second (the internal unit).
    #[default]
    #[serde(rename = "m/s")]
    MetresPerSecond,
    /// Kilometres per second.
    #[serde(rename = "km/s")]
    KilometresPerSecond,
}

impl RvUnit {
    /// Factor that converts a value in this unit to m/s.
    pub fn to_mps(self) -> f64 {
        match self {
            RvUnit::MetresPerSecond => 1.0,
            RvUnit::KilometresPerSecond => 1000.0,
        }
    }
}

impl fmt::Display for RvUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            RvUnit::MetresPerSecond => "m/s",
            RvUnit::KilometresPerSecond => "km/s",
        })
    }
}

/// Why an RV unit name was not understood.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("unknown RV unit '{0}': use m/s or km/s")]
pub struct RvUnitError(pub String);

impl FromStr for RvUnit {
    type Err = RvUnitError;

    /// Parses `m/s` or `km/s` (case-insensitive; `mps`, `kms`, `m s-1`, `km s-1` too).
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let key: String = s
            .chars()
            .filter(|c| !c.is_whitespace())
            .collect::<String>()
            .to_ascii_lowercase();
        match key.as_str() {
            "m/s" | "mps" | "ms-1" | "ms^-1" => Ok(RvUnit::MetresPerSecond),
            "km/s" | "kms" | "kmps" | "kms-1" | "kms^-1" => Ok(RvUnit::KilometresPerSecond),
            _ => Err(RvUnitError(s.to_string())),
        }
    }
}

/// One input file and how to read it.
#[derive(Clone, Debug, PartialEq)]
pub struct DataSpec {
    /// Path of the table (CSV, TSV, whitespace-separated text or Parquet).
    pub path: PathBuf,
    /// Instrument name for every row; `None` means: from the file's `instrument` column if
    /// it has one, else the file's stem.
    pub instrument: Option<String>,
    /// Unit of the `rv` and `rv_err` columns.
    pub unit: RvUnit,
    /// Time standard of the `time` column.
    pub time: TimeStandard,
}

impl DataSpec {
    /// A file with the defaults: instrument from the file (its `instrument` column, else
    /// its stem), RVs in m/s, times in BJD_TDB.
    pub fn new(path: impl Into<PathBuf>) -> DataSpec {
        DataSpec {
            path: path.into(),
            instrument: None,
            unit: RvUnit::default(),
            time: TimeStandard::default(),
        }
    }
}

/// Where a measurement came from: index into [`RvSet::files`] and the 1-based line number
/// in that file (header counted), or the 1-based row for Parquet.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
pub struct Origin {
    /// Index into [`RvSet::files`].
    pub file: usize,
    /// 1-based line (text) or row (Parquet) number.
    pub row: usize,
}

/// An extra numeric column carried per point (activity indicator), NaN where a file lacks it.
#[derive(Clone, Debug, PartialEq)]
pub struct Indicator {
    /// Column name as in the header.
    pub name: String,
    /// One value per point of the [`RvSet`], NaN where missing.
    pub values: Vec<f64>,
}

/// Validated RV time series from one or more instruments, sorted by time.
#[derive(Clone, Debug, PartialEq)]
pub struct RvSet {
    /// Reference epoch (full BJD_TDB, days) that [`RvSet::time_d`] counts from.
    pub epoch_bjd: f64,
    /// Times in days relative to [`RvSet::epoch_bjd`].
    pub time_d: Vec<f64>,
    /// Radial velocities, m/s.
    pub rv_mps: Vec<f64>,
    /// RV uncertainties, m/s (> 0).
    pub err_mps: Vec<f64>,
    /// Instrument index of each point (into [`RvSet::instruments`]).
    pub instrument: Vec<usize>,
    /// Instrument names, in order of first appearance in the input.
    pub instruments: Vec<String>,
    /// Origin of each point.
    pub origin: Vec<Origin>,
    /// Input files, indexed by [`Origin::file`].
    pub files: Vec<PathBuf>,
    /// Activity-indicator columns.
    pub indicators: Vec<Indicator>,
    /// Non-fatal findings to show the user (e.g. time-scale caveats).
    pub warnings: Vec<String>,
}

impl RvSet {
    /// Builds a set from columns already in internal units (times in days from
    /// `epoch_bjd`, RVs in m/s), e.g. for simulations. Points are sorted by time; origins
    /// refer to one pseudo-file named `source` with rows numbered in input order.
    ///
    /// # Panics
    /// If the columns differ in length or an instrument index is out of range
    /// (programmer errors: user data goes through [`load`]).
    pub fn from_columns(
        source: &str,
        epoch_bjd: f64,
        time_d: Vec<f64>,
        rv_mps: Vec<f64>,
        err_mps: Vec<f64>,
        instrument: Vec<usize>,
        instruments: Vec<String>,
    ) -> RvSet {
        let n = time_d.len();
        assert!(
            rv_mps.len() == n && err_mps.len() == n && instrument.len() == n,
            "column lengths differ: time {n}, rv {}, err {}, instrument {}",
            rv_mps.len(),
            err_mps.len(),
            instrument.len()
        );
        assert!(
            instrument.iter().all(|&k| k < instruments.len()),
            "instrument index out of range (have {} names)",
            instruments.len()
        );
        let set = RvSet {
            epoch_bjd,
            time_d,
            rv_mps,
            err_mps,
            instrument,
            instruments,
            origin: (0..n)
                .map(|i| Origin {
                    file: 0,
                    row: i + 1,
                })
                .collect(),
            files: vec![PathBuf::from(source)],
            indicators: Vec::new(),
            warnings: Vec::new(),
        };
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| set.time_d[a].total_cmp(&set.time_d[b]));
        set.select(&order)
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.time_d.len()
    }

    /// True when there are no points.
    pub fn is_empty(&self) -> bool {
        self.time_d.is_empty()
    }

    /// Number of instruments.
    pub fn n_instruments(&self) -> usize {
        self.instruments.len()
    }

    /// Time span of the data, days (0 for fewer than two points); the points need not be
    /// in time order.
    pub fn baseline_d(&self) -> f64 {
        let (lo, hi) = self
            .time_d
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &t| {
                (lo.min(t), hi.max(t))
            });
        if hi > lo { hi - lo } else { 0.0 }
    }

    /// Standard deviation of indicator column `c` over the points that have a value (1 when
    /// it is constant or missing everywhere), in the column's unit.
    pub fn indicator_spread(&self, c: usize) -> f64 {
        let v: Vec<f64> = self.indicators[c]
            .values
            .iter()
            .copied()
            .filter(|x| x.is_finite())
            .collect();
        let n = v.len().max(1) as f64;
        let mean = v.iter().sum::<f64>() / n;
        let sd = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n).sqrt();
        if sd > 0.0 { sd } else { 1.0 }
    }

    /// Indicator column `c` as a series in place of the RVs (its points with a value,
    /// every error set to `err`, in the indicator's unit).
    pub fn indicator_series(&self, c: usize, err: f64) -> RvSet {
        let keep: Vec<usize> = (0..self.len())
            .filter(|&i| self.indicators[c].values[i].is_finite())
            .collect();
        let mut sub = self.select(&keep);
        sub.rv_mps = keep.iter().map(|&i| self.indicators[c].values[i]).collect();
        sub.err_mps = vec![err; keep.len()];
        sub
    }

    /// The points at `indices`, in that order, with all per-point columns kept together.
    pub fn select(&self, indices: &[usize]) -> RvSet {
        let pick = |v: &[f64]| indices.iter().map(|&i| v[i]).collect::<Vec<f64>>();
        RvSet {
            epoch_bjd: self.epoch_bjd,
            time_d: pick(&self.time_d),
            rv_mps: pick(&self.rv_mps),
            err_mps: pick(&self.err_mps),
            instrument: indices.iter().map(|&i| self.instrument[i]).collect(),
            instruments: self.instruments.clone(),
            origin: indices.iter().map(|&i| self.origin[i]).collect(),
            files: self.files.clone(),
            indicators: self
                .indicators
                .iter()
                .map(|ind| Indicator {
                    name: ind.name.clone(),
                    values: pick(&ind.values),
                })
                .collect(),
            warnings: self.warnings.clone(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rv_unit_round_trip() {
        for unit in [RvUnit::MetresPerSecond, RvUnit::KilometresPerSecond] {
            assert_eq!(unit.to_string().parse::<RvUnit>(), Ok(unit));
        }
        assert_eq!("KM/S".parse(), Ok(RvUnit::KilometresPerSecond));
        assert_eq!("m s-1".parse(), Ok(RvUnit::MetresPerSecond));
        let e = "cm/s".parse::<RvUnit>().unwrap_err();
        assert_eq!(e.to_string(), "unknown RV unit 'cm/s': use m/s or km/s");
    }
}
