//! The same inputs and seed give byte-identical results.json across thread counts and
//! reruns; the run's start time is kept in one field, `created_utc` of manifest.json.

mod common;

use common::demo_with;

use std::process::Command;

use serde_json::Value;

#[test]
fn results_are_byte_identical_across_threads_and_reruns() {
    let dir = tempfile::tempdir().unwrap();
    // Sampling (cut at 2000 steps: the draws, not convergence, are what is compared),
    // the periodogram report with its bootstrap; the audit is left out for time.
    let target = demo_with(dir.path(), "sample = true\nmax_steps = 2000\naudit = false");
    let run = |threads: &str, out: &str| {
        let o = Command::new(env!("CARGO_BIN_EXE_heft"))
            .args(["run", target.to_str().unwrap(), "--out"])
            .arg(dir.path().join(out))
            .env("RAYON_NUM_THREADS", threads)
            .output()
            .unwrap();
        assert_eq!(
            o.status.code(),
            Some(3),
            "not converged by design: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let run_dir = dir.path().join(out);
        let results = std::fs::read(run_dir.join("results.json")).unwrap();
        let mut manifest: Value =
            serde_json::from_slice(&std::fs::read(run_dir.join("manifest.json")).unwrap()).unwrap();
        let stamp = manifest["created_utc"].take();
        assert!(stamp.as_str().is_some_and(|s| s.ends_with('Z')), "{stamp}");
        (results, manifest)
    };
    let one = run("1", "one-thread");
    let two = run("2", "two-threads");
    let again = run("2", "rerun");
    assert!(
        one.0 == two.0,
        "results.json differs between 1 and 2 threads"
    );
    assert!(two.0 == again.0, "results.json differs on rerun");
    assert_eq!(one.1, two.1, "manifests differ beyond created_utc");
    assert_eq!(two.1, again.1);
}
