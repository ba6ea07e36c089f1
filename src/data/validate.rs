//! Turning a raw [`Table`] into checked numbers for one file: column roles from the
//! header, numbers from cells, and the per-file checks (finite values, positive errors,
//! times consistent with the declared time standard, RVs plausible for the declared unit).
//!
//! The time-standard and unit checks are heuristics; their thresholds are the constants
//! below, each with the reason for its value.

use std::path::Path;

use super::error::{DataError, DataErrorKind};
use super::read::{Cells, Table};
use super::{DataSpec, RvUnit, TimeStandard};

/// Header names (lower case, spaces and dashes read as `_`) accepted for the time column.
pub(crate) const TIME_NAMES: &[&str] = &["time", "t", "bjd", "bjd_tdb", "jd", "hjd", "mjd", "rjd"];
/// Header names accepted for the RV column.
pub(crate) const RV_NAMES: &[&str] = &["rv", "radial_velocity"];
/// Header names accepted for the RV-uncertainty column.
pub(crate) const ERR_NAMES: &[&str] = &[
    "rv_err", "rv_error", "err_rv", "e_rv", "sigma_rv", "err", "error",
];
/// Header names accepted for the instrument column.
pub(crate) const INSTRUMENT_NAMES: &[&str] = &["instrument", "inst", "instr"];

/// Earliest full Julian date accepted as a time of observation: JD 2 440 000 is
/// 1968 May 23, before the first precise stellar RV surveys.
pub(crate) const JD_MIN: f64 = 2_440_000.0;
/// Latest full Julian date accepted: JD 2 480 000 is in 2077, leaving room for planned
/// (simulated) observations while still catching wrong offsets, which move dates by
/// 50 000 days or more.
pub(crate) const JD_MAX: f64 = 2_480_000.0;

/// A file declared in km/s whose median `rv_err` exceeds this (km/s) is taken to be in m/s:
/// errors above 1 km/s are useless for planets, while m/s errors are typically 0.1–10.
pub(crate) const KMS_MAX_MEDIAN_ERR: f64 = 1.0;
/// A file declared in m/s whose RVs all lie within this (m/s) of their median...
pub(crate) const MPS_MIN_SPREAD: f64 = 0.05;
/// ...and whose `rv_err` are all below this (m/s) is taken to be in km/s: no spectrograph
/// reaches 1 cm/s, and real series scatter by more than 5 cm/s.
pub(crate) const MPS_MIN_ERR: f64 = 0.01;

/// The checked contents of one file, in the file's own units and time standard.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct FileData {
    /// Times as written.
    pub time: Vec<f64>,
    /// RVs in the declared unit.
    pub rv: Vec<f64>,
    /// RV errors in the declared unit (> 0).
    pub err: Vec<f64>,
    /// Instrument name of each row.
    pub instrument: Vec<String>,
    /// Line (row) number of each row.
    pub rows: Vec<usize>,
    /// Indicator columns: name as in the header, one value per row (NaN if missing).
    pub indicators: Vec<(String, Vec<f64>)>,
    /// Non-fatal findings, already prefixed with the file name.
    pub warnings: Vec<String>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Role {
    Time,
    Rv,
    Err,
    Instrument,
}

impl Role {
    fn name(self) -> &'static str {
        match self {
            Role::Time => "time",
            Role::Rv => "rv",
            Role::Err => "rv_err",
            Role::Instrument => "instrument",
        }
    }

    fn synonyms(self) -> &'static [&'static str] {
        match self {
            Role::Time => TIME_NAMES,
            Role::Rv => RV_NAMES,
            Role::Err => ERR_NAMES,
            Role::Instrument => INSTRUMENT_NAMES,
        }
    }
}

fn role_of(name: &str) -> Option<Role> {
    let key: String = name
        .trim()
        .to_lowercase()
        .chars()
        .map(|c| if c == ' ' || c == '-' { '_' } else { c })
        .collect();
    [Role::Time, Role::Rv, Role::Err, Role::Instrument]
        .into_iter()
        .find(|r| r.synonyms().contains(&key.as_str()))
}

