//! Injection–recovery with simulated stellar activity: an invented circular planet
//! (P = 9.3 d, K = 4 m/s) plus quasi-periodic activity of amplitude 10 m/s (2.5 × K;
//! rotation 13.7 d, neither a multiple nor a harmonic of the orbital period; smoothness
//! 0.5) and 1 m/s white noise; every point has a stated error of 1 m/s.
//!
//! The activity is drawn from a dense Cholesky factor of the covariance of the
//! quasi-periodic kernel (Haywood et al. 2014, MNRAS 443, 2517; Rajpaul et al. 2015,
//! MNRAS 452, 2269, eq. 4) at the epochs (Rasmussen & Williams 2006, *Gaussian Processes
//! for Machine Learning*, §A.2: x = L z, z standard normal), not from heft's fitting code.

mod common;

use common::circular_start;

use heft::data::{Indicator, RvSet};
use heft::fit::{self, FitOptions};
use heft::gp::{Activity, Kernel, Points, Term};
use heft::sample::{self, PriorSet, SamplerSettings};
use heft::target::OrbitShape;
use nalgebra::DVector;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

/// Injected semi-amplitude, m/s.
const K_TRUE: f64 = 4.0;
/// Injected orbital period, days.
const P_TRUE: f64 = 9.3;
/// Injected rotation period, days.
const P_ROT: f64 = 13.7;
/// Evolution timescale of the activity at uniformly random epochs, days.
const EVOLUTION_D: f64 = 25.0;

/// A draw of the injected activity (10 m/s, rotation [`P_ROT`], smoothness 0.5,
/// evolution timescale `evolution_d` days) at times `t` (days), in m/s.
fn activity_at(rng: &mut ChaCha8Rng, t: &[f64], evolution_d: f64) -> Vec<f64> {
    let n = t.len();
    let kernel = Kernel {
        terms: vec![Term::QuasiPeriodic {
            amplitude_mps: 10.0,
            evolution_d,
            period_d: P_ROT,
            smoothness: 0.5,
        }],
    };
    let tiny = vec![1e-8; n];
    let ones = vec![1.0; n];
    let cov = Points {
        time_d: t,
        white: &tiny,
        scale: &ones,
    }
    .covariance(&kernel);
    let l = cov.cholesky().expect("positive definite").l();
    let z = DVector::from_fn(n, |_, _| rng.sample::<f64, _>(StandardNormal));
    (l * z).as_slice().to_vec()
}

/// `n` sorted times uniformly random over 160 days and the activity (evolution
/// [`EVOLUTION_D`]) at them, days and m/s.
fn activity_draw(rng: &mut ChaCha8Rng, n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut t: Vec<f64> = (0..n).map(|_| rng.random_range(-80.0..80.0)).collect();
    t.sort_by(f64::total_cmp);
    let activity = activity_at(rng, &t, EVOLUTION_D);
    (t, activity)
}

/// Invented campaign cadence over 180 days, in days: six observing runs of 12
/// consecutive nights, one starting on a random night of each 30-day block; each night
/// clear with probability 0.85, and two exposures about 2 h (0.08 d) apart on a clear
/// night.
fn campaign_times(rng: &mut ChaCha8Rng) -> Vec<f64> {
    let mut t = Vec::new();
    for run in 0..6 {
        let first = (30.0 * run as f64 + rng.random_range(0.0..18.0)).floor();
        for night in 0..12 {
            if rng.random_range(0.0..1.0) < 0.15 {
                continue;
            }
            for exposure in 0..2 {
                t.push(
                    first
                        + night as f64
                        + 0.1
                        + 0.08 * exposure as f64
                        + rng.random_range(0.0..0.02),
                );
            }
        }
    }
    t
}

/// The planet (its velocity rising through zero at `phase_d` days), `activity` and 1 m/s
/// white noise at times `t` (days), as one instrument's data.
fn injected(rng: &mut ChaCha8Rng, t: Vec<f64>, activity: &[f64], phase_d: f64) -> RvSet {
    let n = t.len();
    let rv: Vec<f64> = t
        .iter()
        .zip(activity)
        .map(|(ti, a)| {
            K_TRUE * (std::f64::consts::TAU * (ti - phase_d) / P_TRUE).sin()
                + a
                + rng.sample::<f64, _>(StandardNormal)
        })
        .collect();
    RvSet::from_columns(
        "injected",
        2_460_000.0,
        t,
        rv,
        vec![1.0; n],
        vec![0; n],
        vec!["Sim".into()],
    )
}

