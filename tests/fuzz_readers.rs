//! Property-based fuzzing of every reader: RV tables (CSV, TSV, whitespace text,
//! Parquet), the target file, and the saved results that `changes`, `render` and warm
//! starts read back. On any input a reader must return a value or a clear error naming
//! the file; it must never panic (a panic fails the case, and proptest shrinks it).
//!
//! Inputs are generated from a grammar of table and TOML pieces (so that cases reach the
//! deeper checks) and by mutating real files (byte flips, cuts, splices). The number of
//! cases per fuzzer is `PROPTEST_CASES` (by default 200 to 5000 per fuzzer, which keeps
//! this file to about half a minute in CI); each fuzzer prints its case count and wall time. The
//! random seed is fixed unless `PROPTEST_RNG_SEED` is set.
//! Inputs that once broke a reader are kept in `tests/hostile/` (see `tests/hostile.rs`).

use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use std::time::Instant;

use heft::data::{DataSpec, RvUnit, TimeStandard};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed, TestRunner};
use serde_json::Value;

/// Runs `test` on `PROPTEST_CASES` inputs from `strategy` (`default_cases` when unset);
/// prints the count and time.
fn fuzz<S: Strategy>(
    name: &str,
    default_cases: u32,
    strategy: S,
    test: impl Fn(S::Value) -> Result<(), String>,
) where
    S::Value: std::fmt::Debug,
{
    let n = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default_cases);
    // A fixed seed unless PROPTEST_RNG_SEED is set, so that CI runs the same cases.
    let rng_seed = match std::env::var("PROPTEST_RNG_SEED") {
        Ok(_) => Config::default().rng_seed,
        Err(_) => RngSeed::Fixed(0x4845_4654),
    };
    let mut runner = TestRunner::new(Config {
        cases: n,
        failure_persistence: None,
        rng_seed,
        ..Config::default()
    });
    let start = Instant::now();
    let result = runner.run(&strategy, |v| test(v).map_err(TestCaseError::fail));
    println!(
        "fuzz {name}: {n} cases in {:.2} s",
        start.elapsed().as_secs_f64()
    );
    if let Err(e) = result {
        panic!("{name}: {e}");
    }
}

fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("data-demo")
        .join(name)
}

/// A cell: mostly plausible values, with the hostile ones a table can hold.
fn cell() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => (2_459_000.0f64..2_460_000.0).prop_map(|x| format!("{x:.4}")),
        4 => (-50.0f64..50.0).prop_map(|x| format!("{x:.2}")),
        2 => (0.1f64..5.0).prop_map(|x| format!("{x:.2}")),
        1 => (-1e12f64..1e12).prop_map(|x| format!("{x:e}")),
        1 => prop::sample::select(vec![
            "", "nan", "NaN", "inf", "-inf", "1e400", "-1e-400", "-0", "0", "+1", ".", "-",
            "\"", "\"x,y\"", "\"\"", "0x1f", "1,5", "1 5", "é", "∞", "\u{feff}", "1e", "e5",
            "time", "rv", "rv_err", "instrument", "fwhm", "RV", "Time", "LOOM", "loom", "#",
            "2459000.5", "59000.5", "9000.5", "1.0", "1000", "0.001", "1e-9", "1e9",
        ])
        .prop_map(str::to_string),
        1 => "[A-Za-z_ ]{0,6}",
        1 => any::<String>().prop_map(|s| s.chars().take(8).collect()),
    ]
}

