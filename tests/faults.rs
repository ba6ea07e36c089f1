//! Faults between and during runs: a full disk, a read-only results folder, a run killed
//! mid-write, a data file missing or truncated between runs. In every case the earlier
//! run and `runs/LATEST` are untouched, the message names what failed, the exit code is
//! not 0, and no half-written run folder looks complete.
//!
//! Each fault is simulated with heft's write-fault hook (`HEFT_INJECT_WRITE_FAULT`), so
//! the tests work on any machine; the full disk and the read-only folder are also checked
//! for real on a size-limited / read-only tmpfs where the machine allows mounting one
//! (skipped with the reason printed otherwise).

mod common;

use common::{heft_env, quick_demo, snapshot, stderr};

use std::path::{Path, PathBuf};
use std::process::Command;

/// A first successful run of the demo in a fresh folder: (folder, target file).
fn first_run() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let target = quick_demo(dir.path());
    let out = heft_env(&["run", target.to_str().unwrap()], &[]);
    assert!(out.status.success(), "{}", stderr(&out));
    (dir, target)
}

/// Runs the target again with `env`; checks the failure left everything as it was and
/// its message holds each of `needles`; returns the exit code.
fn rerun_fails_cleanly(target: &Path, env: &[(&str, &str)], needles: &[&str]) -> i32 {
    let runs = target.parent().unwrap().join("runs");
    let before = snapshot(&runs);
    let out = heft_env(&["run", target.to_str().unwrap()], env);
    let msg = stderr(&out);
    let code = out.status.code().expect("exited, not killed");
    assert_ne!(code, 0, "{msg}");
    assert!(!msg.contains("panicked"), "{msg}");
    for n in needles {
        assert!(msg.contains(n), "message lacks '{n}': {msg}");
    }
    assert_eq!(
        snapshot(&runs),
        before,
        "earlier run, LATEST and nothing else in runs/"
    );
    code
}

/// Simulated full disk while writing results.json (after 100 bytes reached the
/// temporary file), and at the last step, moving LATEST.
#[test]
fn full_disk_mid_write_keeps_earlier_results() {
    let (_dir, target) = first_run();
    for (fault, file) in [
        ("results.json@100:full", "results.json"),
        ("LATEST:full", "LATEST"),
        ("draws.parquet@4096:full", "draws.parquet"),
    ] {
        let code = rerun_fails_cleanly(
            &target,
            &[("HEFT_INJECT_WRITE_FAULT", fault)],
            &[file, "no space left", "was removed"],
        );
        assert_eq!(code, 1, "a machine fault is exit 1 (design.md)");
    }
}

/// Simulated read-only results folder: the first write is refused.
#[test]
fn read_only_results_folder_keeps_earlier_results() {
    let (_dir, target) = first_run();
    rerun_fails_cleanly(
        &target,
        &[("HEFT_INJECT_WRITE_FAULT", "*:denied")],
        &["manifest.json", "permission denied", "was removed"],
    );
}

/// A run killed while writing leaves a folder without results.json and a temporary file
/// (what the atomic writer leaves when killed between create and rename): it is never
/// taken for a complete run, and the next run and `heft changes` work.
#[test]
fn a_run_killed_mid_write_is_never_taken_as_complete() {
    let (dir, target) = first_run();
    let runs = dir.path().join("runs");
    let latest = std::fs::read_to_string(runs.join("LATEST")).unwrap();
    let first = runs.join(latest.trim());
    let killed = runs.join("20000101T000000Z");
    std::fs::create_dir(&killed).unwrap();
    std::fs::copy(first.join("manifest.json"), killed.join("manifest.json")).unwrap();
    let half = std::fs::read(first.join("results.json")).unwrap();
    std::fs::write(
        killed.join(".results.json.tmp-4242"),
        &half[..half.len() / 2],
    )
    .unwrap();
    let out = heft_env(&["changes", target.to_str().unwrap()], &[]);
    assert_eq!(out.status.code(), Some(2), "only one complete run");
    assert!(stderr(&out).contains("two"), "{}", stderr(&out));
    let out = heft_env(&["run", target.to_str().unwrap()], &[]);
    assert!(out.status.success(), "{}", stderr(&out));
    let out = heft_env(&["changes", target.to_str().unwrap(), "--json"], &[]);
    assert!(out.status.success(), "{}", stderr(&out));
    let c: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(c["before"].as_str(), Some(latest.trim()), "{c}");
}

/// A data file deleted, or cut off mid-line, between runs: exit 2, the file (and row) is
/// named, the earlier run is untouched.
#[test]
fn missing_or_truncated_data_between_runs() {
    let (dir, target) = first_run();
    let quill = dir.path().join("quill.csv");
    let full = std::fs::read_to_string(&quill).unwrap();

    let cut = full.len() * 2 / 3;
    let cut = full[..cut].rfind(',').unwrap() + 1;
    std::fs::write(&quill, &full[..cut]).unwrap();
    let last_row = full[..cut].lines().count().to_string();
    let code = rerun_fails_cleanly(&target, &[], &["quill.csv", &format!("row {last_row}")]);
    assert_eq!(code, 2);

    std::fs::write(&quill, "").unwrap();
    let code = rerun_fails_cleanly(&target, &[], &["quill.csv", "no data rows"]);
    assert_eq!(code, 2);

    std::fs::remove_file(&quill).unwrap();
    let code = rerun_fails_cleanly(&target, &[], &["quill.csv", "cannot read"]);
    assert_eq!(code, 2);
}

/// A tmpfs mounted at a path, unmounted when dropped.
struct Mount(PathBuf);

impl Mount {
    /// Mounts a tmpfs of `size` (mount's syntax, e.g. `4m`) at `at`, or says why not.
    fn tmpfs(at: &Path, size: &str) -> Result<Mount, String> {
        std::fs::create_dir_all(at).map_err(|e| e.to_string())?;
        let out = Command::new("mount")
            .args(["-t", "tmpfs", "-o", &format!("size={size}"), "tmpfs"])
            .arg(at)
            .output()
            .map_err(|e| format!("cannot run mount: {e}"))?;
        if out.status.success() {
            Ok(Mount(at.to_path_buf()))
        } else {
            Err(format!(
                "mount -t tmpfs refused: {}",
                String::from_utf8_lossy(&out.stderr).trim()
            ))
        }
    }

    fn remount_read_only(&self) {
        let out = Command::new("mount")
            .args(["-o", "remount,ro"])
            .arg(&self.0)
            .output()
            .unwrap();
        assert!(out.status.success(), "{}", stderr(&out));
    }
}

impl Drop for Mount {
    fn drop(&mut self) {
        let _ = Command::new("umount").arg(&self.0).status();
    }
}

/// The real thing where the machine allows: `runs/` on a tmpfs that holds one run but
/// not two, then the same tmpfs remounted read-only.
#[test]
fn real_full_disk_and_read_only_folder() {
    let dir = tempfile::tempdir().unwrap();
    let target = quick_demo(dir.path());
    let runs = dir.path().join("runs");
    // One demo run folder is about 2.8 MB.
    let mount = match Mount::tmpfs(&runs, "4m") {
        Ok(m) => m,
        Err(why) => {
            println!("SKIPPED real full-disk and read-only checks: {why}");
            return;
        }
    };
    let out = heft_env(&["run", target.to_str().unwrap()], &[]);
    assert!(out.status.success(), "{}", stderr(&out));
    rerun_fails_cleanly(&target, &[], &["No space left on device", "was removed"]);
    mount.remount_read_only();
    rerun_fails_cleanly(&target, &[], &["Read-only file system"]);
}
