//! `heft mass` run as a program: the JSON shape of design.md and exit code 2 on bad input.

use std::process::{Command, Output};

use serde_json::Value;

fn heft_mass(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_heft"))
        .arg("mass")
        .args(args)
        .output()
        .expect("the heft binary runs")
}

fn json_of(args: &[&str]) -> Value {
    let out = heft_mass(args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("stdout is JSON")
}

fn assert_summary(v: &Value, key: &str) {
    let s = &v[key];
    for field in ["value", "minus", "plus"] {
        assert!(s[field].is_f64(), "{key}.{field} missing in {v}");
    }
}

#[test]
fn exact_inputs_give_the_schema_and_zero_errors() {
    // references.md §4 [C]: 100 m/s, 3 d, 1 M_sun -> m sin i = 0.709946 M_jup, solved with
    // M* + m sin i; design.md: nothing uncertain -> minus = plus = 0.
    let v = json_of(&[
        "--period-d",
        "3",
        "--k-mps",
        "100",
        "--mstar-msun",
        "1",
        "--json",
    ]);
    assert_eq!(v["schema"], "heft-results/1");
    let planets = v["planets"].as_array().expect("planets list");
    assert_eq!(planets.len(), 1);
    let p = &planets[0];
    for key in [
        "msini_mearth",
        "msini_mjup",
        "a_au",
        "period_d",
        "k_mps",
        "ecc",
    ] {
        assert_summary(p, key);
    }
    let msini = p["msini_mjup"]["value"].as_f64().unwrap();
    assert!((msini - 0.709_946).abs() < 5e-7, "{msini}");
    assert_eq!(p["msini_mjup"]["minus"], 0.0);
    assert_eq!(p["msini_mjup"]["plus"], 0.0);
    assert_eq!(p["mass_sum"], "mstar+msini");
    for absent in ["mass_mearth", "radius_rearth", "density_gcc", "class"] {
        assert!(p.get(absent).is_none(), "{absent} should be absent");
    }
}

#[test]
fn radius_without_inclination_assumes_90_deg_and_says_so() {
    // design.md: a radius without --incl-deg assumes 90 deg and says so, in JSON too.
    // Lee & Chiang (2016) super-puff box: about 4 M_earth with 8 R_earth.
    // K for 4 M_earth on a 20 d orbit of a 1 M_sun star: 1.5638 M_earth per (m/s d^(1/3))
    // factor of references.md §4 [C] -> K = 4 / (1.5638 * 20^(1/3)) = 0.9424 m/s.
    let v = json_of(&[
        "--period-d",
        "20",
        "--k-mps",
        "0.9424",
        "--mstar-msun",
        "1",
        "--mstar-err",
        "0.05",
        "--radius-rearth",
        "8",
        "--radius-err",
        "0.2",
        "--json",
        "--draws",
        "4000",
    ]);
    let p = &v["planets"][0];
    for key in [
        "mass_mearth",
        "mass_mjup",
        "radius_rearth",
        "density_gcc",
        "gravity_mps2",
    ] {
        assert_summary(p, key);
    }
    let mass = p["mass_mearth"]["value"].as_f64().unwrap();
    assert!((mass - 4.0).abs() < 0.01, "{mass}");
    assert!(p["density_gcc"]["minus"].as_f64().unwrap() > 0.0);
    assert_eq!(p["inclination"], "assumed-90");
    assert_eq!(p["mass_sum"], "mstar+mp");
    assert_eq!(p["class"], "super-puff");
    let notes = p["notes"].as_array().unwrap();
    assert!(
        notes
            .iter()
            .any(|n| n.as_str().unwrap().contains("inclination assumed 90 deg"))
    );
    assert_eq!(v["draws"], 4000);
}

#[test]
fn radius_ratio_with_inclination() {
    // Jupiter around the Sun: Rp/R* = 71 492 / 695 700 (IAU 2015 nominal radii), K =
    // 12.474003 m/s (references.md §4 [C]) -> 317.83 M_earth, 1.0 M_jup, giant; equatorial
    // radius 11.209 R_earth.
    let v = json_of(&[
        "--period-d",
        "4332.589",
        "--k-mps",
        "12.474003",
        "--ecc",
        "0.0489",
        "--mstar-msun",
        "1",
        "--incl-deg",
        "90",
        "--rp-rs",
        "0.10276268506540175",
        "--rstar-rsun",
        "1",
        "--json",
    ]);
    let p = &v["planets"][0];
    assert!((p["mass_mjup"]["value"].as_f64().unwrap() - 1.0).abs() < 1e-6);
    assert!((p["radius_rearth"]["value"].as_f64().unwrap() - 11.209).abs() < 5e-4);
    assert_eq!(p["inclination"], "given");
    assert_eq!(p["class"], "giant");
}

#[test]
fn text_output_without_json() {
    let out = heft_mass(&["--period-d", "3", "--k-mps", "100", "--mstar-msun", "1"]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains("M_jup") && text.contains("0.7099"), "{text}");
}

#[test]
fn bad_input_exits_with_code_2_and_a_message() {
    let cases: [(&[&str], &str); 9] = [
        (
            &["--period-d", "-3", "--k-mps", "10", "--mstar-msun", "1"],
            "period_d",
        ),
        (
            &[
                "--period-d",
                "3",
                "--k-mps",
                "10",
                "--ecc",
                "1",
                "--mstar-msun",
                "1",
            ],
            "ecc",
        ),
        (
            &["--period-d", "3", "--k-mps", "-1", "--mstar-msun", "1"],
            "k_mps",
        ),
        (
            &["--period-d", "3", "--k-mps", "10", "--mstar-msun", "0"],
            "mstar_msun",
        ),
        (
            &[
                "--period-d",
                "3",
                "--k-mps",
                "10",
                "--mstar-msun",
                "1",
                "--rp-rs",
                "1.2",
                "--rstar-rsun",
                "1",
            ],
            "rp_rs",
        ),
        (
            &[
                "--period-d",
                "3",
                "--k-mps",
                "10",
                "--mstar-msun",
                "1",
                "--rp-rs",
                "0.1",
            ],
            "--rstar-rsun",
        ),
        (
            &[
                "--period-d",
                "3",
                "--k-mps",
                "10",
                "--mstar-msun",
                "1",
                "--rstar-rsun",
                "1",
            ],
            "--rp-rs",
        ),
        (
            &[
                "--period-d",
                "3",
                "--k-mps",
                "10",
                "--mstar-msun",
                "1",
                "--radius-err",
                "0.1",
            ],
            "--radius-rearth",
        ),
        (&["--period-d", "3", "--k-mps", "10"], "--mstar-msun"),
    ];
    for (args, named) in cases {
        let out = heft_mass(args);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(stderr.contains(named), "{args:?}: {stderr}");
        assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
    }
}

#[test]
fn radius_ratio_and_radius_conflict() {
    let out = heft_mass(&[
        "--period-d",
        "3",
        "--k-mps",
        "10",
        "--mstar-msun",
        "1",
        "--rp-rs",
        "0.1",
        "--rstar-rsun",
        "1",
        "--radius-rearth",
        "2",
    ]);
    assert_eq!(out.status.code(), Some(2));
}
