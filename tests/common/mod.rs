//! Helpers shared by the command-line tests: running the `heft` binary, the repository's
//! files, the demo target copied with changed settings, and a folder's files as bytes.
//! Each test binary compiles this module and uses a part of it.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Runs `heft` with `args`.
pub fn heft(args: &[&str]) -> Output {
    heft_env(args, &[])
}

/// Runs `heft` with `args` and extra environment variables `env`.
pub fn heft_env(args: &[&str], env: &[(&str, &str)]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_heft"))
        .args(args)
        .envs(env.iter().copied())
        .output()
        .unwrap()
}

/// The standard error of a finished command as text.
pub fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

/// Path of `p` under the repository root, as a string.
pub fn repo(p: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join(p)
        .to_string_lossy()
        .into_owned()
}

/// The demo target and its data copied into `to`, with the `key = value` lines of
/// `settings` replacing any line of the same key and placed at the top of its
/// `[settings]` table; returns the target file's path.
pub fn demo_with(to: &Path, settings: &str) -> PathBuf {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("data-demo");
    for name in ["ostrel-12.toml", "quill.csv", "tarn.txt", "fennick.tsv"] {
        std::fs::copy(demo.join(name), to.join(name)).unwrap();
    }
    let target = to.join("ostrel-12.toml");
    let text = std::fs::read_to_string(&target).unwrap();
    let keys: Vec<&str> = settings
        .lines()
        .filter_map(|l| l.split('=').next())
        .map(str::trim)
        .collect();
    let kept: Vec<&str> = text
        .lines()
        .filter(|line| !keys.contains(&line.split('=').next().unwrap_or("").trim()))
        .collect();
    let text = (kept.join("\n") + "\n").replace("[settings]", &format!("[settings]\n{settings}"));
    std::fs::write(&target, text).unwrap();
    target
}

/// The demo without the sampler and the audit, for tests about files and run history
/// rather than the analysis.
pub fn quick_demo(to: &Path) -> PathBuf {
    demo_with(to, "sample = false\naudit = false")
}

/// Every file under `dir` with its bytes, sorted by path.
pub fn snapshot(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut files = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                files.push((p.clone(), std::fs::read(&p).unwrap()));
            }
        }
    }
    files.sort();
    files
}

/// A circular planet "b" for the fit to start from: free period `period_d` (days),
/// semi-amplitude `k_mps` (m/s), conjunction at the reference epoch, no constraints.
pub fn circular_start(period_d: f64, k_mps: f64) -> heft::fit::PlanetSpec {
    heft::fit::PlanetSpec {
        period_d,
        fix_period: false,
        k_mps,
        tc_d: 0.0,
        ecc_vector: (0.0, 0.0),
        period_prior: None,
        tc_prior: None,
        label: "b".into(),
    }
}

/// Asserts that a command was refused as bad input (exit 2) with `needle` in its message.
pub fn assert_refused(out: &Output, needle: &str) {
    assert_eq!(out.status.code(), Some(2), "{}", stderr(out));
    assert!(stderr(out).contains(needle), "{}", stderr(out));
}
