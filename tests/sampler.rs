//! Posterior sampling checks: a linear-Gaussian problem with a known posterior, draws
//! that do not depend on the thread count, coverage of the 68 % intervals on injected
//! data sets, and the target file's `[priors]` table.
//!
//! The 50-set coverage run is slow in the dev profile and is opt-in:
//! `cargo test --test sampler coverage_50_sets -- --ignored --nocapture`.

use std::path::Path;

use heft::data::RvSet;
use heft::fit::{FitOptions, SearchSettings, SignalCount};
use heft::orbit::Orbit;
use heft::pipeline::{self, Request};
use heft::prep::{DataLog, OutlierPolicy};
use heft::sample::chains::{self, SamplerSettings};
use heft::target::{OrbitShape, Star};
use nalgebra::{DMatrix, DVector};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

/// Posterior of y = a cos(2πt/P) + b sin(2πt/P) + c with known Gaussian errors and flat
/// priors is N(μ, Σ) with Σ = (XᵀWX)⁻¹ and μ = Σ XᵀW y (weighted least squares, common
/// practice). The sampler's mean and covariance must agree within Monte Carlo error:
/// mean within 4 σ/√ESS, each covariance entry within 5 √(2/ESS) of √(Σ_ii Σ_jj)
/// (large-sample standard error of a sample covariance of a normal, common practice).
#[test]
fn linear_gaussian_posterior() {
    let mut rng = ChaCha8Rng::seed_from_u64(21);
    let period = 9.3;
    let n = 40;
    let t: Vec<f64> = (0..n)
        .map(|i| 3.1 * i as f64 + rng.random::<f64>())
        .collect();
    let sigma: Vec<f64> = (0..n).map(|i| 1.0 + 0.5 * (i % 3) as f64).collect();
    let basis = |t: f64| {
        let x = std::f64::consts::TAU * t / period;
        [x.cos(), x.sin(), 1.0]
    };
    let y: Vec<f64> = t
        .iter()
        .zip(&sigma)
        .map(|(&t, s)| {
            let b = basis(t);
            3.0 * b[0] - 1.5 * b[1] + 0.7 + s * rng.sample::<f64, _>(StandardNormal)
        })
        .collect();
    let x = DMatrix::from_fn(n, 3, |i, j| basis(t[i])[j]);
    let w = DMatrix::from_diagonal(&DVector::from_iterator(n, sigma.iter().map(|s| s.powi(-2))));
    let cov = (x.transpose() * &w * &x).try_inverse().unwrap();
    let mean = &cov * x.transpose() * &w * DVector::from_vec(y.clone());

    let ln_p = |p: &[f64]| -> f64 {
        -0.5 * t
            .iter()
            .zip(&y)
            .zip(&sigma)
            .map(|((&t, &y), s)| {
                let b = basis(t);
                ((y - p[0] * b[0] - p[1] * b[1] - p[2]) / s).powi(2)
            })
            .sum::<f64>()
    };
    let settings = SamplerSettings {
        seed: 4,
        ..SamplerSettings::default()
    };
    let walkers = settings.walkers_for(3);
    let starts: Vec<Vec<Vec<f64>>> = (0..2)
        .map(|_| {
            (0..walkers)
                .map(|_| {
                    (0..3)
                        .map(|j| {
                            mean[j]
                                + 3.0 * cov[(j, j)].sqrt() * rng.sample::<f64, _>(StandardNormal)
                        })
                        .collect()
                })
                .collect()
        })
        .collect();
    let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
    let out = chains::run(&ln_p, starts, &settings, usize::MAX, &mut |_| {}, &names);
    let d = &out.diagnostics;
    assert!(d.converged, "{}", d.reason);
    let m = out.positions.len() as f64;
    let mu: Vec<f64> = (0..3)
        .map(|j| out.positions.iter().map(|p| p[j]).sum::<f64>() / m)
        .collect();
    let ess = d.min_ess;
    println!(
        "linear-Gaussian: {} draws, min ESS {ess:.0}, max R̂ {:.4}, τ {:?}",
        out.positions.len(),
        d.max_rhat,
        d.parameters.iter().map(|p| p.tau_steps).collect::<Vec<_>>()
    );
    for j in 0..3 {
        let tol = 4.0 * cov[(j, j)].sqrt() / ess.sqrt();
        println!(
            "mean[{j}]: sampled {:.5}, analytic {:.5}, tolerance {tol:.5}",
            mu[j], mean[j]
        );
        assert!((mu[j] - mean[j]).abs() < tol);
        for k in 0..3 {
            let c = out
                .positions
                .iter()
                .map(|p| (p[j] - mu[j]) * (p[k] - mu[k]))
                .sum::<f64>()
                / (m - 1.0);
            let scale = (cov[(j, j)] * cov[(k, k)]).sqrt();
            let tol = 5.0 * (2.0 / ess).sqrt() * scale;
            assert!(
                (c - cov[(j, k)]).abs() < tol,
                "cov[{j}][{k}] {c} vs {}",
                cov[(j, k)]
            );
        }
    }
}

