//! The affine-invariant ensemble sampler of Goodman & Weare (2010, Communications in
//! Applied Mathematics and Computational Science 5, 65) with the stretch move, walkers
//! updated in two halves (Foreman-Mackey, Hogg, Lang & Goodman 2013, PASP 125, 306) so
//! that each half can be moved in parallel.
//!
//! Every walker draws its random numbers from its own ChaCha8 stream, chosen by the seed,
//! the step and the walker's index, so the chains do not depend on how rayon shares out
//! the walkers: the same seed gives bit-identical chains with any number of threads.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

/// Default stretch scale `a` (Goodman & Weare 2010).
pub const STRETCH_A: f64 = 2.0;

/// The stretch factor `z = ((a − 1) u + 1)² / a` for `u` uniform on [0, 1): distributed as
/// `g(z) ∝ 1/√z` on [1/a, a] (inverse-CDF sampling of Goodman & Weare's density).
#[inline]
pub fn stretch_z(u: f64, a: f64) -> f64 {
    let w = (a - 1.0) * u + 1.0;
    w * w / a
}

/// The random-number stream of one walker at one step.
fn walker_rng(seed: u64, stream: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(stream);
    rng
}

/// Positions and log-densities of an ensemble's walkers.
#[derive(Clone, Debug, PartialEq)]
pub struct Ensemble {
    /// One position per walker.
    pub positions: Vec<Vec<f64>>,
    /// Log-density at each position.
    pub ln_p: Vec<f64>,
}

impl Ensemble {
    /// An ensemble at `positions` (an even number, at least 4), evaluating `ln_p` at each.
    ///
    /// # Panics
    /// If the number of walkers is odd or below 4 (a programming error: the caller sizes
    /// the ensemble).
    pub fn new<F>(positions: Vec<Vec<f64>>, ln_p: &F) -> Ensemble
    where
        F: Fn(&[f64]) -> f64 + Sync,
    {
        assert!(
            positions.len() >= 4 && positions.len().is_multiple_of(2),
            "an ensemble needs an even number of walkers ≥ 4, got {}",
            positions.len()
        );
        let lp = positions.par_iter().map(|x| ln_p(x)).collect();
        Ensemble {
            positions,
            ln_p: lp,
        }
    }

    /// Number of walkers.
    pub fn len(&self) -> usize {
        self.positions.len()
    }

    /// True for an ensemble without walkers (never, see [`Ensemble::new`]).
    pub fn is_empty(&self) -> bool {
        self.positions.is_empty()
    }
}

/// One step of every ensemble: in each, the first half of the walkers moves by stretch
/// moves towards partners in the second half, then the second half towards the (updated)
/// first. A proposal `Y = X_j + z (X_k − X_j)` is accepted with probability
/// `min(1, z^(n−1) p(Y)/p(X_k))`, n = dimension. The same half of all ensembles is
/// proposed in one parallel pass (fewer synchronisations than one pass per ensemble).
/// Returns the number of accepted moves.
///
/// `seeds[e]` and `step` choose ensemble e's random streams (walker k at step s uses
/// stream `s × walkers + k`), so the result does not depend on how the work is shared.
///
/// # Panics
/// If the ensembles differ in size or `seeds` is shorter than `ensembles` (programming
/// errors).
pub fn advance<F>(ensembles: &mut [Ensemble], ln_p: &F, a: f64, seeds: &[u64], step: u64) -> usize
where
    F: Fn(&[f64]) -> f64 + Sync,
{
    let n = ensembles[0].len();
    assert!(
        ensembles.iter().all(|e| e.len() == n) && seeds.len() >= ensembles.len(),
        "ensembles of one run share their size and each has a seed"
    );
    let half = n / 2;
    let dim = ensembles[0].positions[0].len();
    let mut accepted = 0;
    for (first, partners) in [(0, half..n), (half, 0..half)] {
        let current: &[Ensemble] = ensembles;
        let moves: Vec<Option<(Vec<f64>, f64)>> = (0..current.len() * half)
            .into_par_iter()
            .map(|at| {
                let (ens, k) = (&current[at / half], first + at % half);
                let mut rng = walker_rng(seeds[at / half], step * n as u64 + k as u64);
                let j = partners.start + rng.random_range(0..partners.len());
                let z = stretch_z(rng.random::<f64>(), a);
                let (xk, xj) = (&ens.positions[k], &ens.positions[j]);
                let y: Vec<f64> = xj.iter().zip(xk).map(|(b, x)| b + z * (x - b)).collect();
                let lp = ln_p(&y);
                let ln_ratio = (dim as f64 - 1.0) * z.ln() + lp - ens.ln_p[k];
                let u: f64 = rng.random();
                (lp.is_finite() && u.ln() < ln_ratio).then_some((y, lp))
            })
            .collect();
        for (at, m) in moves.into_iter().enumerate() {
            if let Some((y, lp)) = m {
                let (ens, k) = (&mut ensembles[at / half], first + at % half);
                ens.positions[k] = y;
                ens.ln_p[k] = lp;
                accepted += 1;
            }
        }
    }
    accepted
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check values of references.md §14 ([C] from z = ((a−1)u+1)²/a), a = 2.
    #[test]
    fn stretch_factor_values() {
        let expected = [
            (0.0, 0.5),
            (0.25, 0.78125),
            (0.5, 1.125),
            (0.75, 1.53125),
            (1.0, 2.0),
        ];
        for (u, z) in expected {
            assert!((stretch_z(u, 2.0) - z).abs() < 1e-15, "u = {u}");
        }
    }

    /// The stretch factors follow g(z) ∝ 1/√z on [1/2, 2]: its CDF is
    /// (√z − 1/√2)/(√2 − 1/√2) (integral of the density, derived). The Kolmogorov–Smirnov
    /// distance of 20 000 draws must stay below the 1 % critical value 1.63/√n = 0.0115
    /// (asymptotic KS table, common practice).
    #[test]
    fn stretch_factor_distribution() {
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let mut z: Vec<f64> = (0..20_000).map(|_| stretch_z(rng.random(), 2.0)).collect();
        z.sort_by(f64::total_cmp);
        let s = std::f64::consts::FRAC_1_SQRT_2;
        let cdf = |x: f64| (x.sqrt() - s) / (std::f64::consts::SQRT_2 - s);
        let n = z.len() as f64;
        let d = z
            .iter()
            .enumerate()
            .map(|(i, &x)| {
                (cdf(x) - i as f64 / n)
                    .abs()
                    .max((cdf(x) - (i + 1) as f64 / n).abs())
            })
            .fold(0.0, f64::max);
        assert!(d < 0.0115, "KS distance {d}");
    }
}
