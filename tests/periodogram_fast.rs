//! The fast (non-uniform FFT) GLS against the exact sums, on invented injection data:
//! uneven sampling, heteroscedastic errors, several instruments with their own zero
//! points, full-BJD times thousands of days long read through the normal table reader.
//! Requirement of the issue: maximum absolute power difference ≤ 1e-9 over the grid at
//! the default tolerance.

use std::fmt::Write as _;

use heft::data::{self, DataSpec, RvSet};
use heft::periodogram::{self, Grid, Method, PeriodogramError};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// `n` points over `span_d` days from BJD 2 455 000.3, clumped in observing seasons,
/// three instruments with offsets of km/s size, errors from 0.5 to 8 m/s, two
/// sinusoids; written as a CSV and read back through `data::load`.
fn invented(n: usize, span_d: f64, seed: u64) -> RvSet {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut text = String::from("time,rv,rv_err,instrument\n");
    let offsets = [-1234.5, 20.0, 3100.25];
    for _ in 0..n {
        // Seasons of 240 days a year, a visit at night (±0.1 d around a fixed clock time).
        let season = rng.random_range(0..(span_d / 365.25).ceil().max(1.0) as usize) as f64;
        let day = (season * 365.25 + rng.random_range(0.0..240.0_f64))
            .min(span_d)
            .floor();
        let t = 2_455_000.3 + day + rng.random_range(-0.1..0.1);
        let inst = rng.random_range(0..3usize);
        let err = rng.random_range(0.5..8.0);
        let signal = 12.0 * (std::f64::consts::TAU * (t - 2_455_000.0) / 17.3).sin()
            + 4.0 * (std::f64::consts::TAU * (t - 2_455_000.0) / 311.0).cos();
        let noise = Normal::new(0.0, err).unwrap().sample(&mut rng);
        let rv = offsets[inst] + signal + noise;
        writeln!(text, "{t:.6},{rv:.4},{err:.4},unit-{inst}").unwrap();
    }
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("rv.csv");
    std::fs::write(&path, text).unwrap();
    data::load(&[DataSpec::new(&path)]).unwrap()
}

fn max_difference(set: &RvSet, grid: &Grid, jitters: &[f64]) -> f64 {
    let exact = periodogram::compute(set, jitters, grid).unwrap();
    let fast = periodogram::compute_with(set, jitters, grid, Method::FAST).unwrap();
    assert_eq!(exact.power.len(), fast.power.len());
    let worst = exact
        .power
        .iter()
        .zip(&fast.power)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    let top = exact.power.iter().copied().fold(0.0, f64::max);
    eprintln!(
        "N = {}, M = {}: max |fast − exact| = {worst:.2e} (highest power {top:.3})",
        set.len(),
        grid.n
    );
    worst
}

#[test]
fn fast_matches_exact_on_40_300_and_10000_points() {
    for (n, span, fmax, seed) in [
        (40, 1500.0, 2.0, 1),
        (300, 3000.0, 2.0, 2),
        (10_000, 4000.0, 1.2, 3),
    ] {
        let set = invented(n, span, seed);
        assert_eq!(set.n_instruments(), 3);
        let grid =
            Grid::with_oversampling(1.0 / set.baseline_d(), fmax, set.baseline_d(), 10.0).unwrap();
        // With and without jitters (weights 1/(σ² + s²)).
        assert!(max_difference(&set, &grid, &[]) <= 1e-9);
        assert!(max_difference(&set, &grid, &[1.5, 0.0, 3.0]) <= 1e-9);
    }
}

/// Odd and tiny grids, and a grid starting at zero frequency, where the sums' matrix is
/// singular (power 0 by convention in both methods).
#[test]
fn fast_matches_exact_on_odd_grids() {
    let set = invented(60, 800.0, 4);
    for grid in [
        Grid::new(0.0, 0.5, 1001).unwrap(),
        Grid::new(0.01, 0.02, 2).unwrap(),
        Grid::new(0.3, 0.3, 1).unwrap(),
        Grid::new(0.001, 3.0, 7777).unwrap(),
    ] {
        assert!(max_difference(&set, &grid, &[]) <= 1e-9, "{grid:?}");
    }
}

#[test]
fn fast_tolerance_is_checked_and_coarser_is_less_accurate() {
    let set = invented(100, 1000.0, 5);
    let grid = Grid::new(0.001, 1.0, 5000).unwrap();
    for bad in [0.0, 1e-16, 0.5, f64::NAN] {
        let err = periodogram::compute_with(&set, &[], &grid, Method::Fast { tolerance: bad })
            .unwrap_err();
        assert!(matches!(err, PeriodogramError::Tolerance(_)), "{err}");
    }
    let exact = periodogram::compute(&set, &[], &grid).unwrap();
    let coarse =
        periodogram::compute_with(&set, &[], &grid, Method::Fast { tolerance: 1e-4 }).unwrap();
    let worst = exact
        .power
        .iter()
        .zip(&coarse.power)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    // A 1e-4 tolerance still gives a usable periodogram, but not a 1e-9 one.
    assert!(worst < 1e-3 && worst > 1e-9, "{worst}");
}
