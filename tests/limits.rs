//! Limits and the time budget: settings beyond their caps are refused with a message
//! naming the key and the limit; a run with a time budget stops cleanly with what it has,
//! says what it left out, and exits 3.

mod common;

use common::{demo_with, heft, stderr};

use std::path::Path;

use serde_json::Value;

#[test]
fn settings_beyond_their_caps_are_refused() {
    let cases = [
        (
            "walkers = 100000",
            "settings.walkers: 100000 is above the limit of 4096",
        ),
        (
            "max_steps = 50000000",
            "settings.max_steps: 50000000 is above the limit of 10000000",
        ),
        (
            "draws = 100000000",
            "settings.draws: 100000000 is above the limit of 2000000",
        ),
        (
            "ensembles = 64",
            "settings.ensembles: 64 is above the limit of 16",
        ),
        (
            "max_signals = 100",
            "settings.max_signals: 100 is above the limit of 20",
        ),
        (
            "oversample = 5000.0",
            "settings.oversample: 5000 is above the limit of 1000",
        ),
        (
            "time_budget_s = -5.0",
            "settings.time_budget_s: must be a positive number, got -5",
        ),
        (
            "max_memory_mb = 0.0",
            "settings.max_memory_mb: must be a positive number, got 0",
        ),
        (
            "sample = true\nmax_memory_mb = 50.0",
            "settings.max_memory_mb: the run needs an estimated",
        ),
        (
            "period_min_d = 0.01\noversample = 1000.0",
            "larger than the 50000000 allowed",
        ),
    ];
    for (settings, needle) in cases {
        let dir = tempfile::tempdir().unwrap();
        let target = demo_with(dir.path(), settings);
        let out = heft(&["run", target.to_str().unwrap()]);
        let msg = stderr(&out);
        assert_eq!(out.status.code(), Some(2), "{settings}: {msg}");
        assert!(msg.contains(needle), "{settings}: {msg}");
        assert!(
            !dir.path().join("runs").exists(),
            "{settings}: nothing written"
        );
    }
    let dir = tempfile::tempdir().unwrap();
    let target = demo_with(dir.path(), "");
    let out = heft(&["run", target.to_str().unwrap(), "--time-budget-s=-1"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("positive number of seconds"),
        "{}",
        stderr(&out)
    );
}

fn results_of(dir: &Path) -> Value {
    let runs = dir.join("runs");
    let latest = std::fs::read_to_string(runs.join("LATEST")).unwrap();
    let text = std::fs::read_to_string(runs.join(latest.trim()).join("results.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// A budget of 10 s, ample for the fit (about 2 s) and far too short for sampling
/// (minutes for the demo): the sampler stops early,
/// the periodogram report and audit are skipped, and the run folder is complete.
#[test]
fn a_time_budget_stops_the_sampler_and_skips_later_stages() {
    let dir = tempfile::tempdir().unwrap();
    let target = demo_with(dir.path(), "sample = true");
    let out = heft(&[
        "run",
        target.to_str().unwrap(),
        "--time-budget-s",
        "10",
        "--json",
    ]);
    assert_eq!(out.status.code(), Some(3), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("time budget of 10 s ran out"),
        "{}",
        stderr(&out)
    );
    let doc = results_of(dir.path());
    let b = &doc["time_budget"];
    assert_eq!(b["time_budget_s"], 10.0);
    assert_eq!(b["sampler_stopped_early"], true, "{b}");
    assert_eq!(
        b["skipped"],
        serde_json::json!(["periodogram report", "audit"])
    );
    assert_eq!(doc["diagnostics"]["converged"], false);
    let reason = doc["diagnostics"]["reason"].as_str().unwrap();
    assert!(reason.starts_with("stopped by the time budget"), "{reason}");
    assert_eq!(
        doc["planets"].as_array().unwrap().len(),
        2,
        "what was computed is kept"
    );
    let printed: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(printed, doc, "--json prints the results with exit 3");
}

/// A budget spent before sampling starts: the posterior is skipped as well, the
/// maximum-likelihood results are written.
#[test]
fn a_spent_budget_skips_sampling_but_keeps_the_fit() {
    let dir = tempfile::tempdir().unwrap();
    let target = demo_with(dir.path(), "sample = true\ntime_budget_s = 0.001");
    let out = heft(&["run", target.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(3), "{}", stderr(&out));
    let doc = results_of(dir.path());
    assert_eq!(
        doc["time_budget"]["skipped"],
        serde_json::json!(["posterior", "periodogram report", "audit"])
    );
    assert_eq!(doc["time_budget"]["sampler_stopped_early"], false);
    assert!(doc.get("diagnostics").is_none());
    assert!(doc["planets"][0]["k_mps"]["value"].as_f64().unwrap() > 0.0);
}
