//! Maximum-likelihood fit of planets, instrument offsets and jitters and a trend, with
//! uncertainties from the curvature of the likelihood at the optimum, and the iterative
//! periodogram search that decides how many signals to fit.
//!
//! Entry points: [`fit`] for a given set of planets, [`search`] to find them.

mod aliases;
mod joint;
mod layout;
mod objective;
mod optimize;
mod search;
mod significance;

pub use aliases::{AliasRefit, alias_refits};
pub use joint::{JointEntry, JointLayout, Stack, TOKEN_ERROR_FRACTION};
pub use layout::{Layout, OffsetPrior, PlanetSpec, Role};
pub use search::{
    ACTIVITY_SEARCH_BIC, Search, SearchSettings, SearchStep, SignalCount, next_label, search,
    search_warm,
};
pub use significance::{
    EccentricityTest, LUCY_SWEENEY_LEVEL, SignalTest, lucy_sweeney_p, signal_tests,
};

use nalgebra::{DMatrix, DVector, SymmetricEigen};
use rand::Rng;
use rand_distr::StandardNormal;
use serde::Serialize;

use crate::data::{RvSet, median};
use crate::gp::{Activity, ActivityLayout, Factor, Points, Solver};
use crate::model::{Noise, Params};
use crate::orbit::periastron_from_conjunction;
use crate::summary::{Summary, wrap_pi};
use crate::target::OrbitShape;
use objective::Objective;

/// Why a fit could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// More free parameters than data points.
    #[error(
        "{params} free parameters but only {points} points: fit fewer planets, a circular orbit or no trend"
    )]
    TooFewPoints {
        /// Free parameters.
        params: usize,
        /// Data points.
        points: usize,
    },
    /// A starting value is unusable.
    #[error("invalid starting value: {0}")]
    Start(String),
    /// Model options that cannot go together.
    #[error("{0}")]
    Options(String),
    /// The optimiser found no finite likelihood.
    #[error("the optimiser found no finite likelihood; check the data and starting periods")]
    NoFiniteLikelihood,
    /// The periodogram stage failed.
    #[error(transparent)]
    Periodogram(#[from] crate::periodogram::PeriodogramError),
}

/// Extra optimiser starts (ω at 0°, 90°, 180°, 270° with e = 0.3) for each planet that
/// starts circular in an eccentric fit.
pub const FRESH_STARTS: usize = 4;

/// Model options of a fit.
#[derive(Clone, Debug, PartialEq)]
pub struct FitOptions {
    /// Orbit shape of every planet.
    pub shape: OrbitShape,
    /// Trend order (0 none, 1 linear, 2 quadratic).
    pub trend: usize,
    /// Eccentricity cap (default 0.95).
    pub max_ecc: f64,
    /// One jitter shared by all instruments (default: one each).
    pub shared_jitter: bool,
    /// A linear term in each of the first this many indicator columns of the data
    /// (default 0).
    pub regressors: usize,
    /// One coefficient per indicator and instrument instead of one per indicator
    /// (default false).
    pub regressors_per_instrument: bool,
    /// Distribution of the residuals (default Gaussian).
    pub noise: Noise,
    /// Gaussian constraints on differences of instrument offsets (default none).
    pub offset_priors: Vec<OffsetPrior>,
    /// Stellar-activity noise model (default none).
    pub activity: Activity,
    /// Rotation-period prior `(mean, sd)` in days of the activity model (required by
    /// every model but `none`).
    pub rotation_d: Option<(f64, f64)>,
    /// Indicator column (index into the data's indicators) on which the activity model's
    /// hyperparameters are trained before the RV fit ([`train_activity`]; default none).
    pub activity_indicator: Option<usize>,
    /// Gaussian priors `(mean, sd)` on the activity hyperparameters ([`Activity::keys`]
    /// order, physical units) from that training; `None` entries are free.
    pub activity_priors: [Option<(f64, f64)>; 4],
    /// Indicator columns fitted together with the RVs by the joint model
    /// ([`Activity::Joint`], which needs at least one; ignored by the other models).
    pub joint_indicators: Vec<usize>,
    /// One activity amplitude per instrument (a factor on the first instrument's) with the
    /// quasi-periodic and oscillator models (default false: one amplitude for all).
    pub activity_per_instrument: bool,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            shape: OrbitShape::Eccentric,
            trend: 1,
            max_ecc: 0.95,
            shared_jitter: false,
            regressors: 0,
            regressors_per_instrument: false,
            noise: Noise::Gaussian,
            offset_priors: Vec::new(),
            activity: Activity::None,
            rotation_d: None,
            activity_indicator: None,
            activity_priors: [None; 4],
            joint_indicators: Vec::new(),
            activity_per_instrument: false,
        }
    }
}

