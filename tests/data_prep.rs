//! Injection tests of the data preparation (invented data, simulated here): outliers,
//! binning within a night, an instrument era and in-transit points with a
//! Rossiter–McLaughlin-like anomaly. The planet signal is written out independently of
//! heft's model: a circular orbit with conjunction at `tc` gives
//! `v = −K sin(2π (t − tc)/P)` (common practice: e = 0, ω = 0 in `K[cos(ν+ω) + e cos ω]`).
//!
//! Run with `--nocapture` to see the recovered values.

use heft::audit::{self, AuditSettings, Context};
use heft::data::RvSet;
use heft::fit::{self, Fit, FitOptions, OffsetPrior, PlanetSpec, SearchSettings, SignalCount};
use heft::pipeline::{self, Analysis, Request};
use heft::prep::{self, DataLog, Era, OutlierMode, OutlierPolicy, Preparation, TransitWindow};
use heft::target::{OrbitShape, Star};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

const EPOCH: f64 = 2_460_000.0;

/// Circular Keplerian RV at `t`, m/s.
fn circular(t: f64, k: f64, p: f64, tc: f64) -> f64 {
    -k * (std::f64::consts::TAU * (t - tc) / p).sin()
}

/// Points at `times` (days from `EPOCH`) with error `err`, white noise of that size and
/// the circular planet `(K, P, tc)`; one instrument `loom`.
fn simulate(times: &[f64], err: f64, planet: (f64, f64, f64), rng: &mut ChaCha8Rng) -> RvSet {
    let (k, p, tc) = planet;
    let rv = times
        .iter()
        .map(|&t| circular(t, k, p, tc) + err * rng.sample::<f64, _>(StandardNormal))
        .collect();
    let n = times.len();
    RvSet::from_columns(
        "sim.csv",
        EPOCH,
        times.to_vec(),
        rv,
        vec![err; n],
        vec![0; n],
        vec!["loom".into()],
    )
}

/// Uniform random times over `[0, span)`, sorted.
fn times(n: usize, span: f64, rng: &mut ChaCha8Rng) -> Vec<f64> {
    let mut t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..span)).collect();
    t.sort_by(f64::total_cmp);
    t
}

fn options(trend: usize) -> FitOptions {
    FitOptions {
        shape: OrbitShape::Circular,
        trend,
        ..FitOptions::default()
    }
}

/// A circular planet started at the truth, with optional Gaussian constraints on P and Tc.
fn spec(k: f64, p: f64, tc: f64, known: bool) -> PlanetSpec {
    PlanetSpec {
        period_d: p,
        fix_period: false,
        k_mps: k,
        tc_d: tc,
        ecc_vector: (0.0, 0.0),
        period_prior: known.then_some((p, 1e-4)),
        tc_prior: known.then_some((tc, 1e-3)),
        label: "b".into(),
    }
}

/// Analyses `set` with one signal started at `period`, circular, no trend.
fn analyse(set: RvSet, period: f64, mode: OutlierMode) -> Analysis {
    analyse_with(
        set,
        period,
        OutlierPolicy {
            mode,
            ..OutlierPolicy::default()
        },
    )
}

/// As [`analyse`] with any outlier policy.
fn analyse_with(set: RvSet, period: f64, outliers: OutlierPolicy) -> Analysis {
    let n = set.len();
    let request = Request {
        name: "injected".into(),
        set,
        star: None,
        transits: &[],
        periods: vec![period],
        fix_periods: false,
        search: SearchSettings {
            period_min_d: 1.0,
            period_max_d: None,
            oversample: 5.0,
            fap_threshold: 1e-3,
            count: SignalCount::Exactly(1),
            options: options(0),
        },
        seed: 3,
        draws: 200,
        sampler: None,
        priors: Default::default(),
        profile: pipeline::profile_settings(&Default::default()),
        warm: Vec::new(),
        outliers,
        log: DataLog::new(n),
    };
    pipeline::analyse(request, &mut |_| {}).unwrap()
}

