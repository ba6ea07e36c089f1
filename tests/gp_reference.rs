//! The GP log-likelihood and prediction against a dense numpy/scipy computation
//! (fixture written by tests/reference/make_gp_fixture.py with numpy 2.4.6 and scipy
//! 1.17.1, versions recorded in the fixture): agreement to 1e-8 relative, for the
//! quasi-periodic kernel, a pair of oscillators and their sum, with and without
//! per-point amplitude scales, through both solvers where they apply.
//!
//! The joint GP of several series (latent quasi-periodic process and its derivative,
//! Rajpaul et al. 2015, MNRAS 452, 2269) against a dense numpy/scipy computation of the
//! same stacked covariance (tests/reference/make_joint_gp_fixture.py, numpy 2.4.6 and
//! scipy 1.17.1): log-likelihood and the conditional mean and variance of every series
//! agree to 1e-8 relative, for two latent kernels and three sets of couplings.

use std::path::Path;

use heft::gp::{Coupling, JointKernel, JointPoints, Kernel, Points, Solver, Term};
use serde_json::Value;

fn fixture(name: &str) -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(name);
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// A predicted (mean, variance) against the reference to 1e-8, relative to the size of
/// each quantity floored at the prior variance `prior` (and its square root for the mean)
/// for values that pass near zero.
fn near(label: &str, got: (f64, f64), reference: (f64, f64), prior: f64) {
    let (mean, var) = got;
    let (mean_ref, var_ref) = reference;
    assert!(
        (mean - mean_ref).abs() <= 1e-8 * mean_ref.abs().max(prior.sqrt()),
        "{label}: mean {mean} vs {mean_ref}"
    );
    assert!(
        (var - var_ref).abs() <= 1e-8 * var_ref.abs().max(prior),
        "{label}: variance {var} vs {var_ref}"
    );
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
    let fx = fixture("gp_numpy.json");
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
                let label = format!("{name} at {}", at[i]);
                near(&label, (mean[i], var[i]), (mean_ref[i], var_ref[i]), k0);
            }
        }
    }
}

fn indices(v: &Value) -> Vec<usize> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap() as usize)
        .collect()
}

fn joint_kernel(case: &Value) -> JointKernel {
    let l = &case["latent"];
    let f = |k: &str| l[k].as_f64().unwrap();
    let latent = Term::QuasiPeriodic {
        amplitude_mps: f("amplitude"),
        evolution_d: f("evolution_d"),
        period_d: f("period_d"),
        smoothness: f("smoothness"),
    };
    let series = case["coupling"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| Coupling {
            level: c[0].as_f64().unwrap(),
            slope: c[1].as_f64().unwrap(),
        })
        .collect();
    JointKernel::new(latent, series).unwrap()
}

#[test]
fn joint_log_likelihood_and_prediction_match_scipy_to_1e_8() {
    let fx = fixture("joint_gp_numpy.json");
    let (t, series, r, white) = (
        floats(&fx["time_d"]),
        indices(&fx["series"]),
        floats(&fx["residual"]),
        floats(&fx["white"]),
    );
    let (at, at_series) = (floats(&fx["at_d"]), indices(&fx["at_series"]));
    let points = JointPoints {
        time_d: &t,
        series: &series,
        white: &white,
    };
    let cases = fx["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 6);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let k = joint_kernel(case);
        let expected = case["log_likelihood"].as_f64().unwrap();
        let got = points.log_likelihood(&k, &r).unwrap();
        let rel = (got - expected).abs() / expected.abs();
        println!("{name}: ln L {got} vs scipy {expected} (rel {rel:.1e})");
        assert!(rel <= 1e-8);
        let (mean_ref, var_ref) = (floats(&case["mean"]), floats(&case["variance"]));
        let (mean, var) = points.predict(&k, &r, &at, &at_series).unwrap();
        for i in 0..at.len() {
            let x = at_series[i];
            let label = format!("{name} series {x} at {}", at[i]);
            let prior = k.covariance(x, x, 0.0);
            near(&label, (mean[i], var[i]), (mean_ref[i], var_ref[i]), prior);
        }
    }
}
