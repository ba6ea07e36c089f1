//! The Fisher forecast of the next epochs against what fitting them gives: injected data
//! (an invented sinusoid plus seeded Gaussian noise), a forecast for more epochs, then
//! those epochs simulated from the same truth and the data refitted. The forecast σ_K must
//! agree with the refit's σ_K within 20 % (the planning issue's check).

use heft::data::RvSet;
use heft::fit::{FitOptions, PlanetSpec};
use heft::runs::{PlanRequest, plan, plan_svg};
use heft::target::OrbitShape;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

const PERIOD: f64 = 13.7;
const K: f64 = 4.0;
const SIGMA: f64 = 2.0;

fn observe(times: &[f64], rng: &mut ChaCha8Rng) -> Vec<f64> {
    times
        .iter()
        .map(|&t| {
            K * (std::f64::consts::TAU * t / PERIOD + 0.7).sin()
                + SIGMA * rng.sample::<f64, _>(StandardNormal)
        })
        .collect()
}

fn fit_of(times: Vec<f64>, rv: Vec<f64>) -> (RvSet, heft::fit::Fit) {
    let n = times.len();
    let set = RvSet::from_columns(
        "injected",
        2_460_000.0,
        times,
        rv,
        vec![SIGMA; n],
        vec![0; n],
        vec!["Inj".into()],
    );
    let spec = PlanetSpec {
        period_d: PERIOD,
        fix_period: false,
        k_mps: K,
        tc_d: 0.0,
        ecc_vector: (0.0, 0.0),
        period_prior: None,
        tc_prior: None,
        label: "b".into(),
    };
    let options = FitOptions {
        shape: OrbitShape::Circular,
        trend: 0,
        ..FitOptions::default()
    };
    let fit = heft::fit::fit(&set, &[spec], &options).unwrap();
    (set, fit)
}

#[test]
fn forecast_sigma_k_matches_the_refit() {
    for seed in 0..3u64 {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let times: Vec<f64> = (0..30)
            .map(|i| -100.0 + 3.3 * i as f64 + 0.3 * rng.random::<f64>())
            .collect();
        let rv = observe(&times, &mut rng);
        let (set, fit) = fit_of(times.clone(), rv.clone());
        let req = PlanRequest {
            instrument: 0,
            epochs: 40,
            window_d: (20.0, 140.0),
            mstar_rel_err: 0.05,
        };
        let p = plan(&fit, &set, &req).unwrap();
        let f = &p.planets[0];
        // Now: the Fisher σ_K against the fit's curvature σ_K.
        let now = fit.planets[0].k_mps.plus;
        assert!(
            (f.k_err_now_mps / now - 1.0).abs() < 0.2,
            "{} vs {now}",
            f.k_err_now_mps
        );
        // After: simulate the planned epochs and refit.
        let new_times: Vec<f64> = p.new_epochs_bjd.iter().map(|t| t - set.epoch_bjd).collect();
        let new_rv = observe(&new_times, &mut rng);
        let (_, refit) = fit_of(
            times.iter().chain(&new_times).copied().collect(),
            rv.iter().chain(&new_rv).copied().collect(),
        );
        let after = refit.planets[0].k_mps.plus;
        println!(
            "seed {seed}: σ_K now {now:.3} (forecast {:.3}), after {after:.3} (forecast {:.3})",
            f.k_err_now_mps, f.k_err_after_mps
        );
        assert!(
            (f.k_err_after_mps / after - 1.0).abs() < 0.2,
            "forecast {} vs refit {after}",
            f.k_err_after_mps
        );
        assert!(f.k_err_after_mps < f.k_err_now_mps);
        assert!(f.mass_rel_err_after >= 2.0 / 3.0 * 0.05);
        // One candidate date per day of the window; quadrature helps K more than conjunction
        // (common practice: ∂v/∂K = cos(ν + ω) vanishes at the conjunctions of a circular orbit).
        assert!((p.dates.len() as f64 - 120.0).abs() <= 1.0);
        let near = |phase: f64, target: f64| (phase - target).abs() < 0.05;
        let mean = |pick: &dyn Fn(f64) -> bool| {
            let v: Vec<f64> = p
                .dates
                .iter()
                .filter(|d| pick(d.phase[0]))
                .map(|d| d.var_k_reduction[0])
                .collect();
            v.iter().sum::<f64>() / v.len().max(1) as f64
        };
        let quadrature = mean(&|ph| near(ph, 0.25) || near(ph, 0.75));
        let conjunction = mean(&|ph| near(ph, 0.0) || near(ph, 1.0) || near(ph, 0.5));
        assert!(quadrature > conjunction, "{quadrature} vs {conjunction}");
        let svg = plan_svg(&p);
        assert_eq!(svg.matches(r#"class="planet-curve""#).count(), 1);
        assert_eq!(svg.matches(r#"class="planned""#).count(), 40);
    }
}