/// An invented single-planet data set: returns the data and the true (P, K, msini [M⊕],
/// measured M* and its σ).
struct Injected {
    set: RvSet,
    period_d: f64,
    k_mps: f64,
    msini_mearth: f64,
    star: Star,
}

fn inject(seed: u64) -> Injected {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let period_d = (3.0f64.ln() + rng.random::<f64>() * (60.0f64 / 3.0).ln()).exp();
    let ecc = 0.5 * rng.random::<f64>();
    let omega = std::f64::consts::TAU * rng.random::<f64>();
    let tc = period_d * (rng.random::<f64>() - 0.5);
    let msini_mearth = 10.0 + 90.0 * rng.random::<f64>();
    let mstar_true = 0.7 + 0.5 * rng.random::<f64>();
    let mstar_err = 0.05;
    let mstar_measured = mstar_true + mstar_err * rng.sample::<f64, _>(StandardNormal);
    // K from the exact two-body formula with sin i = 1 (the fit assumes the same).
    let k_mps =
        heft::derive::mass::semi_amplitude_mps(period_d, msini_mearth, ecc, mstar_true, 1.0);
    let n_inst = 1 + (rng.random::<f64>() < 0.5) as usize;
    let n = 40 + (rng.random::<f64>() * 30.0) as usize;
    let span = 300.0 + 300.0 * rng.random::<f64>();
    let orbit = Orbit::new(period_d, k_mps, ecc, omega, tc).unwrap();
    let offsets: Vec<f64> = (0..n_inst)
        .map(|_| 20.0 * (rng.random::<f64>() - 0.5))
        .collect();
    let jitters: Vec<f64> = (0..n_inst)
        .map(|_| 0.5 + 2.5 * rng.random::<f64>())
        .collect();
    let mut t: Vec<f64> = (0..n).map(|_| span * (rng.random::<f64>() - 0.5)).collect();
    t.sort_by(f64::total_cmp);
    let inst: Vec<usize> = (0..n).map(|i| i % n_inst).collect();
    let err: Vec<f64> = (0..n).map(|_| 1.0 + rng.random::<f64>()).collect();
    let rv: Vec<f64> = (0..n)
        .map(|i| {
            let k = inst[i];
            let sd = err[i].hypot(jitters[k]);
            orbit.rv(t[i]) + offsets[k] + sd * rng.sample::<f64, _>(StandardNormal)
        })
        .collect();
    let names = (0..n_inst).map(|k| format!("I{k}")).collect();
    Injected {
        set: RvSet::from_columns("injected", 2_460_000.0, t, rv, err, inst, names),
        period_d,
        k_mps,
        msini_mearth,
        star: Star::from_mass(mstar_measured, mstar_err),
    }
}

fn request<'a>(inj: &'a Injected, sampler: SamplerSettings) -> Request<'a> {
    Request {
        name: "injected".into(),
        set: inj.set.clone(),
        star: Some(&inj.star),
        transits: &[],
        // Started at the true period: the check is of the width of the posterior in
        // the right mode, not of the search.
        periods: vec![inj.period_d],
        fix_periods: false,
        search: SearchSettings {
            period_min_d: 1.0,
            period_max_d: Some(1000.0),
            oversample: 5.0,
            fap_threshold: 1e-3,
            count: SignalCount::Exactly(1),
            options: FitOptions {
                shape: OrbitShape::Eccentric,
                trend: 0,
                ..FitOptions::default()
            },
        },
        seed: sampler.seed,
        draws: 4000,
        profile: pipeline::profile_settings(&Default::default()),
        sampler: Some(sampler),
        priors: Default::default(),
        warm: Vec::new(),
        outliers: OutlierPolicy::default(),
        log: DataLog::new(inj.set.len()),
    }
}