/// A table: an optional header (names from the accepted ones and others) and rows of
/// cells, joined with one separator, with comment and blank lines and CR line ends.
fn table_text() -> impl Strategy<Value = String> {
    let names = prop::sample::subsequence(
        vec![
            "time",
            "rv",
            "rv_err",
            "instrument",
            "bjd",
            "err",
            "fwhm",
            "bis",
            "rv",
        ],
        0..7,
    );
    let sep = prop::sample::select(vec![",", "\t", " ", "  ", ", ", " \t"]);
    let width = 2usize..6;
    (names, sep, width).prop_flat_map(|(names, sep, width)| {
        let n_cols = if names.is_empty() { width } else { names.len() };
        let row = prop::collection::vec(cell(), n_cols.saturating_sub(1)..=n_cols + 1);
        let line = prop_oneof![
            12 => row.prop_map(move |r| r.join(sep)),
            1 => Just(String::new()),
            1 => Just("# comment, with, commas".to_string()),
            1 => Just("   ".to_string()),
        ];
        (
            Just(names.join(sep)),
            prop::collection::vec(line, 0..30),
            any::<bool>(),
        )
            .prop_map(|(header, lines, crlf)| {
                let end = if crlf { "\r\n" } else { "\n" };
                let mut s = if header.is_empty() {
                    String::new()
                } else {
                    header + end
                };
                for l in lines {
                    s.push_str(&l);
                    s.push_str(end);
                }
                s
            })
    })
}

/// A change to a byte string.
#[derive(Clone, Debug)]
enum Mutation {
    Flip(usize, u8),
    Cut(usize),
    Delete(usize, usize),
    Insert(usize, Vec<u8>),
    Repeat(usize, usize),
}

fn mutations() -> impl Strategy<Value = Vec<Mutation>> {
    let m = prop_oneof![
        4 => (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Mutation::Flip(i, b)),
        1 => any::<usize>().prop_map(Mutation::Cut),
        2 => (any::<usize>(), 1usize..64).prop_map(|(i, n)| Mutation::Delete(i, n)),
        2 => (any::<usize>(), prop::collection::vec(any::<u8>(), 1..16))
            .prop_map(|(i, b)| Mutation::Insert(i, b)),
        1 => (any::<usize>(), 1usize..200).prop_map(|(i, n)| Mutation::Repeat(i, n)),
    ];
    prop::collection::vec(m, 1..6)
}

fn mutate(mut bytes: Vec<u8>, ms: &[Mutation]) -> Vec<u8> {
    for m in ms {
        let n = bytes.len().max(1);
        match m {
            Mutation::Flip(i, b) => {
                if !bytes.is_empty() {
                    bytes[i % n] = *b;
                }
            }
            Mutation::Cut(i) => bytes.truncate(i % n),
            Mutation::Delete(i, k) => {
                let a = (i % n).min(bytes.len());
                let b = (a + k).min(bytes.len());
                bytes.drain(a..b);
            }
            Mutation::Insert(i, b) => {
                let a = (i % n).min(bytes.len());
                bytes.splice(a..a, b.iter().copied());
            }
            Mutation::Repeat(i, k) => {
                let a = (i % n).min(bytes.len());
                let b = (a + k).min(bytes.len());
                let piece = bytes[a..b].to_vec();
                bytes.splice(b..b, piece);
            }
        }
    }
    bytes
}

fn unit_and_time() -> impl Strategy<Value = (RvUnit, TimeStandard)> {
    (
        prop::sample::select(vec![RvUnit::MetresPerSecond, RvUnit::KilometresPerSecond]),
        prop::sample::select(vec!["BJD_TDB", "MJD", "RJD", "BJD-2450000", "HJD", "JD"])
            .prop_map(|s| s.parse::<TimeStandard>().unwrap()),
    )
}

/// Loads `bytes` as an RV file named `name`; checks an error names the file and an
/// accepted set is sane.
fn check_load(name: &str, bytes: &[u8], unit: RvUnit, time: TimeStandard) -> Result<(), String> {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join(name);
    std::fs::write(&path, bytes).unwrap();
    let spec = DataSpec {
        unit,
        time,
        ..DataSpec::new(&path)
    };
    match heft::data::load(&[spec]) {
        Err(e) => {
            let msg = e.to_string();
            if !msg.starts_with(&path.display().to_string())
                || msg.len() <= path.as_os_str().len() + 2
            {
                return Err(format!("unclear error: {msg}"));
            }
        }
        Ok(set) => {
            let finite = set.time_d.iter().chain(&set.rv_mps).all(|x| x.is_finite());
            if !finite || set.err_mps.iter().any(|&e| !(e > 0.0 && e.is_finite())) {
                return Err(format!("accepted non-finite values: {set:?}"));
            }
            if set.time_d.windows(2).any(|w| w[0] > w[1]) {
                return Err("accepted set is not sorted".into());
            }
        }
    }
    Ok(())
}

