//! Period modes: one set of ensembles per alias of each planet's period that the data do
//! not rule out, and the posterior probability of each mode.
//!
//! The stretch move does not cross between well-separated period modes, so each mode is
//! sampled on its own. The modes are the maximum-likelihood fit and, for each planet
//! whose period is free and not set by a transit, the refits at the aliases of its period
//! ([`crate::fit::alias_refits`]) whose ln L is within [`MODE_DELTA_LNL`] of the
//! maximum-likelihood fit and whose period lies inside the period prior. Each mode of a
//! planet owns the frequencies between the midpoints to its neighbouring modes, so the
//! modes do not overlap; a planet not aliased in a mode keeps the window of its
//! maximum-likelihood mode. Aliases of two planets at once are not combined.
//!
//! The weight of a mode is its share of the posterior mass, `Z_m / Σ Z`, with each
//! evidence `Z_m = ∫ p(ψ) dψ` over the mode's window estimated by importance sampling
//! with the defensive mixture proposal of Hesterberg (1995, Technometrics 37, 185):
//! 0.8 N(μ, Σ) + 0.2 N(μ, 4Σ), μ and Σ the mean and covariance of the mode's draws.
//! Ratios of evidences are Bayes factors (Kass & Raftery 1995, JASA 90, 773).

use nalgebra::{DMatrix, DVector};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use rayon::prelude::*;
use serde::Serialize;

use crate::data::RvSet;
use crate::fit::{Fit, Role, alias_refits};
use crate::summary::Summary;

use super::posterior::PriorSet;

/// Aliases whose refit ln L is within this many units of the maximum-likelihood fit's are
/// sampled as modes: one further down holds less than about e^−10 ≈ 5·10⁻⁵ of the
/// posterior unless its prior volume is far larger.
pub const MODE_DELTA_LNL: f64 = 10.0;

/// Proposal draws per evidence estimate.
const EVIDENCE_DRAWS: usize = 20_000;
/// Weight of the wide component of the defensive mixture proposal.
const WIDE_WEIGHT: f64 = 0.2;
/// Scale of the wide component's standard deviations.
const WIDE_SCALE: f64 = 2.0;

/// Alias refits kept as modes, with their relation to the maximum-likelihood period.
type Aliases = Vec<(String, Fit)>;

/// A mode to sample: its fit and the period window of each planet.
pub(super) struct ModeStart {
    /// Planet whose period is at an alias (`None` for the maximum-likelihood mode).
    pub planet: Option<usize>,
    /// How the mode relates to the maximum-likelihood fit.
    pub relation: String,
    /// The mode's fit (its period constraint removed).
    pub fit: Fit,
    /// `(ψ index of a period, lowest, highest period)`, days.
    pub windows: Vec<(usize, f64, f64)>,
}

