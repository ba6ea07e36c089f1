//! Running several independent ensembles until they have converged: chain storage,
//! burn-in, and the convergence rule.

use serde::Serialize;

use super::diagnostics::{integrated_time, rank_normalised_rhat};
use super::ensemble::{Ensemble, advance};

/// Sokal's window constant for the autocorrelation time.
const SOKAL_C: f64 = 5.0;
/// Most steps kept per walker; beyond, every other kept step is dropped and the
/// thinning doubles (so τ ≫ thinning whenever the chain is ≥ 50 τ long).
const MAX_STORED_STEPS: usize = 4096;
/// Fewest steps before the first convergence check.
const FIRST_CHECK: usize = 500;

/// Settings of the sampler, with stated defaults.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct SamplerSettings {
    /// Independent ensembles (≥ 2, default 2): R̂ compares them.
    pub ensembles: usize,
    /// Walkers per ensemble (even; 0 = automatic: 2 × dimension + 2, at least 16).
    pub walkers: usize,
    /// The kept chain must be at least this many autocorrelation times long (default 50).
    pub min_tau_multiple: f64,
    /// Every parameter's rank-normalised split R̂ must be below this (default 1.01).
    pub max_rhat: f64,
    /// Burn-in, in autocorrelation times (default 5).
    pub burn_tau_multiple: f64,
    /// Give up after this many steps (default 200 000).
    pub max_steps: usize,
    /// Stretch scale a (default 2).
    pub stretch_a: f64,
    /// Sample each alias of a period the data do not rule out as its own mode and weigh
    /// the modes ([`super::modes`]; default true), or the maximum-likelihood mode only.
    pub period_modes: bool,
    /// Seed of every random draw.
    pub seed: u64,
    /// Stop at this time even if not converged (checked every 100 steps; the run then
    /// ends with a final check as at `max_steps`). `None`: no time limit.
    #[serde(skip)]
    pub deadline: Option<std::time::Instant>,
}

impl Default for SamplerSettings {
    fn default() -> Self {
        SamplerSettings {
            ensembles: 2,
            walkers: 0,
            min_tau_multiple: 50.0,
            max_rhat: 1.01,
            burn_tau_multiple: 5.0,
            max_steps: 200_000,
            stretch_a: super::ensemble::STRETCH_A,
            period_modes: true,
            seed: 1,
            deadline: None,
        }
    }
}

impl SamplerSettings {
    /// Walkers per ensemble for a problem of dimension `dim`.
    pub fn walkers_for(&self, dim: usize) -> usize {
        let n = if self.walkers == 0 {
            (2 * dim + 2).max(16)
        } else {
            self.walkers.max(4)
        };
        n + n % 2
    }
}

/// Where a run is, for a progress display.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Progress {
    /// Steps done.
    pub step: usize,
    /// Step limit.
    pub max_steps: usize,
    /// Kept chain length over the largest τ at the last check.
    pub tau_multiple: Option<f64>,
    /// Largest R̂ at the last check (`None` while the chain is too short in τ for R̂ to
    /// be computed).
    pub max_rhat: Option<f64>,
}

/// Diagnostics of one parameter.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ParameterDiagnostics {
    /// Parameter name (sampling parametrisation).
    pub name: String,
    /// Integrated autocorrelation time, steps.
    pub tau_steps: f64,
    /// Rank-normalised split R̂ across the ensembles.
    pub rhat: f64,
    /// Effective sample size: kept draws of all walkers × thinning / τ.
    pub ess: f64,
}

