//! Posterior sampling: the affine-invariant ensemble sampler ([`ensemble`]), its
//! convergence diagnostics ([`diagnostics`]), the run-until-converged loop ([`chains`]),
//! priors ([`prior`]) and the RV log-posterior ([`posterior`]).
//!
//! Entry point: [`sample`] takes a maximum-likelihood [`Fit`] and returns a
//! [`Posterior`] with draws, summaries and diagnostics.
//!
//! # Modes
//! The stretch move does not cross between well-separated modes (period aliases), so
//! each period mode worth keeping gets ensembles of its own ([`modes`]): the
//! maximum-likelihood fit's mode and every alias of a planet's period whose refit is
//! within [`modes::MODE_DELTA_LNL`] in ln L, each confined to its own period window and
//! weighted by its evidence. The values and draws are those of the most probable mode;
//! all modes are listed with their weights ([`Posterior::modes`]). In each mode
//! [`SamplerSettings::ensembles`] independent ensembles (2 by default) start from draws
//! of the mode's curvature Gaussian, and R̂ compares them.

pub mod chains;
pub mod diagnostics;
pub mod ensemble;
pub mod modes;
pub mod posterior;
pub mod prior;

pub use chains::{Chains, Diagnostics, ParameterDiagnostics, Progress, SamplerSettings};
pub use modes::{Mode, ModePlanet};
pub use posterior::{LogPosterior, PriorEntry, PriorSet};
pub use prior::{Prior, PriorError};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

use crate::data::RvSet;
use crate::derive::OrbitDraws;
use crate::fit::{Fit, InstrumentEstimate, Layout, PlanetEstimate, Role};
use crate::orbit::periastron_from_conjunction;
use crate::summary::Summary;

/// K / σ_K below which a signal counts as not significantly detected and its upper limits
/// are the numbers to quote (common practice: a 3σ detection threshold).
pub const DETECTION_K_SIGMA: f64 = 3.0;

/// Why sampling could not be done.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum SampleError {
    /// A prior does not fit the model or the data.
    #[error("prior: {0}")]
    Prior(String),
    /// No starting walker had a finite posterior.
    #[error(
        "no starting point near the best fit has a finite posterior density; check that the priors contain the best fit ({0})"
    )]
    NoValidStart(String),
}

/// Posterior draws of a model and their summaries.
#[derive(Clone, Debug)]
pub struct Posterior {
    /// The fit's parameter layout (draws are θ in this layout).
    pub layout: Layout,
    /// Draws of θ (fit parametrisation: e cos ω, e sin ω, jitter in m/s).
    pub theta: Vec<Vec<f64>>,
    /// Ensemble, walker, step and log-posterior of each draw.
    pub chains: Chains,
    /// Priors used.
    pub priors: PriorSet,
    /// Planets summarised from the draws (median, 15.87/84.13 percentiles).
    pub planets: Vec<PlanetEstimate>,
    /// Per-planet detection figures, same order.
    pub detections: Vec<Detection>,
    /// Instruments summarised from the draws.
    pub instruments: Vec<InstrumentEstimate>,
    /// Trend coefficients summarised from the draws, m/s/yr^k.
    pub trend: Vec<Summary>,
    /// Activity hyperparameters by key, physical units, summarised from the draws.
    pub activity: Vec<(String, Summary)>,
    /// Reference epoch of the data (full BJD_TDB).
    pub epoch_bjd: f64,
    /// Warnings (e.g. priors not used).
    pub warnings: Vec<String>,
    /// Every period mode sampled, with its weight (one entry, weight 1, when no alias
    /// was kept; empty when period modes are switched off).
    pub modes: Vec<Mode>,
}

/// Whether a planet's semi-amplitude is significantly away from zero in its posterior.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Detection {
    /// Posterior median of K over its 1σ width (mean of minus and plus).
    pub k_over_sigma: f64,
    /// K/σ_K < 3: quote the upper limits (`upper95`, `upper99`) of K and the mass.
    pub quote_upper_limits: bool,
}