#[test]
fn fuzz_text_tables_from_grammar() {
    let ext = prop::sample::select(vec!["csv", "tsv", "txt", "dat"]);
    fuzz(
        "text tables (grammar)",
        2000,
        (table_text(), ext, unit_and_time()),
        |(text, ext, (unit, time))| check_load(&format!("t.{ext}"), text.as_bytes(), unit, time),
    );
}

#[test]
fn fuzz_text_tables_mutated() {
    let files = prop::sample::select(vec!["quill.csv", "tarn.txt", "fennick.tsv"]);
    fuzz(
        "text tables (mutated demo files)",
        2000,
        (files, mutations()),
        |(file, ms)| {
            let bytes = mutate(std::fs::read(demo(file)).unwrap(), &ms);
            let time = if file == "tarn.txt" {
                "BJD-2450000".parse().unwrap()
            } else {
                TimeStandard::default()
            };
            check_load(file, &bytes, RvUnit::MetresPerSecond, time)
        },
    );
}

/// The demo's CSV file as Parquet, written by polars.
fn parquet_bytes() -> &'static [u8] {
    static BYTES: OnceLock<Vec<u8>> = OnceLock::new();
    BYTES.get_or_init(|| {
        use polars::prelude::*;
        let text = std::fs::read_to_string(demo("quill.csv")).unwrap();
        let rows: Vec<Vec<f64>> = text
            .lines()
            .skip(1)
            .map(|l| l.split(',').map(|x| x.parse().unwrap()).collect())
            .collect();
        let col = |i: usize, name: &str| {
            Column::new(name.into(), rows.iter().map(|r| r[i]).collect::<Vec<f64>>())
        };
        let names: Vec<String> = (0..rows.len()).map(|i| format!("I{}", i % 2)).collect();
        let mut df = DataFrame::new_infer_height(vec![
            col(0, "time"),
            col(1, "rv"),
            col(2, "rv_err"),
            Column::new("instrument".into(), names),
        ])
        .unwrap();
        let mut bytes = Vec::new();
        ParquetWriter::new(&mut bytes).finish(&mut df).unwrap();
        bytes
    })
}

#[test]
fn fuzz_parquet_mutated() {
    check_load(
        "p.parquet",
        parquet_bytes(),
        RvUnit::MetresPerSecond,
        TimeStandard::default(),
    )
    .unwrap();
    fuzz("Parquet tables (mutated)", 2000, mutations(), |ms| {
        let bytes = mutate(parquet_bytes().to_vec(), &ms);
        check_load(
            "p.parquet",
            &bytes,
            RvUnit::MetresPerSecond,
            TimeStandard::default(),
        )
    });
}

/// A TOML value of any kind, hostile ones included.
fn toml_value() -> impl Strategy<Value = String> {
    prop::sample::select(vec![
        "1",
        "0",
        "-1",
        "1.5",
        "-0.5",
        "nan",
        "inf",
        "-inf",
        "1e308",
        "1e-320",
        "0.999999",
        "18446744073709551615",
        "99999999999999999999",
        "\"\"",
        "\"x\"",
        "\"m/s\"",
        "\"km/s\"",
        "\"cm/s\"",
        "\"MJD\"",
        "\"BJD-2450000\"",
        "\"BJD-x\"",
        "\"circular\"",
        "\"weird\"",
        "true",
        "false",
        "[]",
        "[1, 2]",
        "[2, 1]",
        "[0, 0]",
        "[1]",
        "{}",
        "\"quill.csv\"",
        "\"/nonexistent.csv\"",
        "\"../quill.csv\"",
        "1979-05-27",
    ])
    .prop_map(str::to_string)
}