/// 110 uniformly random epochs over 160 days, random orbital phase.
fn realisation(seed: u64) -> RvSet {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (t, activity) = activity_draw(&mut rng, 110);
    let phase = rng.random_range(0.0..P_TRUE);
    injected(&mut rng, t, &activity, phase)
}

/// How a set of K estimates `(value, 1σ)` (m/s) meets the truth.
struct Tally {
    /// Estimates within 1σ of the truth.
    within: usize,
    /// Mean of `K − K_true`, m/s.
    mean: f64,
    /// Standard error of that mean, m/s.
    se: f64,
    /// Root mean square of `K − K_true`, m/s.
    rms: f64,
    /// Mean of `|K − K_true| / σ` (√(2/π) ≈ 0.80 for correct Gaussian errors).
    mean_z: f64,
    /// Mean stated σ, m/s.
    mean_sigma: f64,
}

impl Tally {
    fn new(k: &[(f64, f64)]) -> Tally {
        let n = k.len() as f64;
        let err: Vec<f64> = k.iter().map(|(v, _)| v - K_TRUE).collect();
        let mean = err.iter().sum::<f64>() / n;
        let var = err.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (n - 1.0);
        Tally {
            within: k.iter().filter(|(v, s)| (v - K_TRUE).abs() <= *s).count(),
            mean,
            se: (var / n).sqrt(),
            rms: (err.iter().map(|e| e * e).sum::<f64>() / n).sqrt(),
            mean_z: k.iter().map(|(v, s)| (v - K_TRUE).abs() / s).sum::<f64>() / n,
            mean_sigma: k.iter().map(|(_, s)| s).sum::<f64>() / n,
        }
    }
}

/// Where a white-noise fit of an active star goes wrong: campaign cadence
/// ([`campaign_times`], about 120 points) and long-lived active regions (evolution
/// timescale 80 d), in 40 realisations. Within a run the activity is nearly constant from
/// one exposure to the next and changes slowly from night to night, so the points are
/// far from independent, and the white-noise fit (free jitter) reads part of the activity
/// as planet.
///
/// Checks: the white-noise fit's K is biased high (mean error at least 3 standard errors
/// above zero) and its stated σ too small (at most 16 of 40 within 1σ; 68 % for correct Gaussian errors, common practice);
/// the GP fit (quasi-periodic model, rotation prior 13.7 ± 1.37 d) covers the truth within
/// 1σ in most realisations (at least 24 of 40) and is not biased (mean error within 3
/// standard errors of zero). Both fits' K, their coverage, mean error ± standard error,
/// rms error, mean |z| and mean σ are printed.
///
/// Seen over three sets of 40 realisations (seeds from 1000, 5000 and 9000): white fit
/// 10–12 within 1σ, mean error +1.5 to +1.9 m/s (4–6 standard errors), rms 2.6–2.8 m/s
/// against a stated σ of about 0.9 m/s; GP fit 27–30 within 1σ, mean error −0.05 to
/// +0.05 m/s (within 1 standard error), rms 0.3–0.4 m/s, mean |z| 0.70–0.82. With
/// uniformly random epochs the white fit's jitter-inflated σ covered its scattered K (18
/// of 24 within 1σ, mean error +0.69 ± 0.27 m/s: imprecise and slightly high rather than
/// overconfident). With 8-night runs of three exposures and a 25-day evolution
/// timescale the GP fit was itself biased high (+0.96 ± 0.25 m/s, 14 of 24 within 1σ).
#[test]
fn gp_recovers_k_where_the_white_noise_fit_is_biased() {
    let white = FitOptions {
        shape: OrbitShape::Circular,
        trend: 0,
        ..FitOptions::default()
    };
    let gp = FitOptions {
        activity: Activity::QuasiPeriodic,
        rotation_d: Some(heft::gp::rotation_prior(P_ROT, 0.0)),
        ..white.clone()
    };
    let spec = [circular_start(P_TRUE, 3.0)];
    let (mut k_white, mut k_gp) = (Vec::new(), Vec::new());
    println!("realisation (points): K white ± σ (period) | K GP ± σ (period), truth {K_TRUE} m/s");
    for seed in 1000..1040 {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let t = campaign_times(&mut rng);
        let activity = activity_at(&mut rng, &t, 80.0);
        let phase = rng.random_range(0.0..P_TRUE);
        let set = injected(&mut rng, t, &activity, phase);
        let k = |o: &FitOptions| {
            let f = fit::fit(&set, &spec, o).unwrap();
            let s = f.planets[0].k_mps;
            (
                s.value,
                0.5 * (s.minus + s.plus),
                f.planets[0].period_d.value,
            )
        };
        let (kw, sw, pw) = k(&white);
        let (kg, sg, pg) = k(&gp);
        println!(
            "{seed} ({:>3}): {kw:5.2} ± {sw:4.2} ({pw:5.2} d) | {kg:5.2} ± {sg:4.2} ({pg:5.2} d)",
            set.time_d.len()
        );
        k_white.push((kw, sw));
        k_gp.push((kg, sg));
    }
    let runs = k_white.len();
    let (w, g) = (Tally::new(&k_white), Tally::new(&k_gp));
    println!("fit   | within 1σ | mean K error (m/s) | rms (m/s) | mean |z| | mean σ (m/s)");
    for (name, t) in [("white", &w), ("GP", &g)] {
        println!(
            "{name:<5} | {:>6}/{runs} | {:+6.2} ± {:4.2}      | {:9.2} | {:8.2} | {:6.2}",
            t.within, t.mean, t.se, t.rms, t.mean_z, t.mean_sigma
        );
    }
    assert!(
        w.mean >= 3.0 * w.se,
        "white fit not biased: {:+.2} ± {:.2}",
        w.mean,
        w.se
    );
    assert!(w.within <= 16, "white fit within 1σ in {}/{runs}", w.within);
    assert!(g.within >= 24, "GP fit within 1σ in {}/{runs}", g.within);
    assert!(
        g.mean.abs() <= 3.0 * g.se,
        "GP fit biased: {:+.2} ± {:.2}",
        g.mean,
        g.se
    );
}

