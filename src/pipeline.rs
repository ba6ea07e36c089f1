//! Runs the stages in order for one data set: signal search and joint fit, the
//! significance of each signal, posterior sampling (when asked for), then the derived
//! planet properties from the posterior draws (or from the fit's curvature Gaussian)
//! joined with fresh stellar and transit draws. [`run_target`] does it for a target file,
//! [`analyse`] for data already loaded (the `fit` command).

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use crate::data::{self, DataError, RvSet};
use crate::derive::{self, DeriveError, OrbitDraws, PlanetDerived, StarDraws, TransitDraws};
use crate::fit::{
    self, FitError, FitOptions, PlanetSpec, Search, SearchSettings, SignalCount, SignalTest,
};
use crate::periodogram;
use crate::sample::{self, Posterior, PriorSet, Progress, SampleError, SamplerSettings};
use crate::target::{PriorChoices, Settings, Star, Target, Transit};

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
    /// The priors do not fit the model, or sampling could not start.
    #[error("sampling the posterior: {0}")]
    Sample(#[from] SampleError),
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
    /// Where it comes from: `default`, `transit`, `target file` or `request`.
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
}

/// Search settings from a target file's settings.
pub fn search_settings(s: &Settings) -> SearchSettings {
    SearchSettings {
        period_min_d: s.period_min_d,
        period_max_d: s.period_max_d,
        oversample: s.oversample,
        fap_threshold: s.fap_threshold,
        count: SignalCount::UpTo(s.max_signals),
        options: FitOptions {
            shape: s.orbit,
            trend: s.trend,
            ..FitOptions::default()
        },
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
    let set = data::load(&target.data)?;
    let request = Request {
        name: target.name.clone(),
        set,
        star: Some(&target.star),
        transits: &target.transits,
        periods: Vec::new(),
        fix_periods: false,
        search: search_settings(&target.settings),
        seed: target.settings.seed,
        draws: target.settings.draws,
        sampler: target.settings.sample.then(|| target.settings.sampler()),
        priors: target.priors.clone(),
    };
    analyse(request, progress)
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
    let set = &req.set;
    let mut known = Vec::new();
    let mut priors = Vec::new();
    if req.sampler.is_none() {
        priors.push(Prior {
            parameter: "ecc".into(),
            kind: "bound",
            detail: format!("0 <= e <= {}", req.search.options.max_ecc),
            source: "default",
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
    let search = fit::search(set, &known, &req.search)?;
    let signals = fit::signal_tests(set, &search, known.len())?;

    let posterior = match &req.sampler {
        None => None,
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
    let derived = match req.star {
        None => vec![None; search.fit.planets.len()],
        Some(star) => {
            let orbits: Vec<OrbitDraws> = match &posterior {
                Some(post) => (0..search.fit.planets.len())
                    .map(|i| post.orbit_draws(i))
                    .collect(),
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
            let mut out = Vec::with_capacity(orbits.len());
            for (i, (orbit, planet)) in orbits.iter().zip(&search.fit.planets).enumerate() {
                let transit = match req.transits.iter().find(|t| t.label == planet.label) {
                    Some(t) => Some(TransitDraws::sample(t, n, &mut rng)?),
                    None => None,
                };
                let mut d = derive::derive_planet(orbit, &star_draws, transit.as_ref())?;
                if posterior
                    .as_ref()
                    .is_some_and(|p| p.detections[i].quote_upper_limits)
                {
                    d = d.with_upper_limits();
                }
                out.push(Some(d));
            }
            out
        }
    };
    Ok(Analysis {
        name: req.name,
        set: req.set.clone(),
        search,
        signals,
        posterior,
        derived,
        priors,
        seed: req.seed,
        draws: req.draws,
    })
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
