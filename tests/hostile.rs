//! Hostile inputs kept as regression tests: each bad RV table, target file or saved run
//! folder gets exit 2 (bad input) and a message naming the file, the row where one is at
//! fault, and the problem; never a panic. `docs/bad-inputs.md` lists the same inputs
//! with their messages. Binary inputs found by the fuzzers are in `tests/hostile/`.

mod common;

use common::{heft, stderr};

use std::path::{Path, PathBuf};

fn hostile(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/hostile")
        .join(name)
}

/// Runs `args`, checks exit 2, no panic and every needle; prints the message.
fn refused(args: &[&str], needles: &[&str]) {
    let out = heft(args);
    let msg = stderr(&out);
    println!("{args:?}\n  → {}", msg.trim());
    assert_eq!(out.status.code(), Some(2), "{args:?}: {msg}");
    assert!(!msg.contains("panicked"), "{msg}");
    for n in needles {
        assert!(msg.contains(n), "{args:?}: message lacks '{n}': {msg}");
    }
}

/// Ten good rows (times 3.1 d apart from BJD 2459000).
fn good_rows() -> String {
    (0..10)
        .map(|i| {
            let i = f64::from(i);
            format!("{},{:.3},1.0\n", 2459000.0 + 3.1 * i, (0.7 * i).sin() * 5.0)
        })
        .collect()
}

/// A bad table: file name, contents, extra arguments, what the message must say.
type Case = (&'static str, Vec<u8>, Vec<&'static str>, Vec<&'static str>);

#[test]
fn bad_rv_tables() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let rows = good_rows();
    let head = "time,rv,rv_err\n";
    let cases: Vec<Case> = vec![
        ("empty.csv", b"".to_vec(), vec![], vec!["no data rows"]),
        ("header-only.csv", head.into(), vec![], vec!["no data rows"]),
        (
            "binary.csv",
            vec![0x50, 0x4b, 0x03, 0x04, 0xff, 0xfe, 0x00, 0x9c],
            vec![],
            vec!["not a text table (invalid UTF-8 at byte 4)"],
        ),
        (
            "unclosed-quote.csv",
            format!("{head}{rows}2459100.5,\"1.0,0.5\n").into(),
            vec![],
            vec!["row 12", "unclosed double quote"],
        ),
        (
            "short-row.csv",
            format!("{head}{rows}2459100.5,1.0\n").into(),
            vec![],
            vec!["row 12", "expected 3 columns, found 2"],
        ),
        (
            "text-rv.csv",
            format!("{head}{rows}2459100.5,abc,0.5\n").into(),
            vec![],
            vec!["row 12", "rv is not a number: 'abc'"],
        ),
        (
            "nan-time.csv",
            format!("{head}{rows}nan,1.0,0.5\n").into(),
            vec![],
            vec!["row 12", "time must be finite"],
        ),
        (
            "inf-rv.csv",
            format!("{head}{rows}2459100.5,inf,0.5\n").into(),
            vec![],
            vec!["row 12", "rv must be finite"],
        ),
        (
            "negative-err.csv",
            format!("{head}{rows}2459100.5,1.0,-0.5\n").into(),
            vec![],
            vec!["row 12", "rv_err must be positive, got -0.5"],
        ),
        (
            "zero-err.csv",
            format!("{head}{rows}2459100.5,1.0,0\n").into(),
            vec![],
            vec!["row 12", "rv_err must be positive, got 0"],
        ),
        (
            "duplicate.csv",
            format!("{head}{rows}2459000.0,0.000,1.0\n").into(),
            vec![],
            vec!["row 12", "duplicate of row 2"],
        ),
        (
            "conflict.csv",
            format!("{head}{rows}2459000.0,3.0,1.0\n").into(),
            vec![],
            vec!["row 12", "conflicts with row 2"],
        ),
        (
            "lonely.csv",
            format!(
                "time,rv,rv_err,instrument\n{}2459100.5,1.0,0.5,B\n",
                rows.replace(",1.0\n", ",1.0,A\n")
            )
            .into(),
            vec![],
            vec!["instrument 'B' has only 1 point"],
        ),
        (
            "mjd-as-bjd.csv",
            format!("{head}{}", rows.replace("2459", "59")).into(),
            vec![],
            vec!["row 2", "time"],
        ),
        (
            "kms-as-mps.csv",
            format!(
                "{head}{}",
                (0..10)
                    .map(|i| format!("{},-12.3456{i},0.0012\n", 2459000.0 + 3.1 * f64::from(i)))
                    .collect::<String>()
            )
            .into(),
            vec![],
            vec!["probably in km/s"],
        ),
        (
            "mps-as-kms.csv",
            format!("{head}{}", rows.replace(",1.0\n", ",2.5\n")).into(),
            vec!["--unit", "km/s"],
            vec!["probably in m/s"],
        ),
        (
            "five-headerless.csv",
            rows.replace(",1.0\n", ",1.0,A,7\n").into(),
            vec![],
            vec!["row 1", "this one has 5 columns"],
        ),
        (
            "two-rv.csv",
            format!(
                "time,rv,rv,rv_err\n{}",
                rows.replace(",1.0\n", ",1.0,1.0\n")
            )
            .into(),
            vec![],
            vec!["row 1", "columns 2 and 3 are both named 'rv'"],
        ),
        (
            "no-rv.csv",
            format!("time,velocity,rv_err\n{rows}").into(),
            vec![],
            vec!["rv"],
        ),
        (
            "text.parquet",
            format!("{head}{rows}").into(),
            vec![],
            vec!["cannot parse table"],
        ),
    ];
    for (name, bytes, extra, needles) in cases {
        let path = d.join(name);
        std::fs::write(&path, bytes).unwrap();
        let mut args = vec!["fit", path.to_str().unwrap()];
        args.extend(extra);
        let mut all = vec![name];
        all.extend(needles);
        refused(&args, &all);
    }
    let missing = d.join("missing.csv");
    refused(
        &["fit", missing.to_str().unwrap()],
        &["missing.csv", "cannot read"],
    );
    let damaged = hostile("damaged-metadata.parquet");
    refused(
        &["fit", damaged.to_str().unwrap()],
        &["damaged-metadata.parquet", "damaged Parquet file"],
    );
}