/// Training on an indicator: the indicator is the same activity (its draw scaled to an
/// invented line-width unit, 0.4 units per m/s, plus white noise of 0.5 units). The
/// trained rotation period and evolution timescale lie within 3σ of the injected ones,
/// become Gaussian priors of the RV fit (the rotation prior replaced), and the RV fit
/// with them recovers K within 3σ. An indicator of white noise alone gives no prior on
/// the evolution timescale.
#[test]
fn indicator_training_gives_priors_for_the_rv_fit() {
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    let n = 110;
    let (t, activity) = activity_draw(&mut rng, n);
    let mut set = injected(&mut rng, t, &activity, 0.0);
    let width: Vec<f64> = activity
        .iter()
        .map(|a| 50.0 + 0.4 * a + 0.5 * rng.sample::<f64, _>(StandardNormal))
        .collect();
    set.indicators = vec![Indicator {
        name: "width".into(),
        values: width,
    }];
    let options = FitOptions {
        shape: OrbitShape::Circular,
        trend: 0,
        activity: Activity::QuasiPeriodic,
        rotation_d: Some(heft::gp::rotation_prior(P_ROT * 1.05, 0.0)),
        activity_indicator: Some(0),
        ..FitOptions::default()
    };
    let priors = fit::train_activity(&set, &options).unwrap();
    println!("trained priors (evolution, rotation, smoothness): {priors:?}");
    assert!(priors[0].is_none(), "amplitudes are not transferred");
    let (lambda, sl) = priors[1].unwrap();
    let (p, sp) = priors[2].unwrap();
    assert!((lambda - EVOLUTION_D).abs() < 3.0 * sl, "{lambda} ± {sl}");
    assert!((p - P_ROT).abs() < 3.0 * sp, "{p} ± {sp}");
    let f = fit::fit(
        &set,
        &[circular_start(P_TRUE, 3.0)],
        &FitOptions {
            activity_priors: priors,
            ..options.clone()
        },
    )
    .unwrap();
    let a = f.layout.activity.as_ref().unwrap();
    assert_eq!(a.rotation, (p, sp));
    // An indicator of white noise alone pins no evolution timescale (the fit takes it to
    // a bound): it does not become a prior.
    let mut noise = set.clone();
    noise.indicators[0].values = (0..n)
        .map(|_| 50.0 + rng.sample::<f64, _>(StandardNormal))
        .collect();
    let none = fit::train_activity(&noise, &options).unwrap();
    println!("trained on white noise: {none:?}");
    assert!(none[1].is_none(), "{none:?}");
    assert_eq!(a.trained[1], priors[1]);
    let k = f.planets[0].k_mps;
    println!("K with trained priors: {} ± {}", k.value, k.plus);
    assert!((k.value - K_TRUE).abs() < 3.0 * k.plus);
}

