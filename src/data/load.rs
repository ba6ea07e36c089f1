//! Loading several RV files into one [`RvSet`]: read and check each file, convert units
//! and times, merge instruments and indicators, check across files, sort by time.

use std::path::Path;

use super::error::{DataError, DataErrorKind};
use super::validate::{self, FileData};
use super::{DataSpec, Indicator, Origin, RvSet, TimeScale};
use super::{TimeStandard, read};

/// Reads, checks and merges RV tables into one [`RvSet`].
///
/// Each file is read as described in `docs/input-formats.md` (CSV, TSV, whitespace-separated
/// text or Parquet; with a header or with the columns time, rv, rv_err[, instrument]).
/// Then:
/// - RVs and errors are multiplied by [`RvUnit::to_mps`](super::RvUnit::to_mps) of the
///   file's declared unit;
/// - times are read in the file's declared [`TimeStandard`] and counted in days from the
///   reference epoch [`RvSet::epoch_bjd`], the middle of the whole time span rounded to a
///   whole Julian day (so it is an exact number, and `time_d` keeps the full precision of
///   the input); JD and HJD times cannot be converted to BJD_TDB without the star's
///   coordinates: they are used as they are and a warning says so;
/// - the instrument of each row is the spec's instrument if given, else the file's
///   `instrument` column, else the file's stem; files may share an instrument;
///   [`RvSet::instruments`] is in order of first appearance;
/// - indicator columns are merged by name (case-insensitive), NaN where a file lacks one;
/// - points are sorted by time (stable), keeping their [`Origin`].
///
/// # Errors
/// A [`DataError`] naming the file, the row where one is at fault, and the problem: a
/// file that cannot be read or holds no data rows; a wrong column count or a value that is
/// not a number; a missing or non-finite time, rv or rv_err; an rv_err that is not
/// positive; a time that is not a plausible date in the declared standard; RVs implausible
/// for the declared unit; a point repeated exactly (same time, rv, rv_err and instrument)
/// or two different values at the same time for one instrument; an instrument with fewer
/// than two points.
pub fn load(specs: &[DataSpec]) -> Result<RvSet, DataError> {
    if specs.is_empty() {
        return Err(DataError::whole_file(Path::new(""), DataErrorKind::NoFiles));
    }
    let mut files = Vec::with_capacity(specs.len());
    for spec in specs {
        let table = read::read_table(&spec.path)?;
        let mut data = validate::interpret(spec, &table)?;
        validate::check_times(&spec.path, &spec.time, &data)?;
        validate::check_unit(&spec.path, spec.unit, &data)?;
        let unit_warning = validate::unit_warning(&spec.path, spec.unit, &data);
        data.warnings.extend(unit_warning);
        files.push(data);
    }
    let set = merge(specs, &files);
    check_duplicates(&set)?;
    check_instrument_sizes(&set)?;
    let mut order: Vec<usize> = (0..set.len()).collect();
    order.sort_by(|&a, &b| set.time_d[a].total_cmp(&set.time_d[b]));
    Ok(set.select(&order))
}

/// The reference epoch: middle of the span of full Julian dates, rounded to a whole day.
fn reference_epoch(specs: &[DataSpec], files: &[FileData]) -> f64 {
    let (lo, hi) = specs
        .iter()
        .zip(files)
        .flat_map(|(s, d)| d.time.iter().map(|&t| s.time.full_jd(t)))
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), t| {
            (lo.min(t), hi.max(t))
        });
    (0.5 * (lo + hi)).round()
}

/// Concatenates the files in input order, in internal units.
fn merge(specs: &[DataSpec], files: &[FileData]) -> RvSet {
    let epoch_bjd = reference_epoch(specs, files);
    let n: usize = files.iter().map(|d| d.time.len()).sum();
    let mut set = RvSet {
        epoch_bjd,
        time_d: Vec::with_capacity(n),
        rv_mps: Vec::with_capacity(n),
        err_mps: Vec::with_capacity(n),
        instrument: Vec::with_capacity(n),
        instruments: Vec::new(),
        origin: Vec::with_capacity(n),
        files: specs.iter().map(|s| s.path.clone()).collect(),
        indicators: Vec::new(),
        warnings: Vec::new(),
    };
    for d in files {
        for (name, _) in &d.indicators {
            if !set
                .indicators
                .iter()
                .any(|i| i.name.eq_ignore_ascii_case(name))
            {
                set.indicators.push(Indicator {
                    name: name.clone(),
                    values: Vec::with_capacity(n),
                });
            }
        }
    }
    for (k, (spec, d)) in specs.iter().zip(files).enumerate() {
        // offset − epoch is exact (both are whole or half days of similar size), so
        // adding it to the value as written loses nothing to the size of full dates.
        let shift = spec.time.offset_d - epoch_bjd;
        let factor = spec.unit.to_mps();
        for i in 0..d.time.len() {
            set.time_d.push(d.time[i] + shift);
            set.rv_mps.push(d.rv[i] * factor);
            set.err_mps.push(d.err[i] * factor);
            let name = &d.instrument[i];
            let idx = match set.instruments.iter().position(|s| s == name) {
                Some(idx) => idx,
                None => {
                    set.instruments.push(name.clone());
                    set.instruments.len() - 1
                }
            };
            set.instrument.push(idx);
            set.origin.push(Origin {
                file: k,
                row: d.rows[i],
            });
        }
        for indicator in &mut set.indicators {
            match d
                .indicators
                .iter()
                .find(|(name, _)| name.eq_ignore_ascii_case(&indicator.name))
            {
                Some((_, values)) => indicator.values.extend_from_slice(values),
                None => indicator
                    .values
                    .extend(std::iter::repeat_n(f64::NAN, d.time.len())),
            }
        }
        set.warnings.extend(d.warnings.iter().cloned());
        if let Some(w) = time_scale_warning(&spec.path, &spec.time) {
            set.warnings.push(w);
        }
    }
    set
}

