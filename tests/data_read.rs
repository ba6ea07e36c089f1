//! Reading RV tables end to end: small files written to a temporary folder, loaded with
//! `heft::data::load`, checked value by value; every bad input gives an error naming the
//! file, the row and the problem.

use std::fs;
use std::path::{Path, PathBuf};

use heft::data::{DataError, DataSpec, RvSet, RvUnit, TimeScale, load};
use tempfile::TempDir;

fn write(dir: &TempDir, name: &str, text: &str) -> PathBuf {
    let path = dir.path().join(name);
    fs::write(&path, text).unwrap();
    path
}

fn spec(path: &Path) -> DataSpec {
    DataSpec::new(path)
}

fn with_time(path: &Path, time: &str) -> DataSpec {
    DataSpec {
        time: time.parse().unwrap(),
        ..DataSpec::new(path)
    }
}

fn load_one(path: &Path) -> Result<RvSet, DataError> {
    load(&[spec(path)])
}

/// Asserts that loading fails with exactly `FILE: row ROW: PROBLEM...`, where the problem
/// starts with `problem`.
fn assert_error(result: Result<RvSet, DataError>, path: &Path, row: Option<usize>, problem: &str) {
    let err = result.expect_err("expected an error");
    let msg = err.to_string();
    let location = match row {
        Some(r) => format!("{}: row {r}: ", path.display()),
        None => format!("{}: ", path.display()),
    };
    assert!(
        msg.starts_with(&format!("{location}{problem}")),
        "message\n  {msg}\nshould start with\n  {location}{problem}"
    );
    assert_eq!(err.file, path);
    assert_eq!(err.row, row);
}

const CSV: &str = "\
# LOOM RVs of a made-up star
time,rv,rv_err
2456000.10,1.5,0.5
2456003.20,-2.0,0.6

2456001.30,0.5,0.4
";

// ---------------------------------------------------------------- formats

#[test]
fn csv_with_header() {
    let dir = TempDir::new().unwrap();
    let path = write(&dir, "loom.csv", CSV);
    let set = load_one(&path).unwrap();
    assert_eq!(set.len(), 3);
    assert_eq!(set.instruments, vec!["loom"]);
    assert_eq!(set.files, vec![path.clone()]);
    assert!(set.warnings.is_empty(), "{:?}", set.warnings);
    // Sorted by time, origins keep the file's line numbers (comment and blank counted).
    let rows: Vec<usize> = set.origin.iter().map(|o| o.row).collect();
    assert_eq!(rows, vec![3, 6, 4]);
    assert_eq!(set.rv_mps, vec![1.5, 0.5, -2.0]);
    assert_eq!(set.err_mps, vec![0.5, 0.4, 0.6]);
    // Epoch: middle of 2456000.10 .. 2456003.20, rounded to a whole day.
    assert_eq!(set.epoch_bjd, 2_456_002.0);
    let full: Vec<f64> = set.time_d.iter().map(|t| t + set.epoch_bjd).collect();
    for (a, b) in full.iter().zip([2456000.10, 2456001.30, 2456003.20]) {
        assert!((a - b).abs() < 1e-9, "{a} vs {b}");
    }
}

#[test]
fn tsv_with_header_and_synonyms() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "kestrel.tsv",
        "BJD\trv\trv_err\n2456000.1\t1.5\t0.5\n2456001.1\t2.5\t0.5\n",
    );
    let set = load_one(&path).unwrap();
    assert_eq!(set.rv_mps, vec![1.5, 2.5]);
    assert_eq!(set.instruments, vec!["kestrel"]);
}

#[test]
fn whitespace_headerless() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "wren.txt",
        "# no header\n  2456000.1   1.5  0.5\n2456001.1\t\t2.5 0.5\n",
    );
    let set = load_one(&path).unwrap();
    assert_eq!(set.rv_mps, vec![1.5, 2.5]);
    assert_eq!(set.origin[1].row, 3);
    assert_eq!(set.instruments, vec!["wren"]);
}

