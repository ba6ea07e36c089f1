//! The parameter vector θ of a fit: which model parameters are free, their order, the
//! mapping θ → [`Params`], and the natural scale of each for the optimiser and for
//! finite differences.
//!
//! Per planet θ holds `P` (unless held fixed), `K`, `e cos ω`, `e sin ω` (eccentric
//! orbits only) and `Tc`; then one offset per instrument; one jitter per instrument (or one
//! shared by all); the trend coefficients; and the coefficients of any activity-indicator
//! regressors; with the joint activity model, its couplings and indicator offsets and
//! jitters ([`JointLayout`]); with a stellar-activity GP, the natural logarithm of each of
//! its hyperparameters ([`crate::gp::Activity::keys`]); and, with per-instrument GP
//! amplitudes, the natural logarithm of each instrument's amplitude relative to the first
//! instrument's. `(e cos ω, e sin ω)` is smooth through
//! e = 0, where ω is undefined.

use super::joint::{JointLayout, Stack};
use crate::data::RvSet;
use crate::gp::{ActivityLayout, Factor, JointKernel, Kernel, Points, Solver};
use crate::model::{Noise, Params};
use crate::orbit::Orbit;
use crate::periodogram::Sinusoid;
use crate::target::OrbitShape;

/// How one planet enters the fit.
#[derive(Clone, Debug, PartialEq)]
pub struct PlanetSpec {
    /// Starting period, days.
    pub period_d: f64,
    /// Hold the period at `period_d`.
    pub fix_period: bool,
    /// Starting semi-amplitude, m/s.
    pub k_mps: f64,
    /// Starting conjunction time, days from the data's reference epoch.
    pub tc_d: f64,
    /// Starting `(e cos ω, e sin ω)`.
    pub ecc_vector: (f64, f64),
    /// Gaussian constraint on the period `(mean, σ)` in days (e.g. from transits).
    pub period_prior: Option<(f64, f64)>,
    /// Gaussian constraint on the conjunction time `(mean, σ)`, days from the epoch.
    pub tc_prior: Option<(f64, f64)>,
    /// Label shown in outputs (e.g. "b").
    pub label: String,
}

impl PlanetSpec {
    /// A circular start at the period, amplitude and phase of a periodogram sinusoid,
    /// free and unconstrained.
    pub fn from_sinusoid(sine: &Sinusoid, label: &str) -> PlanetSpec {
        PlanetSpec {
            period_d: 1.0 / sine.frequency,
            fix_period: false,
            k_mps: sine.amplitude_mps(),
            tc_d: sine.conjunction_d(),
            ecc_vector: (0.0, 0.0),
            period_prior: None,
            tc_prior: None,
            label: label.to_string(),
        }
    }
}

/// A Gaussian constraint on the difference of two instruments' offsets (e.g. known from
/// standard stars): `offset[later] − offset[earlier] ~ N(mean, sd²)`, m/s.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct OffsetPrior {
    /// Instrument (or era) names `[earlier, later]`.
    pub instruments: [String; 2],
    /// Mean of the difference, m/s.
    pub mean_mps: f64,
    /// Its standard deviation, m/s (> 0).
    pub sd_mps: f64,
}

/// Position and kind of every free parameter.
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    /// Planets as specified (fixed values are taken from here).
    pub planets: Vec<PlanetSpec>,
    /// Orbit shape of all planets.
    pub shape: OrbitShape,
    /// Number of instruments.
    pub n_instruments: usize,
    /// Trend order (0 = none).
    pub trend: usize,
    /// One jitter shared by all instruments instead of one each.
    pub shared_jitter: bool,
    /// Number of indicator regressors (the first this many indicator columns of the data).
    pub regressors: usize,
    /// One coefficient per indicator and instrument instead of one per indicator.
    pub regressors_per_instrument: bool,
    /// Distribution of the residuals.
    pub noise: Noise,
    /// Offset constraints `(earlier, later, mean, sd)`: instrument indices, m/s.
    pub offset_priors: Vec<(usize, usize, f64, f64)>,
    /// The stellar-activity GP, if any.
    pub activity: Option<ActivityLayout>,
    /// The joint model's block (with [`crate::gp::Activity::Joint`]).
    pub joint: Option<JointLayout>,
    /// The activity GP's amplitude differs between instruments: instrument `k ≥ 1` has its
    /// own factor on the first instrument's ([`Role::ActivityScale`]).
    pub activity_per_instrument: bool,
    /// Index in θ of each planet's first parameter.
    planet_start: Vec<usize>,
    /// Index of the first offset.
    offsets_start: usize,
}

