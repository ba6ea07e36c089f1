//! Model variants: the same data refitted under each reasonable alternative model, and a
//! time-split cross-validation of the number of signals.
//!
//! Variants: the other orbit shape (circular ↔ eccentric); one jitter shared by all
//! instruments; each other trend order (0, 1, 2); without each other signal; with one more
//! signal (the strongest residual periodogram peak); a linear term in each activity
//! indicator (centred per instrument); a signal at the stellar rotation period when it is
//! known; the stellar-activity GP switched off when the baseline has one, or a
//! quasi-periodic GP ([`crate::gp::Activity::QuasiPeriodic`]) added when it has none and
//! the rotation period is known; and, for two signals near a 2:1 period ratio, one eccentric planet at the outer
//! period instead (the degeneracy of Anglada-Escudé, López-Morales & Chambers 2010, ApJ
//! 709, 168); and, under a Gaussian likelihood without an activity GP, a Student-t likelihood (on the points
//! before outlier clipping when points were clipped: the comparison of clipping with
//! down-weighting; a variant fitted to other points is never marked competitive, as its
//! BIC is not comparable). All are maximum-likelihood refits started from the baseline.
//!
//! Cross-validation: the data, in time order, are cut into contiguous blocks; each block
//! in turn is predicted by the model fitted to the others, and the log predictive density
//! `Σ ln N(y | model, σ² + s²)` of the held-out points is summed (points of an instrument
//! absent from the training part are skipped); with an activity GP the model adds the
//! GP's conditional mean at each held-out point given the training residuals and the
//! variance its conditional variance (Rasmussen & Williams 2006, eqs. 2.25–2.26). One fewer, the same and one more signal are
//! compared; the standard error of a difference is `sqrt(n Var(Δ_i))` over the held-out
//! points (as for the leave-one-out comparison of Vehtari, Gelman & Gabry 2017, Stat.
//! Comput. 27, 1413). Unlike BIC it rests on out-of-sample prediction, not on a
//! parameter-count penalty.

use rayon::prelude::*;
use serde::Serialize;

use super::PlanetValues;
use super::common::{Refitter, centred_indicators};
use crate::data::RvSet;
use crate::fit::{Fit, FitOptions, PlanetSpec, fit, next_label};
use crate::gp::{Activity, rotation_prior};
use crate::model::{Noise, point_log_likelihood};
use crate::periodogram::sinusoid_at;
use crate::prep::OutlierPolicy;
use crate::sample::{self, PriorSet};
use crate::summary::Summary;
use crate::target::OrbitShape;

/// Period ratio range around 2 that counts as "near 2:1".
const NEAR_TWO_TO_ONE: (f64, f64) = (1.9, 2.1);

/// One model variant as seen by one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Variant {
    /// What changed, in words (`baseline` for the fit under audit).
    pub name: String,
    /// Free parameters.
    pub n_params: usize,
    /// ln L at the optimum.
    pub log_likelihood: f64,
    /// Akaike information criterion.
    pub aic: f64,
    /// Bayesian information criterion.
    pub bic: f64,
    /// BIC − BIC(baseline).
    pub delta_bic: f64,
    /// Within the competitive ΔBIC of the best variant.
    pub competitive: bool,
    /// The planet under this variant (absent when the variant drops it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub planet: Option<PlanetValues>,
    /// (K − K_baseline)/σ, σ the larger of the two K errors (a change is significant
    /// only against the less precise of the two estimates).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub k_shift_sigma: Option<f64>,
    /// The planet under this variant's posterior, when sampling was requested.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub posterior: Option<PosteriorValues>,
}

/// A planet's K and mass from the posterior of one variant.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PosteriorValues {
    /// Semi-amplitude (median, 15.87/84.13 percentiles), m/s.
    pub k_mps: Summary,
    /// Mass (true mass with a known inclination, else m sin i), Earth masses.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_mearth: Option<Summary>,
    /// Whether the sampler met its convergence rule.
    pub converged: bool,
}