#[test]
fn parquet_file() {
    use polars::prelude::*;
    let dir = TempDir::new().unwrap();
    let path = dir.path().join("heron.parquet");
    let mut df = df!(
        "time" => [2456001.5, 2456000.5, 2456002.5, 2456003.5],
        "rv" => [3.0, 1.0, 2.0, 4.0],
        "rv_err" => [1.0, 1.0, 1.0, 1.0],
        "instrument" => ["CARM-VIS", "CARM-VIS", "CARM-NIR", "CARM-NIR"],
        "s_index" => [0.1, 0.2, 0.3, 0.4],
    )
    .unwrap();
    ParquetWriter::new(fs::File::create(&path).unwrap())
        .finish(&mut df)
        .unwrap();
    let set = load_one(&path).unwrap();
    assert_eq!(set.rv_mps, vec![1.0, 3.0, 2.0, 4.0]);
    assert_eq!(set.instruments, vec!["CARM-VIS", "CARM-NIR"]);
    assert_eq!(set.instrument, vec![0, 0, 1, 1]);
    let rows: Vec<usize> = set.origin.iter().map(|o| o.row).collect();
    assert_eq!(rows, vec![2, 1, 3, 4]);
    assert_eq!(set.indicators[0].name, "s_index");
    assert_eq!(set.indicators[0].values, vec![0.2, 0.1, 0.3, 0.4]);
}

#[test]
fn parquet_bad_value_names_row() {
    use polars::prelude::*;
    let dir = TempDir::new().unwrap();
    let path = dir.path().join("bad.parquet");
    let mut df = df!(
        "time" => [2456000.5, 2456001.5],
        "rv" => [1.0, 2.0],
        "rv_err" => [1.0, -0.3],
    )
    .unwrap();
    ParquetWriter::new(fs::File::create(&path).unwrap())
        .finish(&mut df)
        .unwrap();
    assert_error(
        load_one(&path),
        &path,
        Some(2),
        "rv_err must be positive, got -0.3",
    );
}

// ---------------------------------------------------------------- instruments

#[test]
fn instrument_column_with_header() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "all.csv",
        "time,rv,rv_err,instrument\n\
         2456000.1,1,1,\"LOOM-N\"\n\
         2456000.2,2,1,WREN\n\
         2456000.3,3,1,LOOM-N\n\
         2456000.4,4,1,WREN\n",
    );
    let set = load_one(&path).unwrap();
    assert_eq!(set.instruments, vec!["LOOM-N", "WREN"]);
    assert_eq!(set.instrument, vec![0, 1, 0, 1]);
}

#[test]
fn instrument_column_headerless() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "mixed.txt",
        "2456000.1 1 1 WREN\n2456000.2 2 1 TEAL\n2456000.3 3 1 TEAL\n2456000.4 4 1 WREN\n",
    );
    let set = load_one(&path).unwrap();
    assert_eq!(set.instruments, vec!["WREN", "TEAL"]);
    assert_eq!(set.instrument, vec![0, 1, 1, 0]);
}

#[test]
fn headerless_numeric_instrument_column_warns() {
    let dir = TempDir::new().unwrap();
    let path = write(&dir, "four.txt", "2456000.1 1 1 7\n2456000.2 2 1 7\n");
    let set = load_one(&path).unwrap();
    assert_eq!(set.instruments, vec!["7"]);
    assert_eq!(set.warnings.len(), 1);
    assert!(
        set.warnings[0].contains("holds only numbers"),
        "{:?}",
        set.warnings
    );
}

#[test]
fn larger_file_loads_quickly() {
    use std::fmt::Write;
    let dir = TempDir::new().unwrap();
    let mut text = String::from("time,rv,rv_err,instrument,fwhm\n");
    for i in 0..20_000 {
        let inst = ["A", "B"][i % 2];
        writeln!(
            text,
            "{},{},1.5,{inst},7.0",
            2_455_000.0 + i as f64 * 0.1,
            i % 17
        )
        .unwrap();
    }
    let path = write(&dir, "big.csv", &text);
    let start = std::time::Instant::now();
    let set = load_one(&path).unwrap();
    assert_eq!(set.len(), 20_000);
    assert_eq!(set.origin[19_999].row, 20_001);
    assert!(
        start.elapsed().as_secs_f64() < 10.0,
        "{:?}",
        start.elapsed()
    );
}

#[test]
fn spec_instrument_overrides_column_and_stem() {
    let dir = TempDir::new().unwrap();
    let a = write(
        &dir,
        "a.csv",
        "time,rv,rv_err,instrument\n2456000.1,1,1,X\n2456000.2,2,1,Y\n",
    );
    let b = write(
        &dir,
        "b.csv",
        "time,rv,rv_err\n2456000.3,1,1\n2456000.4,2,1\n",
    );
    let specs = [
        DataSpec {
            instrument: Some("LOOM".into()),
            ..spec(&a)
        },
        DataSpec {
            instrument: Some("LOOM".into()),
            ..spec(&b)
        },
    ];
    let set = load(&specs).unwrap();
    assert_eq!(set.instruments, vec!["LOOM"]);
    assert_eq!(set.instrument, vec![0; 4]);
}