/// The modes worth sampling: the maximum-likelihood mode first, then the aliases kept,
/// with the windows that separate them. Aliases whose refit fails are left out.
pub(super) fn starts(set: &RvSet, fit: &Fit, priors: &PriorSet) -> Vec<ModeStart> {
    let roles = fit.layout.roles();
    // Per planet: its index, the ψ index of its period and the kept alias refits.
    let mut kept: Vec<(usize, usize, Aliases)> = Vec::new();
    for (i, spec) in fit.layout.planets.iter().enumerate() {
        let Some(j) = roles.iter().position(|r| *r == Role::Period(i)) else {
            continue;
        };
        let Some(entry) = &priors.entries[j] else {
            continue;
        };
        if spec.period_prior.is_some() || entry.source != "default" {
            continue;
        }
        let (lo, hi) = entry.prior.bounds();
        let Ok(refits) = alias_refits(set, fit, i, 1.0 / hi, 1.0 / lo) else {
            continue;
        };
        let aliases: Aliases = refits
            .into_iter()
            .filter_map(|a| {
                let mut f = a.fit?;
                f.layout.planets[i].period_prior = None;
                (f.log_likelihood >= fit.log_likelihood - MODE_DELTA_LNL).then_some((a.relation, f))
            })
            .collect();
        if !aliases.is_empty() {
            kept.push((i, j, aliases));
        }
    }
    // Frequency windows: midpoints between neighbouring modes of each planet.
    let window_of = |freqs: &[f64], f: f64| -> (f64, f64) {
        let below = freqs
            .iter()
            .filter(|&&g| g < f)
            .fold(0.0, |a: f64, &g| a.max(g));
        let above = freqs
            .iter()
            .filter(|&&g| g > f)
            .fold(f64::INFINITY, |a: f64, &g| a.min(g));
        let f_lo = 0.5 * (below + f);
        let f_hi = 0.5 * (above + f);
        (
            1.0 / f_hi,
            if f_lo > 0.0 {
                1.0 / f_lo
            } else {
                f64::INFINITY
            },
        )
    };
    let period_of = |f: &Fit, i: usize| f.planets[i].period_d.value;
    let freqs: Vec<Vec<f64>> = kept
        .iter()
        .map(|(i, _, aliases)| {
            std::iter::once(1.0 / period_of(fit, *i))
                .chain(aliases.iter().map(|(_, f)| 1.0 / period_of(f, *i)))
                .collect()
        })
        .collect();
    let windows = |aliased: Option<(usize, &Fit)>| -> Vec<(usize, f64, f64)> {
        kept.iter()
            .zip(&freqs)
            .map(|((i, j, _), fr)| {
                let p = match aliased {
                    Some((a, f)) if a == *i => period_of(f, *i),
                    _ => period_of(fit, *i),
                };
                let (lo, hi) = window_of(fr, 1.0 / p);
                (*j, lo, hi)
            })
            .collect()
    };
    let mut out = vec![ModeStart {
        planet: None,
        relation: "maximum likelihood".into(),
        fit: fit.clone(),
        windows: windows(None),
    }];
    for (i, _, aliases) in &kept {
        for (relation, f) in aliases {
            out.push(ModeStart {
                planet: Some(*i),
                relation: relation.clone(),
                fit: f.clone(),
                windows: windows(Some((*i, f))),
            });
        }
    }
    out
}

/// One planet's period and semi-amplitude in a mode.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ModePlanet {
    /// Planet label.
    pub label: String,
    /// Period, days (median and 15.87/84.13 percentiles of the mode's draws).
    pub period_d: Summary,
    /// Semi-amplitude, m/s.
    pub k_mps: Summary,
}

/// A sampled period mode.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Mode {
    /// Planet whose period is at an alias (absent for the maximum-likelihood mode).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub planet: Option<String>,
    /// How the mode relates to the maximum-likelihood fit: `maximum likelihood` or the
    /// alias, e.g. `f − 1.0027/d`.
    pub relation: String,
    /// Every planet's period and K in the mode.
    pub planets: Vec<ModePlanet>,
    /// ln L of the mode's maximum-likelihood fit.
    pub log_likelihood: f64,
    /// ln of the mode's evidence (posterior mass, up to a constant common to all modes).
    pub ln_evidence: f64,
    /// Monte Carlo standard error of `ln_evidence`.
    pub ln_evidence_err: f64,
    /// Posterior probability of the mode among the modes sampled.
    pub weight: f64,
    /// Whether the mode's chains met the convergence rule.
    pub converged: bool,
}