/// Samples the posterior of `fit` (default priors over the search range) and summarises
/// each base planet in it (same order as the base; `None` where the variant has no such
/// planet); all `None` when sampling fails.
fn posterior_values(refit: &Refitter, data: &RvSet, fit: &Fit) -> Vec<Option<PosteriorValues>> {
    let n = refit.base.planets.len();
    let Some(settings) = &refit.settings.sampler else {
        return vec![None; n];
    };
    let range = (1.0 / refit.grid.fmax(), 1.0 / refit.grid.fmin);
    let priors = PriorSet::defaults(data, fit, range);
    // Aliases are the alias test's question: each variant samples its own mode.
    let settings = &sample::SamplerSettings {
        period_modes: false,
        ..*settings
    };
    let Ok(post) = sample::sample(data, fit, priors, settings, refit.n_draws(), &mut |_| {}) else {
        return vec![None; n];
    };
    let converged = post.chains.diagnostics.converged;
    (0..n)
        .map(|i| {
            let label = &refit.base.planets[i].label;
            let idx = post.planets.iter().position(|p| &p.label == label)?;
            let mass = refit
                .derive_orbit(&post.orbit_draws(idx), i)
                .map(|d| d.mass_mearth.unwrap_or(d.msini_mearth));
            Some(PosteriorValues {
                k_mps: post.planets[idx].k_mps,
                mass_mearth: mass,
                converged,
            })
        })
        .collect()
}

/// Log predictive density of one model in the cross-validation.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CvScore {
    /// Number of signals.
    pub signals: usize,
    /// Which signal was dropped or added, if any.
    pub change: String,
    /// Summed log predictive density of the held-out points.
    pub log_predictive: f64,
    /// Difference to the baseline's.
    pub delta: f64,
    /// Standard error of that difference.
    pub delta_se: f64,
}

/// Time-split cross-validation of the number of signals.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CrossValidation {
    /// Contiguous time blocks.
    pub folds: usize,
    /// Held-out points scored (the same for every model).
    pub points: usize,
    /// One score per model.
    pub scores: Vec<CvScore>,
    /// Number of signals with the best predictive density.
    pub preferred_signals: usize,
    /// The preferred model beats the baseline by more than two standard errors.
    pub significant: bool,
}

/// A variant fit before it is seen per planet.
struct Refit {
    name: String,
    data: RvSet,
    fit: Fit,
}

