//! Reruns when new epochs arrive: earlier runs stay untouched, `runs/LATEST` moves, and
//! `heft changes` reports the new epoch counts and the shifts.

use std::path::Path;
use std::process::Command;

use serde_json::Value;

fn heft(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_heft"))
        .args(args)
        .output()
        .unwrap()
}

/// The demo in `to`, with the audit switched off (these tests are about run history;
/// the last section of the demo target is `[settings]`).
fn copy_demo(to: &Path) {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("data-demo");
    for name in ["ostrel-12.toml", "quill.csv", "tarn.txt", "fennick.tsv"] {
        std::fs::copy(demo.join(name), to.join(name)).unwrap();
    }
    let target = to.join("ostrel-12.toml");
    let mut text = std::fs::read_to_string(&target).unwrap();
    assert!(text.contains("[settings]"));
    text.push_str("audit = false\n");
    std::fs::write(&target, text).unwrap();
}

#[test]
fn new_epochs_leave_earlier_runs_intact_and_show_as_changes() {
    let dir = tempfile::tempdir().unwrap();
    copy_demo(dir.path());
    let quill = dir.path().join("quill.csv");
    let full = std::fs::read_to_string(&quill).unwrap();
    let lines: Vec<&str> = full.lines().collect();
    let held_back = 15;
    std::fs::write(&quill, lines[..lines.len() - held_back].join("\n") + "\n").unwrap();
    let target = dir.path().join("ostrel-12.toml");
    let target = target.to_str().unwrap();

    let first = heft(&["run", target]);
    assert!(
        first.status.success(),
        "{}",
        String::from_utf8_lossy(&first.stderr)
    );
    let runs_dir = dir.path().join("runs");
    let latest = std::fs::read_to_string(runs_dir.join("LATEST")).unwrap();
    let first_dir = runs_dir.join(latest.trim());
    let first_results = std::fs::read(first_dir.join("results.json")).unwrap();
    let manifest: Value =
        serde_json::from_slice(&std::fs::read(first_dir.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(manifest["inputs"].as_array().unwrap().len(), 3);
    assert_eq!(manifest["inputs"][0]["sha256"].as_str().unwrap().len(), 64);

    std::fs::write(&quill, &full).unwrap();
    let second = heft(&["run", target]);
    assert!(
        second.status.success(),
        "{}",
        String::from_utf8_lossy(&second.stderr)
    );
    let latest2 = std::fs::read_to_string(runs_dir.join("LATEST")).unwrap();
    assert_ne!(latest, latest2, "LATEST points at the new run");
    assert_eq!(
        std::fs::read(first_dir.join("results.json")).unwrap(),
        first_results,
        "earlier run untouched"
    );

    let out = heft(&["changes", target, "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let c: Value = serde_json::from_slice(&out.stdout).unwrap();
    let quill_count = c["epochs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["instrument"] == "Quill")
        .unwrap();
    let after = quill_count["after"].as_u64().unwrap();
    assert_eq!(
        quill_count["before"].as_u64().unwrap() + held_back as u64,
        after
    );
    let b = c["planets"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["label_after"] == "b")
        .unwrap();
    assert_eq!(b["status"], "kept");
    assert!(
        b["quantities"]
            .as_array()
            .unwrap()
            .iter()
            .any(|q| q["key"] == "k_mps" && q["shift_sigma"].is_number())
    );
}

#[test]
fn changes_needs_two_runs() {
    let dir = tempfile::tempdir().unwrap();
    copy_demo(dir.path());
    let target = dir.path().join("ostrel-12.toml");
    let out = heft(&["changes", target.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("at least two complete runs"));
}
