//! Injection–recovery for the joint activity model (Rajpaul et al. 2015, MNRAS 452,
//! 2269): invented data in which one latent quasi-periodic process `G` (unit amplitude;
//! rotation 13.7 d, evolution 25 d, smoothness 0.5) drives the RVs as
//! `6 m/s · G + 10 m/s·d · G′` and a line-width indicator as `2 units · G`, beside a
//! planet of P = 9.3 d, K = 4 m/s on a circular orbit; 110 epochs over 160 days, RV
//! errors 1 m/s, indicator scatter 0.3 units.
//!
//! The simulation does not use heft's covariance code: `G` is drawn from the
//! quasi-periodic covariance written out here (Haywood et al. 2014, eq. 3; Rajpaul et
//! al. 2015, eq. 3) by a dense Cholesky factor (Rasmussen & Williams 2006, §A.2), at
//! each epoch and ±0.05 d from it, and `G′` is the central difference (error of order
//! (0.05 · 2π/13.7)² / 6 ≈ 4e-5 relative).

mod common;

use common::circular_start;

use heft::data::{Indicator, RvSet};
use heft::fit::{self, FitOptions};
use heft::gp::{Activity, rotation_prior};
use heft::target::OrbitShape;
use nalgebra::{DMatrix, DVector};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

const K_TRUE: f64 = 4.0;
const P_TRUE: f64 = 9.3;
const P_ROT: f64 = 13.7;
const EVOLUTION: f64 = 25.0;
const SMOOTHNESS: f64 = 0.5;
const RV_LEVEL: f64 = 6.0;
const RV_SLOPE: f64 = 10.0;
const WIDTH_LEVEL: f64 = 2.0;
const STEP: f64 = 0.05;

/// The quasi-periodic covariance of unit amplitude at lag `tau` days.
fn quasi_periodic(tau: f64) -> f64 {
    let s = (std::f64::consts::PI * tau / P_ROT).sin();
    (-0.5 * (s * s / (SMOOTHNESS * SMOOTHNESS) + tau * tau / (EVOLUTION * EVOLUTION))).exp()
}

/// Sorted invented times and draws of `G` and `G′` at them.
fn latent_draw(rng: &mut ChaCha8Rng, n: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut t: Vec<f64> = (0..n).map(|_| rng.random_range(-80.0..80.0)).collect();
    t.sort_by(f64::total_cmp);
    let grid: Vec<f64> = t.iter().flat_map(|&x| [x - STEP, x, x + STEP]).collect();
    let m = grid.len();
    let cov = DMatrix::from_fn(m, m, |i, j| {
        quasi_periodic(grid[i] - grid[j]) + if i == j { 1e-10 } else { 0.0 }
    });
    let l = cov.cholesky().expect("positive definite").l();
    let z = DVector::from_fn(m, |_, _| rng.sample::<f64, _>(StandardNormal));
    let g = l * z;
    let value = (0..n).map(|i| g[3 * i + 1]).collect();
    let slope = (0..n)
        .map(|i| (g[3 * i + 2] - g[3 * i]) / (2.0 * STEP))
        .collect();
    (t, value, slope)
}

/// One realisation: the planet, the activity with indicator level `width_level` (units
/// per unit of `G`), white noise.
fn realisation(seed: u64, width_level: f64) -> RvSet {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = 110;
    let (t, g, dg) = latent_draw(&mut rng, n);
    let phase0 = rng.random_range(0.0..P_TRUE);
    let rv: Vec<f64> = (0..n)
        .map(|i| {
            K_TRUE * (std::f64::consts::TAU * (t[i] - phase0) / P_TRUE).sin()
                + RV_LEVEL * g[i]
                + RV_SLOPE * dg[i]
                + rng.sample::<f64, _>(StandardNormal)
        })
        .collect();
    let width: Vec<f64> = g
        .iter()
        .map(|g| 30.0 + width_level * g + 0.3 * rng.sample::<f64, _>(StandardNormal))
        .collect();
    let mut set = RvSet::from_columns(
        "joint",
        2_460_000.0,
        t,
        rv,
        vec![1.0; n],
        vec![0; n],
        vec!["Sim".into()],
    );
    set.indicators = vec![Indicator {
        name: "width".into(),
        values: width,
    }];
    set
}

fn options(activity: Activity) -> FitOptions {
    FitOptions {
        shape: OrbitShape::Circular,
        trend: 0,
        activity,
        rotation_d: (activity != Activity::None).then(|| rotation_prior(P_ROT, 0.0)),
        joint_indicators: vec![0],
        ..FitOptions::default()
    }
}

/// `(value, mean 1σ error)` of fitted quantity `key` of the activity block.
fn activity_value(f: &fit::Fit, key: &str) -> (f64, f64) {
    let s = &f
        .activity
        .iter()
        .find(|(k, _)| k == key)
        .unwrap_or_else(|| panic!("{key} missing"))
        .1;
    (s.value, 0.5 * (s.minus + s.plus))
}

