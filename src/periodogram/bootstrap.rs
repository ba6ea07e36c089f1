//! Bootstrap false-alarm probability: the distribution of the highest power over the grid
//! when the data hold no signal, from residuals resampled at the observed times.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::Serialize;

use super::{Grid, Method, PeriodogramError, compute_with, gls};
use crate::data::RvSet;

/// Highest powers of the bootstrap replicates.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Bootstrap {
    /// Highest GLS power over the grid of each replicate, ascending.
    pub maxima: Vec<f64>,
    /// Seed the replicates were drawn from.
    pub seed: u64,
}

impl Bootstrap {
    /// False-alarm probability of power `z` (the fraction of replicates whose highest
    /// power reaches `z`) and its binomial standard error `sqrt(p(1 − p)/B)`.
    pub fn fap(&self, z: f64) -> (f64, f64) {
        let b = self.maxima.len() as f64;
        let below = self.maxima.partition_point(|&m| m < z);
        let p = (self.maxima.len() - below) as f64 / b;
        (p, (p * (1.0 - p) / b).sqrt())
    }
}

/// Bootstrap of the highest power under the no-signal hypothesis (as discussed by
/// VanderPlas 2018, ApJS 236, 16, among the false-alarm estimates of Lomb–Scargle): each
/// replicate keeps the observed times and instruments and draws, with replacement and
/// within each instrument, pairs (residual, uncertainty) from that instrument's points,
/// the residuals taken about the instrument's weighted mean; its periodogram on `grid`
/// (by `method`) gives one highest power.
///
/// Replicate `b` draws from ChaCha8 stream `b` of `seed`, so the result depends only on
/// the seed, never on the number of threads.
///
/// # Errors
/// As [`compute_with`]; a replicate count of zero is a range error.
pub fn bootstrap(
    set: &RvSet,
    jitters_mps: &[f64],
    grid: &Grid,
    method: Method,
    replicates: usize,
    seed: u64,
) -> Result<Bootstrap, PeriodogramError> {
    if replicates == 0 {
        return Err(PeriodogramError::Range(
            "a bootstrap needs at least one replicate".into(),
        ));
    }
    let prep = gls::Prepared::new(set, jitters_mps)?;
    let members: Vec<Vec<usize>> = (0..set.n_instruments())
        .map(|k| (0..set.len()).filter(|&i| set.instrument[i] == k).collect())
        .collect();
    let mut maxima = (0..replicates)
        .into_par_iter()
        .map(|b| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            rng.set_stream(b as u64);
            let mut rep = set.clone();
            for i in 0..set.len() {
                let pool = &members[set.instrument[i]];
                let j = pool[rng.random_range(0..pool.len())];
                rep.rv_mps[i] = set.rv_mps[j] - prep.inst_mean[set.instrument[j]];
                rep.err_mps[i] = set.err_mps[j];
            }
            compute_with(&rep, jitters_mps, grid, method)
                .map(|pg| pg.power.iter().copied().fold(0.0, f64::max))
        })
        .collect::<Result<Vec<f64>, _>>()?;
    maxima.sort_by(f64::total_cmp);
    Ok(Bootstrap { maxima, seed })
}