/// Convergence diagnostics of a run.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Diagnostics {
    /// Whether the convergence rule was met.
    pub converged: bool,
    /// Why the run stopped, in words.
    pub reason: String,
    /// Steps run per walker.
    pub steps: usize,
    /// Steps discarded as burn-in.
    pub burn_in_steps: usize,
    /// Independent ensembles.
    pub ensembles: usize,
    /// Walkers per ensemble.
    pub walkers: usize,
    /// Fraction of accepted stretch moves.
    pub acceptance: f64,
    /// Kept chain length divided by the largest τ.
    pub tau_multiple: f64,
    /// Required `tau_multiple`.
    pub min_tau_multiple: f64,
    /// Largest R̂ over the parameters.
    pub max_rhat: f64,
    /// Required bound on R̂.
    pub rhat_bound: f64,
    /// Smallest effective sample size over the parameters.
    pub min_ess: f64,
    /// Per-parameter diagnostics.
    pub parameters: Vec<ParameterDiagnostics>,
}

/// Kept draws after burn-in, with where each came from.
#[derive(Clone, Debug, PartialEq)]
pub struct Chains {
    /// Positions, one per kept draw.
    pub positions: Vec<Vec<f64>>,
    /// Log-density of each.
    pub ln_p: Vec<f64>,
    /// Ensemble of each draw.
    pub ensemble: Vec<u32>,
    /// Walker of each draw.
    pub walker: Vec<u32>,
    /// Step of each draw (1-based).
    pub step: Vec<u32>,
    /// Diagnostics of the run.
    pub diagnostics: Diagnostics,
}

/// Stored (thinned) history of one ensemble: `[stored step][walker][dim]`, flattened.
struct History {
    positions: Vec<f64>,
    ln_p: Vec<f64>,
}

/// Runs `starts.len()` ensembles (each from its starting walkers) on the log-density
/// `ln_p` until every parameter's kept chain is `min_tau_multiple` autocorrelation times
/// long and its R̂ across ensembles is below `max_rhat`, or `max_steps` is reached, or
/// the `deadline` passes.
///
/// Burn-in is `burn_tau_multiple` × the largest τ (measured on the latter half of the
/// chain, at most half the chain). At most `max_draws` draws are returned, evenly spaced
/// in steps. Ensemble e uses the random streams of seed `seed + e` mixed by SplitMix64.
///
/// # Panics
/// If there are fewer than 2 ensembles or walkers of different dimensions (programming
/// errors: the caller builds the starts).
pub fn run<F>(
    ln_p: &F,
    starts: Vec<Vec<Vec<f64>>>,
    settings: &SamplerSettings,
    max_draws: usize,
    progress: &mut dyn FnMut(&Progress),
    names: &[String],
) -> Chains
where
    F: Fn(&[f64]) -> f64 + Sync,
{
    assert!(starts.len() >= 2, "R̂ needs at least two ensembles");
    let dim = starts[0][0].len();
    let mut ensembles: Vec<Ensemble> = starts.into_iter().map(|s| Ensemble::new(s, ln_p)).collect();
    let walkers = ensembles[0].len();
    let seeds: Vec<u64> = (0..ensembles.len() as u64)
        .map(|e| splitmix64(settings.seed.wrapping_add(e)))
        .collect();
    let mut history: Vec<History> = ensembles
        .iter()
        .map(|_| History {
            positions: Vec::new(),
            ln_p: Vec::new(),
        })
        .collect();
    let mut stored_steps: Vec<usize> = Vec::new();
    let mut thin = 1;
    let mut accepted = 0usize;
    let mut next_check = FIRST_CHECK;
    let mut last = Progress {
        step: 0,
        max_steps: settings.max_steps,
        tau_multiple: None,
        max_rhat: None,
    };
    let mut verdict = None;
    let mut step = 0;
    while step < settings.max_steps {
        step += 1;
        accepted += advance(
            &mut ensembles,
            ln_p,
            settings.stretch_a,
            &seeds,
            step as u64,
        );
        if step % thin == 0 {
            for (h, ens) in history.iter_mut().zip(&ensembles) {
                h.positions.extend(ens.positions.iter().flatten());
                h.ln_p.extend(&ens.ln_p);
            }
            stored_steps.push(step);
            if stored_steps.len() == MAX_STORED_STEPS {
                halve(&mut history, &mut stored_steps, walkers, dim);
                thin *= 2;
            }
        }
        let mut out_of_time = false;
        if step % 100 == 0 {
            last.step = step;
            progress(&last);
            out_of_time = settings
                .deadline
                .is_some_and(|d| std::time::Instant::now() >= d);
        }
        let last_step = step == settings.max_steps || out_of_time;
        if step >= next_check || last_step {
            next_check = (step + FIRST_CHECK).max(step + step / 10);
            let check = assess(
                &history,
                &stored_steps,
                thin,
                walkers,
                dim,
                settings,
                names,
                last_step,
            );
            last.step = step;
            last.tau_multiple = Some(check.tau_multiple);
            last.max_rhat = check.max_rhat.is_finite().then_some(check.max_rhat);
            progress(&last);
            let done = check.converged || out_of_time;
            verdict = Some(check);
            if done {
                break;
            }
        }
    }
    let mut diagnostics = verdict.expect("the last step is always checked");
    diagnostics.steps = step;
    diagnostics.acceptance = accepted as f64 / (step * walkers * ensembles.len()).max(1) as f64;
    diagnostics.reason = if diagnostics.converged {
        format!(
            "converged: kept chain {:.0} τ long (≥ {}), max R̂ {:.4} (< {})",
            diagnostics.tau_multiple,
            settings.min_tau_multiple,
            diagnostics.max_rhat,
            settings.max_rhat
        )
    } else {
        let why = if step < settings.max_steps {
            "stopped by the time budget"
        } else {
            "not converged"
        };
        format!(
            "{why} after {step} steps: kept chain {:.1} τ long (need {}), max R̂ {:.4} (need < {})",
            diagnostics.tau_multiple,
            settings.min_tau_multiple,
            diagnostics.max_rhat,
            settings.max_rhat
        )
    };
    collect(
        &history,
        &stored_steps,
        walkers,
        dim,
        max_draws,
        diagnostics,
    )
}