/// Samples the posterior of the model of `fit` on `set` with the given priors until the
/// convergence rule of `settings` is met (or the step limit is reached: the
/// diagnostics then say so), in every period mode worth keeping when
/// `settings.period_modes` (module docs). At most `max_draws` draws are kept per mode.
///
/// # Errors
/// [`SampleError::NoValidStart`] when no starting walker of the maximum-likelihood mode
/// has a finite posterior.
pub fn sample(
    set: &RvSet,
    fit: &Fit,
    priors: PriorSet,
    settings: &SamplerSettings,
    max_draws: usize,
    progress: &mut dyn FnMut(&Progress),
) -> Result<Posterior, SampleError> {
    let starts = if settings.period_modes {
        modes::starts(set, fit, &priors)
    } else {
        vec![modes::ModeStart {
            planet: None,
            relation: "maximum likelihood".into(),
            fit: fit.clone(),
            windows: Vec::new(),
        }]
    };
    // Per mode sampled: its posterior, ln evidence with its error, and its start.
    let mut runs: Vec<SampledMode> = Vec::new();
    let mut warnings = Vec::new();
    for (m, start) in starts.iter().enumerate() {
        let mode_priors = match start.planet {
            Some(i) => {
                let [p, _, _, _, tc] = start.fit.layout.planet_elements(&start.fit.theta, i);
                priors.with_conjunction_window(&start.fit.layout, i, tc, p)
            }
            None => priors.clone(),
        };
        let mode_settings = SamplerSettings {
            seed: settings.seed.wrapping_add((m as u64) << 32),
            ..*settings
        };
        let post =
            LogPosterior::new(set, &start.fit.layout, &mode_priors).within(start.windows.clone());
        let run = sample_mode(&start.fit, &post, &mode_settings, max_draws, progress);
        let posterior = match run {
            Ok(p) => p,
            Err(e) if m == 0 => return Err(e),
            Err(e) => {
                warnings.push(format!("period mode {} not sampled: {e}", start.relation));
                continue;
            }
        };
        let ln_z = (starts.len() > 1)
            .then(|| {
                let ln_p = |psi: &[f64]| post.ln_posterior(psi);
                modes::ln_evidence(&ln_p, &posterior.chains.positions, mode_settings.seed)
            })
            .flatten();
        if starts.len() > 1 && ln_z.is_none() {
            warnings.push(format!(
                "the evidence of period mode {} could not be estimated: weight 0",
                start.relation
            ));
        }
        runs.push((posterior, ln_z, start));
    }
    let weights = if runs.len() > 1 {
        modes::weights(&runs.iter().map(|r| r.1.map(|z| z.0)).collect::<Vec<_>>())
    } else {
        vec![1.0]
    };
    let mode_list: Vec<Mode> = runs
        .iter()
        .zip(&weights)
        .map(|((p, ln_z, start), &weight)| Mode {
            planet: start.planet.map(|i| fit.planets[i].label.clone()),
            relation: start.relation.clone(),
            planets: p
                .planets
                .iter()
                .map(|e| ModePlanet {
                    label: e.label.clone(),
                    period_d: e.period_d,
                    k_mps: e.k_mps,
                })
                .collect(),
            log_likelihood: start.fit.log_likelihood,
            ln_evidence: ln_z.map_or(f64::NAN, |z| z.0),
            ln_evidence_err: ln_z.map_or(f64::NAN, |z| z.1),
            weight,
            converged: p.chains.diagnostics.converged,
        })
        .collect();
    let best = (0..runs.len())
        .max_by(|&a, &b| weights[a].total_cmp(&weights[b]).then(b.cmp(&a)))
        .expect("the maximum-likelihood mode was sampled");
    let (mut posterior, _, start) = runs.swap_remove(best);
    if start.planet.is_some() {
        warnings.push(format!(
            "the most probable period mode ({}, weight {:.3}) is not the maximum-likelihood fit's: values are from its draws",
            start.relation, weights[best]
        ));
    } else if weights[best] < 0.99 {
        warnings.push(format!(
            "the period is multimodal: the values are from the maximum-likelihood mode, which holds {:.3} of the posterior (see posterior.modes)",
            weights[best]
        ));
    }
    posterior.warnings.extend(warnings);
    if settings.period_modes {
        posterior.modes = mode_list;
    }
    Ok(posterior)
}

/// A sampled mode: posterior, ln evidence and its standard error, and the start.
type SampledMode<'a> = (Posterior, Option<(f64, f64)>, &'a modes::ModeStart);

/// Samples one mode: ensembles from `fit`'s curvature Gaussian on `post`.
fn sample_mode(
    fit: &Fit,
    post: &LogPosterior,
    settings: &SamplerSettings,
    max_draws: usize,
    progress: &mut dyn FnMut(&Progress),
) -> Result<Posterior, SampleError> {
    let dim = fit.layout.len();
    let walkers = settings.walkers_for(dim);
    let starts = starting_walkers(fit, post, settings.ensembles.max(2), walkers, settings.seed)?;
    let ln_p = |psi: &[f64]| post.ln_posterior(psi);
    let names = post.names();
    let chains = chains::run(&ln_p, starts, settings, max_draws, progress, &names);
    let theta: Vec<Vec<f64>> = chains.positions.iter().map(|p| post.to_theta(p)).collect();
    let mut posterior = Posterior {
        layout: fit.layout.clone(),
        theta,
        chains,
        priors: post.priors.clone(),
        planets: Vec::new(),
        detections: Vec::new(),
        instruments: Vec::new(),
        trend: Vec::new(),
        activity: Vec::new(),
        epoch_bjd: post.set.epoch_bjd,
        warnings: Vec::new(),
        modes: Vec::new(),
    };
    posterior.summarise(fit);
    Ok(posterior)
}