#[test]
fn same_time_in_two_instruments_is_fine() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "two.csv",
        "time,rv,rv_err,instrument\n2456000.1,1,1,A\n2456000.1,1,1,B\n2456000.2,1,1,A\n2456000.2,1,1,B\n",
    );
    assert_eq!(load_one(&path).unwrap().len(), 4);
}

// ---------------------------------------------------------------- units and times

#[test]
fn km_per_s_is_converted() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "sedge.csv",
        "time,rv,rv_err\n2456000.1,-12.3456,0.004\n2456001.1,-12.3401,0.005\n",
    );
    let set = load(&[DataSpec {
        unit: RvUnit::KilometresPerSecond,
        ..spec(&path)
    }])
    .unwrap();
    assert!((set.rv_mps[0] + 12_345.6).abs() < 1e-9);
    assert!((set.err_mps[1] - 5.0).abs() < 1e-12);
}

#[test]
fn every_time_standard_gives_the_same_times() {
    let dir = TempDir::new().unwrap();
    // The same two instants written in each standard (offsets only: the scales are not
    // converted, so the values differ by the offset alone).
    let cases = [
        ("BJD_TDB", 2_456_000.25, None),
        ("BJD-2450000", 6_000.25, None),
        ("BJD-2457000", -1_000.0 + 0.25, None),
        ("RJD", 56_000.25, Some(TimeScale::Jd)),
        ("MJD", 55_999.75, Some(TimeScale::Jd)),
        ("HJD", 2_456_000.25, Some(TimeScale::Hjd)),
        ("JD", 2_456_000.25, Some(TimeScale::Jd)),
    ];
    for (name, t0, warns) in cases {
        let path = write(
            &dir,
            &format!("{}.csv", name.replace('-', "_")),
            &format!("time,rv,rv_err\n{t0},1,1\n{},2,1\n", t0 + 10.0),
        );
        let set = load(&[with_time(&path, name)]).unwrap();
        assert_eq!(set.epoch_bjd, 2_456_005.0, "{name}");
        assert!(
            (set.time_d[0] + 4.75).abs() < 1e-9,
            "{name}: {}",
            set.time_d[0]
        );
        assert!(
            (set.time_d[1] - 5.25).abs() < 1e-9,
            "{name}: {}",
            set.time_d[1]
        );
        match warns {
            None => assert!(set.warnings.is_empty(), "{name}: {:?}", set.warnings),
            Some(_) => {
                assert_eq!(set.warnings.len(), 1, "{name}");
                let w = &set.warnings[0];
                assert!(
                    w.starts_with(&format!("{}: times are declared", path.display())),
                    "{w}"
                );
                assert!(w.contains("BJD_TDB"), "{w}");
            }
        }
    }
}

#[test]
fn jd_warning_gives_the_size_of_the_difference() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "old.csv",
        "time,rv,rv_err\n2450000.5,1,1\n2450001.5,2,1\n",
    );
    let set = load(&[with_time(&path, "JD")]).unwrap();
    assert!(set.warnings[0].contains("8.3 min"), "{}", set.warnings[0]);
    assert!(set.warnings[0].contains("1.1 min"), "{}", set.warnings[0]);
}

// ---------------------------------------------------------------- merging

#[test]
fn multi_file_merge() {
    let dir = TempDir::new().unwrap();
    let a = write(
        &dir,
        "LOOM.csv",
        "time,rv,rv_err,fwhm\n2456000.1,1,1,7.0\n2456002.1,2,1,7.1\n",
    );
    let b = write(&dir, "WREN.txt", "bjd rv err\n6001.1 3 2\n6003.1 4 2\n");
    let c = write(
        &dir,
        "LOOM-2.csv",
        "time,rv,rv_err,instrument,bis\n2456004.1,5,1,LOOM,0.1\n",
    );
    let specs = [spec(&a), with_time(&b, "BJD-2450000"), spec(&c)];
    let set = load(&specs).unwrap();
    assert_eq!(set.files, vec![a.clone(), b.clone(), c.clone()]);
    assert_eq!(set.instruments, vec!["LOOM", "WREN"]);
    assert_eq!(set.rv_mps, vec![1.0, 3.0, 2.0, 4.0, 5.0]);
    assert_eq!(set.instrument, vec![0, 1, 0, 1, 0]);
    let files: Vec<usize> = set.origin.iter().map(|o| o.file).collect();
    assert_eq!(files, vec![0, 1, 0, 1, 2]);
    assert_eq!(set.epoch_bjd, 2_456_002.0);
    // Indicators: union of names, NaN where a file lacks the column.
    let names: Vec<&str> = set.indicators.iter().map(|i| i.name.as_str()).collect();
    assert_eq!(names, vec!["fwhm", "bis"]);
    let fwhm = &set.indicators[0].values;
    assert_eq!(fwhm[0], 7.0);
    assert!(fwhm[1].is_nan());
    assert_eq!(fwhm[2], 7.1);
    assert!(fwhm[4].is_nan());
    let bis = &set.indicators[1].values;
    assert!(bis[..4].iter().all(|v| v.is_nan()));
    assert_eq!(bis[4], 0.1);
}