/// The model variants of the whole system, tabulated for each base planet (same order);
/// `more` is the fit with one more signal ([`fit_one_more`]).
pub fn variants(refit: &Refitter, more: Option<&Fit>) -> Vec<Vec<Variant>> {
    let base = &refit.base;
    let opts = refit.options();
    let specs = refit.specs();
    let set = refit.set;
    let mut jobs: Vec<(String, RvSet, Vec<PlanetSpec>, FitOptions)> = Vec::new();
    let with = |f: &dyn Fn(&mut FitOptions)| {
        let mut o = opts.clone();
        f(&mut o);
        o
    };
    let (shape, shape_name) = match opts.shape {
        OrbitShape::Eccentric => (OrbitShape::Circular, "circular orbits"),
        OrbitShape::Circular => (OrbitShape::Eccentric, "eccentric orbits"),
    };
    jobs.push((
        shape_name.into(),
        set.clone(),
        specs.clone(),
        with(&|o| o.shape = shape),
    ));
    if set.n_instruments() > 1 && !opts.shared_jitter {
        jobs.push((
            "one jitter for all instruments".into(),
            set.clone(),
            specs.clone(),
            with(&|o| o.shared_jitter = true),
        ));
    }
    for t in (0..=2).filter(|&t| t != opts.trend) {
        let name = ["no trend", "linear trend", "quadratic trend"][t];
        jobs.push((
            name.into(),
            set.clone(),
            specs.clone(),
            with(&|o| o.trend = t),
        ));
    }
    for (j, s) in specs.iter().enumerate() {
        let mut fewer = specs.clone();
        fewer.remove(j);
        jobs.push((
            format!("without {}", s.label),
            set.clone(),
            fewer,
            opts.clone(),
        ));
    }
    if !set.indicators.is_empty() && opts.regressors == 0 {
        let names: Vec<&str> = set.indicators.iter().map(|i| i.name.as_str()).collect();
        jobs.push((
            format!("linear in {}", names.join(", ")),
            centred_indicators(set),
            specs.clone(),
            with(&|o| o.regressors = set.indicators.len()),
        ));
    }
    // (An activity GP's likelihood is Gaussian by construction.)
    if opts.noise == Noise::Gaussian && opts.activity == Activity::None {
        let dof = OutlierPolicy::default().dof;
        let (name, data) = match &refit.before_clipping {
            Some(all) => (
                format!("Student-t likelihood (ν = {dof}), clipped outliers kept"),
                all.clone(),
            ),
            None => (format!("Student-t likelihood (ν = {dof})"), set.clone()),
        };
        jobs.push((
            name,
            data,
            specs.clone(),
            with(&|o| o.noise = Noise::StudentT { dof }),
        ));
    }
    if let Some((p_rot, p_err)) = refit.settings.rotation_d
        && let Some(spec) = rotation_spec(refit, p_rot, p_err)
    {
        let mut extra = specs.clone();
        extra.push(spec);
        jobs.push((
            format!("with a rotation signal ({p_rot} d)"),
            set.clone(),
            extra,
            opts.clone(),
        ));
    }
    if opts.activity != Activity::None {
        jobs.push((
            "without the activity model".into(),
            set.clone(),
            specs.clone(),
            with(&|o| o.activity = Activity::None),
        ));
    } else if let Some((p_rot, p_err)) = refit.settings.rotation_d {
        jobs.push((
            format!("with a quasi-periodic activity model ({p_rot} d)"),
            set.clone(),
            specs.clone(),
            with(&|o| {
                o.activity = Activity::QuasiPeriodic;
                o.rotation_d = Some(rotation_prior(p_rot, p_err));
            }),
        ));
    }
    for (inner, outer) in near_two_to_one(&specs) {
        let mut single = specs.clone();
        single.remove(inner);
        jobs.push((
            format!(
                "one eccentric planet for {} and {} (2:1)",
                specs[inner].label, specs[outer].label
            ),
            set.clone(),
            single,
            with(&|o| o.shape = OrbitShape::Eccentric),
        ));
    }
    let fits: Vec<Refit> = jobs
        .into_par_iter()
        .filter_map(|(name, data, planets, o)| {
            fit(&data, &planets, &o)
                .ok()
                .map(|fit| Refit { name, data, fit })
        })
        .collect();
    let more_name = more
        .and_then(|f| f.planets.last())
        .map(|p| format!("one more signal ({:.4} d)", p.period_d.value));
    let all: Vec<(&str, &RvSet, &Fit)> = std::iter::once(("baseline", refit.set, base))
        .chain(fits.iter().map(|r| (r.name.as_str(), &r.data, &r.fit)))
        .chain(
            more_name
                .as_deref()
                .zip(more)
                .map(|(name, f)| (name, refit.set, f)),
        )
        .collect();
    // Sampled one after the other: each sampler uses every thread.
    let posteriors: Vec<Vec<Option<PosteriorValues>>> = all
        .iter()
        .map(|(_, data, f)| posterior_values(refit, data, f))
        .collect();
    let best_bic = all
        .iter()
        .filter(|(_, _, f)| f.n_points == base.n_points)
        .map(|(_, _, f)| f.bic())
        .fold(f64::INFINITY, f64::min);
    (0..base.planets.len())
        .map(|i| {
            let k0 = base.planets[i].k_mps;
            all.iter()
                .zip(&posteriors)
                .map(|((name, _, f), post)| {
                    let planet = refit.values(f, i);
                    let k_shift_sigma = planet
                        .as_ref()
                        .map(|p| (p.k_mps.value - k0.value) / k0.plus.max(p.k_mps.plus).max(1e-12));
                    Variant {
                        name: (*name).to_string(),
                        n_params: f.n_params,
                        log_likelihood: f.log_likelihood,
                        aic: f.aic(),
                        bic: f.bic(),
                        delta_bic: f.bic() - base.bic(),
                        // Information criteria compare fits of the same points only.
                        competitive: f.n_points == base.n_points
                            && f.bic() - best_bic <= refit.settings.competitive_delta_bic,
                        planet,
                        k_shift_sigma,
                        posterior: post[i].clone(),
                    }
                })
                .collect()
        })
        .collect()
}