/// A parameter's role, for names and scales.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Role {
    /// Period of planet `i`.
    Period(usize),
    /// Semi-amplitude of planet `i`.
    K(usize),
    /// `e cos ω` of planet `i`.
    ECosW(usize),
    /// `e sin ω` of planet `i`.
    ESinW(usize),
    /// Conjunction time of planet `i`.
    Tc(usize),
    /// Offset of instrument `k`.
    Offset(usize),
    /// Jitter `g`: of instrument `g`, or the shared jitter (`g = 0`).
    Jitter(usize),
    /// Trend coefficient of order `k` (1-based).
    Trend(usize),
    /// Indicator coefficient `j` (see [`Layout::regressor_target`]).
    Regressor(usize),
    /// Natural logarithm of activity hyperparameter `q` ([`crate::gp::Activity::keys`]).
    Activity(usize),
    /// Entry `q` of the joint model's block ([`JointLayout`]).
    Joint(usize),
    /// Natural logarithm of instrument `k`'s activity amplitude relative to the first
    /// instrument's (`k ≥ 1`).
    ActivityScale(usize),
}

impl Layout {
    /// Lays out θ for these planets and model options.
    pub fn new(
        planets: Vec<PlanetSpec>,
        shape: OrbitShape,
        n_instruments: usize,
        trend: usize,
    ) -> Layout {
        let mut planet_start = Vec::with_capacity(planets.len());
        let mut at = 0;
        for p in &planets {
            planet_start.push(at);
            at +=
                usize::from(!p.fix_period) + 2 + if shape == OrbitShape::Eccentric { 2 } else { 0 };
        }
        Layout {
            planets,
            shape,
            n_instruments,
            trend,
            shared_jitter: false,
            regressors: 0,
            regressors_per_instrument: false,
            noise: Noise::Gaussian,
            offset_priors: Vec::new(),
            activity: None,
            joint: None,
            activity_per_instrument: false,
            planet_start,
            offsets_start: at,
        }
    }

    /// The same layout with one jitter shared by all instruments.
    pub fn with_shared_jitter(self) -> Layout {
        Layout {
            shared_jitter: true,
            ..self
        }
    }

    /// The same layout with a linear term in each of the first `n` indicator columns of
    /// the data (see [`Params::regressors`]).
    pub fn with_regressors(self, n: usize) -> Layout {
        Layout {
            regressors: n,
            ..self
        }
    }

    /// The same layout with one indicator coefficient per instrument (`true`) or one for
    /// all (`false`).
    pub fn with_regressors_per_instrument(self, per_instrument: bool) -> Layout {
        Layout {
            regressors_per_instrument: per_instrument,
            ..self
        }
    }

    /// The same layout with a stellar-activity GP.
    pub fn with_activity(self, activity: ActivityLayout) -> Layout {
        Layout {
            activity: Some(activity),
            ..self
        }
    }

    /// The same layout with the joint model's block (its activity layout is
    /// [`crate::gp::Activity::Joint`]).
    pub fn with_joint(self, joint: JointLayout) -> Layout {
        Layout {
            joint: Some(joint),
            ..self
        }
    }

    /// The same layout with one activity amplitude per instrument.
    pub fn with_activity_per_instrument(self) -> Layout {
        Layout {
            activity_per_instrument: true,
            ..self
        }
    }

    /// Number of per-instrument activity amplitude factors.
    pub fn n_activity_scales(&self) -> usize {
        if self.activity_per_instrument {
            self.n_instruments.saturating_sub(1)
        } else {
            0
        }
    }

    /// Each instrument's activity amplitude factor at θ (1 for the first, and for all
    /// without per-instrument amplitudes), moved into [`crate::gp::SCALE_BOUNDS`].
    pub fn activity_scales(&self, theta: &[f64]) -> Vec<f64> {
        let start = self.len() - self.n_activity_scales();
        let (lo, hi) = crate::gp::SCALE_BOUNDS;
        std::iter::once(1.0)
            .chain(theta[start..].iter().map(|x| x.exp().clamp(lo, hi)))
            .chain(std::iter::repeat(1.0))
            .take(self.n_instruments)
            .collect()
    }