/// The sampler explores the activity hyperparameters with the planet: on one
/// realisation (oscillator model, semiseparable solver), 3000 steps of the ensemble give
/// draws of every hyperparameter inside its prior, a rotation period within 3σ of the
/// injected 13.7 d and K within 3σ of the truth; the rotation prior is recorded.
#[test]
fn sampler_draws_the_activity_hyperparameters() {
    let set = realisation(200);
    let options = FitOptions {
        shape: OrbitShape::Circular,
        trend: 0,
        activity: Activity::Oscillator,
        rotation_d: Some(heft::gp::rotation_prior(P_ROT, 0.0)),
        ..FitOptions::default()
    };
    let f = fit::fit(&set, &[circular_start(P_TRUE, 3.0)], &options).unwrap();
    let priors = PriorSet::defaults(&set, &f, (1.0, 160.0));
    let rotation = priors
        .entries
        .iter()
        .flatten()
        .find(|e| e.parameter == "activity.rotation_d")
        .unwrap();
    assert_eq!(rotation.source, "rotation");
    let settings = SamplerSettings {
        max_steps: 3000,
        seed: 5,
        ..SamplerSettings::default()
    };
    let post = sample::sample(&set, &f, priors, &settings, 4000, &mut |_| {}).unwrap();
    let keys: Vec<&str> = post.activity.iter().map(|(k, _)| k.as_str()).collect();
    assert_eq!(
        keys,
        [
            "amplitude_mps",
            "amplitude_half_mps",
            "rotation_d",
            "quality"
        ]
    );
    let bounds = &f.layout.activity.as_ref().unwrap().bounds;
    let cols = post.columns(&set.instruments);
    for (q, key) in keys.iter().enumerate() {
        let draws = &cols
            .iter()
            .find(|(n, _)| *n == format!("activity.{key}"))
            .unwrap()
            .1;
        let (lo, hi) = bounds[q];
        assert!(draws.iter().all(|v| *v >= lo && *v <= hi), "{key}");
    }
    let p = post.activity[2].1;
    let k = post.planets[0].k_mps;
    println!(
        "posterior: rotation {:.3} -{:.3} +{:.3} d, K {:.2} -{:.2} +{:.2} m/s",
        p.value, p.minus, p.plus, k.value, k.minus, k.plus
    );
    assert!((p.value - P_ROT).abs() < 3.0 * p.minus.max(p.plus));
    assert!((k.value - K_TRUE).abs() < 3.0 * k.minus.max(k.plus));
}

/// Per-instrument activity amplitudes: two invented spectrographs observe the same star
/// on alternate epochs (110 random epochs over 160 days), the redder one seeing the
/// activity at 0.4 × the bluer one's amplitude (spot contrast falls with wavelength,
/// common practice) and sitting 7 m/s higher. Checks, in each of 4 realisations: the fit
/// with one amplitude per instrument recovers the factor 0.4 and K = 4 m/s within 3σ,
/// and fits the data better than one shared amplitude by more than its one extra
/// parameter costs (ΔlnL > 2, likelihood-ratio test at about 5 %, χ²₁ 95th percentile
/// 3.84 / 2 ≈ 1.9, common practice). Both fits' K and the factor are printed.
#[test]
fn per_instrument_amplitudes_are_recovered() {
    for seed in 0..4 {
        let mut rng = ChaCha8Rng::seed_from_u64(400 + seed);
        let (t, activity) = activity_draw(&mut rng, 110);
        let phase = rng.random_range(0.0..P_TRUE);
        let mut set = injected(&mut rng, t, &activity, phase);
        set.instruments = vec!["Blue".into(), "Red".into()];
        for i in (1..set.len()).step_by(2) {
            set.instrument[i] = 1;
            set.rv_mps[i] += 7.0 - 0.6 * activity[i];
        }
        let shared = FitOptions {
            shape: OrbitShape::Circular,
            trend: 0,
            activity: Activity::QuasiPeriodic,
            rotation_d: Some(heft::gp::rotation_prior(P_ROT, 0.0)),
            ..FitOptions::default()
        };
        let own = FitOptions {
            activity_per_instrument: true,
            ..shared.clone()
        };
        let a = fit::fit(&set, &[circular_start(P_TRUE, 3.0)], &shared).unwrap();
        let b = fit::fit(&set, &[circular_start(P_TRUE, 3.0)], &own).unwrap();
        let k = |f: &fit::Fit| {
            let s = f.planets[0].k_mps;
            (s.value, 0.5 * (s.minus + s.plus))
        };
        let (ka, sa) = k(&a);
        let (kb, sb) = k(&b);
        let scale = &b
            .activity
            .iter()
            .find(|(key, _)| key == "scale.Red")
            .expect("the factor is reported")
            .1;
        let (f, sf) = (scale.value, 0.5 * (scale.minus + scale.plus));
        let gain = b.log_likelihood - a.log_likelihood;
        println!(
            "{seed}: shared K {ka:.2} ± {sa:.2} | own K {kb:.2} ± {sb:.2}, factor {f:.3} ± {sf:.3}, ΔlnL {gain:.1}"
        );
        assert!((f - 0.4).abs() <= 3.0 * sf, "{seed}: factor {f} ± {sf}");
        assert!((kb - K_TRUE).abs() <= 3.0 * sb, "{seed}: K {kb} ± {sb}");
        assert!(gain > 2.0, "{seed}: ΔlnL {gain}");
    }
}