/// One planet's estimated elements (values best fit, errors from the curvature).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlanetEstimate {
    /// Planet label.
    pub label: String,
    /// Period, days.
    pub period_d: Summary,
    /// Semi-amplitude, m/s.
    pub k_mps: Summary,
    /// Eccentricity.
    pub ecc: Summary,
    /// Star's argument of periastron, degrees in [0, 360).
    pub omega_deg: Summary,
    /// Conjunction time, full BJD_TDB.
    pub tc_d: Summary,
    /// Time of periastron, full BJD_TDB.
    pub tp_d: Summary,
}

/// One instrument's estimated offset and jitter and residual scatter.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InstrumentEstimate {
    /// Instrument name.
    pub name: String,
    /// Number of points.
    pub n_points: usize,
    /// Time of the first and of the last point, full BJD_TDB.
    pub first_last_bjd: (f64, f64),
    /// Time span of its points, days.
    pub span_d: f64,
    /// Median of its points' errors, m/s.
    pub median_err_mps: f64,
    /// Zero point, m/s.
    pub offset_mps: Summary,
    /// Jitter, m/s.
    pub jitter_mps: Summary,
    /// Root-mean-square residual, m/s.
    pub rms_mps: f64,
}

/// A finished maximum-likelihood fit.
#[derive(Clone, Debug)]
pub struct Fit {
    /// Parameter layout.
    pub layout: Layout,
    /// Best-fit θ.
    pub theta: Vec<f64>,
    /// Best-fit model parameters.
    pub params: Params,
    /// Name of each θ entry.
    pub names: Vec<String>,
    /// Covariance of θ from the inverse Hessian of the objective.
    pub covariance: DMatrix<f64>,
    /// Reference epoch of the data (full BJD_TDB).
    pub epoch_bjd: f64,
    /// ln L of the RVs at the optimum (likelihood only, no constraints; with the joint
    /// model conditional on the indicators, [`Layout::rv_log_likelihood`]).
    pub log_likelihood: f64,
    /// Number of points fitted.
    pub n_points: usize,
    /// Number of free parameters.
    pub n_params: usize,
    /// Per-planet estimates.
    pub planets: Vec<PlanetEstimate>,
    /// Per-instrument estimates.
    pub instruments: Vec<InstrumentEstimate>,
    /// Trend coefficients, m/s/yr^k (k = 1, 2).
    pub trend: Vec<Summary>,
    /// Indicator coefficients, m/s per indicator unit (same order as the data's columns).
    pub regressors: Vec<Summary>,
    /// Activity hyperparameters by key ([`Activity::keys`]), physical units; errors
    /// from the curvature in their logarithms (empty without a GP).
    pub activity: Vec<(String, Summary)>,
    /// Model options used.
    pub options: FitOptions,
    /// Findings worth showing the user.
    pub warnings: Vec<String>,
    /// Optimiser runs the fit took (several starts, a refit after flipping K).
    pub starts: usize,
}

impl Fit {
    /// Bayesian information criterion `k ln N − 2 ln L`.
    pub fn bic(&self) -> f64 {
        self.n_params as f64 * (self.n_points as f64).ln() - 2.0 * self.log_likelihood
    }

    /// Akaike information criterion `2k − 2 ln L`.
    pub fn aic(&self) -> f64 {
        2.0 * self.n_params as f64 - 2.0 * self.log_likelihood
    }

    /// Each planet's spec with its starting values at this fit's optimum (labels and
    /// constraints kept), to start a refit where this one ended.
    pub fn planet_specs(&self) -> Vec<PlanetSpec> {
        (0..self.layout.planets.len())
            .map(|i| {
                let [p, k, ec, es, tc] = self.layout.planet_elements(&self.theta, i);
                PlanetSpec {
                    period_d: p,
                    k_mps: k,
                    ecc_vector: (ec, es),
                    tc_d: tc,
                    ..self.layout.planets[i].clone()
                }
            })
            .collect()
    }