#[test]
fn indicator_missing_values_are_nan_and_text_columns_ignored() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "ind.csv",
        "time,rv,rv_err,rhk,comment\n2456000.1,1,1,-4.9,ok\n2456001.1,2,1,,cloudy\n2456002.1,3,1,nan,ok\n",
    );
    let set = load_one(&path).unwrap();
    assert_eq!(set.indicators.len(), 1);
    let rhk = &set.indicators[0].values;
    assert_eq!(rhk[0], -4.9);
    assert!(rhk[1].is_nan() && rhk[2].is_nan());
    assert_eq!(set.warnings.len(), 1);
    assert!(set.warnings[0].contains("'comment' is not numeric and is ignored"));
}

// ---------------------------------------------------------------- bad input

#[test]
fn no_files() {
    let err = load(&[]).unwrap_err();
    assert_eq!(err.to_string(), "no RV files given");
}

#[test]
fn missing_file() {
    let dir = TempDir::new().unwrap();
    let path = dir.path().join("nowhere.csv");
    assert_error(load_one(&path), &path, None, "cannot read: ");
}

#[test]
fn unreadable_binary_file() {
    let dir = TempDir::new().unwrap();
    let path = dir.path().join("rv.csv");
    fs::write(&path, [b't', b'i', 0xff, 0xfe, b'\n']).unwrap();
    assert_error(load_one(&path), &path, None, "not a text table");
}

#[test]
fn no_data_rows() {
    let dir = TempDir::new().unwrap();
    for (name, text) in [
        ("empty.csv", ""),
        ("comments.csv", "# nothing here\n\n"),
        ("header.csv", "time,rv,rv_err\n# no data\n"),
    ] {
        let path = write(&dir, name, text);
        assert_error(load_one(&path), &path, None, "no data rows");
    }
}

#[test]
fn wrong_column_count() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "short.csv",
        "time,rv,rv_err\n2456000.1,1,1\n# c\n2456000.2,2\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(4),
        "expected 3 columns, found 2",
    );
}

#[test]
fn headerless_with_too_many_columns() {
    let dir = TempDir::new().unwrap();
    let path = write(&dir, "wide.txt", "2456000.1 1 1 7.0 0.1\n");
    assert_error(
        load_one(&path),
        &path,
        Some(1),
        "a table without a header must have the columns time, rv, rv_err",
    );
}

#[test]
fn header_without_rv_err() {
    let dir = TempDir::new().unwrap();
    let path = write(&dir, "noerr.csv", "time,rv,fwhm\n2456000.1,1,1\n");
    assert_error(
        load_one(&path),
        &path,
        Some(1),
        "no rv_err column (the columns are: time, rv, fwhm)",
    );
}

#[test]
fn non_numeric_value_names_the_column() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "text.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456000.2,1.2.3,1\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(3),
        "rv is not a number: '1.2.3'",
    );
    // Headerless: the first row with a bad value is still read as data.
    let path = write(&dir, "text2.txt", "2456000.1 abc 1\n2456000.2 1 1\n");
    assert_error(load_one(&path), &path, Some(1), "rv is not a number: 'abc'");
    // Indicators too.
    let path = write(
        &dir,
        "text3.csv",
        "time,rv,rv_err,fwhm\n2456000.1,1,1,7\n2456000.2,1,1,wide\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(3),
        "fwhm is not a number: 'wide'",
    );
}

#[test]
fn missing_required_value() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "hole.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456000.2,,1\n",
    );
    assert_error(load_one(&path), &path, Some(3), "rv is missing");
}

#[test]
fn non_finite_values() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "nan.csv",
        "time,rv,rv_err\n2456000.1,NaN,1\n2456000.2,1,1\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(2),
        "rv must be finite, got NaN",
    );
    let path = write(
        &dir,
        "inf.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456000.2,1,inf\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(3),
        "rv_err must be finite, got inf",
    );
}