/// Found by the Parquet fuzzer: a page header with a negative value count made polars'
/// decoder ask for an impossible amount of memory, and the allocation failure ended the
/// process (exit 134). The page headers are now checked before decoding.
#[test]
fn damaged_parquet_page_header() {
    let path = hostile("huge-allocation.parquet");
    refused(
        &["fit", path.to_str().unwrap()],
        &[
            "huge-allocation.parquet",
            "damaged Parquet file: page value count -92 out of range",
        ],
    );
}

/// The demo's data with the target file `text`.
fn target(dir: &Path, text: &str) -> PathBuf {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("data-demo");
    for name in ["quill.csv", "tarn.txt", "fennick.tsv"] {
        std::fs::copy(demo.join(name), dir.join(name)).unwrap();
    }
    let path = dir.join("t.toml");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn bad_target_files() {
    let base = "name = \"x\"\n[star]\nmass_msun = 0.9\n[[data]]\nfile = \"quill.csv\"\n";
    let cases: Vec<(String, Vec<&str>)> = vec![
        (
            "not toml at all {".into(),
            vec!["TOML parse error at line 1"],
        ),
        (
            "name = \"x\"\n[[data]]\nfile = \"quill.csv\"\n".into(),
            vec!["missing field `star`"],
        ),
        (
            format!("{base}mistake = 1\n"),
            vec!["unknown field `mistake`"],
        ),
        (
            base.replace("0.9", "-1.0"),
            vec!["star.mass_msun: must be a positive number, got -1"],
        ),
        (
            format!("{base}[settings]\nwalkers = 7\n"),
            vec!["settings.walkers: must be 0 (automatic) or an even number ≥ 4, got 7"],
        ),
        (
            format!("{base}[settings]\nactivity = \"joint\"\nactivity_indicator = 5\n"),
            vec!["an indicator column name or a list of names"],
        ),
        (
            format!("{base}time = \"GPS\"\n"),
            vec!["data[0].time", "GPS"],
        ),
        (
            format!("{base}[settings]\nperiod_min_d = 10.0\nperiod_max_d = 5.0\n"),
            vec!["settings.period_max_d: 5 must exceed period_min_d = 10"],
        ),
        (
            base.replace("quill.csv", "gone.csv"),
            vec!["gone.csv", "cannot read"],
        ),
        (
            format!(
                "{base}[[transit]]\nlabel = \"b\"\nperiod_d = 11.8\ntc = 2460412.67\nrp_rs = 1.5\n"
            ),
            vec!["transit[0].rp_rs: radius ratio 1.5 must be below 1"],
        ),
    ];
    for (text, needles) in cases {
        let dir = tempfile::tempdir().unwrap();
        let path = target(dir.path(), &text);
        let mut all = vec!["t.toml"];
        all.extend(needles);
        if text.contains("gone.csv") {
            all.remove(0);
        }
        refused(&["run", path.to_str().unwrap()], &all);
        assert!(!dir.path().join("runs").exists(), "nothing written");
    }
}

#[test]
fn bad_saved_run_folders() {
    let dir = tempfile::tempdir().unwrap();
    let text = "name = \"x\"\n[star]\nmass_msun = 0.9\n[[data]]\nfile = \"quill.csv\"\n[settings]\naudit = false\nsample = false\ndraws = 500\n";
    let path = target(dir.path(), text);
    let run = dir.path().join("run");
    let out = heft(&[
        "run",
        path.to_str().unwrap(),
        "--out",
        run.to_str().unwrap(),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let cases: Vec<(&str, Vec<u8>, Vec<&str>)> = vec![
        ("results.json", b"{\"schema\": ".to_vec(), vec!["results.json", "not valid JSON"]),
        (
            "results.json",
            b"{\"schema\": \"other/1\"}".to_vec(),
            vec!["results.json", "not a results file of schema heft-results/1"],
        ),
        (
            "data_used.csv",
            b"file,row,instrument,time_bjd,rv_mps,rv_err_mps,model_mps,residual_mps\nq,2,Q,x,1,1,1,0\n"
                .to_vec(),
            vec!["data_used.csv", "line 2"],
        ),
    ];
    for (file, bytes, needles) in cases {
        let copy = tempfile::tempdir().unwrap();
        for e in std::fs::read_dir(&run).unwrap() {
            let p = e.unwrap().path();
            std::fs::copy(&p, copy.path().join(p.file_name().unwrap())).unwrap();
        }
        std::fs::write(copy.path().join(file), bytes).unwrap();
        refused(&["render", copy.path().to_str().unwrap()], &needles);
    }
    refused(
        &["render", dir.path().join("nowhere").to_str().unwrap()],
        &["nowhere", "not a folder"],
    );
}