/// `walkers` starting points per ensemble: draws of the fit's curvature Gaussian (so the
/// ensembles start overdispersed around the optimum) plus a small isotropic spread so that
/// no direction is degenerate, each with a finite posterior.
fn starting_walkers(
    fit: &Fit,
    post: &LogPosterior,
    ensembles: usize,
    walkers: usize,
    seed: u64,
) -> Result<Vec<Vec<Vec<f64>>>, SampleError> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(u64::MAX);
    let roles = fit.layout.roles();
    let spread: Vec<f64> = fit
        .layout
        .scales(post.set)
        .iter()
        .zip(&roles)
        .map(|(s, r)| match r {
            Role::ECosW(_)
            | Role::ESinW(_)
            | Role::Jitter(_)
            | Role::Activity(_)
            | Role::ActivityScale(_) => 1e-2,
            _ => 1e-2 * s,
        })
        .collect();
    let mut out = Vec::with_capacity(ensembles);
    for _ in 0..ensembles {
        let mut ens = Vec::with_capacity(walkers);
        for _ in 0..50 {
            for theta in fit.theta_draws(4 * walkers, &mut rng) {
                let mut psi = post.from_theta(&theta);
                for (x, s) in psi.iter_mut().zip(&spread) {
                    *x += s * rng.sample::<f64, _>(StandardNormal);
                }
                if ens.len() < walkers && post.ln_posterior(&psi).is_finite() {
                    ens.push(psi);
                }
            }
            if ens.len() == walkers {
                break;
            }
        }
        if ens.len() < walkers {
            let outside = post.outside_priors(&post.from_theta(&fit.theta));
            return Err(SampleError::NoValidStart(if outside.is_empty() {
                "the best fit itself is inside every prior".into()
            } else {
                format!(
                    "the best fit is outside the priors of {}",
                    outside.join(", ")
                )
            }));
        }
        out.push(ens);
    }
    Ok(out)
}

impl Posterior {
    /// Draws of planet `i`'s `[P, K, e cos ω, e sin ω, Tc]`.
    fn elements(&self, i: usize) -> Vec<[f64; 5]> {
        self.theta
            .iter()
            .map(|t| self.layout.planet_elements(t, i))
            .collect()
    }

    /// Draws of planet `i`'s period, K and e, for the derivation stage.
    pub fn orbit_draws(&self, i: usize) -> OrbitDraws {
        let el = self.elements(i);
        OrbitDraws {
            period_d: el.iter().map(|x| x[0]).collect(),
            k_mps: el.iter().map(|x| x[1]).collect(),
            ecc: el.iter().map(|x| x[2].hypot(x[3])).collect(),
        }
    }

    /// Physical columns of the draws: per planet period, K, e, ω [deg], Tc [BJD_TDB];
    /// offsets, jitters, trend. Names follow the results keys.
    pub fn columns(&self, instruments: &[String]) -> Vec<(String, Vec<f64>)> {
        let mut cols = Vec::new();
        for (i, spec) in self.layout.planets.iter().enumerate() {
            let el = self.elements(i);
            let l = &spec.label;
            cols.push((format!("{l}.period_d"), el.iter().map(|x| x[0]).collect()));
            cols.push((format!("{l}.k_mps"), el.iter().map(|x| x[1]).collect()));
            cols.push((
                format!("{l}.ecc"),
                el.iter().map(|x| x[2].hypot(x[3])).collect(),
            ));
            cols.push((
                format!("{l}.omega_deg"),
                el.iter()
                    .map(|x| x[3].atan2(x[2]).to_degrees().rem_euclid(360.0))
                    .collect(),
            ));
            cols.push((
                format!("{l}.tc_bjd"),
                el.iter().map(|x| x[4] + self.epoch_bjd).collect(),
            ));
        }
        let noise: Vec<(Vec<f64>, Vec<f64>, Vec<f64>)> = self
            .theta
            .iter()
            .map(|t| self.layout.noise_and_trend(t))
            .collect();
        for (k, name) in instruments.iter().enumerate() {
            cols.push((
                format!("offset_mps.{name}"),
                noise.iter().map(|n| n.0[k]).collect(),
            ));
            cols.push((
                format!("jitter_mps.{name}"),
                noise.iter().map(|n| n.1[k]).collect(),
            ));
        }
        for p in 0..self.layout.trend {
            cols.push((
                format!("trend_mps_per_yr{}", p + 1),
                noise.iter().map(|n| n.2[p]).collect(),
            ));
        }
        cols.extend(self.activity_draws(instruments));
        cols
    }

