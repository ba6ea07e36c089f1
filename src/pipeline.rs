//! Runs the stages in order for one data set: signal search and joint fit, the
//! significance of each signal, posterior sampling (when asked for), then the derived
//! planet properties from the posterior draws (or from the fit's curvature Gaussian)
//! joined with fresh stellar and transit draws. [`run_target`] does it for a target file,
//! [`analyse`] for data already loaded (the `fit` command).

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use crate::audit::{self, Audit, AuditError, AuditSettings};
use crate::data::{self, DataError, RvSet};
use crate::derive::profile::{DensityProfile, ProfileInputs, ProfileSettings, density_profile};
use crate::derive::system::{
    PairSpacing, TrendCompanion, hill_spacing, secular_acceleration_mps_per_yr, trend_companion,
};
use crate::derive::{self, DeriveError, OrbitDraws, PlanetDerived, StarDraws, TransitDraws};
use crate::fit::{
    self, FitError, FitOptions, PlanetSpec, Search, SearchSettings, SignalCount, SignalTest,
};
use crate::gp::Activity;
use crate::limits::{Budget, BudgetReport};
use crate::model::Noise;
use crate::periodogram::{self, Overview, OverviewSettings, PeriodogramError};
use crate::prep::{self, DataLog, OutlierMode, OutlierPolicy, PrepError};
use crate::sample::{self, Posterior, PriorSet, Progress, SampleError, SamplerSettings};
use crate::summary::Summary;
use crate::target::{IndicatorTerms, PriorChoices, Settings, Star, Target, Transit};