/// SplitMix64 finaliser (Steele, Lea & Flood 2014), to spread nearby seeds.
fn splitmix64(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Keeps every second stored step (those at multiples of twice the thinning).
fn halve(history: &mut [History], stored: &mut Vec<usize>, walkers: usize, dim: usize) {
    let keep: Vec<usize> = (1..stored.len()).step_by(2).collect();
    for h in history.iter_mut() {
        h.positions = keep
            .iter()
            .flat_map(|&s| {
                h.positions[s * walkers * dim..(s + 1) * walkers * dim]
                    .iter()
                    .copied()
            })
            .collect();
        h.ln_p = keep
            .iter()
            .flat_map(|&s| h.ln_p[s * walkers..(s + 1) * walkers].iter().copied())
            .collect();
    }
    *stored = keep.iter().map(|&s| stored[s]).collect();
}

/// Per-walker chains of parameter `p` of every ensemble from stored step `from` on.
fn walker_chains(
    history: &[History],
    from: usize,
    to: usize,
    walkers: usize,
    dim: usize,
    p: usize,
) -> Vec<Vec<f64>> {
    history
        .iter()
        .flat_map(|h| {
            (0..walkers).map(move |w| {
                (from..to)
                    .map(|s| h.positions[(s * walkers + w) * dim + p])
                    .collect()
            })
        })
        .collect()
}

/// The diagnostics and convergence verdict for the chains stored so far. R̂ (whose
/// rank normalisation sorts every draw) is computed only once the chain is long enough
/// in autocorrelation times, or when `final_check`; before that it is NaN, and the run
/// cannot have converged anyway.
#[allow(clippy::too_many_arguments)]
fn assess(
    history: &[History],
    stored: &[usize],
    thin: usize,
    walkers: usize,
    dim: usize,
    settings: &SamplerSettings,
    names: &[String],
    final_check: bool,
) -> Diagnostics {
    let n = stored.len();
    let steps = stored.last().copied().unwrap_or(0);
    let tau_of = |from: usize, p: usize| {
        thin as f64 * integrated_time(&walker_chains(history, from, n, walkers, dim, p), SOKAL_C)
    };
    let tau0 = (0..dim).map(|p| tau_of(n / 2, p)).fold(0.0, f64::max);
    let burn_steps = (settings.burn_tau_multiple * tau0)
        .ceil()
        .min(steps as f64 / 2.0) as usize;
    let from = stored.partition_point(|&s| s <= burn_steps);
    let burn_in_steps = if from == 0 { 0 } else { stored[from - 1] };
    let kept_steps = steps - burn_in_steps;
    let draws = ((n - from) * walkers * history.len()) as f64;
    let mut parameters: Vec<ParameterDiagnostics> = (0..dim)
        .map(|p| {
            let tau = tau_of(from, p);
            ParameterDiagnostics {
                name: names.get(p).cloned().unwrap_or_else(|| format!("x{p}")),
                tau_steps: tau,
                rhat: f64::NAN,
                ess: (draws * thin as f64 / tau).min(draws),
            }
        })
        .collect();
    let tau_max = parameters.iter().map(|d| d.tau_steps).fold(0.0, f64::max);
    let tau_multiple = kept_steps as f64 / tau_max;
    if final_check || tau_multiple >= settings.min_tau_multiple {
        for (p, d) in parameters.iter_mut().enumerate() {
            let per_ensemble: Vec<Vec<f64>> = history
                .iter()
                .map(|h| {
                    (from..n)
                        .flat_map(|s| (0..walkers).map(move |w| (s, w)))
                        .map(|(s, w)| h.positions[(s * walkers + w) * dim + p])
                        .collect()
                })
                .collect();
            d.rhat = rank_normalised_rhat(&per_ensemble);
        }
    }
    let max_rhat = parameters.iter().map(|d| d.rhat).fold(f64::NAN, f64::max);
    let min_ess = parameters
        .iter()
        .map(|d| d.ess)
        .fold(f64::INFINITY, f64::min);
    let converged = tau_multiple.is_finite()
        && tau_multiple >= settings.min_tau_multiple
        && max_rhat < settings.max_rhat;
    Diagnostics {
        converged,
        reason: String::new(),
        steps,
        burn_in_steps,
        ensembles: history.len(),
        walkers,
        acceptance: 0.0,
        tau_multiple,
        min_tau_multiple: settings.min_tau_multiple,
        max_rhat,
        rhat_bound: settings.max_rhat,
        min_ess,
        parameters,
    }
}

/// The kept draws after burn-in, evenly thinned to at most `max_draws`.
fn collect(
    history: &[History],
    stored: &[usize],
    walkers: usize,
    dim: usize,
    max_draws: usize,
    diagnostics: Diagnostics,
) -> Chains {
    let from = stored.partition_point(|&s| s <= diagnostics.burn_in_steps);
    let per_step = walkers * history.len();
    let kept = stored.len() - from;
    let most_steps = (max_draws / per_step).max(1);
    let every = kept.div_ceil(most_steps).max(1);
    let mut out = Chains {
        positions: Vec::new(),
        ln_p: Vec::new(),
        ensemble: Vec::new(),
        walker: Vec::new(),
        step: Vec::new(),
        diagnostics,
    };
    for s in (from..stored.len()).step_by(every) {
        for (e, h) in history.iter().enumerate() {
            for w in 0..walkers {
                let at = s * walkers + w;
                out.positions
                    .push(h.positions[at * dim..(at + 1) * dim].to_vec());
                out.ln_p.push(h.ln_p[at]);
                out.ensemble.push(e as u32);
                out.walker.push(w as u32);
                out.step.push(stored[s] as u32);
            }
        }
    }
    out
}