#[test]
fn non_positive_errors() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "harbor.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456000.2,1,-0.3\n",
    );
    let err = load_one(&path).unwrap_err();
    assert_eq!(
        err.to_string(),
        format!(
            "{}: row 3: rv_err must be positive, got -0.3",
            path.display()
        )
    );
    let path = write(
        &dir,
        "zero.csv",
        "time,rv,rv_err\n2456000.1,1,0\n2456000.2,1,1\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(2),
        "rv_err must be positive, got 0",
    );
}

#[test]
fn duplicate_rows_in_one_file() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "dup.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456000.2,2,1\n2456000.1,1,1\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(4),
        "duplicate of row 2: same time, rv, rv_err and instrument",
    );
}

#[test]
fn duplicate_rows_across_files() {
    let dir = TempDir::new().unwrap();
    let a = write(
        &dir,
        "a.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456000.2,2,1\n",
    );
    let b = write(&dir, "b.txt", "6000.2 2 1\n6000.3 3 1\n");
    let specs = [
        DataSpec {
            instrument: Some("X".into()),
            ..spec(&a)
        },
        DataSpec {
            instrument: Some("X".into()),
            ..with_time(&b, "BJD-2450000")
        },
    ];
    assert_error(
        load(&specs),
        &b,
        Some(1),
        &format!("duplicate of {} row 3", a.display()),
    );
}

#[test]
fn instrument_with_one_point() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "lonely.csv",
        "time,rv,rv_err,instrument\n2456000.1,1,1,A\n2456000.2,1,1,B\n2456000.3,2,1,A\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(3),
        "instrument 'B' has only 1 point; each instrument needs at least 2",
    );
}

#[test]
fn full_dates_declared_as_offset() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "full.csv",
        "time,rv,rv_err\n2456000.1,1,1\n2456001.1,2,1\n",
    );
    let result = load(&[with_time(&path, "MJD")]);
    assert_error(
        result,
        &path,
        Some(2),
        "time 2456000.1 declared as MJD is Julian date",
    );
    let msg = load(&[with_time(&path, "BJD-2450000")])
        .unwrap_err()
        .to_string();
    assert!(msg.contains("look like full Julian dates"), "{msg}");
    assert!(msg.contains("declare BJD_TDB"), "{msg}");
}

#[test]
fn offset_dates_declared_as_full() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "short.csv",
        "time,rv,rv_err\n5000.1,1,1\n5001.1,2,1\n",
    );
    assert_error(
        load_one(&path),
        &path,
        Some(2),
        "time 5000.1 declared as BJD_TDB is Julian date 5000.1, outside the range",
    );
    let msg = load_one(&path).unwrap_err().to_string();
    assert!(msg.contains("minus 2 450 000"), "{msg}");
    assert!(msg.contains("declare BJD-2450000"), "{msg}");
    // MJD-like values declared full.
    let path = write(
        &dir,
        "mjd.csv",
        "time,rv,rv_err\n56000.1,1,1\n56001.1,2,1\n",
    );
    let msg = load_one(&path).unwrap_err().to_string();
    assert!(msg.contains("declare MJD, RJD or BJD-2400000"), "{msg}");
}

#[test]
fn m_per_s_declared_as_km_per_s() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "loom.csv",
        "time,rv,rv_err\n2456000.1,12.3,1.2\n2456001.1,-4.5,1.5\n",
    );
    let result = load(&[DataSpec {
        unit: RvUnit::KilometresPerSecond,
        ..spec(&path)
    }]);
    assert_error(
        result,
        &path,
        None,
        "the median rv_err is 1.35 in the declared unit km/s",
    );
    let msg = load(&[DataSpec {
        unit: RvUnit::KilometresPerSecond,
        ..spec(&path)
    }])
    .unwrap_err()
    .to_string();
    assert!(
        msg.contains("probably in m/s; declare its unit as m/s"),
        "{msg}"
    );
}

#[test]
fn km_per_s_declared_as_m_per_s() {
    let dir = TempDir::new().unwrap();
    let path = write(
        &dir,
        "sedge.csv",
        "time,rv,rv_err\n2456000.1,-12.345,0.004\n2456001.1,-12.341,0.005\n2456002.1,-12.350,0.004\n",
    );
    assert_error(
        load_one(&path),
        &path,
        None,
        "in the declared unit m/s all rv lie within",
    );
    let msg = load_one(&path).unwrap_err().to_string();
    assert!(
        msg.contains("probably in km/s; declare its unit as km/s"),
        "{msg}"
    );
}

#[test]
fn errors_are_ordinary_values() {
    // The error type is usable with `?` into anyhow / Box<dyn Error>, and Send + Sync.
    fn is_error<E: std::error::Error + Send + Sync + 'static>() {}
    is_error::<DataError>();
}