/// A line edit of a TOML text.
#[derive(Clone, Debug)]
enum Edit {
    /// Replace the value of line i (if it has one).
    Value(usize, String),
    /// Delete line i.
    Drop(usize),
    /// Insert `key = value` after line i.
    Add(usize, String, String),
    /// Duplicate line i.
    Twice(usize),
}

fn edits() -> impl Strategy<Value = Vec<Edit>> {
    let key = prop::sample::select(vec![
        "seed",
        "draws",
        "walkers",
        "max_steps",
        "oversample",
        "period_min_d",
        "period_max_d",
        "max_signals",
        "ensembles",
        "trend",
        "time_budget_s",
        "sample",
        "unit",
        "time",
        "mass_msun",
        "radius_rsun",
        "period_d",
        "tc",
        "label",
        "file",
        "uniform",
        "gaussian",
        "bounds",
        "[settings]",
        "[[data]]",
        "[[transit]]",
        "[priors.planet.b.k_mps]",
        "x",
    ])
    .prop_map(str::to_string);
    let e = prop_oneof![
        5 => (any::<usize>(), toml_value()).prop_map(|(i, v)| Edit::Value(i, v)),
        2 => any::<usize>().prop_map(Edit::Drop),
        2 => (any::<usize>(), key, toml_value()).prop_map(|(i, k, v)| Edit::Add(i, k, v)),
        1 => any::<usize>().prop_map(Edit::Twice),
    ];
    prop::collection::vec(e, 1..5)
}

fn edit(text: &str, es: &[Edit]) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for e in es {
        let n = lines.len().max(1);
        match e {
            Edit::Value(i, v) => {
                if let Some(line) = lines.get_mut(i % n)
                    && let Some((k, _)) = line.split_once('=')
                {
                    *line = format!("{k}= {v}");
                }
            }
            Edit::Drop(i) => {
                if !lines.is_empty() {
                    lines.remove(i % n);
                }
            }
            Edit::Add(i, k, v) => {
                let line = if k.starts_with('[') {
                    k.clone()
                } else {
                    format!("{k} = {v}")
                };
                lines.insert((i % n).min(lines.len()), line);
            }
            Edit::Twice(i) => {
                if let Some(line) = lines.get(i % n).cloned() {
                    lines.insert(i % n, line);
                }
            }
        }
    }
    lines.join("\n")
}

#[test]
fn fuzz_target_files() {
    let base = std::fs::read_to_string(demo("ostrel-12.toml")).unwrap();
    let path = demo("ostrel-12.toml");
    let strategy = prop_oneof![
        4 => edits().prop_map(Err),
        1 => mutations().prop_map(Ok),
    ];
    fuzz("target files", 5000, strategy, |how| {
        let text = match how {
            Err(es) => edit(&base, &es),
            Ok(ms) => String::from_utf8_lossy(&mutate(base.clone().into_bytes(), &ms)).into_owned(),
        };
        match heft::target::parse(&text, &path) {
            Err(e) => {
                let msg = e.to_string();
                if !msg.starts_with(&path.display().to_string()) {
                    return Err(format!("error does not name the file: {msg}"));
                }
            }
            Ok(t) => {
                let s = &t.settings;
                if !(t.star.mass_msun > 0.0 && s.period_min_d > 0.0 && s.draws >= 100) {
                    return Err(format!("accepted invalid settings: {t:?}"));
                }
            }
        }
        Ok(())
    });
}

/// A small complete run folder (demo, audit off, few draws), made once.
fn saved_run() -> &'static Path {
    static RUN: OnceLock<(tempfile::TempDir, PathBuf)> = OnceLock::new();
    &RUN.get_or_init(|| {
        let dir = tempfile::tempdir().unwrap();
        for name in ["ostrel-12.toml", "quill.csv", "tarn.txt", "fennick.tsv"] {
            std::fs::copy(demo(name), dir.path().join(name)).unwrap();
        }
        let target = dir.path().join("ostrel-12.toml");
        let text = std::fs::read_to_string(&target).unwrap();
        std::fs::write(
            &target,
            text.replace("draws = 20000", "draws = 500\naudit = false")
                .replace("oversample = 10.0", "oversample = 2.0"),
        )
        .unwrap();
        let out = dir.path().join("run");
        heft::runs::execute(&target, Some(&out), &mut |_| {}).unwrap();
        (dir, out)
    })
    .1
}