/// What a cell holds.
enum Cell<'a> {
    Missing,
    Number(f64),
    Text(&'a str),
}

fn cell(cells: &Cells, i: usize) -> Cell<'_> {
    match cells {
        Cells::Number(v) => v[i].map_or(Cell::Missing, Cell::Number),
        Cells::Text(v) => match v[i].as_deref() {
            None => Cell::Missing,
            Some(s) => s.trim().parse().map_or(Cell::Text(s), Cell::Number),
        },
        Cells::Other(_) => Cell::Missing,
    }
}

/// Reads the columns of `table` (from `spec.path`) into numbers and checks each row.
///
/// # Errors
/// A [`DataError`] naming the file, the row where one is at fault, and the problem.
pub(crate) fn interpret(spec: &DataSpec, table: &Table) -> Result<FileData, DataError> {
    let path = spec.path.as_path();
    let header_err = |msg: String| DataError {
        file: path.to_path_buf(),
        row: table.header_row,
        kind: DataErrorKind::Header(msg),
    };

    // Column roles.
    let mut roles: [Option<usize>; 4] = [None; 4];
    let mut extra = Vec::new();
    for (j, column) in table.columns.iter().enumerate() {
        if column.name.trim().is_empty() {
            return Err(header_err(format!("column {} has no name", j + 1)));
        }
        if let Some(k) = table.columns[..j]
            .iter()
            .position(|c| c.name.trim().eq_ignore_ascii_case(column.name.trim()))
        {
            return Err(header_err(format!(
                "columns {} and {} are both named '{}'",
                k + 1,
                j + 1,
                column.name
            )));
        }
        match role_of(&column.name) {
            Some(role) => {
                let slot = &mut roles[role as usize];
                if let Some(k) = *slot {
                    return Err(header_err(format!(
                        "columns '{}' and '{}' both name the {} column; rename one",
                        table.columns[k].name,
                        column.name,
                        role.name()
                    )));
                }
                *slot = Some(j);
            }
            None => extra.push(j),
        }
    }
    let found = || {
        table
            .columns
            .iter()
            .map(|c| c.name.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    let required = |role: Role| {
        roles[role as usize].ok_or_else(|| {
            header_err(format!(
                "no {} column (the columns are: {}); accepted names: {}",
                role.name(),
                found(),
                role.synonyms().join(", ")
            ))
        })
    };
    let (jt, jv, je) = (
        required(Role::Time)?,
        required(Role::Rv)?,
        required(Role::Err)?,
    );
    let ji = roles[Role::Instrument as usize];
    for j in [Some(jt), Some(jv), Some(je), ji].into_iter().flatten() {
        if let Cells::Other(dtype) = &table.columns[j].cells {
            return Err(header_err(format!(
                "column '{}' has type {dtype}; expected {}",
                table.columns[j].name,
                if Some(j) == ji { "text" } else { "numbers" }
            )));
        }
    }

    let mut warnings = Vec::new();
    let file = path.display();

    // Indicator columns: the other columns whose first value is a number.
    let mut indicator_cols = Vec::new();
    for &j in &extra {
        let column = &table.columns[j];
        let numeric = match &column.cells {
            Cells::Number(_) => true,
            Cells::Text(_) => (0..table.rows.len())
                .map(|i| cell(&column.cells, i))
                .find(|c| !matches!(c, Cell::Missing))
                .is_none_or(|c| matches!(c, Cell::Number(_))),
            Cells::Other(_) => false,
        };
        if numeric {
            indicator_cols.push(j);
        } else {
            warnings.push(format!(
                "{file}: column '{}' is not numeric and is ignored",
                column.name
            ));
        }
    }

    let n = table.rows.len();
    let mut data = FileData {
        time: Vec::with_capacity(n),
        rv: Vec::with_capacity(n),
        err: Vec::with_capacity(n),
        instrument: Vec::with_capacity(n),
        rows: table.rows.clone(),
        indicators: indicator_cols
            .iter()
            .map(|&j| {
                (
                    table.columns[j].name.trim().to_string(),
                    Vec::with_capacity(n),
                )
            })
            .collect(),
        warnings: Vec::new(),
    };
    let stem = path.file_stem().map_or_else(
        || path.display().to_string(),
        |s| s.to_string_lossy().into_owned(),
    );

    for (i, &row) in table.rows.iter().enumerate() {
        let at = |kind| DataError::at_row(path, row, kind);
        let number = |j: usize| -> Result<f64, DataError> {
            let column = table.columns[j].name.clone();
            match cell(&table.columns[j].cells, i) {
                Cell::Missing => Err(at(DataErrorKind::Missing { column })),
                Cell::Text(s) => Err(at(DataErrorKind::NotNumeric {
                    column,
                    value: s.to_string(),
                })),
                Cell::Number(v) if !v.is_finite() => {
                    Err(at(DataErrorKind::NotFinite { column, value: v }))
                }
                Cell::Number(v) => Ok(v),
            }
        };
        let t = number(jt)?;
        let v = number(jv)?;
        let e = number(je)?;
        if e <= 0.0 {
            return Err(at(DataErrorKind::NonPositiveError(e)));
        }
        let instrument = match (&spec.instrument, ji) {
            (Some(name), _) => name.clone(),
            (None, Some(j)) => match &table.columns[j].cells {
                Cells::Text(v) => v[i].as_deref().map(str::trim).unwrap_or("").to_string(),
                Cells::Number(v) => v[i].map(format_number).unwrap_or_default(),
                Cells::Other(_) => String::new(),
            },
            (None, None) => stem.clone(),
        };
        if instrument.is_empty() {
            return Err(at(DataErrorKind::Missing {
                column: table.columns[ji.unwrap_or(0)].name.clone(),
            }));
        }
        for (k, &j) in indicator_cols.iter().enumerate() {
            let value = match cell(&table.columns[j].cells, i) {
                Cell::Missing => f64::NAN,
                Cell::Number(x) if x.is_infinite() => {
                    return Err(at(DataErrorKind::NotFinite {
                        column: table.columns[j].name.clone(),
                        value: x,
                    }));
                }
                Cell::Number(x) => x,
                Cell::Text(s) => {
                    return Err(at(DataErrorKind::NotNumeric {
                        column: table.columns[j].name.clone(),
                        value: s.to_string(),
                    }));
                }
            };
            data.indicators[k].1.push(value);
        }
        data.time.push(t);
        data.rv.push(v);
        data.err.push(e);
        data.instrument.push(instrument);
    }

    if let (false, None, Some(_)) = (table.named, &spec.instrument, ji)
        && data.instrument.iter().all(|s| s.parse::<f64>().is_ok())
    {
        warnings.push(format!(
            "{file}: the fourth column is read as the instrument name but holds only numbers; add a header line if it is something else"
        ));
    }
    data.warnings = warnings;
    Ok(data)
}

fn format_number(v: f64) -> String {
    if v.fract() == 0.0 && v.abs() < 1e15 {
        format!("{}", v as i64)
    } else {
        v.to_string()
    }
}

/// Checks that every time, read in the declared standard, is a plausible date of
/// observation (full Julian date between [`JD_MIN`] and [`JD_MAX`]); if not, says what
/// the values look like and what to declare.
///
/// # Errors
/// A [`DataError`] at the first row whose time is implausible.
pub(crate) fn check_times(
    path: &Path,
    standard: &TimeStandard,
    data: &FileData,
) -> Result<(), DataError> {
    let plausible = |jd: f64| (JD_MIN..=JD_MAX).contains(&jd);
    for (&t, &row) in data.time.iter().zip(&data.rows) {
        let full = standard.full_jd(t);
        if plausible(full) {
            continue;
        }
        let advice = if plausible(t) {
            "the values look like full Julian dates: declare BJD_TDB (or JD, HJD) without an offset"
                .to_string()
        } else if plausible(t + 2_400_000.0) {
            "the values look like Julian dates minus 2 400 000: declare MJD, RJD or BJD-2400000 (whichever the source states)".to_string()
        } else if plausible(t + 2_450_000.0) {
            "the values look like Julian dates minus 2 450 000 (or minus 2 457 000 as in TESS BTJD): declare BJD-2450000 or BJD-2457000 (whichever the source states)".to_string()
        } else {
            "declare the time standard with its offset, e.g. BJD-2450000".to_string()
        };
        return Err(DataError::at_row(
            path,
            row,
            DataErrorKind::TimeStandard(format!(
                "time {t} declared as {standard} is Julian date {full}, outside the range of plausible observation dates (JD {JD_MIN}-{JD_MAX}, years 1968-2077); {advice}"
            )),
        ));
    }
    Ok(())
}

/// Checks that the RVs and errors are plausible for the declared unit (heuristic, see
/// [`KMS_MAX_MEDIAN_ERR`], [`MPS_MIN_SPREAD`] and [`MPS_MIN_ERR`]).
///
/// # Errors
/// A [`DataError`] about the file when the values look like the other unit.
pub(crate) fn check_unit(path: &Path, unit: RvUnit, data: &FileData) -> Result<(), DataError> {
    match unit {
        RvUnit::KilometresPerSecond => {
            let med = median(&data.err);
            if med > KMS_MAX_MEDIAN_ERR {
                return Err(DataError::whole_file(
                    path,
                    DataErrorKind::Unit(format!(
                        "the median rv_err is {med} in the declared unit km/s, i.e. {:.0} m/s, too large for planet work: the file is probably in m/s; declare its unit as m/s (heuristic: median error above {KMS_MAX_MEDIAN_ERR} km/s)",
                        med * 1000.0
                    )),
                ));
            }
        }
        RvUnit::MetresPerSecond => {
            let med = median(&data.rv);
            let spread = data.rv.iter().map(|v| (v - med).abs()).fold(0.0, f64::max);
            let max_err = data.err.iter().copied().fold(0.0, f64::max);
            if spread < MPS_MIN_SPREAD && max_err < MPS_MIN_ERR {
                return Err(DataError::whole_file(
                    path,
                    DataErrorKind::Unit(format!(
                        "in the declared unit m/s all rv lie within {spread:.2e} of their median and all rv_err are at most {max_err:.2e}, smaller than any spectrograph achieves: the file is probably in km/s; declare its unit as km/s (heuristic: spread below {MPS_MIN_SPREAD} m/s and errors below {MPS_MIN_ERR} m/s)"
                    )),
                ));
            }
        }
    }
    Ok(())
}

/// Below this median `rv_err` (m/s) a file declared in m/s gets a warning: the most
/// precise spectrographs reach about 0.1 m/s (common practice), while a km/s file read as
/// m/s has errors of 0.0005–0.01.
pub(crate) const MPS_PLAUSIBLE_ERR: f64 = 0.05;
/// Above this median |rv| (km/s) a file declared in km/s gets a warning: stars move
/// relative to the Sun by at most several hundred km/s (common practice), while an m/s
/// file read as km/s has systemic velocities of thousands.
pub(crate) const KMS_PLAUSIBLE_RV: f64 = 1000.0;

/// A warning (prefixed with the file) when the values are implausible for the declared
/// unit but not clearly in the other one (those are errors, see [`check_unit`]).
pub(crate) fn unit_warning(path: &Path, unit: RvUnit, data: &FileData) -> Option<String> {
    let file = path.display();
    match unit {
        RvUnit::MetresPerSecond => {
            let med = median(&data.err);
            (med < MPS_PLAUSIBLE_ERR).then(|| {
                format!(
                    "{file}: the median rv_err is {med:.2e} m/s, below what any spectrograph reaches (about 0.1 m/s at best): if the file is in km/s, declare unit = km/s"
                )
            })
        }
        RvUnit::KilometresPerSecond => {
            let abs: Vec<f64> = data.rv.iter().map(|v| v.abs()).collect();
            let med = median(&abs);
            (med > KMS_PLAUSIBLE_RV).then(|| {
                format!(
                    "{file}: the median |rv| is {med:.0} km/s, faster than any star moves: if the file is in m/s, declare unit = m/s"
                )
            })
        }
    }
}

/// Median of finite values (NaN for none).
pub(crate) fn median(values: &[f64]) -> f64 {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    let m = v.len() / 2;
    if v.len() % 2 == 1 {
        v[m]
    } else {
        0.5 * (v[m - 1] + v[m])
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::read::read_text;

    fn spec(path: &str) -> DataSpec {
        DataSpec::new(path)
    }

    fn run(path: &str, text: &str) -> Result<FileData, DataError> {
        let table = read_text(Path::new(path), text)?;
        interpret(&spec(path), &table)
    }

    #[test]
    fn roles_from_synonyms() {
        assert_eq!(role_of("BJD"), Some(Role::Time));
        assert_eq!(role_of(" RV err "), Some(Role::Err));
        assert_eq!(role_of("rv_err"), Some(Role::Err));
        assert_eq!(role_of("rv"), Some(Role::Rv));
        assert_eq!(role_of("Instrument"), Some(Role::Instrument));
        assert_eq!(role_of("fwhm"), None);
    }

    #[test]
    fn reads_columns_and_indicators() {
        let d = run(
            "obs/loom.csv",
            "BJD,rv,rv_err,fwhm,note\n2456000.1,1.5,0.5,7.1,a\n2456001.1,-2.0,0.6,,b\n",
        )
        .unwrap();
        assert_eq!(d.time, vec![2456000.1, 2456001.1]);
        assert_eq!(d.rv, vec![1.5, -2.0]);
        assert_eq!(d.instrument, vec!["loom", "loom"]);
        assert_eq!(d.indicators.len(), 1);
        assert_eq!(d.indicators[0].0, "fwhm");
        assert!(d.indicators[0].1[1].is_nan());
        assert_eq!(d.warnings.len(), 1);
        assert!(d.warnings[0].contains("'note' is not numeric"));
    }

    #[test]
    fn missing_column_is_a_header_error() {
        let e = run("a.csv", "# x\ntime,rv,fwhm\n1,2,3\n").unwrap_err();
        assert_eq!(e.row, Some(2));
        let msg = e.to_string();
        assert!(msg.starts_with("a.csv: row 2: no rv_err column"), "{msg}");
        assert!(msg.contains("time, rv, fwhm"), "{msg}");
    }

    #[test]
    fn two_time_columns() {
        let e = run("a.csv", "time,bjd,rv,rv_err\n1,1,2,3\n").unwrap_err();
        assert!(
            e.to_string()
                .contains("'time' and 'bjd' both name the time column")
        );
    }

    #[test]
    fn median_of_even_and_odd() {
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&[4.0, 1.0, 2.0, 3.0]), 2.5);
        assert!(median(&[]).is_nan());
    }

    #[test]
    fn time_advice() {
        let d = FileData {
            time: vec![56000.0],
            rv: vec![0.0],
            err: vec![1.0],
            instrument: vec!["x".into()],
            rows: vec![3],
            indicators: vec![],
            warnings: vec![],
        };
        let std: TimeStandard = "BJD-2450000".parse().unwrap();
        let msg = check_times(Path::new("a.txt"), &std, &d)
            .unwrap_err()
            .to_string();
        assert!(msg.starts_with("a.txt: row 3: time 56000"), "{msg}");
        assert!(msg.contains("declare MJD, RJD or BJD-2400000"), "{msg}");
        assert!(check_times(Path::new("a.txt"), &"MJD".parse().unwrap(), &d).is_ok());
    }
}