    /// Draws of each activity hyperparameter, physical units, named `activity.KEY`, then
    /// of each entry of the joint model's block ([`crate::fit::JointLayout::canonical`]
    /// sign), named `activity.NAME`, then of each instrument's activity amplitude factor
    /// (`activity.scale.INSTRUMENT`, instruments `instruments`).
    fn activity_draws(&self, instruments: &[String]) -> Vec<(String, Vec<f64>)> {
        let layout = &self.layout;
        let values: Vec<Vec<f64>> = self
            .theta
            .iter()
            .map(|t| {
                let mut v = layout.activity_values(t);
                if let Some(joint) = &layout.joint {
                    let mut block = layout.joint_block(t).to_vec();
                    joint.canonical(&mut block);
                    v.extend(block);
                }
                v.extend(layout.activity_scales(t).into_iter().skip(1));
                v
            })
            .collect();
        let joint_names = layout.joint.iter().flat_map(|b| b.names.iter().cloned());
        layout
            .activity_keys()
            .iter()
            .map(|k| k.to_string())
            .chain(joint_names)
            .chain(layout.activity_scale_keys(instruments))
            .enumerate()
            .map(|(q, key)| {
                (
                    format!("activity.{key}"),
                    values.iter().map(|v| v[q]).collect(),
                )
            })
            .collect()
    }

    /// Fills the summaries from the draws.
    fn summarise(&mut self, fit: &Fit) {
        let epoch = self.epoch_bjd;
        let summary = |v: &[f64]| Summary::from_draws(v).unwrap_or(Summary::exact(f64::NAN));
        let mut planets = Vec::new();
        let mut detections = Vec::new();
        for i in 0..self.layout.planets.len() {
            let el = self.elements(i);
            let col = |f: &dyn Fn(&[f64; 5]) -> f64| -> Vec<f64> { el.iter().map(f).collect() };
            let period = if self.layout.planets[i].fix_period {
                Summary::exact(self.layout.planets[i].period_d)
            } else {
                summary(&col(&|x| x[0]))
            };
            let k = col(&|x| x[1]);
            let mut k_sum = summary(&k);
            let sigma = 0.5 * (k_sum.minus + k_sum.plus);
            let k_over_sigma = if sigma > 0.0 {
                k_sum.value / sigma
            } else {
                f64::INFINITY
            };
            let quote_upper_limits = k_over_sigma < DETECTION_K_SIGMA;
            if quote_upper_limits {
                k_sum = k_sum.with_upper_limits(&k);
            }
            let tp = col(&|x| {
                let e = x[2].hypot(x[3]);
                periastron_from_conjunction(x[0], e, x[3].atan2(x[2]), x[4]) + epoch
            });
            planets.push(PlanetEstimate {
                label: self.layout.planets[i].label.clone(),
                period_d: period,
                k_mps: k_sum,
                ecc: summary(&col(&|x| x[2].hypot(x[3]))),
                omega_deg: Summary::from_angle_draws_deg(&col(&|x| x[3].atan2(x[2])))
                    .unwrap_or(Summary::exact(f64::NAN)),
                tc_d: summary(&col(&|x| x[4] + epoch)),
                tp_d: summary(&tp),
            });
            detections.push(Detection {
                k_over_sigma,
                quote_upper_limits,
            });
        }
        let noise: Vec<(Vec<f64>, Vec<f64>, Vec<f64>)> = self
            .theta
            .iter()
            .map(|t| self.layout.noise_and_trend(t))
            .collect();
        self.instruments = fit
            .instruments
            .iter()
            .enumerate()
            .map(|(k, inst)| InstrumentEstimate {
                offset_mps: summary(&noise.iter().map(|n| n.0[k]).collect::<Vec<_>>()),
                jitter_mps: summary(&noise.iter().map(|n| n.1[k]).collect::<Vec<_>>()),
                ..inst.clone()
            })
            .collect();
        self.trend = (0..self.layout.trend)
            .map(|p| summary(&noise.iter().map(|n| n.2[p]).collect::<Vec<_>>()))
            .collect();
        let names: Vec<String> = fit.instruments.iter().map(|i| i.name.clone()).collect();
        self.activity = self
            .activity_draws(&names)
            .into_iter()
            .map(|(name, draws)| {
                let key = name.trim_start_matches("activity.").to_string();
                (key, summary(&draws))
            })
            .collect();
        self.planets = planets;
        self.detections = detections;
    }
}