/// The base fit refitted with one more signal, started at the strongest peak of its
/// residual periodogram; `None` when the periodogram, the sinusoid or the fit fails.
pub fn fit_one_more(refit: &Refitter) -> Option<Fit> {
    let specs = one_more(refit)?;
    fit(refit.set, &specs, &refit.options()).ok()
}

/// The base specs plus a signal at the strongest peak of the base fit's residual
/// periodogram; `None` when the periodogram or the sinusoid cannot be computed.
fn one_more(refit: &Refitter) -> Option<Vec<PlanetSpec>> {
    let residual = refit.base.residual_set(refit.set, None);
    let pg = refit.periodogram(&residual).ok()?;
    let peak = pg.peaks(1, 0.0).into_iter().next()?;
    let sine = sinusoid_at(&residual, refit.jitters(), peak.frequency).ok()?;
    let mut specs = refit.specs();
    let label = next_label(&specs);
    specs.push(PlanetSpec::from_sinusoid(&sine, &label));
    Some(specs)
}

/// A start at the rotation period from the base residuals, its period held within the
/// given uncertainty (at least 2 %); `None` when outside the search range.
fn rotation_spec(refit: &Refitter, p_rot: f64, p_err: f64) -> Option<PlanetSpec> {
    let f = 1.0 / p_rot;
    if !(f >= refit.grid.fmin && f <= refit.grid.fmax()) {
        return None;
    }
    let residual = refit.base.residual_set(refit.set, None);
    let sine = sinusoid_at(&residual, refit.jitters(), f).ok()?;
    let mut spec = PlanetSpec::from_sinusoid(&sine, "rotation");
    spec.period_prior = Some((p_rot, p_err.max(0.02 * p_rot)));
    Some(spec)
}

/// Pairs `(inner, outer)` of planets whose period ratio is near 2.
fn near_two_to_one(specs: &[PlanetSpec]) -> Vec<(usize, usize)> {
    let mut pairs = Vec::new();
    for (a, sa) in specs.iter().enumerate() {
        for (b, sb) in specs.iter().enumerate() {
            let ratio = sb.period_d / sa.period_d;
            if ratio > NEAR_TWO_TO_ONE.0 && ratio < NEAR_TWO_TO_ONE.1 {
                pairs.push((a, b));
            }
        }
    }
    pairs
}

