//! Numerical edge cases are handled and reported, not crashed on: a period near or beyond
//! the time span, e → 1, K → 0, an instrument with two points, identical times in two
//! instruments, errors spanning six orders of magnitude, km/s data declared as m/s, files
//! in different day-based time scales, and likelihoods that overflow. Data here are
//! invented injections (model curves with deterministic noise).

mod common;

use common::heft;

use std::f64::consts::TAU;
use std::path::{Path, PathBuf};

use heft::data::{DataSpec, RvUnit};
use heft::orbit::Orbit;
use serde_json::Value;

/// Deterministic noise in [−1, 1] (a fixed sequence, so failures reproduce).
fn noise(i: usize) -> f64 {
    ((i as f64 * 12.9898).sin() * 43_758.545_3).fract() * 2.0 - 1.0
}

/// A CSV of `n` points over `span` days (uneven), an orbit's curve, noise of `sigma`, and
/// rv_err from `err(i)`; the instrument column from `inst(i)` when given.
fn table(
    dir: &Path,
    name: &str,
    (n, span): (usize, f64),
    orbit: &Orbit,
    sigma: f64,
    err: &dyn Fn(usize) -> f64,
    inst: Option<&dyn Fn(usize) -> &'static str>,
) -> PathBuf {
    let mut s = String::from("time,rv,rv_err");
    if inst.is_some() {
        s.push_str(",instrument");
    }
    s.push('\n');
    for i in 0..n {
        let t = span * (i as f64 + 0.4 * noise(3 * i + 1).abs()) / n as f64;
        let v = orbit.rv(t) + sigma * noise(i);
        s.push_str(&format!("{:.6},{v:.4},{:.6}", 2_459_000.0 + t, err(i)));
        if let Some(f) = inst {
            s.push_str(&format!(",{}", f(i)));
        }
        s.push('\n');
    }
    let path = dir.join(name);
    std::fs::write(&path, s).unwrap();
    path
}

/// Runs `heft fit ARGS --json`; returns (exit code, JSON or Null, stderr).
fn fit(args: &[&str]) -> (i32, Value, String) {
    let mut all = vec!["fit"];
    all.extend(args);
    all.push("--json");
    let out = heft(&all);
    let err = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(!err.contains("panicked"), "{err}");
    let json = serde_json::from_slice(&out.stdout).unwrap_or(Value::Null);
    (out.status.code().unwrap(), json, err)
}

fn value(v: &Value) -> f64 {
    v["value"].as_f64().unwrap_or(f64::NAN)
}

fn planet_ok(doc: &Value) -> &Value {
    let p = &doc["planets"][0];
    for key in ["period_d", "k_mps", "ecc"] {
        assert!(value(&p[key]).is_finite(), "{key} not finite: {p}");
    }
    p
}

#[test]
fn period_beyond_the_time_span_is_fitted_and_flagged() {
    let dir = tempfile::tempdir().unwrap();
    let orbit = Orbit::new(300.0, 20.0, 0.0, 0.0, 40.0).unwrap();
    let f = table(
        dir.path(),
        "long.csv",
        (40, 120.0),
        &orbit,
        1.0,
        &|_| 1.0,
        None,
    );
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "300", "--circular"]);
    assert_eq!(code, 0, "{err}");
    planet_ok(&doc);
    let warnings = doc["warnings"].to_string();
    assert!(warnings.contains("longer than the time span"), "{warnings}");
}

#[test]
fn eccentricity_near_one_and_amplitude_near_zero() {
    let dir = tempfile::tempdir().unwrap();
    // e = 0.97: a sharp spike at each periastron.
    let orbit = Orbit::new(17.3, 60.0, 0.97, 1.1, 3.0).unwrap();
    let f = table(
        dir.path(),
        "spiky.csv",
        (120, 400.0),
        &orbit,
        1.0,
        &|_| 1.0,
        None,
    );
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "17.3"]);
    assert_eq!(code, 0, "{err}");
    let e = value(&planet_ok(&doc)["ecc"]);
    assert!((0.0..1.0).contains(&e), "e = {e}");

    // K = 0: noise only, a planet asked for anyway.
    let flat = Orbit::new(7.3, 0.0, 0.0, 0.0, 0.0).unwrap();
    let f = table(
        dir.path(),
        "flat.csv",
        (50, 200.0),
        &flat,
        2.0,
        &|_| 2.0,
        None,
    );
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "7.3"]);
    assert_eq!(code, 0, "{err}");
    let k = value(&planet_ok(&doc)["k_mps"]);
    assert!((0.0..3.0).contains(&k), "K = {k}");
}

