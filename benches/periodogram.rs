//! Exact against fast GLS: time of each and their ratio for N ∈ {100, 1 000, 10 000}
//! points and M ∈ {10⁴, 10⁵, 10⁶} frequencies, on one thread and on all threads.
//!
//! Run: `cargo bench --profile dev --bench periodogram` (add `-- --quick` to skip exact
//! runs above 10⁹ point-frequencies). The grid is `f_k = 0.001 + k · 1e-5` 1/day, the data
//! invented (N points over 3 000 days at full BJD, errors 1–5 m/s, one sinusoid), the same
//! as `benches/astropy_fast.py` uses for the side-by-side comparison.

use std::time::Instant;

use heft::data::RvSet;
use heft::periodogram::{self, Grid, Method};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const F0: f64 = 0.001;
const DF: f64 = 1e-5;

/// The invented data set of `n` points (same recipe as benches/astropy_fast.py, though
/// not the same random numbers).
fn data(n: usize) -> RvSet {
    let mut rng = ChaCha8Rng::seed_from_u64(n as u64);
    let t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..3000.0)).collect();
    let err: Vec<f64> = (0..n).map(|_| rng.random_range(1.0..5.0)).collect();
    let rv: Vec<f64> = t
        .iter()
        .zip(&err)
        .map(|(t, e)| {
            10.0 * (std::f64::consts::TAU * t / 13.7).sin() + e * rng.random_range(-1.0..1.0)
        })
        .collect();
    let epoch = 2_457_000.5;
    RvSet::from_columns("bench", epoch, t, rv, err, vec![0; n], vec!["u".into()])
}

/// Best of `reps` wall-clock times, seconds.
fn time(reps: usize, mut f: impl FnMut()) -> f64 {
    (0..reps)
        .map(|_| {
            let start = Instant::now();
            f();
            start.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let all = rayon::current_num_threads();
    println!(
        "GLS periodogram, exact vs fast (tolerance {:e}); times in seconds, best of 3 (1 for exact above 1e8 point-frequencies)",
        periodogram::DEFAULT_TOLERANCE
    );
    println!(
        "{:>7} {:>9} {:>8} {:>11} {:>11} {:>8} {:>12}",
        "N", "M", "threads", "exact", "fast", "ratio", "max |diff|"
    );
    for threads in [1, all] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        for n in [100, 1_000, 10_000] {
            let set = data(n);
            for m in [10_000, 100_000, 1_000_000] {
                let grid = Grid::new(F0, F0 + DF * (m - 1) as f64, m).unwrap();
                let mut fast = None;
                let t_fast = pool.install(|| {
                    time(3, || {
                        fast =
                            Some(periodogram::compute_with(&set, &[], &grid, Method::FAST).unwrap())
                    })
                });
                let work = n as f64 * m as f64;
                let (t_exact, diff) = if quick && work > 1e9 {
                    (f64::NAN, f64::NAN)
                } else {
                    let mut exact = None;
                    let reps = if work > 1e8 { 1 } else { 3 };
                    let t = pool.install(|| {
                        time(reps, || {
                            exact = Some(periodogram::compute(&set, &[], &grid).unwrap())
                        })
                    });
                    let (e, f) = (exact.unwrap(), fast.as_ref().unwrap());
                    let d = e
                        .power
                        .iter()
                        .zip(&f.power)
                        .map(|(a, b)| (a - b).abs())
                        .fold(0.0, f64::max);
                    (t, d)
                };
                println!(
                    "{n:>7} {m:>9} {threads:>8} {t_exact:>11.4} {t_fast:>11.4} {:>8.1} {diff:>12.1e}",
                    t_exact / t_fast
                );
            }
        }
    }
}