/// The signal search with an activity model: on activity alone (no planet; 110 random
/// epochs, evolution 25 d) the white-noise search takes activity peaks for signals
/// (false-alarm probability below 0.1 %, common practice threshold), while with the
/// quasi-periodic model none of the ten candidates from the periodogram under it lowers
/// the BIC by 10 and the search adds none; with the planet injected as well, the search
/// with the activity model finds it (period within 1 % of 9.3 d). Three realisations.
/// Seen: the white-noise searches found 2–3 signals at 12.5–15.6 d and near 70 d; under
/// the GP the best candidate's ΔBIC was −5.9, −2.4 and −2.1; the planet was added with
/// ΔBIC 65–73, once where its peak in the white-noise residual periodogram had a
/// false-alarm probability of 0.999.
#[test]
fn search_with_activity_model_rejects_activity_peaks() {
    let settings = |activity: Activity| fit::SearchSettings {
        period_min_d: 1.5,
        period_max_d: Some(100.0),
        oversample: 5.0,
        fap_threshold: 1e-3,
        count: fit::SignalCount::UpTo(3),
        options: FitOptions {
            shape: OrbitShape::Circular,
            trend: 0,
            activity,
            rotation_d: (activity != Activity::None).then(|| heft::gp::rotation_prior(P_ROT, 0.0)),
            ..FitOptions::default()
        },
    };
    for seed in 0..3 {
        let mut rng = ChaCha8Rng::seed_from_u64(700 + seed);
        let (t, activity) = activity_draw(&mut rng, 110);
        let n = t.len();
        let only_activity: Vec<f64> = activity
            .iter()
            .map(|a| a + rng.sample::<f64, _>(StandardNormal))
            .collect();
        let quiet = RvSet::from_columns(
            "activity only",
            2_460_000.0,
            t.clone(),
            only_activity,
            vec![1.0; n],
            vec![0; n],
            vec!["Sim".into()],
        );
        let white = fit::search(&quiet, &[], &settings(Activity::None)).unwrap();
        let gp = fit::search(&quiet, &[], &settings(Activity::QuasiPeriodic)).unwrap();
        let periods = |s: &fit::Search| -> Vec<f64> {
            s.fit.planets.iter().map(|p| p.period_d.value).collect()
        };
        let best = gp
            .steps
            .iter()
            .flat_map(|s| s.activity_rejected.iter().map(|r| r.1))
            .fold(f64::NEG_INFINITY, f64::max);
        println!(
            "{seed}: activity only: white-noise search {:?} d; with the GP {:?} d (best ΔBIC of the candidates {best:.1})",
            periods(&white),
            periods(&gp)
        );
        assert!(
            !white.fit.planets.is_empty(),
            "{seed}: white search found nothing"
        );
        assert!(gp.fit.planets.is_empty(), "{seed}: {:?}", periods(&gp));
        let phase = rng.random_range(0.0..P_TRUE);
        let with_planet = injected(&mut rng, t, &activity, phase);
        let found = fit::search(&with_planet, &[], &settings(Activity::QuasiPeriodic)).unwrap();
        let added: Vec<Option<f64>> = found.steps.iter().map(|s| s.activity_delta_bic).collect();
        println!(
            "   with the planet: {:?} d (ΔBIC of each round's added signal {added:?})",
            periods(&found)
        );
        assert!(
            periods(&found)
                .iter()
                .any(|p| (p / P_TRUE - 1.0).abs() < 0.01),
            "{seed}: {:?}",
            periods(&found)
        );
    }
}