    /// `set` with this fit's planets (all but `keep`), trend and indicator terms removed;
    /// the instrument offsets stay (periodograms refit them).
    pub fn residual_set(&self, set: &RvSet, keep: Option<usize>) -> RvSet {
        let p = &self.params;
        let mut r = set.clone();
        for j in 0..r.len() {
            let t = r.time_d[j];
            let planets: f64 = p
                .planets
                .iter()
                .enumerate()
                .filter(|&(q, _)| Some(q) != keep)
                .map(|(_, o)| o.rv(t))
                .sum();
            r.rv_mps[j] -= planets + p.trend_rv(t) + p.regressors_rv(set, j);
        }
        r
    }

    /// The activity GP's conditional mean and variance (m/s, m²/s²) at times `at_d`
    /// (days from the epoch), given the residuals of this fit's mean model on `set`, at the
    /// first instrument's amplitude (multiply by [`Fit::activity_scale`] for another's);
    /// `None` without a GP or when its covariance cannot be factorised.
    pub fn activity_prediction(&self, set: &RvSet, at_d: &[f64]) -> Option<(Vec<f64>, Vec<f64>)> {
        if self.layout.joint.is_some() {
            let (kernel, stack) = self
                .layout
                .joint_problem(&self.theta, &self.params, set)?
                .ok()?;
            return stack
                .points()
                .predict(&kernel, &stack.residual, at_d, &vec![0; at_d.len()])
                .ok();
        }
        let kernel = self.layout.kernel(&self.theta)?;
        let white = layout::white_variances(&self.params, set);
        let scale = self.layout.point_scales(&self.theta, set);
        Points {
            time_d: &set.time_d,
            white: &white,
            scale: &scale,
        }
        .predict(
            &kernel,
            Solver::Auto,
            &self.params.residuals(set),
            at_d,
            &vec![1.0; at_d.len()],
        )
        .ok()
    }

    /// The activity model's factorised covariance at this fit and the residuals it
    /// applies to: the RVs' (m/s) in data order, then with the joint model the indicator
    /// points' ([`Stack`]); `None` without an activity model or when the covariance cannot
    /// be factorised.
    pub fn activity_factor(&self, set: &RvSet) -> Option<(Factor, Vec<f64>)> {
        if self.layout.joint.is_some() {
            let (factor, stack) = self.layout.joint_factor(&self.theta, &self.params, set)?;
            return Some((factor, stack.residual));
        }
        let kernel = self.layout.kernel(&self.theta)?;
        let white = layout::white_variances(&self.params, set);
        let scale = self.layout.point_scales(&self.theta, set);
        let points = Points {
            time_d: &set.time_d,
            white: &white,
            scale: &scale,
        };
        let factor = points.factor(&kernel, Solver::Auto).ok()?;
        Some((factor, self.params.residuals(set)))
    }

    /// Instrument `k`'s activity amplitude relative to the first instrument's (1 without
    /// per-instrument amplitudes).
    pub fn activity_scale(&self, k: usize) -> f64 {
        self.layout.activity_scales(&self.theta)[k]
    }

    /// `n` draws of θ from the Gaussian approximation `N(θ̂, C)` of the likelihood.
    pub fn theta_draws(&self, n: usize, rng: &mut impl Rng) -> Vec<Vec<f64>> {
        let eig = SymmetricEigen::new(self.covariance.clone());
        let root: Vec<f64> = eig.eigenvalues.iter().map(|l| l.max(0.0).sqrt()).collect();
        let dim = self.theta.len();
        (0..n)
            .map(|_| {
                let z =
                    DVector::from_fn(dim, |i, _| root[i] * rng.sample::<f64, _>(StandardNormal));
                let d = &eig.eigenvectors * z;
                self.theta
                    .iter()
                    .zip(d.iter())
                    .map(|(t, d)| t + d)
                    .collect()
            })
            .collect()
    }

