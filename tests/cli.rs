//! The command-line contract of design.md, run on the built binary in temporary folders.

mod common;

use common::{assert_refused, heft, repo, stderr};

use std::path::{Path, PathBuf};
use std::process::Output;

use serde_json::Value;

/// The JSON printed by a command that finished: exit 0, or 4 with a verdict that is not
/// `robust` (design.md exit codes).
fn json_of(out: &Output) -> Value {
    let code = out.status.code();
    assert!(
        matches!(code, Some(0) | Some(4)),
        "exit {code:?}, stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc: Value = serde_json::from_slice(&out.stdout).unwrap();
    let verdict = doc["audit"]["verdict"].as_str();
    assert_eq!(
        code == Some(4),
        verdict.is_some_and(|v| v != "robust"),
        "exit status and verdict {verdict:?} agree"
    );
    doc
}

/// An estimated quantity is {value, minus, plus} (design.md).
fn is_estimate(v: &Value) -> bool {
    ["value", "minus", "plus"].iter().all(|k| v[k].is_number())
}

#[test]
fn periodogram_table_is_the_requested_grid() {
    let dir = tempfile::tempdir().unwrap();
    let table = dir.path().join("pg.csv");
    let out = heft(&[
        "periodogram",
        &repo("tests/reference/gls_data.csv"),
        "--fmin",
        "0.01",
        "--fmax",
        "0.5",
        "--nfreq",
        "50",
        "--table",
        table.to_str().unwrap(),
        "--json",
    ]);
    let doc = json_of(&out);
    let text = std::fs::read_to_string(&table).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("frequency,period,power"));
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|x| x.parse().unwrap()).collect())
        .collect();
    assert_eq!(rows.len(), 50);
    assert!((rows[0][0] - 0.01).abs() < 1e-12 && (rows[49][0] - 0.5).abs() < 1e-12);
    assert!(
        rows.iter()
            .all(|r| (r[1] - 1.0 / r[0]).abs() < 1e-9 * r[1] && (0.0..=1.0).contains(&r[2]))
    );
    let peaks = doc["peaks"].as_array().unwrap();
    assert!(!peaks.is_empty());
    assert!(peaks.iter().all(|p| p["fap"].as_f64().unwrap() <= 1.0));
}

