//! `heft add-epochs`: add a new RV file to a target, checked against the epochs it has.

use std::path::PathBuf;
use std::process::ExitCode;

use heft::data::{DataSpec, RvUnit, TimeStandard};
use heft::runs::{self, AddError};

use super::Failure;
use super::input::UnitArg;

/// Arguments of `heft add-epochs`.
#[derive(clap::Args, Debug)]
pub struct AddEpochsArgs {
    /// The target file (TOML) to add to.
    #[arg(value_name = "TARGET.toml")]
    target: PathBuf,
    /// The new RV table (any input format).
    #[arg(value_name = "FILE")]
    file: PathBuf,
    /// Instrument of every row (default: the file's instrument column, else its stem).
    #[arg(long)]
    instrument: Option<String>,
    /// Unit of the rv and rv_err columns.
    #[arg(long, value_enum, default_value = "m/s")]
    unit: UnitArg,
    /// Time standard of the file, e.g. BJD_TDB or BJD-2450000.
    #[arg(long = "time", default_value = "BJD_TDB", value_name = "STANDARD")]
    time: TimeStandard,
    /// Print what was added as JSON.
    #[arg(long)]
    json: bool,
}

/// Runs the command: exit 2 (nothing written) when the file fails a check.
pub fn run(args: &AddEpochsArgs) -> Result<ExitCode, Failure> {
    let spec = DataSpec {
        path: args.file.clone(),
        instrument: args.instrument.clone(),
        unit: match args.unit {
            UnitArg::Mps => RvUnit::MetresPerSecond,
            UnitArg::Kmps => RvUnit::KilometresPerSecond,
        },
        time: args.time,
    };
    let added = runs::add_epochs(&args.target, &spec).map_err(|e| match e {
        AddError::Io { .. } => Failure::Internal(e.into()),
        _ => Failure::Input(e.into()),
    })?;
    let text = if args.json {
        let mut s =
            serde_json::to_string_pretty(&added).map_err(|e| Failure::Internal(e.into()))?;
        s.push('\n');
        s
    } else {
        let counts: Vec<String> = added
            .per_instrument
            .iter()
            .map(|(name, n)| format!("{name} {n}"))
            .collect();
        format!(
            "added {} epochs from {} as {}; epochs now: {}\n",
            added.n_added,
            added.source.display(),
            added.copy.display(),
            counts.join(", ")
        )
    };
    super::emit(&text, args.json)?;
    Ok(ExitCode::SUCCESS)
}
