//! Alias test: the full model refitted at each alias of a claimed period, and the
//! simulation test of Dawson & Fabrycky (2010, ApJ 722, 937).
//!
//! Candidates and their refits come from [`crate::fit::alias_refits`]: `|f ± f_w|` for
//! the claimed frequency `f` and the strongest peaks `f_w` of the spectral window, within
//! the search range, each refitted with all other signals free and its period held near
//! the alias.
//!
//! The simulation test: for each candidate, noise-matched data (its fitted Keplerian plus
//! Gaussian noise of variance σ² + s² at the observed times) are drawn many times; at every
//! candidate frequency the GLS sinusoid (amplitude and phase, as a complex amplitude) and
//! power are computed for the simulated and for the observed data (the observed data with
//! the other signals removed). A simulation reproduces the observed pattern when its
//! highest power in the alias set is at the same frequency as the observed; the
//! pattern distance is `Σ|A_sim − A_obs|² / Σ|A_obs|²` over the set, so heights and phases
//! both count. The candidate whose simulations reproduce the observed pattern most often
//! (ties: smaller median distance) is the one that explains the data.

use rand::Rng;
use rand_distr::StandardNormal;
use rayon::prelude::*;
use serde::Serialize;

use super::common::{Refitter, Stream, rng};
use super::{AuditError, PlanetValues};
use crate::data::RvSet;
use crate::fit::{Fit, alias_refits};
use crate::orbit::Orbit;
use crate::periodogram::sinusoid_at;

/// How often simulations of a candidate reproduce the observed alias pattern.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct SimulationMatch {
    /// Fraction of simulations whose highest peak in the alias set is at the observed one.
    pub top_fraction: f64,
    /// Median pattern distance `Σ|A_sim − A_obs|² / Σ|A_obs|²` (0 = identical).
    pub median_distance: f64,
}

/// One period candidate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct AliasCandidate {
    /// How the candidate relates to the claim, e.g. `claimed`, `f + 1.0027/d`.
    pub relation: String,
    /// Alias frequency the refit started from, 1/day.
    pub frequency: f64,
    /// K, mass and density from the refit at this candidate (period as fitted).
    #[serde(flatten)]
    pub values: PlanetValues,
    /// ln L of the refit.
    pub log_likelihood: f64,
    /// ln L(candidate) − ln L(claimed).
    pub delta_lnl: f64,
    /// BIC(candidate) − BIC(claimed) (same number of parameters: −2 Δln L).
    pub delta_bic: f64,
    /// GLS power of the observed data (other signals removed) at the frequency.
    pub observed_power: f64,
    /// Dawson & Fabrycky simulation test (absent when not run).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub simulation: Option<SimulationMatch>,
}

/// The alias test of one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct AliasTest {
    /// Whether aliases were tested (not for periods set by transits).
    pub tested: bool,
    /// Why not, or what else to know.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
    /// Candidates, best ln L first; the claimed period is among them.
    pub candidates: Vec<AliasCandidate>,
    /// Period of the best candidate, days.
    pub preferred_period_d: f64,
    /// ln L lead of the best candidate over the next (∞ when there is no other).
    pub lead_lnl: f64,
    /// Period of the candidate that best explains the observed alias pattern, days.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub explained_by_period_d: Option<f64>,
    /// Best candidate decisively ahead in ln L and confirmed by the simulations.
    pub decisive: bool,
}