fn k_of(fit: &Fit) -> (f64, f64) {
    let k = fit.planets[0].k_mps;
    (k.value, k.plus)
}

/// 5 % of the points moved by 10σ (issue check): every one is flagged and left out, and
/// K is within 1σ of the fit to the clean set; under the Student-t likelihood (outliers
/// kept) K agrees with the clean fit within its error too.
#[test]
fn injected_outliers_are_found_and_k_recovered() {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    let (k, p, tc, err) = (6.0, 12.3, 3.1, 2.0);
    let clean = simulate(&times(160, 300.0, &mut rng), err, (k, p, tc), &mut rng);
    let mut dirty = clean.clone();
    let hit: Vec<usize> = (0..clean.len()).filter(|i| i % 20 == 7).collect();
    for &i in &hit {
        let sign = if rng.random::<bool>() { 1.0 } else { -1.0 };
        dirty.rv_mps[i] += sign * 10.0 * err;
    }
    let base = analyse(clean, p, OutlierMode::Keep);
    let (k0, s0) = k_of(&base.search.fit);
    let clipped = analyse(dirty.clone(), p, OutlierMode::Clip);
    let (k1, s1) = k_of(&clipped.search.fit);
    let robust = analyse(dirty.clone(), p, OutlierMode::StudentT);
    let (k2, s2) = k_of(&robust.search.fit);
    let kept = analyse(dirty.clone(), p, OutlierMode::Keep);
    let (k3, s3) = k_of(&kept.search.fit);
    println!(
        "K clean {k0:.3} ± {s0:.3}; clipped {k1:.3} ± {s1:.3} ({} flagged); Student-t {k2:.3} ± {s2:.3}; kept {k3:.3} ± {s3:.3}",
        clipped.data_log.outliers.len()
    );
    let rows: Vec<usize> = clipped.data_log.outliers.iter().map(|o| o.row).collect();
    for &i in &hit {
        let row = dirty.origin[i].row;
        assert!(
            rows.contains(&row),
            "injected outlier at row {row} not flagged"
        );
    }
    assert!(rows.len() <= hit.len() + 1, "flagged {rows:?}");
    assert!(clipped.data_log.outliers.iter().all(|o| o.excluded));
    assert_eq!(clipped.set.len() + rows.len(), dirty.len());
    assert!((k1 - k0).abs() < s0, "clipped K {k1} vs clean {k0} ± {s0}");
    assert!(
        (k2 - k0).abs() < s2,
        "Student-t K {k2} ± {s2} vs clean {k0}"
    );
    // Student-t keeps every point and lists the flagged ones as kept.
    assert_eq!(robust.set.len(), dirty.len());
    assert!(robust.data_log.outliers.iter().all(|o| !o.excluded));

    // The audit of the clipped fit compares it with the Student-t fit of every point.
    let star = Star::from_mass(0.9, 0.03);
    let labels = vec!["b".to_string()];
    let ctx = Context {
        star: Some(&star),
        transits: &[],
        labels: &labels,
    };
    let settings = AuditSettings {
        seed: 3,
        simulations: 20,
        jackknife_epochs: 3,
        cv_folds: 3,
        injections: 10,
        mass_draws: 200,
        ..AuditSettings::default()
    };
    let result = audit::audit(&clipped, &ctx, &settings).unwrap();
    let variant = result.planets[0]
        .variants
        .iter()
        .find(|v| v.name.starts_with("Student-t likelihood") && v.name.contains("kept"))
        .expect("Student-t variant in the audit");
    let shift = variant.k_shift_sigma.unwrap();
    println!("audit: {} K shift {shift:.2} σ", variant.name);
    assert!(shift.abs() < 1.0 && !variant.competitive);
}

