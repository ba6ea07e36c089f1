//! The GP log-likelihood and prediction against a dense numpy/scipy computation
//! (fixture written by tests/reference/make_gp_fixture.py with numpy 2.4.6 and scipy
//! 1.17.1, versions recorded in the fixture): agreement to 1e-8 relative, for the
//! quasi-periodic kernel, a pair of oscillators and their sum, with and without
//! per-point amplitude scales, through both solvers where they apply.

use std::path::Path;

use heft::gp::{Kernel, Points, Solver, Term};
use serde_json::Value;

fn fixture() -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/gp_numpy.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn kernel(terms: &Value) -> Kernel {
    let terms = terms
        .as_array()
        .unwrap()
        .iter()
        .map(|t| {
            let f = |k: &str| t[k].as_f64().unwrap();
            match t["kind"].as_str().unwrap() {
                "quasi-periodic" => Term::QuasiPeriodic {
                    amplitude_mps: f("amplitude_mps"),
                    evolution_d: f("evolution_d"),
                    period_d: f("period_d"),
                    smoothness: f("smoothness"),
                },
                _ => Term::Oscillator {
                    amplitude_mps: f("amplitude_mps"),
                    period_d: f("period_d"),
                    quality: f("quality"),
                },
            }
        })
        .collect();
    Kernel { terms }
}

#[test]
fn log_likelihood_and_prediction_match_scipy_to_1e_8() {
    let fx = fixture();
    let (t, r, white) = (
        floats(&fx["time_d"]),
        floats(&fx["residual_mps"]),
        floats(&fx["white_m2ps2"]),
    );
    let at = floats(&fx["at_d"]);
    let ones_at = vec![1.0; at.len()];
    let cases = fx["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 6);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let scale = if case["scaled"].as_bool().unwrap() {
            floats(&fx["scale"])
        } else {
            vec![1.0; t.len()]
        };
        let k = kernel(&case["terms"]);
        let points = Points {
            time_d: &t,
            white: &white,
            scale: &scale,
        };
        let solvers: &[Solver] = if k.exp_terms().is_some() {
            &[Solver::Dense, Solver::Semiseparable]
        } else {
            &[Solver::Dense]
        };
        let expected = case["log_likelihood"].as_f64().unwrap();
        let (mean_ref, var_ref) = (floats(&case["mean_mps"]), floats(&case["variance_m2ps2"]));
        let k0 = k.covariance(0.0);
        for &solver in solvers {
            let got = points.log_likelihood(&k, solver, &r).unwrap();
            let rel = (got - expected).abs() / expected.abs();
            println!(
                "{name} scaled={} {solver:?}: ln L {got} vs scipy {expected} (rel {rel:.1e})",
                case["scaled"]
            );
            assert!(rel <= 1e-8);
            let (mean, var) = points.predict(&k, solver, &r, &at, &ones_at).unwrap();
            for i in 0..at.len() {
                // Relative to the size of the quantity, floored at the prior (k(0)) scale
                // for means and variances that pass near zero.
                assert!(
                    (mean[i] - mean_ref[i]).abs() <= 1e-8 * mean_ref[i].abs().max(k0.sqrt()),
                    "{name} mean at {}: {} vs {}",
                    at[i],
                    mean[i],
                    mean_ref[i]
                );
                assert!(
                    (var[i] - var_ref[i]).abs() <= 1e-8 * var_ref[i].abs().max(k0),
                    "{name} variance at {}: {} vs {}",
                    at[i],
                    var[i],
                    var_ref[i]
                );
            }
        }
    }
}