/// Runs the alias test for base planet `i`; with it, the refit at the preferred candidate
/// when that is decisively better than the claimed period.
///
/// # Errors
/// [`AuditError`] when a periodogram cannot be computed.
pub fn test(refit: &Refitter, i: usize) -> Result<(AliasTest, Option<Fit>), AuditError> {
    let base = &refit.base;
    let est = &base.planets[i];
    let claimed = refit.values_of(est.period_d.value, est.k_mps, est.ecc.value, i);
    let f0 = 1.0 / est.period_d.value;
    let residual = refit.residual_without(i);
    let jit = refit.jitters();
    let claimed_candidate = AliasCandidate {
        relation: "claimed".into(),
        frequency: f0,
        values: claimed,
        log_likelihood: base.log_likelihood,
        delta_lnl: 0.0,
        delta_bic: 0.0,
        observed_power: sinusoid_at(&residual, jit, f0)?.power,
        simulation: None,
    };
    if refit.has_transit(i) {
        let test = AliasTest {
            tested: false,
            notes: vec!["period set by the transit ephemeris: RV aliases not considered".into()],
            preferred_period_d: est.period_d.value,
            candidates: vec![claimed_candidate],
            lead_lnl: f64::INFINITY,
            explained_by_period_d: None,
            decisive: true,
        };
        return Ok((test, None));
    }
    let mut notes = Vec::new();
    let mut candidates = vec![(claimed_candidate, base.params.planets[i])];
    let mut fits: Vec<Option<Fit>> = vec![None];
    for a in alias_refits(refit.set, base, i, refit.grid.fmin, refit.grid.fmax())? {
        let values = a.fit.as_ref().and_then(|f| refit.values(f, i));
        match (a.fit, values) {
            (Some(f), Some(values)) => {
                let dl = f.log_likelihood - base.log_likelihood;
                let candidate = AliasCandidate {
                    relation: a.relation,
                    frequency: a.frequency,
                    values,
                    log_likelihood: f.log_likelihood,
                    delta_lnl: dl,
                    delta_bic: -2.0 * dl,
                    observed_power: a.observed_power,
                    simulation: None,
                };
                candidates.push((candidate, f.params.planets[i]));
                fits.push(Some(f));
            }
            _ => notes.push(format!(
                "refit at {} ({:.5} d) failed",
                a.relation,
                1.0 / a.frequency
            )),
        }
    }
    if candidates.len() > 1 {
        simulate(refit, &residual, &mut candidates, i);
    }
    let mut ranked: Vec<(AliasCandidate, Option<Fit>)> =
        candidates.into_iter().map(|c| c.0).zip(fits).collect();
    ranked.sort_by(|a, b| b.0.log_likelihood.total_cmp(&a.0.log_likelihood));
    let (cands, mut fits): (Vec<AliasCandidate>, Vec<Option<Fit>>) = ranked.into_iter().unzip();
    let lead_lnl = match cands.get(1) {
        Some(second) => cands[0].log_likelihood - second.log_likelihood,
        None => f64::INFINITY,
    };
    let explained = cands
        .iter()
        .filter_map(|c| c.simulation.map(|s| (c, s)))
        .max_by(|(_, a), (_, b)| {
            a.top_fraction
                .total_cmp(&b.top_fraction)
                .then(b.median_distance.total_cmp(&a.median_distance))
        })
        .map(|(c, _)| c.values.period_d);
    let preferred_period_d = cands[0].values.period_d;
    let decisive = lead_lnl >= refit.settings.decisive_delta_lnl
        && explained.is_none_or(|p| p == preferred_period_d);
    // The claimed candidate carries no refit (it is the base), so a fit here means the
    // preferred period is another one.
    let preferred_fit = if decisive { fits.swap_remove(0) } else { None };
    let test = AliasTest {
        tested: true,
        notes,
        candidates: cands,
        preferred_period_d,
        lead_lnl,
        explained_by_period_d: explained,
        decisive,
    };
    Ok((test, preferred_fit))
}

/// Complex GLS amplitude `(a, b)` and power at each frequency.
fn pattern(set: &RvSet, jitters: &[f64], freqs: &[f64]) -> Vec<(f64, f64, f64)> {
    freqs
        .iter()
        .map(|&f| match sinusoid_at(set, jitters, f) {
            Ok(s) => (s.cos_mps, s.sin_mps, s.power),
            Err(_) => (0.0, 0.0, 0.0),
        })
        .collect()
}

/// Index of the highest power of a pattern.
fn top(p: &[(f64, f64, f64)]) -> usize {
    (0..p.len())
        .max_by(|&a, &b| p[a].2.total_cmp(&p[b].2))
        .unwrap_or(0)
}

/// Fills in each candidate's [`SimulationMatch`].
fn simulate(
    refit: &Refitter,
    residual: &RvSet,
    candidates: &mut [(AliasCandidate, Orbit)],
    planet: usize,
) {
    let jit = refit.jitters();
    let freqs: Vec<f64> = candidates.iter().map(|c| c.0.frequency).collect();
    let observed = pattern(residual, jit, &freqs);
    let observed_top = top(&observed);
    let norm: f64 = observed.iter().map(|(a, b, _)| a * a + b * b).sum();
    let n_sim = refit.settings.simulations;
    let seed = refit.settings.seed;
    for (c, (cand, orbit)) in candidates.iter_mut().enumerate() {
        let results: Vec<(bool, f64)> = (0..n_sim)
            .into_par_iter()
            .map(|s| {
                let item = ((planet as u64) << 40) | ((c as u64) << 24) | s as u64;
                let mut r = rng(seed, Stream::Aliases, item);
                let mut sim = residual.clone();
                for j in 0..sim.len() {
                    let k = sim.instrument[j];
                    let sd = sim.err_mps[j].hypot(jit.get(k).copied().unwrap_or(0.0));
                    let z: f64 = r.sample(StandardNormal);
                    sim.rv_mps[j] = orbit.rv(sim.time_d[j]) + sd * z;
                }
                let p = pattern(&sim, jit, &freqs);
                let d: f64 = p
                    .iter()
                    .zip(&observed)
                    .map(|(s, o)| (s.0 - o.0).powi(2) + (s.1 - o.1).powi(2))
                    .sum::<f64>()
                    / norm.max(1e-300);
                (top(&p) == observed_top, d)
            })
            .collect();
        let hits = results.iter().filter(|r| r.0).count();
        let mut d: Vec<f64> = results.iter().map(|r| r.1).collect();
        d.sort_by(f64::total_cmp);
        cand.simulation = Some(SimulationMatch {
            top_fraction: hits as f64 / n_sim.max(1) as f64,
            median_distance: d.get(d.len() / 2).copied().unwrap_or(f64::NAN),
        });
    }
}