/// Fraction of data sets whose 68 % intervals of K, P and m sin i contain the truth.
fn coverage(sets: u64, sampler: SamplerSettings) -> [f64; 3] {
    let mut hits = [0usize; 3];
    let mut not_converged = 0;
    for s in 0..sets {
        let inj = inject(1000 + s);
        let a = pipeline::analyse(
            request(&inj, SamplerSettings { seed: s, ..sampler }),
            &mut |_| {},
        )
        .unwrap();
        let post = a.posterior.as_ref().unwrap();
        not_converged += usize::from(!post.chains.diagnostics.converged);
        let p = &post.planets[0];
        let d = a.derived[0].as_ref().unwrap();
        let inside =
            |s: &heft::summary::Summary, x: f64| x >= s.value - s.minus && x <= s.value + s.plus;
        hits[0] += usize::from(inside(&p.k_mps, inj.k_mps));
        hits[1] += usize::from(inside(&p.period_d, inj.period_d));
        hits[2] += usize::from(inside(&d.msini_mearth, inj.msini_mearth));
    }
    let f = hits.map(|h| h as f64 / sets as f64);
    println!(
        "coverage of the 68 % intervals over {sets} injected sets: K {:.0} %, P {:.0} %, m sin i {:.0} % ({not_converged} not converged)",
        100.0 * f[0],
        100.0 * f[1],
        100.0 * f[2]
    );
    f
}

/// Quick coverage check in the normal test run: 12 sets with a shorter chain (20 τ). The
/// pooled 36 interval checks must cover 68 % within 3 binomial σ (√(0.68·0.32/36) = 7.8 %,
/// so 45–91 %; a band from the binomial distribution, common practice).
#[test]
fn coverage_quick() {
    let f = coverage(
        12,
        SamplerSettings {
            min_tau_multiple: 20.0,
            max_rhat: 1.05,
            ..SamplerSettings::default()
        },
    );
    let pooled = f.iter().sum::<f64>() / 3.0;
    assert!((0.45..=0.91).contains(&pooled), "pooled coverage {pooled}");
}

/// The issue's coverage check: 50 sets, the default convergence rule; each of K, P and
/// m sin i must cover in 56–80 % of the sets (68 % ± 2 binomial σ for 50 trials).
#[test]
#[ignore = "slow in the dev profile: run with --ignored"]
fn coverage_50_sets() {
    let f = coverage(50, SamplerSettings::default());
    for (name, x) in ["K", "P", "m sin i"].iter().zip(f) {
        assert!((0.56..=0.80).contains(&x), "{name}: {x}");
    }
}

/// The same seed gives bit-identical draws with 1 and 2 threads (per-walker random
/// streams; rayon pools built explicitly).
#[test]
fn same_draws_whatever_the_thread_count() {
    let inj = inject(7);
    let settings = SamplerSettings {
        max_steps: 1200,
        seed: 9,
        ..SamplerSettings::default()
    };
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| {
            let a = pipeline::analyse(request(&inj, settings), &mut |_| {}).unwrap();
            a.posterior.unwrap().chains
        })
    };
    let one = run(1);
    let two = run(2);
    assert!(!one.positions.is_empty());
    let bits = |c: &chains::Chains| -> Vec<u64> {
        c.positions.iter().flatten().map(|x| x.to_bits()).collect()
    };
    assert_eq!(bits(&one), bits(&two));
    // 1200 steps are far from 50 τ: the run says so rather than passing as converged.
    assert!(!one.diagnostics.converged);
    assert!(
        one.diagnostics
            .reason
            .starts_with("not converged after 1200 steps")
    );
    assert_eq!(one.diagnostics, two.diagnostics);
}

/// `[priors]` in a target file: valid entries are read; unknown keys, unknown prior kinds
/// and priors outside a quantity's physical range are errors naming the key.
#[test]
fn target_file_priors() {
    let base = r#"
name = "x"
[star]
mass_msun = 1.0
[[data]]
file = "a.csv"
"#;
    let parse = |extra: &str| heft::target::parse(&format!("{base}{extra}"), Path::new("t.toml"));
    let t = parse(
        r#"
[priors.planet.b]
k_mps = { uniform = [0.0, 30.0] }
period_d = { gaussian = [11.8, 0.01] }
[priors.instrument.A]
jitter_mps = { log_uniform = [0.1, 10.0] }
"#,
    )
    .unwrap();
    let b = &t.priors.planets["b"];
    assert_eq!(b.k_mps.unwrap().bounds(), (0.0, 30.0));
    assert_eq!(b.period_d.unwrap().kind(), "gaussian");
    assert_eq!(
        t.priors.instruments["A"].jitter_mps.unwrap().kind(),
        "log-uniform"
    );
    let err = |extra: &str| parse(extra).unwrap_err().to_string();
    assert!(err("[priors.planet.b]\nk_mpss = { uniform = [0, 1] }\n").contains("k_mpss"));
    assert!(err("[priors.planet.b]\nk_mps = { flat = [0, 1] }\n").contains("flat"));
    assert!(
        err("[priors.planet.b]\nk_mps = { uniform = [-1, 1] }\n").contains("priors.planet.b.k_mps")
    );
    assert!(err("[priors.planet.b]\necc = { uniform = [0, 1] }\n").contains("priors.planet.b.ecc"));
    assert!(
        err("[priors.planet.b]\nk_mps = { uniform = [0, 1], gaussian = [0, 1] }\n")
            .contains("exactly one")
    );
}