/// Three points a night for 50 nights: binned within 0.5 d, each bin's error is σ/√3
/// (common practice), and K from the binned points agrees with K from the unbinned ones
/// within the unbinned fit's error.
#[test]
fn binned_and_unbinned_fits_agree() {
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    let (k, p, tc, err) = (5.0, 17.1, 2.0, 3.0);
    let nights: Vec<f64> = (0..50)
        .map(|j| (8 * j + rng.random_range(0..4)) as f64 + 0.3)
        .collect();
    let t: Vec<f64> = nights
        .iter()
        .flat_map(|&n| [n, n + 0.04, n + 0.08])
        .collect();
    let set = simulate(&t, err, (k, p, tc), &mut rng);
    let (binned, log) = prep::bin(&set, 0.5);
    assert_eq!(binned.len(), 50);
    assert_eq!(log.bins.len(), 50);
    for e in &binned.err_mps {
        assert!((e - err / 3f64.sqrt()).abs() < 1e-12);
    }
    let planets = [spec(k, p, tc, false)];
    let all = fit::fit(&set, &planets, &options(0)).unwrap();
    let few = fit::fit(&binned, &planets, &options(0)).unwrap();
    let ((ku, su), (kb, sb)) = (k_of(&all), k_of(&few));
    println!("K unbinned {ku:.3} ± {su:.3}; binned {kb:.3} ± {sb:.3}");
    assert!((kb - ku).abs() < su, "binned {kb} vs unbinned {ku} ± {su}");
    assert!(
        (ku - k).abs() < 3.0 * su,
        "unbinned {ku} ± {su} vs truth {k}"
    );
}

/// A +15 m/s jump in the zero point of one instrument at day 300: split into eras at that
/// date, the fitted offset difference is the jump and K is within 2σ of the truth;
/// ignored, K is pulled by more than 3σ.
#[test]
fn an_offset_jump_is_absorbed_by_eras_and_biases_k_when_ignored() {
    let mut rng = ChaCha8Rng::seed_from_u64(2);
    let (k, p, tc, err) = (4.0, 160.0, 40.0, 1.5);
    let mut set = simulate(&times(120, 500.0, &mut rng), err, (k, p, tc), &mut rng);
    let jump = 15.0;
    for i in 0..set.len() {
        if set.time_d[i] >= 300.0 {
            set.rv_mps[i] += jump;
        }
    }
    let planets = [spec(k, p, tc, false)];
    let ignored = fit::fit(&set, &planets, &options(1)).unwrap();
    let prep = Preparation {
        eras: vec![Era {
            instrument: "loom".into(),
            splits_bjd: vec![EPOCH + 300.0],
            names: vec!["loom-old".into(), "loom-new".into()],
        }],
        windows: vec![],
        exclude_in_transit: true,
        bin_window_d: None,
    };
    let (split, log) = prep::prepare(&set, &prep).unwrap();
    assert_eq!(split.instruments, ["loom-old", "loom-new"]);
    assert_eq!(log.eras[0].n_points.iter().sum::<usize>(), set.len());
    let eras = fit::fit(&split, &planets, &options(1)).unwrap();
    let (ke, se) = k_of(&eras);
    let (ki, si) = k_of(&ignored);
    let step = eras.params.offsets_mps[1] - eras.params.offsets_mps[0];
    let step_err = eras.instruments[0]
        .offset_mps
        .plus
        .hypot(eras.instruments[1].offset_mps.plus);
    println!(
        "K with eras {ke:.3} ± {se:.3} (jump {step:.2} ± {step_err:.2}); ignored {ki:.3} ± {si:.3}"
    );
    assert!(
        (step - jump).abs() < 3.0 * step_err,
        "jump {step} ± {step_err}"
    );
    assert!((ke - k).abs() < 2.0 * se, "K with eras {ke} ± {se}");
    assert!((ki - k).abs() > 3.0 * se, "ignored: K {ki} not biased");

    // Known from standard stars to 0.1 m/s, the offset between the eras is held there.
    let known = FitOptions {
        offset_priors: vec![OffsetPrior {
            instruments: ["loom-old".into(), "loom-new".into()],
            mean_mps: 15.0,
            sd_mps: 0.1,
        }],
        ..options(1)
    };
    let pinned = fit::fit(&split, &planets, &known).unwrap();
    let step = pinned.params.offsets_mps[1] - pinned.params.offsets_mps[0];
    assert_eq!(
        pinned.names[3..5],
        ["offset_mps.loom-old", "offset_mps.loom-new"]
    );
    let c = &pinned.covariance;
    let sd = c[(3, 3)] + c[(4, 4)] - 2.0 * c[(3, 4)];
    println!(
        "offset step with a 15 ± 0.1 m/s prior: {step:.3} ± {:.3}",
        sd.sqrt()
    );
    assert!((step - 15.0).abs() < 0.1 && sd.sqrt() < 0.1);
}