    /// Keys of the per-instrument activity amplitude factors, `scale.INSTRUMENT`, for
    /// instruments `names` (empty without them).
    pub fn activity_scale_keys(&self, names: &[String]) -> Vec<String> {
        names
            .iter()
            .skip(1)
            .take(self.n_activity_scales())
            .map(|n| format!("scale.{n}"))
            .collect()
    }

    /// Number of entries of the joint model's block.
    pub fn n_joint(&self) -> usize {
        self.joint.as_ref().map_or(0, JointLayout::len)
    }

    /// Number of indicator coefficients.
    pub fn n_regressors(&self) -> usize {
        self.regressors * self.regressor_stride()
    }

    /// Coefficients per indicator column.
    fn regressor_stride(&self) -> usize {
        if self.regressors_per_instrument {
            self.n_instruments
        } else {
            1
        }
    }

    /// Indicator column of coefficient `j` ([`Role::Regressor`]) and the instrument it
    /// applies to (`None`: all).
    pub fn regressor_target(&self, j: usize) -> (usize, Option<usize>) {
        let stride = self.regressor_stride();
        (
            j / stride,
            self.regressors_per_instrument.then_some(j % stride),
        )
    }

    /// The same layout with residuals distributed as `noise`.
    pub fn with_noise(self, noise: Noise) -> Layout {
        Layout { noise, ..self }
    }

    /// The same layout with offset constraints between instruments of `names`; constraints
    /// naming an instrument not in `names` are left out (e.g. when a subset of the data
    /// lacks one).
    pub fn with_offset_priors(self, priors: &[OffsetPrior], names: &[String]) -> Layout {
        let index = |n: &String| names.iter().position(|x| x == n);
        let offset_priors = priors
            .iter()
            .filter_map(|p| {
                Some((
                    index(&p.instruments[0])?,
                    index(&p.instruments[1])?,
                    p.mean_mps,
                    p.sd_mps,
                ))
            })
            .collect();
        Layout {
            offset_priors,
            ..self
        }
    }

    /// `−ln` of the offset constraints at θ (up to a constant) and its gradient, added to
    /// `grad` when given.
    pub fn offset_penalty(&self, theta: &[f64], grad: Option<&mut [f64]>) -> f64 {
        let o = self.offsets_start;
        let mut total = 0.0;
        let mut g = grad;
        for &(a, b, mean, sd) in &self.offset_priors {
            let z = (theta[o + b] - theta[o + a] - mean) / sd;
            total += 0.5 * z * z;
            if let Some(g) = g.as_deref_mut() {
                g[o + b] += z / sd;
                g[o + a] -= z / sd;
            }
        }
        total
    }

    /// Number of activity hyperparameters.
    pub fn n_activity(&self) -> usize {
        self.activity.as_ref().map_or(0, |a| a.start.len())
    }

    /// Number of jitter parameters.
    pub fn n_jitters(&self) -> usize {
        if self.shared_jitter {
            1
        } else {
            self.n_instruments
        }
    }

    /// Index of the jitter parameter (as in [`Role::Jitter`]) that instrument `k` uses.
    pub fn jitter_of(&self, k: usize) -> usize {
        if self.shared_jitter { 0 } else { k }
    }

    /// Number of free parameters.
    pub fn len(&self) -> usize {
        self.offsets_start
            + self.n_instruments
            + self.n_jitters()
            + self.trend
            + self.n_regressors()
            + self.n_joint()
            + self.n_activity()
            + self.n_activity_scales()
    }

    /// True when θ is empty (never: offsets and jitters are always free).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Role of each θ entry, in order.
    pub fn roles(&self) -> Vec<Role> {
        let mut roles = Vec::with_capacity(self.len());
        for (i, p) in self.planets.iter().enumerate() {
            if !p.fix_period {
                roles.push(Role::Period(i));
            }
            roles.push(Role::K(i));
            if self.shape == OrbitShape::Eccentric {
                roles.push(Role::ECosW(i));
                roles.push(Role::ESinW(i));
            }
            roles.push(Role::Tc(i));
        }
        roles.extend((0..self.n_instruments).map(Role::Offset));
        roles.extend((0..self.n_jitters()).map(Role::Jitter));
        roles.extend((1..=self.trend).map(Role::Trend));
        roles.extend((0..self.n_regressors()).map(Role::Regressor));
        roles.extend((0..self.n_joint()).map(Role::Joint));
        roles.extend((0..self.n_activity()).map(Role::Activity));
        roles.extend((1..=self.n_activity_scales()).map(Role::ActivityScale));
        roles
    }