/// A JSON value mutated at random paths: values replaced by other kinds, keys removed.
fn mutate_json(v: &mut Value, choices: &[(usize, u8)], depth: usize) {
    let Some(&(pick, how)) = choices.get(depth) else {
        return;
    };
    let replacement = || match how % 8 {
        0 => Value::Null,
        1 => Value::from(-1.0),
        2 => Value::from("x"),
        3 => Value::Array(vec![]),
        4 => serde_json::json!({}),
        5 => Value::from(1e308),
        6 => Value::Bool(true),
        _ => Value::from(0),
    };
    match v {
        Value::Object(map) if !map.is_empty() => {
            let key = map.keys().nth(pick % map.len()).unwrap().clone();
            if how % 5 == 0 {
                map.remove(&key);
            } else if how % 3 == 0 {
                map.insert(key, replacement());
            } else {
                mutate_json(map.get_mut(&key).unwrap(), choices, depth + 1);
            }
        }
        Value::Array(items) if !items.is_empty() => {
            let n = items.len();
            if how % 5 == 0 {
                items.remove(pick % n);
            } else {
                mutate_json(&mut items[pick % n], choices, depth + 1);
            }
        }
        _ => *v = replacement(),
    }
}

#[test]
fn fuzz_saved_results_for_changes_and_warm_starts() {
    let text = std::fs::read_to_string(saved_run().join("results.json")).unwrap();
    let good: Value = serde_json::from_str(&text).unwrap();
    let paths = prop::collection::vec((any::<usize>(), any::<u8>()), 1..8);
    fuzz(
        "saved results (changes, warm start)",
        5000,
        prop::collection::vec(paths, 1..4),
        |all| {
            let mut bad = good.clone();
            for choices in &all {
                mutate_json(&mut bad, choices, 0);
            }
            let c = heft::runs::compare("a", &good, "b", &bad);
            let _ = heft::runs::changes_text(&c);
            let c = heft::runs::compare("b", &bad, "a", &good);
            let _ = heft::runs::changes_text(&c);
            for w in heft::pipeline::WarmPlanet::from_results(&bad) {
                let _ = w;
            }
            Ok(())
        },
    );
}

#[test]
fn fuzz_saved_run_folders_for_render() {
    let files = prop::sample::select(vec![
        "results.json",
        "data_used.csv",
        "periodograms.csv",
        "periodogram.json",
        "draws.parquet",
    ]);
    let json_paths = prop::collection::vec((any::<usize>(), any::<u8>()), 1..8);
    fuzz(
        "saved run folders (render)",
        200,
        (files, mutations(), json_paths, any::<bool>()),
        |(file, ms, choices, structured)| {
            let dir = tempfile::tempdir().unwrap();
            for e in std::fs::read_dir(saved_run()).unwrap() {
                let p = e.unwrap().path();
                std::fs::copy(&p, dir.path().join(p.file_name().unwrap())).unwrap();
            }
            let path = dir.path().join(file);
            let bytes = std::fs::read(&path).unwrap();
            let bad = if structured && file.ends_with(".json") {
                let mut v: Value = serde_json::from_slice(&bytes).unwrap();
                mutate_json(&mut v, &choices, 0);
                serde_json::to_vec(&v).unwrap()
            } else {
                mutate(bytes, &ms)
            };
            std::fs::write(&path, bad).unwrap();
            if let Err(e) = heft::report::render(dir.path()) {
                let msg = e.to_string();
                if !msg.contains(&dir.path().display().to_string()) {
                    return Err(format!("error does not name the file: {msg}"));
                }
            }
            Ok(())
        },
    );
}