/// Cross-validates one fewer, the same, and one more signal (each training fit started
/// from the full-data fit: `more` is [`fit_one_more`]); `None` when there are too few
/// points for the folds.
pub fn cross_validate(refit: &Refitter, more: Option<&Fit>) -> Option<CrossValidation> {
    let set = refit.set;
    let folds = refit.settings.cv_folds.max(2);
    let opts = refit.options();
    let base_specs = refit.specs();
    let n_base = base_specs.len();
    let mut models: Vec<(usize, String, Vec<PlanetSpec>)> = Vec::new();
    if n_base > 0 {
        // The weakest signal: smallest K/σ_K.
        let weakest = (0..n_base)
            .min_by(|&a, &b| {
                let z = |i: usize| {
                    let k = refit.base.planets[i].k_mps;
                    k.value / k.plus.max(1e-12)
                };
                z(a).total_cmp(&z(b))
            })
            .unwrap_or(0);
        let mut fewer = base_specs.clone();
        fewer.remove(weakest);
        models.push((
            n_base - 1,
            format!("without {}", base_specs[weakest].label),
            fewer,
        ));
    }
    models.push((n_base, "as fitted".into(), base_specs.clone()));
    if let Some(more) = more {
        let p = more.planets.last().map_or(0.0, |s| s.period_d.value);
        models.push((n_base + 1, format!("plus {p:.4} d"), more.planet_specs()));
    }
    let n = set.len();
    let block = n / folds;
    if block < 2 {
        return None;
    }
    // Per model, per held-out point: log predictive density (NaN where not scored).
    let scored: Vec<Vec<f64>> = models
        .par_iter()
        .map(|(_, _, specs)| {
            let mut lpd = vec![f64::NAN; n];
            for f in 0..folds {
                let lo = f * block;
                let hi = if f + 1 == folds { n } else { lo + block };
                let train: Vec<usize> = (0..n).filter(|&j| j < lo || j >= hi).collect();
                let train_set = set.select(&train);
                let Ok(model) = fit(&train_set, specs, &opts) else {
                    continue;
                };
                let p = &model.params;
                // With an activity GP, each held-out point's prediction adds the GP's
                // conditional mean and variance given the training residuals.
                let activity = model.activity_prediction(&train_set, &set.time_d[lo..hi]);
                for (j, out) in lpd.iter_mut().enumerate().take(hi).skip(lo) {
                    let k = set.instrument[j];
                    if !train_set.instrument.contains(&k) {
                        continue;
                    }
                    let t = set.time_d[j];
                    let scale = model.activity_scale(k);
                    let (gp_mean, gp_var) = activity.as_ref().map_or((0.0, 0.0), |(m, v)| {
                        (scale * m[j - lo], scale * scale * v[j - lo].max(0.0))
                    });
                    let mean = p.planets_rv(t)
                        + p.offsets_mps[k]
                        + p.trend_rv(t)
                        + p.regressors_rv(set, j)
                        + gp_mean;
                    let spread = p.jitters_mps[k].hypot(gp_var.sqrt());
                    *out = point_log_likelihood(set.rv_mps[j] - mean, set.err_mps[j], spread);
                }
            }
            lpd
        })
        .collect();
    let common: Vec<usize> = (0..n)
        .filter(|&j| scored.iter().all(|m| m[j].is_finite()))
        .collect();
    if common.is_empty() {
        return None;
    }
    let base_idx = models.iter().position(|m| m.0 == n_base)?;
    let total = |m: usize| common.iter().map(|&j| scored[m][j]).sum::<f64>();
    let scores: Vec<CvScore> = models
        .iter()
        .enumerate()
        .map(|(m, (signals, change, _))| {
            let diffs: Vec<f64> = common
                .iter()
                .map(|&j| scored[m][j] - scored[base_idx][j])
                .collect();
            let mean = diffs.iter().sum::<f64>() / diffs.len() as f64;
            let var = diffs.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / diffs.len() as f64;
            CvScore {
                signals: *signals,
                change: change.clone(),
                log_predictive: total(m),
                delta: total(m) - total(base_idx),
                delta_se: (diffs.len() as f64 * var).sqrt(),
            }
        })
        .collect();
    let best = scores
        .iter()
        .max_by(|a, b| a.log_predictive.total_cmp(&b.log_predictive))?;
    Some(CrossValidation {
        folds,
        points: common.len(),
        preferred_signals: best.signals,
        significant: best.signals != n_base && best.delta > 2.0 * best.delta_se,
        scores,
    })
}