/// `--fast` gives the same peaks as the exact sums; the JSON carries the bootstrap FAP,
/// aliases and window peaks; `--plot` writes an SVG; a bad `--accuracy` exits 2.
#[test]
fn periodogram_fast_plot_and_bootstrap() {
    let dir = tempfile::tempdir().unwrap();
    let plot = dir.path().join("pg.svg");
    let data = repo("data-demo/quill.csv");
    let exact = json_of(&heft(&[
        "periodogram",
        &data,
        "--json",
        "--bootstrap",
        "50",
    ]));
    let fast = json_of(&heft(&[
        "periodogram",
        &data,
        "--json",
        "--fast",
        "--bootstrap",
        "50",
        "--plot",
        plot.to_str().unwrap(),
    ]));
    let (pe, pf) = (&exact["peaks"][0], &fast["peaks"][0]);
    assert_eq!(pe["frequency"], pf["frequency"]);
    assert!((pe["power"].as_f64().unwrap() - pf["power"].as_f64().unwrap()).abs() < 1e-9);
    assert_eq!(pe["fap_bootstrap"], pf["fap_bootstrap"]);
    assert!(!pf["aliases"].as_array().unwrap().is_empty());
    assert!(fast["window_peaks"][0]["frequency"].is_number());
    assert!(std::fs::read_to_string(&plot).unwrap().starts_with("<svg"));
    let bad = heft(&["periodogram", &data, "--fast", "--accuracy", "2"]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(stderr(&bad).contains("tolerance"), "{}", stderr(&bad));
}

#[test]
fn fit_json_has_the_contract_keys() {
    let out = heft(&[
        "fit",
        &repo("tests/reference/twobody/two_planets_a.csv"),
        &repo("tests/reference/twobody/two_planets_b.csv"),
        "--mstar-msun",
        "1.07",
        "--mstar-err",
        "0.05",
        "--json",
    ]);
    let doc = json_of(&out);
    assert_eq!(doc["schema"], "heft-results/1");
    let planets = doc["planets"].as_array().unwrap();
    assert_eq!(planets.len(), 2);
    for p in planets {
        for key in [
            "period_d",
            "k_mps",
            "ecc",
            "omega_deg",
            "tc_d",
            "tp_d",
            "msini_mearth",
        ] {
            assert!(is_estimate(&p[key]), "planet key {key}: {}", p[key]);
        }
    }
    let insts = doc["instruments"].as_array().unwrap();
    // A file without an instrument column is one instrument named after its stem.
    let names: Vec<&str> = insts.iter().map(|i| i["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["two_planets_a", "two_planets_b"]);
    assert!(
        insts
            .iter()
            .all(|i| is_estimate(&i["offset_mps"]) && is_estimate(&i["jitter_mps"]))
    );
    assert!(is_estimate(&doc["trend"]["trend_mps_per_yr"]));
    for key in ["log_likelihood", "bic", "aic", "n_points", "n_params"] {
        assert!(doc["fit"][key].is_number(), "fit.{key}");
    }
    assert!(doc["priors"].is_array());
}

#[test]
fn fit_with_fixed_period_and_no_trend() {
    let out = heft(&[
        "fit",
        &repo("tests/reference/twobody/one_planet.csv"),
        "--period",
        "12.3047",
        "--fix-period",
        "--planets",
        "1",
        "--trend",
        "0",
        "--circular",
        "--json",
    ]);
    let doc = json_of(&out);
    let p = &doc["planets"][0];
    assert_eq!(p["period_d"]["value"].as_f64().unwrap(), 12.3047);
    assert_eq!(p["period_d"]["plus"].as_f64().unwrap(), 0.0);
    assert_eq!(p["ecc"]["value"].as_f64().unwrap(), 0.0);
    assert!(doc["trend"].get("trend_mps_per_yr").is_none());
}

#[test]
fn run_writes_a_new_folder_and_refuses_a_full_one() {
    let dir = tempfile::tempdir().unwrap();
    let out_dir = dir.path().join("run1");
    let target = repo("data-demo/ostrel-12.toml");
    let out = heft(&["run", &target, "--out", out_dir.to_str().unwrap(), "--json"]);
    let doc = json_of(&out);
    let on_disk: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    assert_eq!(doc, on_disk);
    assert!(out_dir.join("summary.txt").exists());
    // Periodogram report: figure, peaks, and RV/window/residual/indicator columns.
    let svg = std::fs::read_to_string(out_dir.join("periodogram.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("spectral window"));
    let table = std::fs::read_to_string(out_dir.join("periodograms.csv")).unwrap();
    let header = table.lines().next().unwrap();
    assert!(
        header.starts_with("frequency,period,power,window,residuals after 1 signal")
            && header.contains("indicator "),
        "{header}"
    );
    let pg: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("periodogram.json")).unwrap())
            .unwrap();
    assert!(pg["peaks"][0]["fap_bootstrap"].is_number());
    let b = doc["planets"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["label"] == "b")
        .expect("the transiting planet b");
    for key in [
        "mass_mearth",
        "radius_rearth",
        "density_gcc",
        "msini_mearth",
    ] {
        assert!(is_estimate(&b[key]), "{key}");
    }
    assert!(b["class"].is_string());
    // The density report (issue: what the mass and radius say about the planet).
    for key in [
        "density_earth",
        "teq_k",
        "insolation_earth",
        "jeans_lambda",
        "envelope_fraction",
        "gravity_direct_mps2",
    ] {
        assert!(is_estimate(&b[key]), "{key}: {}", b[key]);
    }
    let total: f64 = b["class_probabilities"]
        .as_object()
        .unwrap()
        .values()
        .map(|v| v.as_f64().unwrap())
        .sum();
    assert!(
        (total - 1.0).abs() < 1e-9,
        "class probabilities sum to {total}"
    );
    assert!(out_dir.join("density.md").exists());
    let svg = std::fs::read_to_string(out_dir.join("mass_radius.svg")).unwrap();
    assert_eq!(
        svg.matches(r#"class="contour""#).count(),
        2,
        "one pair of contours for the one planet with a radius"
    );
    // Every run audits its planets: the verdict, a block per planet, and the figure.
    assert_eq!(doc["audit"]["planets"].as_array().unwrap().len(), 2);
    let figure = std::fs::read_to_string(out_dir.join("audit.svg")).unwrap();
    assert!(figure.matches(r#"class="estimate""#).count() >= 10);
    let again = heft(&["run", &target, "--out", out_dir.to_str().unwrap()]);
    assert_eq!(again.status.code(), Some(2));
    assert!(stderr(&again).contains("not empty"));
    let kept: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    assert_eq!(
        kept, on_disk,
        "an earlier result must survive a refused run"
    );
}

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// Each bad input gives exit 2 and a message naming the file, the row where there is one,
/// and the problem; never a panic.
#[test]
fn bad_inputs_exit_2_with_a_clear_message() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let good_rows: String = (0..10)
        .map(|i| {
            format!(
                "{},{},1.0\n",
                2459000.0 + 3.1 * f64::from(i),
                (f64::from(i)).sin()
            )
        })
        .collect();
    let cases: Vec<(Vec<String>, Vec<&str>)> = vec![
        (
            vec![d.join("missing.csv").display().to_string()],
            vec!["missing.csv"],
        ),
        (
            vec![
                write(
                    d,
                    "neg.csv",
                    &format!("time,rv,rv_err\n{good_rows}2459100.5,1.0,-0.5\n"),
                )
                .display()
                .to_string(),
            ],
            vec!["neg.csv", "row 12", "rv_err"],
        ),
        (
            vec![
                write(
                    d,
                    "nan.csv",
                    &format!("time,rv,rv_err\n{good_rows}2459100.5,nan,0.5\n"),
                )
                .display()
                .to_string(),
            ],
            vec!["nan.csv", "row 12"],
        ),
        (
            vec![
                write(d, "mjd.csv", &format!("time,rv,rv_err\n{good_rows}"))
                    .display()
                    .to_string(),
                "--time".into(),
                "MJD".into(),
            ],
            vec!["mjd.csv"],
        ),
        (
            vec![
                write(
                    d,
                    "dup.csv",
                    &format!("time,rv,rv_err\n{good_rows}2459000.0,0.0,1.0\n"),
                )
                .display()
                .to_string(),
            ],
            vec!["dup.csv", "row 12"],
        ),
    ];
    for (args, needles) in cases {
        let mut full = vec!["fit".to_string()];
        full.extend(args);
        let refs: Vec<&str> = full.iter().map(String::as_str).collect();
        let out = heft(&refs);
        let msg = stderr(&out);
        assert_eq!(out.status.code(), Some(2), "{refs:?}: {msg}");
        assert!(!msg.contains("panicked"), "{msg}");
        for n in needles {
            assert!(msg.contains(n), "{refs:?}: message lacks '{n}': {msg}");
        }
    }
    // A target file with an unknown key names it.
    let target = write(
        d,
        "t.toml",
        "name = \"x\"\nmistake = 1\n[star]\nmass_msun = 1.0\n[[data]]\nfile = \"a.csv\"\n",
    );
    let out = heft(&["run", target.to_str().unwrap()]);
    assert_refused(&out, "mistake");
    // Periodogram: inverted range.
    let ok = write(d, "ok.csv", &format!("time,rv,rv_err\n{good_rows}"));
    let out = heft(&[
        "periodogram",
        ok.to_str().unwrap(),
        "--fmin",
        "0.5",
        "--fmax",
        "0.1",
        "--nfreq",
        "10",
    ]);
    assert_refused(&out, "fmax");
}

/// `--sample`: values from posterior draws and a `diagnostics` block (design.md); the
/// same seed gives the same JSON.
#[test]
fn fit_sample_adds_diagnostics() {
    let args = [
        "fit",
        &repo("tests/reference/twobody/one_planet.csv"),
        "--period",
        "12.3047",
        "--planets",
        "1",
        "--trend",
        "0",
        "--mstar-msun",
        "1.0",
        "--mstar-err",
        "0.05",
        "--sample",
        "--seed",
        "3",
        "--json",
    ];
    let out = heft(&args);
    let doc = json_of(&out);
    let d = &doc["diagnostics"];
    assert_eq!(d["converged"], true, "{}", d["reason"]);
    for p in d["parameters"].as_array().unwrap() {
        assert!(p["tau_steps"].as_f64().unwrap() > 0.0);
        assert!(p["rhat"].as_f64().unwrap() < 1.01);
        assert!(p["ess"].as_f64().unwrap() > 0.0);
    }
    let planet = &doc["planets"][0];
    assert!(is_estimate(&planet["k_mps"]) && is_estimate(&planet["msini_mearth"]));
    assert!(planet["significance"]["delta_lnl"].as_f64().unwrap() > 0.0);
    assert!(planet["detection"]["k_over_sigma"].as_f64().unwrap() > 3.0);
    let priors = doc["priors"].as_array().unwrap();
    assert!(
        priors
            .iter()
            .any(|p| p["parameter"] == "b.k_mps" && p["kind"] == "uniform")
    );
    assert_eq!(doc, json_of(&heft(&args)), "same seed, same results");
}

/// `heft run` with `sample = true` writes the draws (Parquet, CSV on request) and the
/// corner plot beside results.json.
#[test]
fn run_with_sampling_writes_draws() {
    let dir = tempfile::tempdir().unwrap();
    let target = write(
        dir.path(),
        "t.toml",
        &format!(
            "name = \"t\"\n[star]\nmass_msun = 1.0\nmass_err_msun = 0.05\n[[data]]\nfile = \"{}\"\n[settings]\ntrend = 0\nmax_signals = 1\nsample = true\ndraws = 2000\ndraws_csv = true\n",
            repo("tests/reference/twobody/one_planet.csv")
        ),
    );
    let out_dir = dir.path().join("run");
    let out = heft(&[
        "run",
        target.to_str().unwrap(),
        "--out",
        out_dir.to_str().unwrap(),
        "--json",
    ]);
    let doc = json_of(&out);
    assert!(doc["diagnostics"]["converged"].as_bool().unwrap());
    let csv = std::fs::read_to_string(out_dir.join("draws.csv")).unwrap();
    let header = csv.lines().next().unwrap();
    assert!(
        header.starts_with("ensemble,walker,step,ln_posterior,b.period_d,b.k_mps"),
        "{header}"
    );
    assert!(header.contains("b.msini_mearth"));
    assert_eq!(
        csv.lines().count() - 1,
        doc["posterior"]["n_draws"].as_u64().unwrap() as usize
    );
    let parquet = std::fs::read(out_dir.join("draws.parquet")).unwrap();
    assert_eq!(
        &parquet[..4],
        b"PAR1",
        "Parquet magic number (Apache Parquet format spec)"
    );
    let svg = std::fs::read_to_string(out_dir.join("corner.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("K (b) [m/s]"));
}

#[test]
fn audit_json_has_verdict_and_aliases() {
    // 60 invented points with a 17.31 d and a 3.127 d sinusoid (see
    // tests/reference/make_gls_fixture.py); the claim is the 17.31 d signal.
    let data = repo("tests/reference/gls_data.csv");
    let out = heft(&[
        "audit",
        &data,
        "--period",
        "17.3",
        "--mstar-msun",
        "0.9",
        "--mstar-err",
        "0.05",
        "--json",
    ]);
    let doc = json_of(&out);
    let verdict = doc["verdict"].as_str().unwrap();
    assert!(
        [
            "robust",
            "alias-ambiguous",
            "model-dependent",
            "not-detected"
        ]
        .contains(&verdict),
        "{verdict}"
    );
    assert_eq!(doc["audit"]["verdict"], doc["verdict"]);
    let aliases = doc["aliases"].as_array().unwrap();
    let claimed = aliases
        .iter()
        .find(|a| a["relation"] == "claimed")
        .expect("the claimed period is among the aliases");
    assert_eq!(claimed["delta_lnl"].as_f64(), Some(0.0));
    assert!((claimed["period_d"].as_f64().unwrap() - 17.31).abs() < 0.2);
    for a in aliases {
        assert!(a["period_d"].as_f64().unwrap() > 0.0);
        assert!(a["delta_lnl"].is_number());
        assert!(is_estimate(&a["k_mps"]));
    }
    // Only the claimed planet is audited; its variants carry masses.
    let planets = doc["audit"]["planets"].as_array().unwrap();
    assert_eq!(planets.len(), 1);
    assert!(is_estimate(
        &planets[0]["variants"][0]["planet"]["mass_mearth"]
    ));
    assert!(
        doc["audit"]["reasons"]
            .as_array()
            .is_some_and(|r| !r.is_empty())
    );

    let no_claim = heft(&["audit", &data]);
    assert_eq!(no_claim.status.code(), Some(2));
    assert!(stderr(&no_claim).contains("--period"));
}

#[test]
fn quiet_and_verbose_modes() {
    let data = repo("tests/reference/gls_data.csv");
    let quiet = heft(&["--quiet", "periodogram", &data, "--nfreq", "200"]);
    assert!(quiet.status.success());
    assert!(quiet.stdout.is_empty() && quiet.stderr.is_empty());
    // JSON is printed even when quiet: it is what a script asked for.
    let json = heft(&["-q", "periodogram", &data, "--nfreq", "200", "--json"]);
    assert!(json_of(&json)["peaks"].is_array());
    let verbose = heft(&["periodogram", &data, "--nfreq", "200", "--verbose"]);
    assert!(verbose.status.success());
    let err = stderr(&verbose);
    assert!(
        err.contains("read 60 points") && err.contains("done in"),
        "{err}"
    );
    assert!(!verbose.stdout.is_empty());
    let both = heft(&["-q", "-v", "periodogram", &data]);
    assert_eq!(both.status.code(), Some(2));
}

/// `--outliers` (design.md): with the default `clip` a point moved by 200 m/s is listed
/// under `outliers` with `file`, `row`, `time_d` and `residual_sigma` and left out; with
/// `keep` it is listed and kept; `student-t` keeps every point under that likelihood.
#[test]
fn fit_outliers_are_listed() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(repo("tests/reference/twobody/one_planet.csv")).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let n = lines.len() - 1;
    // Line 10 of the file (header = line 1).
    let f: Vec<String> = lines[9].split(',').map(str::to_string).collect();
    let moved = f[1].parse::<f64>().unwrap() + 200.0;
    lines[9] = format!("{},{moved},{}", f[0], f[2]);
    let file = write(dir.path(), "moved.csv", &(lines.join("\n") + "\n"));
    let fit = |mode: &str| {
        json_of(&heft(&[
            "fit",
            &file.display().to_string(),
            "--period",
            "12.3047",
            "--planets",
            "1",
            "--outliers",
            mode,
            "--json",
        ]))
    };
    for (mode, fitted, excluded) in [
        ("clip", n - 1, true),
        ("keep", n, false),
        ("student-t", n, false),
    ] {
        let doc = fit(mode);
        let outliers = doc["outliers"].as_array().unwrap();
        assert_eq!(outliers.len(), 1, "{mode}: {outliers:?}");
        let o = &outliers[0];
        assert_eq!(o["file"], "moved.csv");
        assert_eq!(o["row"], 10);
        assert_eq!(o["time_d"].as_f64().unwrap(), f[0].parse::<f64>().unwrap());
        assert!(o["residual_sigma"].as_f64().unwrap() > 5.0, "{mode}: {o}");
        assert_eq!(o["excluded"], excluded);
        assert_eq!(doc["data"]["n_points"], fitted, "{mode}");
        assert_eq!(doc["data"]["n_read"], n);
        assert_eq!(doc["data_changes"]["outlier_search"]["mode"], mode);
    }
}

/// Target-file data settings that do not fit the data: exit 2 naming the file and key.
#[test]
fn bad_data_settings_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let data = repo("tests/reference/twobody/one_planet.csv");
    let target = |extra: &str| {
        format!(
            "name = \"Invented\"\n[star]\nmass_msun = 1.0\n[[data]]\nfile = \"{data}\"\n{extra}"
        )
    };
    let cases = [
        (
            "[[era]]\ninstrument = \"nope\"\nsplit_bjd = [2459700.5]\n",
            "era: instrument 'nope' is not in the data (instruments: one_planet)",
        ),
        (
            "[[era]]\ninstrument = \"one_planet\"\nsplit_bjd = [2459700.5]\nnames = [\"x\"]\n",
            "era[0].names: 1 split times make 2 eras, but 1 names are given",
        ),
        (
            "[[offset_prior]]\ninstruments = [\"one_planet\", \"other\"]\ngaussian = [3.0, 1.0]\n",
            "offset_prior: instrument 'other' is not in the data",
        ),
        (
            "[settings]\nbin_window_d = -1.0\n",
            "settings.bin_window_d: must be a positive number",
        ),
    ];
    for (i, (extra, message)) in cases.iter().enumerate() {
        let path = write(dir.path(), &format!("t{i}.toml"), &target(extra));
        let out = heft(&[
            "run",
            &path.display().to_string(),
            "--out",
            &dir.path().join(format!("r{i}")).display().to_string(),
        ]);
        assert_eq!(out.status.code(), Some(2), "{extra}: {}", stderr(&out));
        assert!(stderr(&out).contains(message), "{extra}: {}", stderr(&out));
    }
}

/// A target file with an era, a transit window, binning with the unbinned fit beside it
/// and per-instrument indicator terms: each change is in the summary, results.json and
/// data_used.csv (one row per point read or bin, with its status).
#[test]
fn run_shows_every_data_change() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // Invented: one instrument, two points a night 0.05 d apart, a hardware change at
    // day 150 (+8 m/s), a width indicator; planet b (P 6.1 d, K 12 m/s) transits.
    let mut rows = String::from("time,rv,rv_err,width\n");
    for night in 0..60 {
        for j in 0..2 {
            let t = 2_460_000.3 + 5.0 * f64::from(night) + 0.05 * f64::from(j);
            let x = t - 2_460_000.0;
            let rv = -12.0 * (std::f64::consts::TAU * (x - 2.0) / 6.1).sin()
                + if x >= 150.0 { 8.0 } else { 0.0 }
                + 1.5 * (7.3 * x).sin();
            rows.push_str(&format!("{t:.5},{rv:.4},1.5,{:.3}\n", (3.1 * x).cos()));
        }
    }
    write(d, "loom.csv", &rows);
    let target = write(
        d,
        "t.toml",
        "name = \"Invented\"\n[star]\nmass_msun = 0.8\n[[data]]\nfile = \"loom.csv\"\n\
         [[transit]]\nlabel = \"b\"\nperiod_d = 6.1\ntc = 2460002.0\nduration_h = 3.0\n\
         [[era]]\ninstrument = \"loom\"\nsplit_bjd = [2460150.0]\n\
         [settings]\naudit = false\ntrend = 0\nbin_window_d = 0.5\nbin_compare = true\n\
         indicator_terms = \"per-instrument\"\n",
    );
    let out_dir = d.join("run");
    let out = heft(&[
        "run",
        &target.display().to_string(),
        "--out",
        &out_dir.display().to_string(),
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let summary = std::fs::read_to_string(out_dir.join("summary.txt")).unwrap();
    for needle in [
        "eras: loom split at BJD_TDB 2460150 into loom-1",
        "in transit:",
        "binning:",
        "m/s unbinned",
        "outliers (beyond 5 robust σ",
        "loom-2",
    ] {
        assert!(
            summary.contains(needle),
            "summary lacks {needle}:\n{summary}"
        );
    }
    let doc: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    let changes = &doc["data_changes"];
    assert_eq!(
        changes["eras"][0]["names"],
        serde_json::json!(["loom-1", "loom-2"])
    );
    let in_transit = changes["in_transit"].as_array().unwrap().len();
    assert!(in_transit > 0);
    let binning = &changes["binning"];
    assert!(binning["unbinned_fit"]["planets"][0]["k_mps"]["value"].is_number());
    assert_eq!(
        binning["n_before"].as_u64().unwrap() as usize + in_transit,
        120
    );
    assert_eq!(doc["indicator_terms"].as_array().unwrap().len(), 2);
    let used = std::fs::read_to_string(out_dir.join("data_used.csv")).unwrap();
    let lines: Vec<&str> = used.lines().skip(1).collect();
    let transit_rows = lines.iter().filter(|l| l.contains(",in-transit,")).count();
    assert_eq!(transit_rows, in_transit);
    // Rows after binning: one per bin; their n_combined add up to the points binned.
    let combined: u64 = lines
        .iter()
        .filter(|l| !l.contains(",in-transit,"))
        .map(|l| l.split(',').nth(9).unwrap().parse::<u64>().unwrap())
        .sum();
    assert_eq!(combined, binning["n_before"].as_u64().unwrap());
}

/// `--activity` (design.md contract): the activity block of results.json with every
/// hyperparameter as an estimate, the rotation prior recorded; without `--rotation-d`, or
/// with an unknown model, exit 2 with a message naming the option.
#[test]
fn fit_with_an_activity_model() {
    let data = repo("tests/reference/twobody/one_planet.csv");
    let args = |model: &'static str| {
        vec![
            "fit",
            data.as_str(),
            "--period",
            "12.3047",
            "--planets",
            "1",
            "--circular",
            "--activity",
            model,
        ]
    };
    let mut ok = args("oscillator");
    ok.extend(["--rotation-d", "17.0", "--json"]);
    let doc = json_of(&heft(&ok));
    let act = &doc["activity"];
    assert_eq!(act["model"], "oscillator");
    assert_eq!(act["rotation_prior_d"]["mean"].as_f64(), Some(17.0));
    // Without --rotation-err-d the prior's sd is 10 % of the period (docs/methods.md).
    assert!((act["rotation_prior_d"]["sd"].as_f64().unwrap() - 1.7).abs() < 1e-12);
    for key in [
        "amplitude_mps",
        "amplitude_half_mps",
        "rotation_d",
        "quality",
    ] {
        assert!(is_estimate(&act["parameters"][key]), "{key}: {act}");
    }
    assert!(
        doc["priors"]
            .as_array()
            .unwrap()
            .iter()
            .any(|p| p["parameter"] == "activity.rotation_d" && p["source"] == "rotation")
    );
    let none = json_of(&heft(&[
        "fit",
        &data,
        "--period",
        "12.3047",
        "--planets",
        "1",
        "--json",
    ]));
    assert!(none.get("activity").is_none());

    let out = heft(&args("quasiperiodic"));
    assert_refused(&out, "--rotation-d");
    let out = heft(&args("spots"));
    assert_refused(&out, "spots");
    let mut unknown = args("quasiperiodic");
    unknown.extend(["--rotation-d", "17.0", "--activity-indicator", "s_index"]);
    let out = heft(&unknown);
    assert_refused(
        &out,
        "activity indicator `s_index`: no such indicator column",
    );
}

/// `--activity joint` (design.md contract, Rajpaul et al. 2015): the RVs and the named
/// indicator column fitted together; results.json names the model and the indicator and
/// gives the latent hyperparameters, both series' couplings and the indicator's offset
/// and jitter as estimates. Without an indicator column, or with several for another
/// model, exit 2 naming the problem.
#[test]
fn fit_with_the_joint_activity_model() {
    let data = repo("data-demo/quill.csv");
    let args = |model: &'static str| {
        vec![
            "fit",
            data.as_str(),
            "--period",
            "47.3",
            "--planets",
            "1",
            "--circular",
            "--rotation-d",
            "6.4",
            "--activity",
            model,
        ]
    };
    let mut ok = args("joint");
    ok.extend(["--activity-indicator", "line_width", "--json"]);
    let doc = json_of(&heft(&ok));
    let act = &doc["activity"];
    assert_eq!(act["model"], "joint");
    assert_eq!(act["joint_indicators"], serde_json::json!(["line_width"]));
    for key in [
        "evolution_d",
        "smoothness",
        "rotation_d",
        "coupling.rv.level_mps",
        "coupling.rv.slope_mps_d",
        "coupling.line_width.level",
        "coupling.line_width.slope_d",
        "indicator_offset.line_width.quill",
        "indicator_jitter.line_width.quill",
    ] {
        assert!(is_estimate(&act["parameters"][key]), "{key}: {act}");
    }
    let out = heft(&args("joint"));
    assert_refused(&out, "--activity-indicator");
    let mut several = args("quasiperiodic");
    several.extend([
        "--activity-indicator",
        "line_width",
        "--activity-indicator",
        "line_width",
    ]);
    let out = heft(&several);
    assert_refused(&out, "only the joint activity model takes more than one");
}

/// `--activity-per-instrument`: with two spectrographs the second one's activity amplitude
/// factor is an estimate in results.json (`scale.INSTRUMENT`); without an activity model,
/// or with the joint one, exit 2 naming the problem.
#[test]
fn fit_with_per_instrument_activity_amplitudes() {
    let (quill, fennick) = (repo("data-demo/quill.csv"), repo("data-demo/fennick.tsv"));
    let args = |model: &'static str| {
        vec![
            "fit",
            quill.as_str(),
            fennick.as_str(),
            "--period",
            "47.3",
            "--planets",
            "1",
            "--circular",
            "--rotation-d",
            "6.4",
            "--activity",
            model,
            "--activity-per-instrument",
            "--activity-indicator",
            "line_width",
        ]
    };
    let mut ok = args("quasiperiodic");
    ok.push("--json");
    let doc = json_of(&heft(&ok));
    let scale = &doc["activity"]["parameters"]["scale.fennick"];
    assert!(is_estimate(scale), "{}", doc["activity"]);
    assert!(doc["activity"]["parameters"].get("scale.quill").is_none());
    let out = heft(&args("joint"));
    assert_refused(&out, "per-instrument");
    let mut none = args("none");
    none.truncate(none.len() - 2);
    let out = heft(&none);
    assert_refused(&out, "--activity-per-instrument needs an activity model");
}

/// The audit compares K and mass with and without the activity GP: with a rotation period
/// and no activity model, a quasi-periodic variant is fitted; with an activity model,
/// a variant without it. Both carry the planet's K and mass.
#[test]
fn audit_compares_with_and_without_the_activity_model() {
    let data = repo("tests/reference/gls_data.csv");
    let base = [
        "audit",
        data.as_str(),
        "--period",
        "17.3",
        "--mstar-msun",
        "0.9",
        "--rotation-d",
        "6.1",
        "--json",
    ];
    let variant = |doc: &Value, prefix: &str| {
        doc["audit"]["planets"][0]["variants"]
            .as_array()
            .unwrap()
            .iter()
            .find(|v| v["name"].as_str().unwrap().starts_with(prefix))
            .cloned()
            .unwrap_or_else(|| panic!("no variant {prefix}"))
    };
    let doc = json_of(&heft(&base));
    let with = variant(&doc, "with a quasi-periodic activity model");
    assert!(is_estimate(&with["planet"]["k_mps"]));
    assert!(is_estimate(&with["planet"]["mass_mearth"]));
    let mut gp = base.to_vec();
    gp.extend(["--activity", "oscillator"]);
    let doc = json_of(&heft(&gp));
    assert_eq!(doc["activity"]["model"], "oscillator");
    let without = variant(&doc, "without the activity model");
    assert!(is_estimate(&without["planet"]["k_mps"]));
    assert!(is_estimate(&without["planet"]["mass_mearth"]));
}

/// `heft periodogram --rotation-d`: a peak near half the rotation period is flagged
/// (data: the 17.31 d and 3.127 d sinusoids of tests/reference/make_gls_fixture.py).
#[test]
fn periodogram_flags_rotation_harmonics() {
    let out = heft(&[
        "periodogram",
        &repo("tests/reference/gls_data.csv"),
        "--rotation-d",
        "34.0",
        "--bootstrap",
        "0",
        "--json",
    ]);
    let doc = json_of(&out);
    let peaks = doc["peaks"].as_array().unwrap();
    let top = peaks
        .iter()
        .find(|p| (p["period"].as_f64().unwrap() - 17.31).abs() < 0.3)
        .expect("the 17.31 d peak");
    let flag = top["near_rotation"].as_str().unwrap();
    assert!(flag.starts_with("half the rotation period"), "{flag}");
    assert!(flag.ends_with("given"), "{flag}");
    assert!(
        peaks
            .iter()
            .filter(|p| (p["period"].as_f64().unwrap() - 3.127).abs() < 0.05)
            .all(|p| p.get("near_rotation").is_none())
    );
}
