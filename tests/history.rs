//! Reruns when new epochs arrive: earlier runs stay untouched, `runs/LATEST` moves, and
//! `heft changes` reports the new epoch counts and the shifts.

mod common;

use common::{demo_with, heft, quick_demo, snapshot};

use std::path::Path;
use std::process::Command;

use serde_json::Value;

#[test]
fn new_epochs_leave_earlier_runs_intact_and_show_as_changes() {
    let dir = tempfile::tempdir().unwrap();
    quick_demo(dir.path());
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
    quick_demo(dir.path());
    let target = dir.path().join("ostrel-12.toml");
    let out = heft(&["changes", target.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("at least two complete runs"));
}

#[test]
fn add_epochs_checks_against_the_target_and_edits_no_data_file() {
    let dir = tempfile::tempdir().unwrap();
    quick_demo(dir.path());
    let quill = dir.path().join("quill.csv");
    let full = std::fs::read_to_string(&quill).unwrap();
    let lines: Vec<&str> = full.lines().collect();
    let held_back = 15;
    let keep = lines.len() - held_back;
    std::fs::write(&quill, lines[..keep].join("\n") + "\n").unwrap();
    let new = dir.path().join("new-night.csv");
    std::fs::write(
        &new,
        format!("{}\n{}\n", lines[0], lines[keep..].join("\n")),
    )
    .unwrap();
    let target = dir.path().join("ostrel-12.toml");
    let (target, new_s) = (target.to_str().unwrap(), new.to_str().unwrap());
    let data_files = ["quill.csv", "tarn.txt", "fennick.tsv", "new-night.csv"];
    let data_bytes = || -> Vec<Vec<u8>> {
        data_files
            .iter()
            .map(|f| std::fs::read(dir.path().join(f)).unwrap())
            .collect()
    };
    let before = data_bytes();

    let out = heft(&[
        "add-epochs",
        target,
        new_s,
        "--instrument",
        "Quill",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(doc["n_added"], held_back);
    assert_eq!(doc["per_instrument"][0], serde_json::json!(["Quill", 76]));
    let copy = Path::new(doc["copy"].as_str().unwrap());
    assert!(copy.starts_with(dir.path().join("epochs")) && copy.exists());
    assert_eq!(data_bytes(), before, "no data file was edited");
    let text = std::fs::read_to_string(target).unwrap();
    assert_eq!(text.matches("[[data]]").count(), 4);

    // The same rows again: exact duplicates of the epochs just added.
    let again = heft(&["add-epochs", target, new_s, "--instrument", "Quill"]);
    assert_eq!(again.status.code(), Some(2));
    let msg = String::from_utf8_lossy(&again.stderr);
    assert!(
        msg.contains("duplicate of") && msg.contains("new-night.csv"),
        "{msg}"
    );
    // One epoch with another value: a conflict, named with file and row.
    let mut fields: Vec<String> = lines[keep].split(',').map(str::to_string).collect();
    fields[1] = format!("{:.2}", fields[1].parse::<f64>().unwrap() + 5.0);
    let changed = fields.join(",");
    let conflict = dir.path().join("conflict.csv");
    let mut fresh: Vec<String> = lines[keep].split(',').map(str::to_string).collect();
    fresh[0] = format!("{:.6}", fresh[0].parse::<f64>().unwrap() + 0.25);
    let fresh = fresh.join(",");
    std::fs::write(&conflict, format!("{}\n{changed}\n{fresh}\n", lines[0])).unwrap();
    let out = heft(&[
        "add-epochs",
        target,
        conflict.to_str().unwrap(),
        "--instrument",
        "Quill",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let msg = String::from_utf8_lossy(&out.stderr);
    assert!(
        msg.contains("conflicts with") && msg.contains("conflict.csv"),
        "{msg}"
    );
    assert_eq!(
        std::fs::read_to_string(target).unwrap(),
        text,
        "a refused addition leaves the target as it was"
    );
}

#[test]
fn a_killed_run_leaves_no_complete_folder_and_earlier_runs_intact() {
    let dir = tempfile::tempdir().unwrap();
    quick_demo(dir.path());
    let target = dir.path().join("ostrel-12.toml");
    let first = heft(&["run", target.to_str().unwrap()]);
    assert!(
        first.status.success(),
        "{}",
        String::from_utf8_lossy(&first.stderr)
    );
    let runs_dir = dir.path().join("runs");
    let before = snapshot(&runs_dir);

    // A second run with sampling (minutes of work), killed after a few seconds.
    let text = std::fs::read_to_string(&target).unwrap();
    std::fs::write(&target, text.replace("sample = false", "sample = true")).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_heft"))
        .args(["run", target.to_str().unwrap()])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    std::thread::sleep(std::time::Duration::from_secs(4));
    assert!(
        child.try_wait().unwrap().is_none(),
        "the run was still going"
    );
    child.kill().unwrap();
    child.wait().unwrap();

    assert_eq!(
        snapshot(&runs_dir),
        before,
        "earlier runs and LATEST untouched"
    );
    let complete: Vec<_> = std::fs::read_dir(&runs_dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.join("results.json").exists())
        .collect();
    assert_eq!(
        complete.len(),
        1,
        "no folder of the killed run looks complete"
    );
}

#[test]
fn a_warm_start_finds_the_same_solution() {
    let dir = tempfile::tempdir().unwrap();
    let target = demo_with(
        dir.path(),
        "sample = false\naudit = false\nwarm_start = true",
    );
    let target = target.to_str().unwrap();
    let results = |out: &std::process::Output| -> Value {
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        serde_json::from_slice(&out.stdout).unwrap()
    };
    let cold = results(&heft(&["run", target, "--json"]));
    assert!(
        cold.get("warm_start").is_none(),
        "no earlier run to start from"
    );
    let warm = results(&heft(&["run", target, "--json"]));
    let first = std::fs::read_dir(dir.path().join("runs"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n != "LATEST")
        .min()
        .unwrap();
    assert_eq!(warm["warm_start"]["from_run"], first.as_str());
    assert_eq!(warm["warm_start"]["signals"], serde_json::json!(["b", "c"]));
    // Both planets start eccentric: 4 extra starts each spared, and some time with them.
    assert_eq!(warm["warm_start"]["starts_spared"], 8);
    assert!(warm["warm_start"]["estimated_saving_s"].as_f64().unwrap() > 0.0);
    // The same optimum from either start (to far below the errors).
    for (a, b) in cold["planets"]
        .as_array()
        .unwrap()
        .iter()
        .zip(warm["planets"].as_array().unwrap())
    {
        for key in ["period_d", "k_mps", "ecc"] {
            let (x, y) = (
                a[key]["value"].as_f64().unwrap(),
                b[key]["value"].as_f64().unwrap(),
            );
            let sigma = a[key]["plus"].as_f64().unwrap();
            assert!(
                (x - y).abs() < 0.01 * sigma,
                "{key}: {x} against {y} (σ {sigma})"
            );
        }
    }
}
