//! Injection–recovery on data simulated outside heft: the star's velocity comes from a
//! numerical integration of the two-body problem (scipy's DOP853, script and library
//! versions in tests/reference/make_twobody_fixture.py and twobody/truth.json), so a sign
//! or angle convention error in heft's own model cannot cancel out.
//!
//! Checks: each fitted P, K, e, ω and Tc lies within 3 of its stated σ of the truth, and
//! each stated σ of P, K and Tc is within a factor 1.5 of the σ expected from the Fisher
//! information of the injected noise (σ_i² + jitter²) at the truth.

use std::path::{Path, PathBuf};

use heft::data::{self, DataSpec, RvSet, RvUnit, TimeStandard};
use heft::fit::{self, FitOptions, Layout, PlanetSpec, Role, SearchSettings, SignalCount};
use heft::target::OrbitShape;
use nalgebra::DMatrix;
use serde_json::Value;

fn reference(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference/twobody")
        .join(name)
}

fn truth() -> Value {
    let text = std::fs::read_to_string(reference("truth.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn load(files: &[&str]) -> RvSet {
    let specs: Vec<DataSpec> = files
        .iter()
        .map(|f| DataSpec {
            path: reference(f),
            instrument: None,
            unit: RvUnit::MetresPerSecond,
            time: TimeStandard::default(),
        })
        .collect();
    data::load(&specs).unwrap()
}

/// Fisher-information σ of each θ entry for the mean model at `theta`, noise variance
/// `err² + jitter²` per point with the true jitters.
fn expected_sigmas(set: &RvSet, layout: &Layout, theta: &[f64], jitters: &[f64]) -> Vec<f64> {
    let n = theta.len();
    let scales = layout.scales(set);
    let mut jac = DMatrix::zeros(set.len(), n);
    for j in 0..n {
        let h = 1e-4 * scales[j];
        let mut up = theta.to_vec();
        up[j] += h;
        let mut down = theta.to_vec();
        down[j] -= h;
        let pu = layout.params(&up, 0.99).unwrap().predict(set);
        let pd = layout.params(&down, 0.99).unwrap().predict(set);
        for i in 0..set.len() {
            jac[(i, j)] = (pu[i] - pd[i]) / (2.0 * h);
        }
    }
    let weights = DMatrix::from_diagonal(&nalgebra::DVector::from_iterator(
        set.len(),
        (0..set.len()).map(|i| 1.0 / (set.err_mps[i].powi(2) + jitters[set.instrument[i]].powi(2))),
    ));
    let fisher = jac.transpose() * weights * &jac;
    // Jitters carry no information about the mean model: give them unit curvature so the
    // matrix inverts; their entries are not compared.
    let mut fisher = fisher;
    for k in 0..set.n_instruments() {
        let j = layout.index(Role::Jitter(k)).unwrap();
        fisher[(j, j)] = 1.0;
    }
    let cov = fisher.try_inverse().unwrap();
    (0..n).map(|j| cov[(j, j)].sqrt()).collect()
}

fn check_dataset(name: &str, files: &[&str], trend: usize) {
    let truth = truth();
    let ds = &truth["datasets"][name];
    let set = load(files);
    let settings = SearchSettings {
        period_min_d: 1.0,
        period_max_d: None,
        oversample: 10.0,
        fap_threshold: 1e-3,
        count: SignalCount::UpTo(4),
        options: FitOptions {
            shape: OrbitShape::Eccentric,
            trend,
            ..FitOptions::default()
        },
    };
    let result = fit::search(&set, &[], &settings).unwrap();
    let fit = &result.fit;
    let true_planets = ds["planets"].as_array().unwrap();
    assert_eq!(
        fit.planets.len(),
        true_planets.len(),
        "{name}: number of signals found"
    );

    // Truth in θ form, for the Fisher σ, in the fit's planet order.
    let mut specs = Vec::new();
    for est in &fit.planets {
        let tp = true_planets
            .iter()
            .enumerate()
            .min_by(|a, b| {
                let da = (a.1["period_d"].as_f64().unwrap() - est.period_d.value).abs();
                let db = (b.1["period_d"].as_f64().unwrap() - est.period_d.value).abs();
                da.total_cmp(&db)
            })
            .map(|(_, tp)| tp)
            .unwrap();
        let p = tp["period_d"].as_f64().unwrap();
        let e = tp["ecc"].as_f64().unwrap();
        let w = tp["omega_deg"].as_f64().unwrap().to_radians();
        let tc_true = tp["tc_bjd"].as_f64().unwrap();
        let tc_fit = est.tc_d.value;
        let tc_near = tc_true + ((tc_fit - tc_true) / p).round() * p;

        let within = |what: &str, got: f64, want: f64, sigma: f64| {
            let z = (got - want) / sigma;
            eprintln!(
                "{name} {}: {what} fit {got:.6} truth {want:.6} σ {sigma:.3e} z {z:+.2}",
                est.label
            );
            assert!(z.abs() < 3.0, "{name}: {what} off by {z:.2} σ");
        };
        within("P", est.period_d.value, p, est.period_d.plus);
        within(
            "K",
            est.k_mps.value,
            tp["k_mps"].as_f64().unwrap(),
            est.k_mps.plus,
        );
        within("e", est.ecc.value, e, est.ecc.plus);
        let dw = heft::summary::wrap_pi(est.omega_deg.value.to_radians() - w).to_degrees();
        within("omega", dw, 0.0, est.omega_deg.plus);
        within("Tc", tc_fit, tc_near, est.tc_d.plus);

        specs.push(PlanetSpec {
            period_d: p,
            fix_period: false,
            k_mps: tp["k_mps"].as_f64().unwrap(),
            tc_d: tc_near - set.epoch_bjd,
            ecc_vector: (e * w.cos(), e * w.sin()),
            period_prior: None,
            tc_prior: None,
            label: est.label.clone(),
        });
    }
    let insts = ds["instruments"].as_array().unwrap();
    let offsets: Vec<f64> = insts
        .iter()
        .map(|i| i["offset_mps"].as_f64().unwrap())
        .collect();
    let jitters: Vec<f64> = insts
        .iter()
        .map(|i| i["jitter_mps"].as_f64().unwrap())
        .collect();
    let layout = Layout::new(specs, OrbitShape::Eccentric, set.n_instruments(), trend);
    let theta = layout.initial(
        &offsets,
        &jitters,
        &[ds["trend_mps_per_yr"].as_f64().unwrap()],
    );
    let expected = expected_sigmas(&set, &layout, &theta, &jitters);
    for (i, est) in fit.planets.iter().enumerate() {
        for (role, stated, what) in [
            (Role::Period(i), est.period_d.plus, "P"),
            (Role::K(i), est.k_mps.plus, "K"),
            (Role::Tc(i), est.tc_d.plus, "Tc"),
        ] {
            let want = expected[layout.index(role).unwrap()];
            let ratio = stated / want;
            eprintln!(
                "{name} {}: σ({what}) stated {stated:.3e} Fisher {want:.3e} ratio {ratio:.2}",
                est.label
            );
            assert!(
                (1.0 / 1.5..=1.5).contains(&ratio),
                "{name}: σ({what}) ratio {ratio}"
            );
        }
    }
    if trend == 1 {
        let want = ds["trend_mps_per_yr"].as_f64().unwrap();
        let z = (fit.trend[0].value - want) / fit.trend[0].plus;
        eprintln!(
            "{name}: trend fit {:.3} truth {want} z {z:+.2}",
            fit.trend[0].value
        );
        assert!(z.abs() < 3.0, "{name}: trend off by {z:.2} σ");
    }
}

#[test]
fn one_planet_one_instrument() {
    check_dataset("one_planet", &["one_planet.csv"], 0);
}

#[test]
fn two_planets_two_instruments_with_trend() {
    check_dataset(
        "two_planets",
        &["two_planets_a.csv", "two_planets_b.csv"],
        1,
    );
}
