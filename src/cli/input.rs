//! Arguments shared by the commands that read RV tables directly.

use std::path::PathBuf;

use anyhow::Context;
use heft::data::{self, DataSpec, RvSet, RvUnit, TimeStandard};

use super::Failure;

/// RV unit as given on the command line.
#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum UnitArg {
    /// Metres per second.
    #[value(name = "m/s")]
    Mps,
    /// Kilometres per second.
    #[value(name = "km/s")]
    Kmps,
}

/// RV files and how to read them.
#[derive(clap::Args, Debug)]
pub struct InputArgs {
    /// RV tables (CSV, TSV, whitespace-separated or Parquet), one instrument each unless
    /// they have an `instrument` column.
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Unit of the rv and rv_err columns of every file.
    #[arg(long, value_enum, default_value = "m/s")]
    pub unit: UnitArg,
    /// Time standard of every file: BJD_TDB, HJD, JD, MJD, RJD, or one with an offset
    /// such as BJD-2450000.
    #[arg(long = "time", default_value = "BJD_TDB", value_name = "STANDARD")]
    pub time: TimeStandard,
}

impl InputArgs {
    /// Reads and validates the files.
    pub fn load(&self) -> Result<RvSet, Failure> {
        let unit = match self.unit {
            UnitArg::Mps => RvUnit::MetresPerSecond,
            UnitArg::Kmps => RvUnit::KilometresPerSecond,
        };
        let specs: Vec<DataSpec> = self
            .files
            .iter()
            .map(|path| DataSpec {
                path: path.clone(),
                instrument: None,
                unit,
                time: self.time,
            })
            .collect();
        let set = data::load(&specs)
            .context("reading RV data")
            .map_err(Failure::Input)?;
        super::detail(&format!(
            "read {} points of {} instrument(s) from {} file(s), span {:.1} d",
            set.len(),
            set.n_instruments(),
            specs.len(),
            set.baseline_d()
        ));
        Ok(set)
    }
}
