//! Spectral window, aliases and bootstrap false-alarm probability on invented injection
//! data.

use heft::data::RvSet;
use heft::periodogram::{self, Grid, Method};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Ratio of the solar to the sidereal day, cycles per day (references.md §0, [V]).
const F_SIDEREAL: f64 = 1.002_737_909_34;

/// One visit on about half the nights of 900, in seasons of 250 nights a year, at
/// `t = night × day_d` (a fixed hour angle when `day_d` is the sidereal day, a fixed
/// clock time when it is 1), plus a sinusoid of period 3.7 d and white noise.
fn nightly(day_d: f64, seed: u64) -> RvSet {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut t = Vec::new();
    for night in 0..900 {
        if (night as f64 % 365.25) < 250.0 && rng.random_bool(0.5) {
            t.push(night as f64 * day_d - 450.0);
        }
    }
    let n = t.len();
    let noise = Normal::new(0.0, 1.0).unwrap();
    let rv: Vec<f64> = t
        .iter()
        .map(|&t| 5.0 * (std::f64::consts::TAU * t / 3.7).sin() + noise.sample(&mut rng))
        .collect();
    RvSet::from_columns(
        "nightly",
        2_458_000.0,
        t,
        rv,
        vec![1.0; n],
        vec![0; n],
        vec!["unit".into()],
    )
}

/// Common practice: nightly sampling at a fixed hour angle makes the window peak at one
/// cycle per sidereal day, at a fixed clock time at one cycle per solar day.
#[test]
fn window_peaks_at_the_sidereal_or_the_solar_day() {
    for (day, want) in [(1.0 / F_SIDEREAL, F_SIDEREAL), (1.0, 1.0)] {
        let set = nightly(day, 7);
        let step = 1.0 / (10.0 * set.baseline_d());
        let peaks = periodogram::window_peaks(&set, &[], 1.0, 3).unwrap();
        eprintln!("{peaks:?}");
        assert!(
            (peaks[0].frequency - want).abs() <= step,
            "top window peak {} vs {want}",
            peaks[0].frequency
        );
        assert!(peaks[0].power > 0.99, "{}", peaks[0].power);
    }
}

/// |W(0)| = 1 by construction (references.md §3), and integer-day sampling gives
/// |W(1 c/d)| = 1 (references.md §3, [C]).
#[test]
fn window_normalisation() {
    let set = nightly(1.0, 8);
    let grid = Grid::new(0.0, 1.0, 2).unwrap();
    let w = periodogram::spectral_window(&set, &[], &grid).unwrap();
    assert!(
        (w[0] - 1.0).abs() < 1e-12 && (w[1] - 1.0).abs() < 1e-9,
        "{w:?}"
    );
}

/// Common practice: the alias pair of a signal at f under sidereal-day sampling sits at
/// |f ± 1.00274| 1/d, and is the strongest predicted alias.
#[test]
fn sidereal_alias_pair_is_predicted() {
    let set = nightly(1.0 / F_SIDEREAL, 9);
    let f = 1.0 / 3.7;
    let peaks = periodogram::window_peaks(&set, &[], 1.0, 3).unwrap();
    let aliases = periodogram::aliases(&set, &[], f, &peaks).unwrap();
    let top: Vec<f64> = aliases[..2].iter().map(|a| a.frequency).collect();
    eprintln!("{:?}", &aliases[..4]);
    for want in [f + F_SIDEREAL, (f - F_SIDEREAL).abs()] {
        assert!(
            top.iter().any(|g| (g - want).abs() < 1e-3),
            "{want} not among {top:?}"
        );
    }
    // The prediction matches what the data show at the aliases.
    for a in &aliases[..2] {
        assert!((a.predicted_power - a.observed_power).abs() < 0.1, "{a:?}");
    }
}

/// Bootstrap FAP against Baluev (2008) on pure noise. One bootstrap inherits the quirks
/// of its noise draw (its spread between draws is several times its binomial error, as
/// with astropy's own bootstrap), so the bootstrap FAP is averaged over 8 draws and
/// compared with three standard errors of that mean, plus 0.01 for the analytic
/// approximation. Also: the same seed gives the same replicates on one thread.
#[test]
fn bootstrap_agrees_with_baluev_on_noise() {
    const DRAWS: u64 = 8;
    const REPLICATES: usize = 300;
    let targets = [0.2, 0.05, 0.01];
    let mut faps = vec![Vec::new(); targets.len()];
    for seed in 0..DRAWS {
        let mut rng = ChaCha8Rng::seed_from_u64(100 + seed);
        let n = 300;
        let t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..600.0)).collect();
        let err: Vec<f64> = (0..n).map(|_| rng.random_range(1.0..3.0)).collect();
        let rv: Vec<f64> = err
            .iter()
            .map(|&e| Normal::new(0.0, e).unwrap().sample(&mut rng))
            .collect();
        let set = RvSet::from_columns("noise", 0.0, t, rv, err, vec![0; n], vec!["u".into()]);
        let span = set.baseline_d();
        let grid = Grid::with_oversampling(1.0 / span, 0.5, span, 5.0).unwrap();
        let pg = periodogram::compute(&set, &[], &grid).unwrap();
        let boot =
            periodogram::bootstrap(&set, &[], &grid, Method::FAST, REPLICATES, seed).unwrap();
        for (k, &target) in targets.iter().enumerate() {
            // The power at which Baluev's FAP is `target` (it falls with power).
            let (mut lo, mut hi) = (0.0, 1.0);
            for _ in 0..50 {
                let mid = 0.5 * (lo + hi);
                if pg.fap(mid) > target {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            faps[k].push(boot.fap(hi).0);
        }
        if seed == 0 {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(1)
                .build()
                .unwrap();
            let again = pool
                .install(|| {
                    periodogram::bootstrap(&set, &[], &grid, Method::FAST, REPLICATES, seed)
                })
                .unwrap();
            assert_eq!(again, boot);
        }
    }
    for (target, f) in targets.iter().zip(&faps) {
        let k = f.len() as f64;
        let mean = f.iter().sum::<f64>() / k;
        let sd = (f.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (k - 1.0)).sqrt();
        let binomial = (target * (1.0 - target) / (k * REPLICATES as f64)).sqrt();
        let se = (sd / k.sqrt()).max(binomial);
        eprintln!("Baluev {target}: bootstrap mean {mean:.4} ± {se:.4} ({f:.3?})");
        assert!(
            (mean - target).abs() <= 3.0 * se + 0.01,
            "Baluev {target}: {mean} ± {se}"
        );
    }
}