/// Why an analysis stopped.
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// The data could not be read.
    #[error(transparent)]
    Data(#[from] DataError),
    /// The fit or search failed.
    #[error(transparent)]
    Fit(#[from] FitError),
    /// Stellar or transit values could not be turned into draws, or a derivation failed.
    #[error("deriving planet properties: {0}")]
    Derive(#[from] DeriveError),
    /// The periodogram report could not be computed.
    #[error("periodogram report: {0}")]
    Periodogram(#[from] PeriodogramError),
    /// The priors do not fit the model, or sampling could not start.
    #[error("sampling the posterior: {0}")]
    Sample(#[from] SampleError),
    /// The audit could not be made.
    #[error(transparent)]
    Audit(#[from] AuditError),
    /// The data preparation asked for in the target file could not be done.
    #[error(transparent)]
    Prep(#[from] PrepError),
}

/// A constraint or bound the analysis used, recorded in results.json.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Prior {
    /// Parameter, e.g. `b.period_d`.
    pub parameter: String,
    /// `uniform`, `log-uniform`, `gaussian`, `fixed` or `bound`.
    pub kind: &'static str,
    /// Description with values and units.
    pub detail: String,
    /// Where it comes from: `default`, `transit`, `target file`, `request`, `rotation`
    /// (the star's rotation period, for the activity model) or `indicator` (the activity
    /// model trained on an indicator).
    pub source: &'static str,
}

/// What to analyse and how.
#[derive(Clone, Debug)]
pub struct Request<'a> {
    /// Name shown in outputs.
    pub name: String,
    /// The data.
    pub set: RvSet,
    /// Stellar parameters, if known (needed for masses).
    pub star: Option<&'a Star>,
    /// Transit constraints of known planets.
    pub transits: &'a [Transit],
    /// Periods (days) to start from, beside the transits.
    pub periods: Vec<f64>,
    /// Hold the starting periods fixed.
    pub fix_periods: bool,
    /// Search and model settings.
    pub search: SearchSettings,
    /// Seed of every random draw.
    pub seed: u64,
    /// Monte Carlo draws for derived quantities (at most this many posterior draws).
    pub draws: usize,
    /// Sample the posterior with these settings; `None` keeps the curvature errors.
    pub sampler: Option<SamplerSettings>,
    /// Priors chosen by the user (the others keep their defaults).
    pub priors: PriorChoices,
    /// Model choices of the density report.
    pub profile: ProfileSettings,
    /// A previous solution to start the search's fits from (see [`fit::search_warm`]).
    pub warm: Vec<WarmPlanet>,
    /// How outliers are found and treated.
    pub outliers: OutlierPolicy,
    /// What was done to the data before (eras, transit windows, binning); the outlier
    /// step is added by [`analyse`].
    pub log: DataLog,
}

/// A planet of a previous solution, as a results file records it.
#[derive(Clone, Debug, PartialEq)]
pub struct WarmPlanet {
    /// Label.
    pub label: String,
    /// Period, days.
    pub period_d: f64,
    /// Semi-amplitude, m/s.
    pub k_mps: f64,
    /// Eccentricity.
    pub ecc: f64,
    /// Star's argument of periastron, degrees.
    pub omega_deg: f64,
    /// Conjunction time, full BJD_TDB.
    pub tc_bjd: f64,
}

impl WarmPlanet {
    /// The planets of a results document (`planets[]` with `label`, `period_d`, `k_mps`,
    /// `ecc`, `omega_deg`, `tc_d` estimates); planets missing a value are left out.
    pub fn from_results(doc: &serde_json::Value) -> Vec<WarmPlanet> {
        doc["planets"]
            .as_array()
            .into_iter()
            .flatten()
            .filter_map(|p| {
                let v = |k: &str| p[k]["value"].as_f64();
                Some(WarmPlanet {
                    label: p["label"].as_str()?.to_string(),
                    period_d: v("period_d")?,
                    k_mps: v("k_mps")?,
                    ecc: v("ecc")?,
                    omega_deg: v("omega_deg")?,
                    tc_bjd: v("tc_d")?,
                })
            })
            .collect()
    }

    /// A fit start at this solution, times counted from `epoch_bjd`.
    fn spec(&self, epoch_bjd: f64) -> PlanetSpec {
        let w = self.omega_deg.to_radians();
        PlanetSpec {
            period_d: self.period_d,
            fix_period: false,
            k_mps: self.k_mps,
            tc_d: self.tc_bjd - epoch_bjd,
            ecc_vector: (self.ecc * w.cos(), self.ecc * w.sin()),
            period_prior: None,
            tc_prior: None,
            label: self.label.clone(),
        }
    }
}

/// System-level checks (design: one block per system in results.json).
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct SystemReport {
    /// Companion implied by the fitted linear trend.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub trend_companion: Option<TrendCompanion>,
    /// The star's secular acceleration, m/s/yr, when distance and proper motion are given
    /// (already part of any fitted trend).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub secular_acceleration_mps_per_yr: Option<f64>,
    /// Spacing of adjacent planets (by period).
    pub spacings: Vec<PairSpacing>,
}

/// Trend companion, secular acceleration and Hill spacings.
fn system_report(
    fit: &crate::fit::Fit,
    set: &RvSet,
    star: &Star,
    derived: &[Option<PlanetDerived>],
    orbits: &[OrbitDraws],
) -> SystemReport {
    let trend_companion = fit
        .trend
        .first()
        .map(|t| trend_companion(*t, set.baseline_d(), star.mass_msun));
    let secular_acceleration_mps_per_yr = match (star.distance_pc, star.pm_mas_per_yr) {
        (Some(d), Some(pm)) => Some(secular_acceleration_mps_per_yr(d, pm)),
        _ => None,
    };
    let mut order: Vec<usize> = (0..fit.planets.len()).collect();
    order.sort_by(|&a, &b| {
        fit.planets[a]
            .period_d
            .value
            .total_cmp(&fit.planets[b].period_d.value)
    });
    let mut spacings = Vec::new();
    for w in order.windows(2) {
        let (Some(inner), Some(outer)) = (&derived[w[0]], &derived[w[1]]) else {
            continue;
        };
        let (di, dout) = (&inner.draws, &outer.draws);
        let mass = |d: &crate::derive::DerivedDraws| {
            d.mass_mearth
                .clone()
                .unwrap_or_else(|| d.msini_mearth.clone())
        };
        let (mi, mo) = (mass(di), mass(dout));
        let n = mi.len().min(mo.len());
        let spacing: Vec<f64> = (0..n)
            .map(|j| hill_spacing(di.a_au[j], dout.a_au[j], mi[j], mo[j], star.mass_msun))
            .collect();
        let (ei, eo) = (&orbits[w[0]].ecc, &orbits[w[1]].ecc);
        let crossing = (0..n)
            .filter(|&j| di.a_au[j] * (1.0 + ei[j]) > dout.a_au[j] * (1.0 - eo[j]))
            .count() as f64
            / n.max(1) as f64;
        spacings.push(PairSpacing {
            pair: (
                fit.planets[w[0]].label.clone(),
                fit.planets[w[1]].label.clone(),
            ),
            hill_spacing: Summary::from_draws(&spacing).unwrap_or(Summary::exact(f64::NAN)),
            p_orbits_cross: crossing,
        });
    }
    SystemReport {
        trend_companion,
        secular_acceleration_mps_per_yr,
        spacings,
    }
}

/// Everything a report needs.
#[derive(Clone, Debug)]
pub struct Analysis {
    /// Name of the system.
    pub name: String,
    /// The data analysed.
    pub set: RvSet,
    /// Search rounds and the final fit.
    pub search: Search,
    /// Derived properties of each fitted planet (same order), when a star was given.
    pub derived: Vec<Option<PlanetDerived>>,
    /// Density report of each planet with a mass and a radius (same order).
    pub profiles: Vec<Option<DensityProfile>>,
    /// System-level checks.
    pub system: SystemReport,
    /// Significance of each fitted planet (same order).
    pub signals: Vec<SignalTest>,
    /// Posterior draws and summaries, when sampled.
    pub posterior: Option<Posterior>,
    /// Constraints, bounds and priors used.
    pub priors: Vec<Prior>,
    /// Seed used.
    pub seed: u64,
    /// Monte Carlo draws used for derived quantities.
    pub draws: usize,
    /// Periodogram report (RV, window, indicators, residuals after each signal); made by
    /// [`run_target`].
    pub periodograms: Option<Overview>,
    /// Audit of every planet; made by [`run_target`] (unless switched off) and `heft audit`.
    pub audit: Option<Audit>,
    /// The run whose solution started the search, when warm-started (set by the caller
    /// that found it; the started signals are in [`Search::warm_started`]).
    pub warm_from: Option<String>,
    /// Everything done to the data between reading and the final fit.
    pub data_log: DataLog,
    /// What the time budget left out, when the run had one (or the sampler's deadline
    /// had passed before sampling).
    pub budget: Option<BudgetReport>,
}

/// Index of the indicator column `name` in `set`.
///
/// # Errors
/// [`FitError::Start`] naming the indicator columns the data have.
pub fn indicator_column(set: &RvSet, name: &str) -> Result<usize, FitError> {
    set.indicators
        .iter()
        .position(|i| i.name == name)
        .ok_or_else(|| {
            let have: Vec<&str> = set.indicators.iter().map(|i| i.name.as_str()).collect();
            FitError::Start(format!(
                "activity indicator `{name}`: no such indicator column in the data (they have: {})",
                if have.is_empty() {
                    "none".to_string()
                } else {
                    have.join(", ")
                }
            ))
        })
}

/// Puts the activity-indicator columns `names` of `set` into `options`: with the joint
/// model, the columns fitted together with the RVs; with any other, the one column the
/// model is trained on first.
///
/// # Errors
/// [`FitError::Start`] for a column the data lack, [`FitError::Options`] for several
/// columns with a model other than the joint one.
pub fn activity_columns(
    options: &mut FitOptions,
    set: &RvSet,
    names: &[String],
) -> Result<(), FitError> {
    let columns = names
        .iter()
        .map(|n| indicator_column(set, n))
        .collect::<Result<Vec<usize>, FitError>>()?;
    if options.activity == Activity::Joint {
        options.joint_indicators = columns;
    } else if let [c] = columns.as_slice() {
        options.activity_indicator = Some(*c);
    } else if !columns.is_empty() {
        return Err(FitError::Options(format!(
            "{} activity-indicator columns given: only the joint activity model takes more than one",
            columns.len()
        )));
    }
    Ok(())
}

/// Search settings from a target file's settings and star (its rotation period centres
/// the activity model's rotation prior).
pub fn search_settings(s: &Settings, star: &Star) -> SearchSettings {
    SearchSettings {
        period_min_d: s.period_min_d,
        period_max_d: s.period_max_d,
        oversample: s.oversample,
        fap_threshold: s.fap_threshold,
        count: SignalCount::UpTo(s.max_signals),
        options: FitOptions {
            shape: s.orbit,
            trend: s.trend,
            activity: s.activity,
            activity_per_instrument: s.activity_per_instrument,
            rotation_d: star
                .rotation_d
                .map(|p| crate::gp::rotation_prior(p, star.rotation_err_d)),
            ..FitOptions::default()
        },
    }
}

/// Audit settings from a target file's settings and star (model variants are sampled too
/// with `audit_posterior`).
pub fn audit_settings(s: &Settings, star: Option<&Star>) -> AuditSettings {
    AuditSettings {
        seed: s.seed,
        fap_threshold: s.fap_threshold,
        rotation_d: star.and_then(|st| st.rotation_d.map(|p| (p, st.rotation_err_d))),
        sampler: s.audit_posterior.then(|| s.sampler()),
        ..AuditSettings::default()
    }
}

/// Density-report settings from a target file's settings.
pub fn profile_settings(s: &Settings) -> ProfileSettings {
    ProfileSettings {
        albedo: s.albedo,
        escape_efficiency: s.escape_efficiency,
        xuv_flux_wm2: s.xuv_flux_wm2,
    }
}

/// Reads the target's data and analyses it with the target's settings; `progress` hears
/// from the sampler.
///
/// # Errors
/// [`PipelineError`] for unreadable or invalid data and failed fits.
pub fn run_target(
    target: &Target,
    progress: &mut dyn FnMut(&Progress),
) -> Result<Analysis, PipelineError> {
    run_target_from(target, &[], progress)
}

/// As [`run_target`], with the search started from a previous solution `warm`.
///
/// # Errors
/// As [`run_target`].
pub fn run_target_from(
    target: &Target,
    warm: &[WarmPlanet],
    progress: &mut dyn FnMut(&Progress),
) -> Result<Analysis, PipelineError> {
    let budget = target.settings.time_budget_s.map(Budget::new);
    let raw = data::load(&target.data)?;
    let preparation = target.preparation();
    let (set, log) = prep::prepare(&raw, &preparation)?;
    prep::check_offset_priors(&set, &target.offset_priors)?;
    let mut search = search_settings(&target.settings, &target.star);
    if let Some(columns) = &target.settings.activity_indicator {
        activity_columns(&mut search.options, &set, &columns.names())?;
    }
    search.options.offset_priors = target.offset_priors.clone();
    if target.settings.indicator_terms != IndicatorTerms::None {
        search.options.regressors = set.indicators.len();
        search.options.regressors_per_instrument =
            target.settings.indicator_terms == IndicatorTerms::PerInstrument;
    }
    let sampler = crate::sample::SamplerSettings {
        deadline: budget.map(|b| b.deadline()),
        ..target.settings.sampler()
    };
    let request = Request {
        name: target.name.clone(),
        set,
        star: Some(&target.star),
        transits: &target.transits,
        periods: Vec::new(),
        fix_periods: false,
        search,
        seed: target.settings.seed,
        draws: target.settings.draws,
        profile: profile_settings(&target.settings),
        sampler: target.settings.sample.then_some(sampler),
        priors: target.priors.clone(),
        warm: warm.to_vec(),
        outliers: target.settings.outlier_policy(),
        log,
    };
    let mut analysis = analyse(request, progress)?;
    if target.settings.bin_compare {
        let unbinned = prep::Preparation {
            bin_window_d: None,
            ..preparation
        };
        let (all, _) = prep::prepare(&raw, &unbinned)?;
        let fit = &analysis.search.fit;
        let other = fit::fit(&all, &fit.planet_specs(), &fit.options)?;
        if let Some(b) = analysis.data_log.binning.as_mut() {
            b.unbinned_fit = Some(prep::Comparison {
                n_points: other.n_points,
                planets: other.planets,
                instruments: other.instruments,
            });
        }
    }
    let mut report = analysis.budget.take().unwrap_or_default();
    // Whether the budget has run out before a stage; if so the stage is skipped.
    let mut out_of_time = |stage: &str| {
        let gone = budget.is_some_and(|b| b.exhausted());
        if gone {
            report.skipped.push(stage.to_string());
        }
        gone
    };
    if !out_of_time("periodogram report") {
        analysis.periodograms = Some(periodogram_report(&analysis, target.star.rotation_d)?);
    }
    if target.settings.audit && !analysis.search.fit.planets.is_empty() && !out_of_time("audit") {
        let ctx = audit::Context {
            star: Some(&target.star),
            transits: &target.transits,
            labels: &[],
        };
        let settings = audit_settings(&target.settings, Some(&target.star));
        analysis.audit = Some(audit::audit(&analysis, &ctx, &settings)?);
    }
    if let Some(b) = budget {
        report.time_budget_s = b.seconds;
        // Unconverged before max_steps: only the deadline stops the sampler there.
        report.sampler_stopped_early = analysis.posterior.as_ref().is_some_and(|p| {
            let d = &p.chains.diagnostics;
            !d.converged && d.steps < sampler.max_steps
        });
        analysis.budget = Some(report);
    }
    Ok(analysis)
}

/// Bootstrap replicates of the run report's false-alarm probabilities.
const REPORT_BOOTSTRAP: usize = 200;

/// The periodogram report on the search grid: the data's periodogram, window and
/// indicators (peaks near the rotation period `rotation_d` flagged), and the residual
/// periodogram after each signal the search fitted.
fn periodogram_report(a: &Analysis, rotation_d: Option<f64>) -> Result<Overview, PeriodogramError> {
    let steps = &a.search.steps;
    let grid = steps[0].periodogram.grid;
    let settings = OverviewSettings {
        method: periodogram::Method::FAST,
        bootstrap: REPORT_BOOTSTRAP,
        seed: a.seed,
        rotation_d,
        ..OverviewSettings::default()
    };
    let mut ov = periodogram::overview(&a.set, &[], &grid, &settings)?;
    // Step i's residuals are after the fit with (final − later accepted steps) signals.
    let accepted = steps.iter().filter(|s| s.accepted).count();
    let known = a.search.fit.planets.len() - accepted;
    for (i, step) in steps.iter().enumerate() {
        let n = known + i;
        if n > 0 {
            let plural = if n == 1 { "" } else { "s" };
            ov.add_residuals(
                &format!("residuals after {n} signal{plural}"),
                &step.periodogram,
            )?;
        }
    }
    Ok(ov)
}

/// Searches, fits, tests each signal, samples (when asked) and derives; `progress` hears
/// from the sampler.
///
/// # Errors
/// [`PipelineError`] for failed fits (too few points, bad starting periods, …), priors
/// that do not fit the model, or failed derivations.
pub fn analyse(
    req: Request,
    progress: &mut dyn FnMut(&Progress),
) -> Result<Analysis, PipelineError> {
    let mut req = req;
    req.search.options.activity_priors = fit::train_activity(&req.set, &req.search.options)?;
    let mut known = Vec::new();
    let set = &req.set;
    let mut priors = Vec::new();
    if req.sampler.is_none() {
        priors.push(Prior {
            parameter: "ecc".into(),
            kind: "bound",
            detail: format!("0 <= e <= {}", req.search.options.max_ecc),
            source: "default",
        });
    }
    for p in &req.search.options.offset_priors {
        priors.push(Prior {
            parameter: format!(
                "offset_mps.{} - offset_mps.{}",
                p.instruments[1], p.instruments[0]
            ),
            kind: "gaussian",
            detail: format!("{} ± {} m/s", p.mean_mps, p.sd_mps),
            source: "target file",
        });
    }
    for t in req.transits {
        let tc_rel = t.tc_bjd - set.epoch_bjd;
        let mut spec = start_at(set, t.period_d, &t.label)?;
        spec.tc_d = tc_rel;
        spec.fix_period = t.period_err_d == 0.0;
        if spec.fix_period {
            priors.push(Prior {
                parameter: format!("{}.period_d", t.label),
                kind: "fixed",
                detail: format!(
                    "{} d (transit period given without uncertainty)",
                    t.period_d
                ),
                source: "transit",
            });
        } else {
            spec.period_prior = Some((t.period_d, t.period_err_d));
            if req.sampler.is_none() {
                priors.push(Prior {
                    parameter: format!("{}.period_d", t.label),
                    kind: "gaussian",
                    detail: format!("{} ± {} d (transits)", t.period_d, t.period_err_d),
                    source: "transit",
                });
            }
        }
        // A conjunction time given without uncertainty is taken as known to 1e-5 d
        // (about a second), far better than any RV data can tell.
        let tc_sd = if t.tc_err_d > 0.0 { t.tc_err_d } else { 1e-5 };
        spec.tc_prior = Some((tc_rel, tc_sd));
        if req.sampler.is_none() {
            priors.push(Prior {
                parameter: format!("{}.tc_d", t.label),
                kind: "gaussian",
                detail: format!("{} ± {} BJD_TDB (transits)", t.tc_bjd, tc_sd),
                source: "transit",
            });
        }
        known.push(spec);
    }
    for &p in &req.periods {
        let mut spec = start_at(set, p, &fit::next_label(&known))?;
        spec.fix_period = req.fix_periods;
        if req.fix_periods {
            priors.push(Prior {
                parameter: format!("{}.period_d", spec.label),
                kind: "fixed",
                detail: format!("{p} d (held fixed on request)"),
                source: "request",
            });
        }
        known.push(spec);
    }
    let warm: Vec<PlanetSpec> = req.warm.iter().map(|w| w.spec(set.epoch_bjd)).collect();
    let (search, set, log) = search_with_outliers(&req, &known, &warm)?;
    let set = &set;
    let signals = fit::signal_tests(set, &search, known.len())?;
    if req.sampler.is_none()
        && let Some(a) = &search.fit.layout.activity
    {
        for (key, (lo, hi)) in a.model.keys().iter().zip(&a.bounds) {
            priors.push(Prior {
                parameter: format!("activity.{key}"),
                kind: "bound",
                detail: format!("{lo} to {hi}"),
                source: "default",
            });
        }
        let (lo, hi) = crate::gp::SCALE_BOUNDS;
        for key in search.fit.layout.activity_scale_keys(&set.instruments) {
            priors.push(Prior {
                parameter: format!("activity.{key}"),
                kind: "bound",
                detail: format!("{lo} to {hi}"),
                source: "default",
            });
        }
        priors.push(Prior {
            parameter: "activity.rotation_d".into(),
            kind: "gaussian",
            detail: format!("{} ± {} d", a.rotation.0, a.rotation.1),
            source: if a.trained.iter().any(Option::is_some) {
                "indicator"
            } else {
                "rotation"
            },
        });
        for (key, p) in a.model.keys().iter().zip(&a.trained) {
            if let Some((m, sd)) = p {
                priors.push(Prior {
                    parameter: format!("activity.{key}"),
                    kind: "gaussian",
                    detail: format!("{m} ± {sd}"),
                    source: "indicator",
                });
            }
        }
    }

    let mut budget = None;
    let posterior = match &req.sampler {
        None => None,
        Some(settings)
            if settings
                .deadline
                .is_some_and(|d| std::time::Instant::now() >= d) =>
        {
            budget = Some(BudgetReport {
                skipped: vec!["posterior".into()],
                ..BudgetReport::default()
            });
            None
        }
        Some(settings) => {
            let fit = &search.fit;
            let range = (
                req.search.period_min_d,
                req.search.period_max_d.unwrap_or(set.baseline_d()),
            );
            let mut prior_set = PriorSet::defaults(set, fit, range);
            let warnings = prior_set.apply(&req.priors, &fit.layout, &set.instruments)?;
            let mut post = sample::sample(set, fit, prior_set, settings, req.draws, progress)?;
            post.warnings.extend(warnings);
            priors.extend(post.priors.entries.iter().flatten().map(|e| Prior {
                parameter: e.parameter.clone(),
                kind: e.prior.kind(),
                detail: e.prior.describe(),
                source: e.source,
            }));
            Some(post)
        }
    };

    let mut rng = ChaCha8Rng::seed_from_u64(req.seed);
    let n_planets = search.fit.planets.len();
    let mut derived = vec![None; n_planets];
    let mut profiles = vec![None; n_planets];
    let mut system = SystemReport::default();
    if let Some(star) = req.star {
        let orbits: Vec<OrbitDraws> = match &posterior {
            Some(post) => (0..n_planets).map(|i| post.orbit_draws(i)).collect(),
            None => search
                .fit
                .element_draws(req.draws, &mut rng)
                .iter()
                .map(|el| OrbitDraws {
                    period_d: el.iter().map(|x| x.0).collect(),
                    k_mps: el.iter().map(|x| x.1).collect(),
                    ecc: el.iter().map(|x| x.2).collect(),
                })
                .collect(),
        };
        let n = orbits.first().map_or(req.draws, |o| o.period_d.len());
        let star_draws = StarDraws::sample(star, n, &mut rng)?;
        for (i, (orbit, planet)) in orbits.iter().zip(&search.fit.planets).enumerate() {
            let transit = req.transits.iter().find(|t| t.label == planet.label);
            let transit_draws = match transit {
                Some(t) => Some(TransitDraws::sample(t, n, &mut rng)?),
                None => None,
            };
            let mut d = derive::derive_planet(orbit, &star_draws, transit_draws.as_ref())?;
            if posterior
                .as_ref()
                .is_some_and(|p| p.detections[i].quote_upper_limits)
            {
                d = d.with_upper_limits();
            }
            if let (Some(t), Some(td)) = (transit, &transit_draws)
                && d.radius_rearth.is_some()
            {
                let inputs = ProfileInputs {
                    planet: &d,
                    orbit,
                    star_draws: &star_draws,
                    transit_draws: td,
                    star,
                    transit: t,
                    settings: req.profile,
                };
                profiles[i] = Some(density_profile(&inputs, &mut rng)?);
            }
            derived[i] = Some(d);
        }
        system = system_report(&search.fit, set, star, &derived, &orbits);
    }
    Ok(Analysis {
        name: req.name,
        set: set.clone(),
        search,
        signals,
        posterior,
        derived,
        profiles,
        system,
        priors,
        seed: req.seed,
        draws: req.draws,
        periodograms: None,
        audit: None,
        warm_from: None,
        data_log: log,
        budget,
    })
}

/// Most fits of the outlier search (each after leaving out the points the previous one
/// flagged).
const MAX_CLIP_ROUNDS: usize = 5;

/// The search, repeated on the data without the points flagged as outliers against the
/// previous fit until none is flagged (mode `clip`); or once, under a Student-t
/// likelihood (`student-t`; its degrees of freedom, when fitted, are the value of
/// [`prep::DOF_GRID`] with the largest likelihood, refitting the first search's planets)
/// or the Gaussian (`keep`), with the flagged points kept.
/// Returns the search, the points it fitted and the data log with the outlier step.
fn search_with_outliers(
    req: &Request,
    known: &[PlanetSpec],
    warm: &[PlanetSpec],
) -> Result<(Search, RvSet, DataLog), PipelineError> {
    let policy = req.outliers;
    if policy.mode == OutlierMode::StudentT && req.search.options.activity != Activity::None {
        return Err(FitError::Options(
            "the Student-t likelihood cannot be combined with an activity GP (whose likelihood is Gaussian): use outliers \"clip\" or \"keep\"".into(),
        )
        .into());
    }
    let mut log = req.log.clone();
    log.n_fitted = req.set.len();
    log.outlier_search = prep::OutlierLog {
        mode: policy.mode,
        threshold_sigma: policy.threshold_sigma,
        dof: (policy.mode == OutlierMode::StudentT).then_some(policy.dof),
        dof_profile: Vec::new(),
        rounds: 0,
    };
    let mut settings = req.search.clone();
    if policy.mode == OutlierMode::StudentT {
        settings.options.noise = Noise::StudentT { dof: policy.dof };
    }
    let mut set = req.set.clone();
    if policy.mode == OutlierMode::StudentT && policy.fit_dof {
        let first = fit::search_warm(&set, known, &settings, warm)?;
        let specs = first.fit.planet_specs();
        let mut profile = Vec::new();
        for dof in prep::DOF_GRID {
            let mut options = settings.options.clone();
            options.noise = Noise::StudentT { dof };
            profile.push([dof, fit::fit(&set, &specs, &options)?.log_likelihood]);
        }
        let best = profile
            .iter()
            .max_by(|a, b| a[1].total_cmp(&b[1]))
            .map_or(policy.dof, |p| p[0]);
        settings.options.noise = Noise::StudentT { dof: best };
        log.outlier_search.dof = Some(best);
        log.outlier_search.dof_profile = profile;
    }
    loop {
        let search = fit::search_warm(&set, known, &settings, warm)?;
        log.outlier_search.rounds += 1;
        let flags = prep::flag_outliers(&set, &search.fit.params, policy.threshold_sigma);
        let clip = policy.mode == OutlierMode::Clip && log.outlier_search.rounds < MAX_CLIP_ROUNDS;
        if clip && !flags.is_empty() {
            set = prep::record_outliers(&set, &flags, true, &mut log);
            continue;
        }
        prep::record_outliers(&set, &flags, false, &mut log);
        return Ok((search, set, log));
    }
}

/// A planet started at period `p` with the amplitude and phase of the best sinusoid.
fn start_at(set: &RvSet, period_d: f64, label: &str) -> Result<PlanetSpec, FitError> {
    if !(period_d.is_finite() && period_d > 0.0) {
        return Err(FitError::Start(format!("period {period_d} d")));
    }
    let sine = periodogram::sinusoid_at(set, &[], 1.0 / period_d)?;
    Ok(PlanetSpec {
        period_d,
        ..PlanetSpec::from_sinusoid(&sine, label)
    })
}