/// One instrument's circular signal of semi-amplitude `k` (m/s) at `period_d` plus
/// Gaussian noise `sigma` (m/s, quoted as the error), observed once a night on 40 of 150
/// nights at 0.3 d after midnight ± `scatter_h` hours.
fn nightly(seed: u64, period_d: f64, k: f64, sigma: f64, scatter_h: f64) -> Injected {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut nights = rand::seq::index::sample(&mut rng, 150, 40).into_vec();
    nights.sort_unstable();
    let t: Vec<f64> = nights
        .iter()
        .map(|&d| d as f64 - 75.0 + 0.3 + scatter_h / 24.0 * (2.0 * rng.random::<f64>() - 1.0))
        .collect();
    let phase = std::f64::consts::TAU * rng.random::<f64>();
    let rv = t
        .iter()
        .map(|&t| {
            k * (std::f64::consts::TAU * t / period_d + phase).sin()
                + sigma * rng.sample::<f64, _>(StandardNormal)
        })
        .collect();
    let n = t.len();
    Injected {
        set: RvSet::from_columns(
            "nightly",
            2_460_000.0,
            t,
            rv,
            vec![sigma; n],
            vec![0; n],
            vec!["N".into()],
        ),
        period_d,
        k_mps: k,
        msini_mearth: f64::NAN,
        star: Star::from_mass(1.0, 0.05),
    }
}

/// Period modes. Visits once a night at a fixed clock hour make f and |f − 1/d| aliases
/// (common practice). With the hour held within ±5 min and a low signal-to-noise ratio
/// the data cannot tell P = 2.7 d from its alias 27/17 d: both must be sampled as modes,
/// weights summing to 1, and the true period's mode must keep at least 1 % of the
/// posterior in every realisation, whichever mode the values come from. With the hour
/// scattered by ±2 h and a strong signal the alias is ruled out: one mode, weight 1.
#[test]
fn alias_modes_are_sampled_and_weighed() {
    const P_TRUE: f64 = 2.7;
    const P_ALIAS: f64 = 27.0 / 17.0;
    let settings = SamplerSettings {
        min_tau_multiple: 20.0,
        max_rhat: 1.05,
        ..SamplerSettings::default()
    };
    let circular = |inj: &Injected, s: u64| {
        let mut r = request(
            inj,
            SamplerSettings {
                seed: s,
                ..settings
            },
        );
        r.search.options.shape = OrbitShape::Circular;
        let a = pipeline::analyse(r, &mut |_| {}).unwrap();
        a.posterior.unwrap().modes
    };
    let near = |p: f64, q: f64| (p - q).abs() < 0.01 * q;
    for s in 0..4u64 {
        let modes = circular(&nightly(300 + s, P_TRUE, 3.0, 2.0, 5.0 / 60.0), s);
        let summary: Vec<(f64, f64, f64)> = modes
            .iter()
            .map(|m| (m.planets[0].period_d.value, m.weight, m.ln_evidence_err))
            .collect();
        println!("undecidable set {s}: modes (period, weight, ln Z error) {summary:?}");
        let total: f64 = modes.iter().map(|m| m.weight).sum();
        assert!((total - 1.0).abs() < 1e-12, "weights sum to {total}");
        let weight_at = |p: f64| {
            modes
                .iter()
                .filter(|m| near(m.planets[0].period_d.value, p))
                .map(|m| m.weight)
                .sum::<f64>()
        };
        assert!(
            modes
                .iter()
                .any(|m| near(m.planets[0].period_d.value, P_ALIAS))
        );
        assert!(
            weight_at(P_TRUE) >= 0.01,
            "true period's weight {}",
            weight_at(P_TRUE)
        );
        assert!(modes.iter().all(|m| m.ln_evidence_err < 0.3), "{summary:?}");
    }
    let modes = circular(&nightly(400, P_TRUE, 6.0, 1.0, 2.0), 0);
    assert_eq!(modes.len(), 1, "decisive data keep one mode");
    assert_eq!(modes[0].weight, 1.0);
    assert!(near(modes[0].planets[0].period_d.value, P_TRUE));
}
