//! Errors from reading and validating RV tables: every one names the file, the row where
//! one is at fault, and the problem.

use std::fmt;
use std::path::{Path, PathBuf};

/// Why RV data could not be loaded.
///
/// Displays as `FILE: row N: PROBLEM` (or `FILE: PROBLEM` when no single row is at fault),
/// e.g. `rv/harbor.csv: row 14: rv_err must be positive, got -0.3`. Rows are 1-based line
/// numbers in text files (header, comment and blank lines counted) and 1-based row numbers
/// in Parquet files.
#[derive(Debug, thiserror::Error)]
#[error("{}{kind}", Location(.file, *.row))]
pub struct DataError {
    /// The input file at fault (empty when no file was given at all).
    pub file: PathBuf,
    /// The 1-based line (text) or row (Parquet) at fault, if one is.
    pub row: Option<usize>,
    /// What is wrong.
    pub kind: DataErrorKind,
}

impl DataError {
    /// An error about `file` as a whole.
    pub(crate) fn whole_file(file: &Path, kind: DataErrorKind) -> DataError {
        DataError {
            file: file.to_path_buf(),
            row: None,
            kind,
        }
    }

    /// An error about one row of `file`.
    pub(crate) fn at_row(file: &Path, row: usize, kind: DataErrorKind) -> DataError {
        DataError {
            file: file.to_path_buf(),
            row: Some(row),
            kind,
        }
    }
}

struct Location<'a>(&'a Path, Option<usize>);

impl fmt::Display for Location<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if !self.0.as_os_str().is_empty() {
            write!(f, "{}: ", self.0.display())?;
        }
        if let Some(row) = self.1 {
            write!(f, "row {row}: ")?;
        }
        Ok(())
    }
}

/// The problem behind a [`DataError`].
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum DataErrorKind {
    /// `load` was called with an empty list of files.
    #[error("no RV files given")]
    NoFiles,
    /// The file could not be opened or read.
    #[error("cannot read: {0}")]
    Io(std::io::Error),
    /// The file is not valid UTF-8 text (and not named `.parquet`).
    #[error("not a text table (invalid UTF-8 at byte {0}); Parquet files must end in .parquet")]
    NotText(usize),
    /// Polars could not parse the table.
    #[error("cannot parse table: {0}")]
    Table(String),
    /// The file holds no data rows.
    #[error("no data rows")]
    Empty,
    /// The header (or the column layout) is not usable.
    #[error("{0}")]
    Header(String),
    /// A line cannot be split into fields (e.g. an unclosed quote).
    #[error("{0}")]
    Syntax(String),
    /// A row has a different number of fields from the first row.
    #[error("expected {expected} columns, found {found}")]
    ColumnCount {
        /// Number of columns of the header (or first row).
        expected: usize,
        /// Number of fields in this row.
        found: usize,
    },
    /// A required value is empty.
    #[error("{column} is missing")]
    Missing {
        /// Column name.
        column: String,
    },
    /// A value that must be a number is not.
    #[error("{column} is not a number: '{value}'")]
    NotNumeric {
        /// Column name.
        column: String,
        /// The text found.
        value: String,
    },
    /// A required value is NaN or infinite.
    #[error("{column} must be finite, got {value}")]
    NotFinite {
        /// Column name.
        column: String,
        /// The value found.
        value: f64,
    },
    /// An RV uncertainty is zero or negative.
    #[error("rv_err must be positive, got {0}")]
    NonPositiveError(f64),
    /// The same point (time, rv, rv_err, instrument) appears twice.
    #[error("duplicate of {first}: same time, rv, rv_err and instrument")]
    Duplicate {
        /// Where the first copy is (`row 3`, or `other.csv row 3` in another file).
        first: String,
    },
    /// One instrument has two different values at the same time.
    #[error(
        "conflicts with {first}: same time and instrument but rv {:.3} m/s against {:.3} m/s there",
        rv_mps.1,
        rv_mps.0
    )]
    Conflict {
        /// Where the other value is.
        first: String,
        /// The two velocities, m/s (the other's, this row's).
        rv_mps: (f64, f64),
    },
    /// An instrument has fewer than two points, too few to fit its offset.
    #[error(
        "instrument '{instrument}' has only {n} point; each instrument needs at least 2 to fit its own offset (drop it or give it the name of another instrument)"
    )]
    TooFewPoints {
        /// Instrument name.
        instrument: String,
        /// Its number of points.
        n: usize,
    },
    /// Time values contradict the declared time standard.
    #[error("{0}")]
    TimeStandard(String),
    /// RV values or errors are implausible for the declared unit.
    #[error("{0}")]
    Unit(String),
}