/// The caveat for times not in BJD_TDB.
fn time_scale_warning(path: &Path, standard: &TimeStandard) -> Option<String> {
    let difference = match standard.scale {
        TimeScale::BjdTdb => return None,
        TimeScale::Jd => {
            "up to about 8.3 min (light travel across the Earth's orbit) plus about 1.1 min (TDB - UTC)"
        }
        TimeScale::Hjd => {
            "about 1.1 min if they are in UTC (TDB - UTC) plus up to about 4 s (Sun - barycentre light travel)"
        }
    };
    let same_offset = if standard.offset_d == 0.0 {
        "BJD_TDB".to_string()
    } else {
        format!("BJD-{}", standard.offset_d)
    };
    Some(format!(
        "{}: times are declared {standard}; heft cannot convert them to BJD_TDB without the star's coordinates and uses them as they are, so they differ from BJD_TDB by {difference}; if they are in fact BJD_TDB, declare {same_offset}",
        path.display()
    ))
}

/// Where point `i` is, for messages about another point.
fn describe(set: &RvSet, i: usize, from_file: usize) -> String {
    let o = set.origin[i];
    if o.file == from_file {
        format!("row {}", o.row)
    } else {
        format!("{} row {}", set.files[o.file].display(), o.row)
    }
}

/// Two times closer than this (days, about 1 ms) are the same time: far below any
/// exposure, far above the rounding of one value written as a full or an offset date.
const SAME_TIME_D: f64 = 1e-8;

/// True when two velocities (m/s) are the same value up to rounding (e.g. of km/s × 1000).
fn same_velocity(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs()) + 1e-9
}

/// Rejects two points of one instrument at the same time: a point repeated exactly (same
/// rv and rv_err, up to the rounding of the same value written in another unit or time
/// offset), or two different values for one exposure.
fn check_duplicates(set: &RvSet) -> Result<(), DataError> {
    let mut order: Vec<usize> = (0..set.len()).collect();
    order.sort_by(|&a, &b| set.time_d[a].total_cmp(&set.time_d[b]));
    for (k, &a) in order.iter().enumerate() {
        for &b in &order[k + 1..] {
            if set.time_d[b] - set.time_d[a] > SAME_TIME_D {
                break;
            }
            if set.instrument[a] != set.instrument[b] {
                continue;
            }
            let (first, second) = (a.min(b), a.max(b));
            let o = set.origin[second];
            let at = describe(set, first, o.file);
            let kind = if same_velocity(set.rv_mps[a], set.rv_mps[b])
                && same_velocity(set.err_mps[a], set.err_mps[b])
            {
                DataErrorKind::Duplicate { first: at }
            } else {
                DataErrorKind::Conflict {
                    first: at,
                    rv_mps: (set.rv_mps[first], set.rv_mps[second]),
                }
            };
            return Err(DataError::at_row(&set.files[o.file], o.row, kind));
        }
    }
    Ok(())
}

/// Rejects an instrument with fewer than two points (its offset could not be fitted).
fn check_instrument_sizes(set: &RvSet) -> Result<(), DataError> {
    let mut count = vec![0usize; set.n_instruments()];
    for &k in &set.instrument {
        count[k] += 1;
    }
    if let Some(k) = count.iter().position(|&c| c < 2) {
        let i = set
            .instrument
            .iter()
            .position(|&j| j == k)
            .expect("every instrument has a point");
        let o = set.origin[i];
        return Err(DataError::at_row(
            &set.files[o.file],
            o.row,
            DataErrorKind::TooFewPoints {
                instrument: set.instruments[k].clone(),
                n: count[k],
            },
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn file(time: &[f64]) -> FileData {
        FileData {
            time: time.to_vec(),
            rv: vec![1.0; time.len()],
            err: vec![1.0; time.len()],
            instrument: vec!["a".into(); time.len()],
            rows: (1..=time.len()).collect(),
            indicators: vec![],
            warnings: vec![],
        }
    }

    #[test]
    fn epoch_is_rounded_middle_and_times_keep_precision() {
        let bjd = DataSpec::new("a.csv");
        let rjd = DataSpec {
            time: "BJD-2400000".parse().unwrap(),
            ..DataSpec::new("b.csv")
        };
        let files = [
            file(&[2_456_000.123_456_789, 2_456_010.2]),
            file(&[56_020.987_654_321]),
        ];
        let set = merge(&[bjd, rjd], &files);
        assert_eq!(set.epoch_bjd, 2_456_011.0);
        assert_eq!(set.time_d[1], 2_456_010.2 - 2_456_011.0);
        // The offset value keeps all its digits: only 56 020.98… − 56 011 is rounded.
        assert_eq!(set.time_d[2], 56_020.987_654_321 - 56_011.0);
        assert!((set.time_d[2] - 9.987_654_321).abs() < 1e-11);
    }

    #[test]
    fn warnings_for_jd_and_hjd_only() {
        let p = Path::new("x.txt");
        assert!(time_scale_warning(p, &TimeStandard::default()).is_none());
        let w = time_scale_warning(p, &"HJD".parse().unwrap()).unwrap();
        assert!(w.starts_with("x.txt: times are declared HJD;"), "{w}");
        let w = time_scale_warning(p, &"MJD".parse().unwrap()).unwrap();
        assert!(
            w.contains("8.3 min") && w.contains("declare BJD-2400000.5"),
            "{w}"
        );
    }
}