/// Planet K and the couplings recovered over 12 realisations. Checks on the joint fit's
/// K: within 3σ of the truth in all, and its errors consistent with the stated σ:
/// `Σ z² < 26.22`, the 99th percentile of χ² with 12 degrees of freedom (scipy 1.17.1
/// `chi2.ppf(0.99, 12)`). Seen: 5 of 12 within 1σ, Σ z² = 18.0 (z rms 1.22: the curvature
/// errors run some 20 % small, as the plain GP's do in `activity_injection.rs`), rms K
/// error 0.23 m/s against 0.21 for the plain quasi-periodic GP and 0.80 for white noise;
/// in this scenario the indicator pins the activity's couplings and rotation but does not
/// sharpen K. Each injected coupling (RV level 6 m/s, RV slope
/// 10 m/s·d, indicator level 2, indicator slope 0) and the rotation period lie within 3σ
/// of their fitted values in every realisation. The white-noise and plain quasi-periodic
/// fits of the same data are printed beside it.
#[test]
fn joint_model_recovers_planet_and_couplings() {
    let truth = [
        ("coupling.rv.level_mps", RV_LEVEL),
        ("coupling.rv.slope_mps_d", RV_SLOPE),
        ("coupling.width.level", WIDTH_LEVEL),
        ("coupling.width.slope_d", 0.0),
        ("rotation_d", P_ROT),
    ];
    let runs = 12;
    let mut within = 0;
    let mut chi2 = 0.0;
    let mut sq = [0.0; 3];
    println!("realisation: K white | K quasi-periodic | K joint (± 1σ), truth {K_TRUE} m/s");
    for seed in 0..runs {
        let set = realisation(20 + seed, WIDTH_LEVEL);
        let k = |a: Activity| {
            let f = fit::fit(&set, &[circular_start(P_TRUE, 3.0)], &options(a)).unwrap();
            let s = f.planets[0].k_mps;
            (s.value, 0.5 * (s.minus + s.plus), f)
        };
        let (kw, sw, _) = k(Activity::None);
        let (kq, sq_, _) = k(Activity::QuasiPeriodic);
        let (kj, sj, joint) = k(Activity::Joint);
        println!("{seed}: {kw:5.2} ± {sw:4.2} | {kq:5.2} ± {sq_:4.2} | {kj:5.2} ± {sj:4.2}");
        for (i, kx) in [kw, kq, kj].into_iter().enumerate() {
            sq[i] += (kx - K_TRUE).powi(2);
        }
        within += usize::from((kj - K_TRUE).abs() <= sj);
        chi2 += ((kj - K_TRUE) / sj).powi(2);
        assert!((kj - K_TRUE).abs() <= 3.0 * sj, "{seed}: K {kj} ± {sj}");
        for (key, value) in truth {
            let (v, sd) = activity_value(&joint, key);
            println!("   {key}: {v:.3} ± {sd:.3} (injected {value})");
            assert!((v - value).abs() <= 3.0 * sd, "{seed}: {key} {v} ± {sd}");
        }
    }
    let rms = sq.map(|s| (s / runs as f64).sqrt());
    println!(
        "joint K within 1σ: {within}/{runs}, Σ z² = {chi2:.2}; rms K error: white {:.2}, quasi-periodic {:.2}, joint {:.2} m/s",
        rms[0], rms[1], rms[2]
    );
    assert!(chi2 < 26.22, "Σ z² = {chi2}");
}

/// An indicator that falls as the activity rises (level −2): the likelihood is the same
/// under `G → −G`, and heft reports the couplings with the one farthest from zero (in
/// units of its scale; here the indicator's level) positive, so the RV couplings come out
/// negated (−6 m/s, −10 m/s·d) within 3σ.
#[test]
fn anticorrelated_indicator_is_reported_with_positive_level() {
    let set = realisation(3, -WIDTH_LEVEL);
    let f = fit::fit(
        &set,
        &[circular_start(P_TRUE, 3.0)],
        &options(Activity::Joint),
    )
    .unwrap();
    for (key, value) in [
        ("coupling.width.level", WIDTH_LEVEL),
        ("coupling.rv.level_mps", -RV_LEVEL),
        ("coupling.rv.slope_mps_d", -RV_SLOPE),
    ] {
        let (v, sd) = activity_value(&f, key);
        println!("{key}: {v:.3} ± {sd:.3} (expected {value})");
        assert!((v - value).abs() <= 3.0 * sd, "{key} {v} ± {sd}");
    }
}

/// The target file selects the joint model (`settings.activity = "joint"`) with its
/// indicator columns as a list (`activity_indicator = ["line_width"]`); the run fits
/// them with the RVs and reports the couplings beside the latent hyperparameters. A
/// column the data lack is refused, naming it.
#[test]
fn target_file_selects_the_joint_model() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let text = |columns: &str| {
        format!(
            "name = \"Invented active star\"\n[star]\nmass_msun = 0.8\nrotation_d = 6.4\n\
             [[data]]\nfile = \"{}\"\n[settings]\nactivity = \"joint\"\n\
             activity_indicator = {columns}\naudit = false\nmax_signals = 1\norbit = \"circular\"\n",
            dir.join("data-demo/quill.csv").display()
        )
    };
    let path = dir.join("joint.toml");
    let target = heft::target::parse(&text("[\"line_width\"]"), &path).unwrap();
    let a = heft::pipeline::run_target(&target, &mut |_| {}).unwrap();
    let fit = &a.search.fit;
    assert_eq!(fit.options.joint_indicators, vec![0]);
    assert!(fit.layout.joint.is_some());
    let keys: Vec<&str> = fit.activity.iter().map(|(k, _)| k.as_str()).collect();
    assert!(keys.contains(&"coupling.line_width.slope_d"), "{keys:?}");
    let target = heft::target::parse(&text("[\"line_width\", \"s_index\"]"), &path).unwrap();
    let Err(err) = heft::pipeline::run_target(&target, &mut |_| {}) else {
        panic!("an unknown column is refused");
    };
    let err = err.to_string();
    assert!(err.contains("`s_index`"), "{err}");
}