/// Five transit nights of 15 points each with a Rossiter–McLaughlin-like anomaly of
/// 20 m/s (positive in the first half of the transit, negative in the second, as for a
/// prograde orbit) beside 80 points out of transit: with the in-transit points excluded
/// K is within 2σ of the truth; with them kept it is biased by more than 3σ.
#[test]
fn in_transit_points_are_excluded_and_k_unbiased() {
    let mut rng = ChaCha8Rng::seed_from_u64(9);
    let (k, p, tc, err) = (6.0, 4.2, 1.3, 1.5);
    let duration = 3.0 / 24.0;
    let mut t = times(80, 200.0, &mut rng);
    for n in [10, 18, 25, 33, 40] {
        let mid = tc + n as f64 * p;
        t.extend((0..15).map(|j| mid + (j as f64 - 7.0) / 15.0 * duration));
    }
    t.sort_by(f64::total_cmp);
    let mut set = simulate(&t, err, (k, p, tc), &mut rng);
    for i in 0..set.len() {
        let phase = (set.time_d[i] - tc) / p;
        let x = (phase - phase.round()) * p / (0.5 * duration);
        if x.abs() < 1.0 {
            set.rv_mps[i] += -20.0 * (std::f64::consts::PI * x).sin();
        }
    }
    let window = TransitWindow {
        label: "b".into(),
        period_d: p,
        tc_bjd: EPOCH + tc,
        duration_d: duration,
    };
    let prep = |exclude| Preparation {
        eras: vec![],
        windows: vec![window.clone()],
        exclude_in_transit: exclude,
        bin_window_d: None,
    };
    let (out, log) = prep::prepare(&set, &prep(true)).unwrap();
    assert!(
        log.in_transit.len() >= 75,
        "{} flagged",
        log.in_transit.len()
    );
    assert_eq!(out.len() + log.in_transit.len(), set.len());
    let (all, kept_log) = prep::prepare(&set, &prep(false)).unwrap();
    assert_eq!(all.len(), set.len());
    assert!(kept_log.in_transit.iter().all(|f| !f.excluded));
    let planets = [spec(k, p, tc, true)];
    let excluded = fit::fit(&out, &planets, &options(0)).unwrap();
    let kept = fit::fit(&all, &planets, &options(0)).unwrap();
    let ((kx, sx), (kk, sk)) = (k_of(&excluded), k_of(&kept));
    println!("K in-transit excluded {kx:.3} ± {sx:.3}; kept {kk:.3} ± {sk:.3}");
    assert!((kx - k).abs() < 2.0 * sx, "excluded: K {kx} ± {sx}");
    assert!((kk - k).abs() > 3.0 * sx, "kept: K {kk} not biased");
}