    /// Draws of each planet's `(P [d], K [m/s], e)` from [`Fit::theta_draws`]: one
    /// `Vec` of triples per planet.
    pub fn element_draws(&self, n: usize, rng: &mut impl Rng) -> Vec<Vec<(f64, f64, f64)>> {
        let draws = self.theta_draws(n, rng);
        (0..self.layout.planets.len())
            .map(|i| {
                draws
                    .iter()
                    .map(|th| {
                        let [p, k, ec, es, _] = self.layout.planet_elements(th, i);
                        (p, k.abs(), ec.hypot(es).min(self.options.max_ecc))
                    })
                    .collect()
            })
            .collect()
    }
}

/// Fits `planets` (starting values and constraints) with the given model options.
///
/// Several starts are tried for eccentric orbits (the given one, and each planet that
/// starts circular, in turn, at e = 0.3 with ω at 0°, 90°, 180°, 270°); the best is kept. A negative
/// semi-amplitude is turned into the equivalent positive one and refitted.
///
/// # Errors
/// [`FitError`] when there are more parameters than points or no finite likelihood.
pub fn fit(set: &RvSet, planets: &[PlanetSpec], options: &FitOptions) -> Result<Fit, FitError> {
    for p in planets {
        if !(p.period_d.is_finite() && p.period_d > 0.0) {
            return Err(FitError::Start(format!(
                "period {} d of planet {}",
                p.period_d, p.label
            )));
        }
    }
    if options.regressors > set.indicators.len() {
        return Err(FitError::Start(format!(
            "{} indicator regressors asked for but the data have {} indicator columns",
            options.regressors,
            set.indicators.len()
        )));
    }
    let mut layout = Layout::new(
        planets.to_vec(),
        options.shape,
        set.n_instruments(),
        options.trend,
    )
    .with_regressors(options.regressors)
    .with_regressors_per_instrument(options.regressors_per_instrument)
    .with_noise(options.noise)
    .with_offset_priors(&options.offset_priors, &set.instruments);
    if options.shared_jitter {
        layout = layout.with_shared_jitter();
    }
    if options.activity != Activity::None {
        let rotation = options.rotation_d.ok_or_else(|| {
            FitError::Start(
                "the activity model needs a rotation period: give --rotation-d or star.rotation_d"
                    .into(),
            )
        })?;
        if !(rotation.0 > 0.0
            && rotation.1 > 0.0
            && rotation.0.is_finite()
            && rotation.1.is_finite())
        {
            return Err(FitError::Start(format!(
                "rotation period {} ± {} d",
                rotation.0, rotation.1
            )));
        }
        layout = layout.with_activity(
            ActivityLayout::new(
                options.activity,
                rotation,
                centred_sd(set),
                set.baseline_d(),
            )
            .with_trained(&options.activity_priors),
        );
        if options.activity == Activity::Joint {
            layout = layout.with_joint(joint_layout(set, options, rotation.0)?);
        }
        if options.activity_per_instrument {
            if options.activity == Activity::Joint {
                return Err(FitError::Options(
                    "per-instrument activity amplitudes go with the quasiperiodic and oscillator models; the joint model has a coupling per series instead".into(),
                ));
            }
            layout = layout.with_activity_per_instrument();
        }
    }
    if layout.len() >= set.len() {
        return Err(FitError::TooFewPoints {
            params: layout.len(),
            points: set.len(),
        });
    }
    let objective = Objective {
        set,
        layout: &layout,
        max_ecc: options.max_ecc,
    };
    let scale = layout.scales(set);
    let start = initial_theta(set, &layout);
    let mut starts = vec![start.clone()];
    if options.shape == OrbitShape::Eccentric {
        let fresh = planets
            .iter()
            .enumerate()
            .filter(|(_, p)| p.ecc_vector == (0.0, 0.0));
        for (i, _) in fresh {
            let ie = layout
                .index(Role::ECosW(i))
                .expect("eccentric layout has e cos w");
            for q in 0..FRESH_STARTS {
                let w = q as f64 * std::f64::consts::TAU / FRESH_STARTS as f64;
                let mut s = start.clone();
                s[ie] = 0.3 * w.cos();
                s[ie + 1] = 0.3 * w.sin();
                starts.push(s);
            }
        }
    }
    let starts_len = starts.len();
    let mut best: Option<(Vec<f64>, f64)> = None;
    let mut non_finite = 0;
    for s in starts {
        let (theta, value) = optimize::minimise(&objective, &s, &scale, 4);
        if !value.is_finite() {
            non_finite += 1;
        }
        if best.as_ref().is_none_or(|b| value < b.1) {
            best = Some((theta, value));
        }
    }
    let mut n_starts = starts_len;
    let (mut theta, mut value) = best.ok_or(FitError::NoFiniteLikelihood)?;
    if flip_negative_amplitudes(&layout, &mut theta, options.max_ecc) {
        (theta, value) = optimize::minimise(&objective, &theta, &scale, 4);
        n_starts += 1;
    }
    let block = layout.joint_range();
    if let Some(joint) = layout.joint.as_mut() {
        joint.pick_sign_reference(&theta[block.clone()]);
        joint.canonical(&mut theta[block]);
    }
    if !value.is_finite() {
        return Err(FitError::NoFiniteLikelihood);
    }
    let mut fit = Fit {
        starts: n_starts,
        ..finish(set, layout, theta, options)
    };
    let span = set.baseline_d();
    for p in &fit.planets {
        if p.period_d.value > span {
            fit.warnings.push(format!(
                "planet {}: period {:.4} d is longer than the time span of the data ({span:.1} d); its period, eccentricity and amplitude are poorly constrained",
                p.label, p.period_d.value
            ));
        }
    }
    if non_finite > 0 {
        fit.warnings.push(format!(
            "{non_finite} of {starts_len} optimiser starts ended without a finite likelihood and were discarded; the fit is the best of the others"
        ));
    }
    Ok(fit)
}