/// `ln ∫ exp(ln_p(ψ)) dψ` and its Monte Carlo standard error, by importance sampling
/// from the defensive mixture fitted to `draws` (module docs). `None` when the draws'
/// covariance is singular or no proposal draw has a finite density.
pub fn ln_evidence<F>(ln_p: &F, draws: &[Vec<f64>], seed: u64) -> Option<(f64, f64)>
where
    F: Fn(&[f64]) -> f64 + Sync,
{
    let dim = draws.first()?.len();
    let n = draws.len() as f64;
    let mean = DVector::from_fn(dim, |k, _| draws.iter().map(|d| d[k]).sum::<f64>() / n);
    let mut cov = DMatrix::zeros(dim, dim);
    for d in draws {
        let x = DVector::from_column_slice(d) - &mean;
        cov += &x * x.transpose();
    }
    cov /= n - 1.0;
    let chol = cov.cholesky()?;
    let l = chol.l();
    let half_ln_det: f64 = (0..dim).map(|k| l[(k, k)].ln()).sum();
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let points: Vec<(Vec<f64>, f64)> = (0..EVIDENCE_DRAWS)
        .map(|_| {
            let scale = if rng.random::<f64>() < WIDE_WEIGHT {
                WIDE_SCALE
            } else {
                1.0
            };
            let z = DVector::from_fn(dim, |_, _| rng.sample::<f64, _>(StandardNormal));
            let x = &mean + &l * z * scale;
            let m2 = chol.solve(&(&x - &mean)).dot(&(&x - &mean));
            let ln_normal = |s: f64| {
                -0.5 * dim as f64 * std::f64::consts::TAU.ln()
                    - dim as f64 * s.ln()
                    - half_ln_det
                    - 0.5 * m2 / (s * s)
            };
            let a = (1.0 - WIDE_WEIGHT).ln() + ln_normal(1.0);
            let b = WIDE_WEIGHT.ln() + ln_normal(WIDE_SCALE);
            let ln_q = a.max(b) + (-(a - b).abs()).exp().ln_1p();
            (x.as_slice().to_vec(), ln_q)
        })
        .collect();
    let ln_w: Vec<f64> = points.par_iter().map(|(x, ln_q)| ln_p(x) - ln_q).collect();
    let top = ln_w.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !top.is_finite() {
        return None;
    }
    let w: Vec<f64> = ln_w.iter().map(|v| (v - top).exp()).collect();
    let m = w.len() as f64;
    let mean_w = w.iter().sum::<f64>() / m;
    let var_w = w.iter().map(|x| (x - mean_w).powi(2)).sum::<f64>() / (m - 1.0);
    Some((top + mean_w.ln(), (var_w / m).sqrt() / mean_w))
}

/// Posterior probabilities from ln evidences (`None` counts as zero mass).
pub(super) fn weights(ln_z: &[Option<f64>]) -> Vec<f64> {
    let top = ln_z
        .iter()
        .flatten()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max);
    let w: Vec<f64> = ln_z
        .iter()
        .map(|z| z.map_or(0.0, |z| (z - top).exp()))
        .collect();
    let total: f64 = w.iter().sum();
    w.iter().map(|x| x / total).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The evidence of an unnormalised correlated Gaussian, `ln Z = ln c + (d/2) ln 2π +
    /// ½ ln |Σ|` (the Gaussian integral), within the estimator's stated error.
    #[test]
    fn evidence_of_a_gaussian_is_its_integral() {
        let cov = DMatrix::from_row_slice(3, 3, &[4.0, 1.2, 0.0, 1.2, 1.0, -0.3, 0.0, -0.3, 0.25]);
        let inv = cov.clone().try_inverse().unwrap();
        let mu = DVector::from_row_slice(&[1.0, -2.0, 0.5]);
        let ln_c = -7.3;
        let ln_p = |x: &[f64]| {
            let d = DVector::from_column_slice(x) - &mu;
            ln_c - 0.5 * d.dot(&(&inv * &d))
        };
        let l = cov.clone().cholesky().unwrap().l();
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let draws: Vec<Vec<f64>> = (0..4000)
            .map(|_| {
                let z = DVector::from_fn(3, |_, _| rng.sample::<f64, _>(StandardNormal));
                (&mu + &l * z).as_slice().to_vec()
            })
            .collect();
        let exact = ln_c + 1.5 * std::f64::consts::TAU.ln() + 0.5 * cov.determinant().ln();
        let (got, err) = ln_evidence(&ln_p, &draws, 9).unwrap();
        assert!(err < 0.02, "standard error {err}");
        assert!(
            (got - exact).abs() < 4.0 * err + 1e-3,
            "{got} vs {exact} ± {err}"
        );
    }

    #[test]
    fn weights_sum_to_one_and_skip_missing_modes() {
        let w = weights(&[Some(-3.0), None, Some(-3.0 + 2f64.ln())]);
        assert!(
            (w[0] - 1.0 / 3.0).abs() < 1e-12 && w[1] == 0.0 && (w[2] - 2.0 / 3.0).abs() < 1e-12
        );
    }
}