    /// Index in θ of a role, if that parameter is free.
    pub fn index(&self, role: Role) -> Option<usize> {
        self.roles().iter().position(|r| *r == role)
    }

    /// Planet `i`'s `(P, K, e cos ω, e sin ω, Tc)` read from θ (fixed values filled in).
    pub fn planet_elements(&self, theta: &[f64], i: usize) -> [f64; 5] {
        let spec = &self.planets[i];
        let mut at = self.planet_start[i];
        let mut next = || {
            at += 1;
            theta[at - 1]
        };
        let period = if spec.fix_period {
            spec.period_d
        } else {
            next()
        };
        let k = next();
        let (ec, es) = if self.shape == OrbitShape::Eccentric {
            (next(), next())
        } else {
            (0.0, 0.0)
        };
        [period, k, ec, es, next()]
    }

    /// Offsets, jitters of each instrument (absolute values: the likelihood is even in s)
    /// and trend from θ.
    pub fn noise_and_trend(&self, theta: &[f64]) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let o = self.offsets_start;
        let n = self.n_instruments;
        let j = o + n;
        let t = j + self.n_jitters();
        (
            theta[o..j].to_vec(),
            (0..n).map(|k| theta[j + self.jitter_of(k)].abs()).collect(),
            theta[t..t + self.trend].to_vec(),
        )
    }

    /// Indicator coefficients from θ.
    pub fn regressor_coefficients<'t>(&self, theta: &'t [f64]) -> &'t [f64] {
        let end = self.joint_range().start;
        &theta[end - self.n_regressors()..end]
    }

    /// Index range in θ of the activity hyperparameters (empty without a GP).
    pub fn activity_range(&self) -> std::ops::Range<usize> {
        let end = self.len() - self.n_activity_scales();
        end - self.n_activity()..end
    }

    /// Index range in θ of the joint model's block (empty without it).
    pub fn joint_range(&self) -> std::ops::Range<usize> {
        let end = self.activity_range().start;
        end - self.n_joint()..end
    }

    /// The joint model's block of θ (empty without it).
    pub fn joint_block<'t>(&self, theta: &'t [f64]) -> &'t [f64] {
        &theta[self.joint_range()]
    }

    /// Log-likelihood of the RVs alone at θ: [`Layout::log_likelihood`], except that with
    /// the joint model it is that of the RVs conditional on the indicators,
    /// `ln p(RV, I) − ln p(I)`, which compares with the RV likelihood of any other model.
    pub fn rv_log_likelihood(&self, theta: &[f64], max_ecc: f64, set: &RvSet) -> f64 {
        let all = self.log_likelihood(theta, max_ecc, set);
        let Some(params) = self.params(theta, max_ecc) else {
            return all;
        };
        let Some(Ok((kernel, stack))) = self.joint_problem(theta, &params, set) else {
            return all;
        };
        let n = set.len();
        let indicators = crate::gp::JointPoints {
            time_d: &stack.time_d[n..],
            series: &stack.series[n..],
            white: &stack.white[n..],
        };
        indicators
            .log_likelihood(&kernel, &stack.residual[n..])
            .map_or(f64::NEG_INFINITY, |l| all - l)
    }

    /// Activity hyperparameters from θ in physical units (empty without a GP).
    pub fn activity_values(&self, theta: &[f64]) -> Vec<f64> {
        theta[self.activity_range()]
            .iter()
            .map(|x| x.exp())
            .collect()
    }

    /// The activity kernel at θ (hyperparameters moved into their bounds), `None`
    /// without a GP.
    pub fn kernel(&self, theta: &[f64]) -> Option<Kernel> {
        self.activity
            .as_ref()
            .and_then(|a| a.model.kernel(&a.clamp(&self.activity_values(theta))))
    }

    /// The joint model's kernel and stacked problem at θ (hyperparameters moved into
    /// their bounds); `None` without the joint model, `Some(Err)` for an invalid kernel.
    pub fn joint_problem(
        &self,
        theta: &[f64],
        params: &Params,
        set: &RvSet,
    ) -> Option<Result<(JointKernel, Stack), crate::gp::GpError>> {
        let (joint, a) = (self.joint.as_ref()?, self.activity.as_ref()?);
        let latent = a.model.latent(&a.clamp(&self.activity_values(theta)))?;
        let block = self.joint_block(theta);
        Some(joint.kernel(block, latent).map(|kernel| {
            let white = white_variances(params, set);
            (kernel, joint.stack(block, params, white, set))
        }))
    }

    /// The factorised stacked covariance and the residuals of the joint model at θ.
    pub fn joint_factor(
        &self,
        theta: &[f64],
        params: &Params,
        set: &RvSet,
    ) -> Option<(Factor, Stack)> {
        let (kernel, stack) = self.joint_problem(theta, params, set)?.ok()?;
        let factor = stack.points().factor(&kernel, &stack.residual).ok()?;
        Some((factor, stack))
    }

    /// Log-likelihood of `set` at θ: Gaussian with white errors and jitters, or with
    /// the activity GP added to their covariance ([`Points::log_likelihood`]; the
    /// semiseparable solver when the kernel allows), or with the joint model that of the
    /// RVs and indicators together. −∞ for invalid θ or a covariance that is not positive
    /// definite.
    pub fn log_likelihood(&self, theta: &[f64], max_ecc: f64, set: &RvSet) -> f64 {
        let Some(params) = self.params(theta, max_ecc) else {
            return f64::NEG_INFINITY;
        };
        let l = match self.kernel(theta) {
            None if self.joint.is_some() => self
                .joint_factor(theta, &params, set)
                .map_or(f64::NEG_INFINITY, |(f, s)| f.log_likelihood(&s.residual)),
            None => params.log_likelihood(set),
            Some(kernel) => {
                let white = white_variances(&params, set);
                let scale = self.point_scales(theta, set);
                Points {
                    time_d: &set.time_d,
                    white: &white,
                    scale: &scale,
                }
                .log_likelihood(&kernel, Solver::Auto, &params.residuals(set))
                .unwrap_or(f64::NEG_INFINITY)
            }
        };
        if l.is_nan() { f64::NEG_INFINITY } else { l }
    }

    /// Each point's activity amplitude factor at θ ([`Layout::activity_scales`] of its
    /// instrument).
    pub fn point_scales(&self, theta: &[f64], set: &RvSet) -> Vec<f64> {
        let by_instrument = self.activity_scales(theta);
        set.instrument.iter().map(|&k| by_instrument[k]).collect()
    }

    /// Model parameters from θ, with each eccentricity capped at `max_ecc` (the caller
    /// penalises the excess). `None` for a non-positive period or non-finite values.
    pub fn params(&self, theta: &[f64], max_ecc: f64) -> Option<Params> {
        let planets = (0..self.planets.len())
            .map(|i| self.orbit(theta, i, max_ecc))
            .collect::<Option<Vec<Orbit>>>()?;
        let (offsets_mps, jitters_mps, trend) = self.noise_and_trend(theta);
        if theta.iter().any(|x| !x.is_finite()) {
            return None;
        }
        Some(Params {
            planets,
            offsets_mps,
            jitters_mps,
            trend,
            regressors: self.regressor_coefficients(theta).to_vec(),
            regressors_per_instrument: self.regressors_per_instrument,
            noise: self.noise,
        })
    }

    /// Planet `i`'s orbit from θ, eccentricity capped at `max_ecc`; `None` when the
    /// elements are invalid (P ≤ 0, non-finite values).
    pub fn orbit(&self, theta: &[f64], i: usize, max_ecc: f64) -> Option<Orbit> {
        let [p, k, ec, es, tc] = self.planet_elements(theta, i);
        let e = ec.hypot(es);
        let omega = if e > 0.0 { es.atan2(ec) } else { 0.0 };
        Orbit::new(p, k, e.min(max_ecc), omega, tc).ok()
    }

    /// Index in θ of planet `i`'s first parameter and the number of its parameters.
    pub fn planet_range(&self, i: usize) -> std::ops::Range<usize> {
        let end = self
            .planet_start
            .get(i + 1)
            .copied()
            .unwrap_or(self.offsets_start);
        self.planet_start[i]..end
    }

    /// θ from the planet specs' starting values and the given noise/trend values (one
    /// jitter per instrument: a shared jitter starts at their median); regressors start at 0.
    pub fn initial(&self, offsets: &[f64], jitters: &[f64], trend: &[f64]) -> Vec<f64> {
        let mut theta = Vec::with_capacity(self.len());
        for p in &self.planets {
            if !p.fix_period {
                theta.push(p.period_d);
            }
            theta.push(p.k_mps);
            if self.shape == OrbitShape::Eccentric {
                theta.push(p.ecc_vector.0);
                theta.push(p.ecc_vector.1);
            }
            theta.push(p.tc_d);
        }
        theta.extend_from_slice(offsets);
        if self.shared_jitter {
            let mut sorted = jitters.to_vec();
            sorted.sort_by(f64::total_cmp);
            theta.push(sorted.get(sorted.len() / 2).copied().unwrap_or(1.0));
        } else {
            theta.extend_from_slice(jitters);
        }
        theta.extend((0..self.trend).map(|k| trend.get(k).copied().unwrap_or(0.0)));
        theta.extend(std::iter::repeat_n(0.0, self.n_regressors()));
        if let Some(j) = &self.joint {
            theta.extend_from_slice(&j.start);
        }
        if let Some(a) = &self.activity {
            theta.extend(a.start.iter().map(|x| x.ln()));
        }
        theta.extend(std::iter::repeat_n(0.0, self.n_activity_scales()));
        theta
    }

    /// Natural scale of each θ entry: about the size of a 1σ change for a typical data
    /// set, used to condition the optimiser and size finite-difference steps.
    pub fn scales(&self, set: &RvSet) -> Vec<f64> {
        let span = set.baseline_d().max(1.0);
        let mut errs = set.err_mps.clone();
        errs.sort_by(f64::total_cmp);
        let sigma = errs[errs.len() / 2].max(1e-3);
        let years = span / crate::model::DAYS_PER_YEAR;
        self.roles()
            .into_iter()
            .map(|role| match role {
                Role::Period(i) => 0.01 * self.planets[i].period_d.powi(2) / span,
                Role::K(_) | Role::Offset(_) | Role::Jitter(_) => sigma,
                Role::ECosW(_) | Role::ESinW(_) => 0.05,
                Role::Tc(i) => 0.01 * self.planets[i].period_d,
                Role::Trend(k) => sigma / years.powi(k as i32),
                Role::Regressor(j) => sigma / set.indicator_spread(self.regressor_target(j).0),
                Role::Activity(_) | Role::ActivityScale(_) => 0.1,
                Role::Joint(q) => self.joint.as_ref().map_or(1.0, |b| b.scale[q]),
            })
            .collect()
    }

    /// Keys of the activity hyperparameters (empty without a GP).
    pub fn activity_keys(&self) -> &'static [&'static str] {
        self.activity.as_ref().map_or(&[], |a| a.model.keys())
    }

    /// Short name of each θ entry, e.g. `b.period_d`, `offset_mps.Quill`,
    /// `regressor.line_width` (coefficient in m/s per indicator unit).
    pub fn names(&self, set: &RvSet) -> Vec<String> {
        let instruments = &set.instruments;
        self.roles()
            .into_iter()
            .map(|role| match role {
                Role::Period(i) => format!("{}.period_d", self.planets[i].label),
                Role::K(i) => format!("{}.k_mps", self.planets[i].label),
                Role::ECosW(i) => format!("{}.ecosw", self.planets[i].label),
                Role::ESinW(i) => format!("{}.esinw", self.planets[i].label),
                Role::Tc(i) => format!("{}.tc_d", self.planets[i].label),
                Role::Offset(k) => format!("offset_mps.{}", instruments[k]),
                Role::Jitter(_) if self.shared_jitter => "jitter_mps.shared".to_string(),
                Role::Jitter(k) => format!("jitter_mps.{}", instruments[k]),
                Role::Trend(k) => format!("trend_mps_per_yr{k}"),
                Role::Regressor(j) => match self.regressor_target(j) {
                    (c, None) => format!("regressor.{}", set.indicators[c].name),
                    (c, Some(k)) => {
                        format!("regressor.{}.{}", set.indicators[c].name, instruments[k])
                    }
                },
                Role::Activity(q) => format!("ln_activity.{}", self.activity_keys()[q]),
                Role::Joint(q) => self
                    .joint
                    .as_ref()
                    .map_or_else(String::new, |b| b.names[q].clone()),
                Role::ActivityScale(k) => format!("ln_activity.scale.{}", instruments[k]),
            })
            .collect()
    }
}

/// White variance of each point of `set`, error² + jitter², m²/s².
pub fn white_variances(params: &Params, set: &RvSet) -> Vec<f64> {
    (0..set.len())
        .map(|i| {
            let (e, s) = (set.err_mps[i], params.jitters_mps[set.instrument[i]]);
            e * e + s * s
        })
        .collect()
}