/// An indicator that moves the RVs of two instruments with different slopes (+3 and
/// −2 m/s per unit): one coefficient per indicator and instrument recovers both slopes
/// and K; one shared coefficient cannot (it fits far worse).
#[test]
fn indicator_terms_per_instrument() {
    let mut rng = ChaCha8Rng::seed_from_u64(4);
    let (k, p, tc, err) = (5.0, 9.7, 1.0, 1.0);
    let mut set = simulate(&times(140, 300.0, &mut rng), err, (k, p, tc), &mut rng);
    set.instruments = vec!["loom".into(), "sedge".into()];
    set.instrument = (0..set.len()).map(|i| i % 2).collect();
    let width: Vec<f64> = (0..set.len())
        .map(|_| rng.sample::<f64, _>(StandardNormal))
        .collect();
    let slopes = [3.0, -2.0];
    for i in 0..set.len() {
        set.rv_mps[i] += slopes[set.instrument[i]] * width[i];
    }
    set.indicators.push(heft::data::Indicator {
        name: "width".into(),
        values: width,
    });
    let planets = [spec(k, p, tc, false)];
    let per = FitOptions {
        regressors: 1,
        regressors_per_instrument: true,
        ..options(0)
    };
    let shared = FitOptions {
        regressors_per_instrument: false,
        ..per.clone()
    };
    let a = fit::fit(&set, &planets, &per).unwrap();
    let b = fit::fit(&set, &planets, &shared).unwrap();
    let names: Vec<&str> = a.names[a.names.len() - 2..]
        .iter()
        .map(|s| s.as_str())
        .collect();
    assert_eq!(names, ["regressor.width.loom", "regressor.width.sedge"]);
    for (c, truth) in a.regressors.iter().zip(slopes) {
        println!("slope {:.3} ± {:.3} (injected {truth})", c.value, c.plus);
        assert!((c.value - truth).abs() < 3.0 * c.plus);
    }
    let (ka, sa) = k_of(&a);
    println!(
        "K {ka:.3} ± {sa:.3}; ln L per instrument {:.1}, shared {:.1}",
        a.log_likelihood, b.log_likelihood
    );
    assert!((ka - k).abs() < 3.0 * sa);
    assert!(a.log_likelihood - b.log_likelihood > 20.0);
}

/// Fitted Student-t degrees of freedom: small for noise with Cauchy tails (a normal
/// divided by the absolute value of another, i.e. Student-t with ν = 1: definition of the
/// t distribution), large for Gaussian noise.
#[test]
fn fitted_student_t_dof_follows_the_tails() {
    let mut rng = ChaCha8Rng::seed_from_u64(8);
    let (k, p, tc, err) = (8.0, 7.7, 0.4, 1.0);
    let t = times(150, 200.0, &mut rng);
    let gaussian = simulate(&t, err, (k, p, tc), &mut rng);
    let mut heavy = gaussian.clone();
    for (v, &ti) in heavy.rv_mps.iter_mut().zip(&t) {
        let z: f64 = rng.sample(StandardNormal);
        let w: f64 = rng.sample(StandardNormal);
        *v = circular(ti, k, p, tc) + err * z / w.abs().max(1e-3);
    }
    let policy = OutlierPolicy {
        mode: OutlierMode::StudentT,
        fit_dof: true,
        ..OutlierPolicy::default()
    };
    let dof = |set: RvSet| {
        let a = analyse_with(set, p, policy);
        let log = &a.data_log.outlier_search;
        assert_eq!(log.dof_profile.len(), prep::DOF_GRID.len());
        (log.dof.unwrap(), k_of(&a.search.fit))
    };
    let (nu_heavy, (kh, sh)) = dof(heavy);
    let (nu_gauss, _) = dof(gaussian);
    println!("fitted dof: Cauchy tails {nu_heavy} (K {kh:.3} ± {sh:.3}), Gaussian {nu_gauss}");
    assert!(nu_heavy <= 2.0, "{nu_heavy}");
    assert!(nu_gauss >= 20.0, "{nu_gauss}");
    assert!((kh - k).abs() < 3.0 * sh);
}
