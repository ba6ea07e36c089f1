//! `heft batch` over generated targets: two threads and two shards give the same merged
//! table, a broken target is reported while the others finish, and non-target TOML files
//! are skipped.

mod common;

use common::heft;

use std::path::Path;

/// An invented single-planet target: 40 epochs of a sinusoid with deterministic noise.
fn write_target(dir: &Path, i: usize) {
    let sub = dir.join(format!("t{i:02}"));
    std::fs::create_dir_all(&sub).unwrap();
    let period = 3.0 + 0.7 * i as f64;
    let mut state = 12345 + i as u64;
    let mut noise = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 33) as f64 / (1u64 << 31) as f64) - 0.5
    };
    let mut csv = String::from("time,rv,rv_err\n");
    for k in 0..40 {
        let t = 2_460_000.0 + 2.3 * k as f64 + 0.4 * (k as f64).sin();
        let rv = 15.0 * (std::f64::consts::TAU * t / period).sin() + 2.0 * noise();
        csv.push_str(&format!("{t:.5},{rv:.3},1.0\n"));
    }
    std::fs::write(sub.join("rv.csv"), csv).unwrap();
    std::fs::write(
        sub.join("target.toml"),
        format!(
            "name = \"synthetic {i}\"\n[star]\nmass_msun = 1.0\nmass_err_msun = 0.05\n[[data]]\nfile = \"rv.csv\"\n[settings]\norbit = \"circular\"\ntrend = 0\nmax_signals = 1\ndraws = 500\n"
        ),
    )
    .unwrap();
}

/// The table without the run_dir column (run folders differ between invocations).
fn without_run_dir(table: &str) -> Vec<String> {
    table
        .lines()
        .map(|l| {
            let mut f: Vec<&str> = l.split(',').collect();
            if f.len() > 14 {
                f.remove(14);
            }
            f.join(",")
        })
        .collect()
}

#[test]
fn threads_and_shards_agree_and_failures_are_contained() {
    let dir = tempfile::tempdir().unwrap();
    for i in 0..20 {
        write_target(dir.path(), i);
    }
    let broken = dir.path().join("zz-broken");
    std::fs::create_dir_all(&broken).unwrap();
    std::fs::write(
        broken.join("target.toml"),
        "name = \"broken\"\n[star]\nmass_msun = 1.0\n[[data]]\nfile = \"missing.csv\"\n",
    )
    .unwrap();
    std::fs::write(dir.path().join("notes.toml"), "title = \"not a target\"\n").unwrap();
    let folder = dir.path().to_str().unwrap();

    let all = heft(&["batch", folder, "--threads", "2", "--json"]);
    assert_eq!(
        all.status.code(),
        Some(2),
        "a failed target makes the exit code 2"
    );
    let doc: serde_json::Value = serde_json::from_slice(&all.stdout).unwrap();
    assert_eq!(doc["targets"].as_array().unwrap().len(), 21);
    assert_eq!(doc["skipped"].as_array().unwrap().len(), 1);
    let table = std::fs::read_to_string(dir.path().join("batch-summary.csv")).unwrap();
    assert_eq!(table.lines().filter(|l| l.contains(",ok,")).count(), 20);
    assert!(
        table.lines().any(|l| l.contains("zz-broken")
            && l.contains(",failed,")
            && l.contains("missing.csv"))
    );

    for k in ["1/2", "2/2"] {
        let out = heft(&["batch", folder, "--shard", k]);
        assert!(matches!(out.status.code(), Some(0) | Some(2)));
    }
    let gathered = heft(&["batch", folder, "--gather"]);
    assert!(
        gathered.status.success(),
        "{}",
        String::from_utf8_lossy(&gathered.stderr)
    );
    let merged = std::fs::read_to_string(dir.path().join("batch-summary.csv")).unwrap();
    assert_eq!(without_run_dir(&merged), without_run_dir(&table));
    // The Parquet copy of the table has the same rows and typed columns.
    use polars::prelude::*;
    let file = std::fs::File::open(dir.path().join("batch-summary.parquet")).unwrap();
    let df = ParquetReader::new(file).finish().unwrap();
    assert_eq!(df.height(), merged.lines().count() - 1);
    assert_eq!(df.column("k_mps").unwrap().dtype(), &DataType::Float64);
}

#[test]
fn a_memory_bound_limits_targets_run_at_once() {
    let dir = tempfile::tempdir().unwrap();
    for i in 0..3 {
        write_target(dir.path(), i);
    }
    let folder = dir.path().to_str().unwrap();
    // Each small target is estimated at about 64 MB: 100 MB allows one at a time.
    let out = heft(&["batch", folder, "--threads", "2", "--max-memory-mb", "100"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("running 1 target(s) at once"), "{err}");
    let bad = heft(&["batch", folder, "--max-memory-mb", "-5"]);
    assert_eq!(bad.status.code(), Some(2));
}