#[test]
fn awkward_instruments_and_errors() {
    let dir = tempfile::tempdir().unwrap();
    let orbit = Orbit::new(9.1, 12.0, 0.1, 0.5, 2.0).unwrap();
    // Instrument B has 2 points.
    let f = table(
        dir.path(),
        "two.csv",
        (40, 150.0),
        &orbit,
        1.0,
        &|_| 1.0,
        Some(&|i| if i == 5 || i == 30 { "B" } else { "A" }),
    );
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "9.1"]);
    assert_eq!(code, 0, "{err}");
    planet_ok(&doc);
    assert_eq!(doc["instruments"].as_array().unwrap().len(), 2);

    // The same times in instruments A and B.
    let a = table(
        dir.path(),
        "a.csv",
        (30, 150.0),
        &orbit,
        1.0,
        &|_| 1.0,
        Some(&|_| "A"),
    );
    let text = std::fs::read_to_string(&a).unwrap();
    let both = text.clone()
        + &text
            .lines()
            .skip(1)
            .map(|l| l.replace(",A", ",B") + "\n")
            .collect::<String>();
    let b = dir.path().join("both.csv");
    std::fs::write(&b, both).unwrap();
    let (code, doc, err) = fit(&[b.to_str().unwrap(), "--period", "9.1"]);
    assert_eq!(code, 0, "{err}");
    planet_ok(&doc);

    // rv_err from 1e-3 to 1e3 m/s.
    let f = table(
        dir.path(),
        "spread.csv",
        (60, 200.0),
        &orbit,
        0.5,
        &|i| 10f64.powi((i % 7) as i32 - 3),
        None,
    );
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "9.1"]);
    assert_eq!(code, 0, "{err}");
    planet_ok(&doc);
}

/// A km/s file declared as m/s with a large signal (so its spread is not tiny): read,
/// with a warning about the implausible errors.
#[test]
fn km_per_s_declared_as_m_per_s_is_warned_about() {
    let dir = tempfile::tempdir().unwrap();
    let orbit = Orbit::new(4.2, 0.15, 0.0, 0.0, 1.0).unwrap();
    let f = table(
        dir.path(),
        "kms.csv",
        (30, 60.0),
        &orbit,
        0.002,
        &|_| 0.003,
        None,
    );
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "4.2"]);
    assert_eq!(code, 0, "{err}");
    let w = doc["warnings"].to_string();
    assert!(w.contains("below what any spectrograph reaches"), "{w}");
    // Declared correctly, no such warning.
    let (code, doc, err) = fit(&[f.to_str().unwrap(), "--period", "4.2", "--unit", "km/s"]);
    assert_eq!(code, 0, "{err}");
    assert!(!doc["warnings"].to_string().contains("spectrograph"));
}

/// One instant written in three day-based scales lands on one internal time.
#[test]
fn files_in_different_day_based_scales_agree() {
    let dir = tempfile::tempdir().unwrap();
    let instants = [2_459_001.25, 2_459_017.5, 2_459_030.75];
    let write = |name: &str, offset: f64| {
        let mut s = String::from("time,rv,rv_err\n");
        for (i, t) in instants.iter().enumerate() {
            s.push_str(&format!("{},{},1\n", t - offset, i));
        }
        let p = dir.path().join(name);
        std::fs::write(&p, s).unwrap();
        p
    };
    let specs = [
        ("full.csv", 0.0, "BJD_TDB"),
        ("short.csv", 2_450_000.0, "BJD-2450000"),
        ("reduced.csv", 2_400_000.0, "RJD"),
        ("modified.csv", 2_400_000.5, "MJD"),
    ]
    .map(|(name, offset, standard)| DataSpec {
        unit: RvUnit::MetresPerSecond,
        time: standard.parse().unwrap(),
        ..DataSpec::new(write(name, offset))
    });
    let set = heft::data::load(&specs).unwrap();
    for (k, instant) in instants.iter().enumerate() {
        let times: Vec<f64> = (0..set.len())
            .filter(|&i| set.rv_mps[i] == k as f64)
            .map(|i| set.time_d[i] + set.epoch_bjd)
            .collect();
        assert_eq!(times.len(), 4);
        for t in times {
            assert!((t - instant).abs() < 1e-9, "{t} against {instant}");
        }
    }
}

/// RVs so large that the likelihood overflows: a clear error, exit 2, no panic.
#[test]
fn an_overflowing_likelihood_is_reported() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::from("time,rv,rv_err\n");
    for i in 0..20 {
        let t = 2_459_000.0 + 3.3 * f64::from(i);
        s.push_str(&format!(
            "{t},{:e},1e-3\n",
            1e300 * (TAU * f64::from(i) / 7.0).sin()
        ));
    }
    let f = dir.path().join("huge.csv");
    std::fs::write(&f, s).unwrap();
    let (code, _, err) = fit(&[f.to_str().unwrap(), "--period", "7"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("finite"), "{err}");
}