/// Trains the activity model of `options` on indicator column
/// `options.activity_indicator` of `set`: the same GP (with the same rotation prior) plus
/// one offset and one jitter per instrument is fitted to the indicator series alone, and
/// each hyperparameter but the amplitudes (which are in the indicator's unit) becomes a
/// Gaussian prior `(best fit, mean of its curvature errors)` for the RV fit (hyperparameters
/// trained on another series of the same star, as Haywood et al. 2014 did with its
/// light curve; from memory). Hyperparameters
/// whose curvature error is not defined, spans more than a factor 2
/// ([`TRAINED_SD_LN`]) or comes from a bound (the value at it) stay free. All `None` without an indicator.
///
/// # Errors
/// [`FitError`] when the indicator series cannot be fitted (too few points, no rotation
/// period, an unknown column).
pub fn train_activity(
    set: &RvSet,
    options: &FitOptions,
) -> Result<[Option<(f64, f64)>; 4], FitError> {
    let mut priors = [None; 4];
    let Some(c) = options.activity_indicator else {
        return Ok(priors);
    };
    if options.activity == Activity::Joint {
        return Err(FitError::Options(
            "the joint activity model fits its indicators together with the RVs; it is not trained on one first".into(),
        ));
    }
    if c >= set.indicators.len() {
        return Err(FitError::Start(format!(
            "activity indicator column {c}: the data have {} indicator columns",
            set.indicators.len()
        )));
    }
    // The indicators carry no uncertainties: a token error of 5 % of the spread (a
    // floor of 0.25 % of the variance; the jitters, which start there, take the white
    // scatter; much smaller starts leave the covariance too ill-conditioned to move).
    let series = set.indicator_series(c, TOKEN_ERROR_FRACTION * set.indicator_spread(c));
    let trained = fit(
        &series,
        &[],
        &FitOptions {
            trend: 0,
            regressors: 0,
            shared_jitter: false,
            regressors_per_instrument: false,
            noise: Noise::Gaussian,
            offset_priors: Vec::new(),
            activity_indicator: None,
            activity_priors: [None; 4],
            ..options.clone()
        },
    )?;
    let layout = trained
        .layout
        .activity
        .as_ref()
        .expect("the trained fit has the GP");
    for (q, (key, s)) in trained
        .activity
        .iter()
        .enumerate()
        .take(layout.bounds.len())
    {
        let sd = 0.5 * (s.minus + s.plus);
        // The curvature error of the logarithm, ln(1 + plus/value).
        let sd_ln = (s.plus / s.value).ln_1p();
        let informative = sd > 0.0 && sd_ln < TRAINED_SD_LN && !layout.at_bound(q, s.value);
        if !key.starts_with("amplitude") && informative {
            priors[q] = Some((s.value, sd));
        }
    }
    Ok(priors)
}

/// The joint model's block for `set` under `options` (rotation period `rotation_d`).
///
/// # Errors
/// [`FitError::Options`] without an indicator column or with one the data lack.
fn joint_layout(
    set: &RvSet,
    options: &FitOptions,
    rotation_d: f64,
) -> Result<JointLayout, FitError> {
    let columns = &options.joint_indicators;
    if columns.is_empty() {
        return Err(FitError::Options(
            "the joint activity model needs at least one activity-indicator column: give --activity-indicator or settings.activity_indicator".into(),
        ));
    }
    if let Some(c) = columns.iter().find(|&&c| c >= set.indicators.len()) {
        return Err(FitError::Options(format!(
            "joint activity model: indicator column {c}, but the data have {} indicator columns",
            set.indicators.len()
        )));
    }
    Ok(JointLayout::new(set, columns, centred_sd(set), rotation_d))
}

/// Largest 1σ error of a trained hyperparameter's logarithm (ln 2: the indicator pins it
/// within a factor 2) for it to become a prior of the RV fit; a looser one would be a
/// prior in name only (a choice of heft's).
pub const TRAINED_SD_LN: f64 = std::f64::consts::LN_2;

/// Standard deviation of the RVs about each instrument's mean, m/s.
fn centred_sd(set: &RvSet) -> f64 {
    let n = set.n_instruments();
    let mut sum = vec![0.0; n];
    let mut count = vec![0.0; n];
    for i in 0..set.len() {
        sum[set.instrument[i]] += set.rv_mps[i];
        count[set.instrument[i]] += 1.0;
    }
    let ss: f64 = (0..set.len())
        .map(|i| {
            let k = set.instrument[i];
            (set.rv_mps[i] - sum[k] / count[k]).powi(2)
        })
        .sum();
    (ss / set.len().max(1) as f64).sqrt()
}

/// θ from the specs, offsets at each instrument's weighted mean of the data minus the
/// starting planets, jitters at each instrument's median error.
fn initial_theta(set: &RvSet, layout: &Layout) -> Vec<f64> {
    let n = set.n_instruments();
    let zero = layout.initial(&vec![0.0; n], &vec![0.0; n], &[]);
    let params = layout.params(&zero, 0.95);
    let mut sum_w = vec![0.0; n];
    let mut sum_wy = vec![0.0; n];
    let mut errs: Vec<Vec<f64>> = vec![Vec::new(); n];
    for i in 0..set.len() {
        let k = set.instrument[i];
        let w = set.err_mps[i].powi(-2);
        let planets = params.as_ref().map_or(0.0, |p| p.planets_rv(set.time_d[i]));
        sum_w[k] += w;
        sum_wy[k] += w * (set.rv_mps[i] - planets);
        errs[k].push(set.err_mps[i]);
    }
    let offsets: Vec<f64> = (0..n).map(|k| sum_wy[k] / sum_w[k].max(1e-300)).collect();
    let jitters: Vec<f64> = errs
        .iter_mut()
        .map(|e| {
            e.sort_by(f64::total_cmp);
            e.get(e.len() / 2).copied().unwrap_or(1.0)
        })
        .collect();
    layout.initial(&offsets, &jitters, &[])
}

/// Replaces each K < 0 by −K with ω → ω + π, keeping the time of periastron (so the
/// curve is unchanged) and moving Tc to the conjunction of the new ω. Returns whether
/// anything changed.
fn flip_negative_amplitudes(layout: &Layout, theta: &mut [f64], max_ecc: f64) -> bool {
    let mut changed = false;
    for i in 0..layout.planets.len() {
        let [p, k, ec, es, tc] = layout.planet_elements(theta, i);
        if k >= 0.0 {
            continue;
        }
        changed = true;
        let e = ec.hypot(es).min(max_ecc);
        let w = es.atan2(ec);
        let tp = periastron_from_conjunction(p, e, w, tc);
        let w_new = w + std::f64::consts::PI;
        // Tc − Tp for the new ω, from the same chain with Tc = 0.
        let offset = -periastron_from_conjunction(p, e, w_new, 0.0);
        let tc_new = tp + offset;
        // Choose the conjunction nearest the old one.
        let tc_new = tc_new + ((tc - tc_new) / p).round() * p;
        let set_role = |theta: &mut [f64], role: Role, v: f64| {
            if let Some(j) = layout.index(role) {
                theta[j] = v;
            }
        };
        set_role(theta, Role::K(i), -k);
        set_role(theta, Role::ECosW(i), -ec);
        set_role(theta, Role::ESinW(i), -es);
        set_role(theta, Role::Tc(i), tc_new);
    }
    changed
}

/// Covariance from the Hessian and the summaries of every reported quantity.
fn finish(set: &RvSet, layout: Layout, theta: Vec<f64>, options: &FitOptions) -> Fit {
    let objective = Objective {
        set,
        layout: &layout,
        max_ecc: options.max_ecc,
    };
    let scale = layout.scales(set);
    let h: Vec<f64> = scale.iter().map(|s| 1e-3 * s).collect();
    let hess = objective::hessian(&|x: &[f64]| objective.value(x), &theta, &h);
    let mut warnings = Vec::new();
    let covariance = invert_psd(&hess, &mut warnings, &layout.names(set));
    let params = layout
        .params(&theta, options.max_ecc)
        .expect("the optimum has finite parameters");
    let log_likelihood = layout.rv_log_likelihood(&theta, options.max_ecc, set);
    let sigma_of = |q: &dyn Fn(&[f64]) -> f64| -> f64 {
        let g = objective::gradient(q, &theta, &h);
        let g = DVector::from_vec(g);
        (g.transpose() * &covariance * &g)[(0, 0)].max(0.0).sqrt()
    };
    let at = |i: usize| Summary::symmetric(theta[i], covariance[(i, i)].max(0.0).sqrt());
    let epoch = set.epoch_bjd;

    let planets = (0..layout.planets.len())
        .map(|i| {
            let el = |th: &[f64]| layout.planet_elements(th, i);
            let [p, k, ec, es, tc] = el(&theta);
            let e = ec.hypot(es).min(options.max_ecc);
            let w = if e > 0.0 { es.atan2(ec) } else { 0.0 };
            let tp = periastron_from_conjunction(p, e, w, tc);
            let period = match layout.index(Role::Period(i)) {
                Some(j) => at(j),
                None => Summary::exact(p),
            };
            let jk = layout.index(Role::K(i)).expect("K is always free");
            let (ecc, omega) = if options.shape == OrbitShape::Eccentric {
                (
                    Summary::symmetric(
                        e,
                        sigma_of(&|th| {
                            let [_, _, c, s, _] = el(th);
                            c.hypot(s)
                        }),
                    ),
                    Summary::symmetric(
                        w.to_degrees().rem_euclid(360.0),
                        sigma_of(&|th| {
                            let [_, _, c, s, _] = el(th);
                            wrap_pi(s.atan2(c) - w)
                        })
                        .to_degrees(),
                    ),
                )
            } else {
                (Summary::exact(0.0), Summary::exact(0.0))
            };
            let tc_sigma = sigma_of(&|th| el(th)[4]);
            let tp_sigma = sigma_of(&|th| {
                let [p, _, c, s, t] = el(th);
                let e = c.hypot(s).min(options.max_ecc);
                let w = if e > 0.0 { s.atan2(c) } else { 0.0 };
                periastron_from_conjunction(p, e, w, t)
            });
            PlanetEstimate {
                label: layout.planets[i].label.clone(),
                period_d: period,
                k_mps: Summary::symmetric(k.abs(), covariance[(jk, jk)].max(0.0).sqrt()),
                ecc,
                omega_deg: omega,
                tc_d: Summary::symmetric(tc + epoch, tc_sigma),
                tp_d: Summary::symmetric(tp + epoch, tp_sigma),
            }
        })
        .collect();

    let residuals = params.residuals(set);
    let instruments = (0..set.n_instruments())
        .map(|k| {
            let mine: Vec<usize> = (0..set.len()).filter(|&i| set.instrument[i] == k).collect();
            let r: Vec<f64> = mine.iter().map(|&i| residuals[i]).collect();
            let errs: Vec<f64> = mine.iter().map(|&i| set.err_mps[i]).collect();
            let times = mine
                .first()
                .zip(mine.last())
                .map_or((0.0, 0.0), |(&a, &b)| {
                    (set.time_d[a] + epoch, set.time_d[b] + epoch)
                });
            let jo = layout
                .index(Role::Offset(k))
                .expect("offsets are always free");
            let js = layout
                .index(Role::Jitter(layout.jitter_of(k)))
                .expect("jitters are always free");
            InstrumentEstimate {
                name: set.instruments[k].clone(),
                n_points: r.len(),
                first_last_bjd: times,
                span_d: times.1 - times.0,
                median_err_mps: median(&errs),
                offset_mps: at(jo),
                jitter_mps: Summary::symmetric(
                    theta[js].abs(),
                    covariance[(js, js)].max(0.0).sqrt(),
                ),
                rms_mps: (r.iter().map(|x| x * x).sum::<f64>() / r.len().max(1) as f64).sqrt(),
            }
        })
        .collect();
    let trend = (1..=layout.trend)
        .map(|k| at(layout.index(Role::Trend(k)).expect("trend terms are free")))
        .collect();
    let regressors = (0..layout.n_regressors())
        .map(|c| {
            at(layout
                .index(Role::Regressor(c))
                .expect("regressors are free"))
        })
        .collect();
    // Fitted as logarithms: errors from the curvature in the logarithm.
    let log_summary = |j: usize| {
        let (ln, sd) = (theta[j], covariance[(j, j)].max(0.0).sqrt());
        let value = ln.exp();
        Summary {
            minus: value - (ln - sd).exp(),
            plus: (ln + sd).exp() - value,
            ..Summary::exact(value)
        }
    };
    let n_scales = layout.n_activity_scales();
    let activity = layout
        .activity_range()
        .zip(layout.activity_keys())
        .map(|(j, key)| (key.to_string(), log_summary(j)))
        .chain(layout.joint.iter().flat_map(|b| {
            layout.joint_range().zip(&b.names).map(|(j, name)| {
                let sd = covariance[(j, j)].max(0.0).sqrt();
                (name.clone(), Summary::symmetric(theta[j], sd))
            })
        }))
        .chain(
            (layout.len() - n_scales..layout.len())
                .zip(layout.activity_scale_keys(&set.instruments))
                .map(|(j, key)| (key, log_summary(j))),
        )
        .collect::<Vec<_>>();
    if let Some(a) = &layout.activity {
        for (q, (key, s)) in activity.iter().enumerate().take(a.bounds.len()) {
            if a.at_bound(q, s.value) {
                warnings.push(format!(
                    "activity {key} = {} is at its bound {:?}: the data do not constrain it there and its error is the bound's",
                    s.value, a.bounds[q]
                ));
            }
        }
    }
    for (i, p) in params.planets.iter().enumerate() {
        if p.ecc() >= options.max_ecc - 1e-6 {
            warnings.push(format!(
                "planet {}: eccentricity reached the cap {}",
                layout.planets[i].label, options.max_ecc
            ));
        }
    }
    Fit {
        names: layout.names(set),
        n_params: layout.len(),
        layout,
        theta,
        params,
        covariance,
        epoch_bjd: epoch,
        log_likelihood,
        n_points: set.len(),
        planets,
        instruments,
        trend,
        regressors,
        activity,
        options: options.clone(),
        warnings,
        starts: 1,
    }
}

/// Inverse of a Hessian that should be positive definite. Directions with non-positive
/// curvature (a jitter fitted at zero, say) get zero variance and a warning naming the
/// parameters most involved.
fn invert_psd(hess: &DMatrix<f64>, warnings: &mut Vec<String>, names: &[String]) -> DMatrix<f64> {
    if let Some(ch) = hess.clone().cholesky() {
        return ch.inverse();
    }
    let eig = SymmetricEigen::new(hess.clone());
    let max = eig.eigenvalues.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    let n = hess.nrows();
    let mut inv = DMatrix::zeros(n, n);
    for (j, &l) in eig.eigenvalues.iter().enumerate() {
        let v = eig.eigenvectors.column(j);
        if l > 1e-12 * max {
            inv += v * v.transpose() / l;
        } else {
            let worst = v
                .iter()
                .enumerate()
                .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
                .map(|(i, _)| names[i].clone())
                .unwrap_or_default();
            warnings.push(format!(
                "the likelihood is flat or curved the wrong way along a direction dominated by {worst}: its uncertainty is not defined by the curvature (reported as 0)"
            ));
        }
    }
    inv
}
