//! `heft fit`: search for signals and fit them jointly from RV tables.

use std::process::ExitCode;

use heft::fit::{FitOptions, SearchSettings, SignalCount};
use heft::gp::{Activity, rotation_prior};
use heft::pipeline::{self, Request};
use heft::prep::{DataLog, OutlierMode, OutlierPolicy};
use heft::target::{OrbitShape, Settings, Star};

use super::input::InputArgs;
use super::{Failure, print_results};

/// Arguments of `heft fit`.
#[derive(clap::Args, Debug)]
pub struct FitArgs {
    #[command(flatten)]
    input: InputArgs,
    /// Fit exactly this many signals (default: as many as the periodogram search finds).
    #[arg(long)]
    planets: Option<usize>,
    /// Start a signal at this period, days (repeatable).
    #[arg(long = "period", value_name = "P")]
    periods: Vec<f64>,
    /// Hold the --period values fixed.
    #[arg(long, requires = "periods")]
    fix_period: bool,
    /// Circular orbits (e = 0).
    #[arg(long)]
    circular: bool,
    /// Polynomial trend order: 0 none, 1 linear, 2 quadratic.
    #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u8).range(0..=2))]
    trend: u8,
    /// Stellar mass, solar masses (adds m sin i to each planet).
    #[arg(long)]
    mstar_msun: Option<f64>,
    /// 1σ uncertainty of the stellar mass, solar masses.
    #[arg(long, requires = "mstar_msun", default_value_t = 0.0)]
    mstar_err: f64,
    /// Sample the posterior (values and errors from posterior draws, with convergence
    /// diagnostics; exit status 3 if it does not converge).
    #[arg(long)]
    sample: bool,
    /// Stellar-activity noise model: none (white jitter only), quasiperiodic, oscillator
    /// or joint (Gaussian processes; need --rotation-d; joint fits the RVs and the
    /// --activity-indicator columns as one latent process and its derivative).
    #[arg(long, default_value = "none")]
    activity: Activity,
    /// Stellar rotation period, days: centres the activity model's rotation-period prior
    /// (and the audit tests a signal there).
    #[arg(long)]
    rotation_d: Option<f64>,
    /// Train the activity model on this indicator column first (its hyperparameters
    /// become priors of the RV fit); with --activity joint, a column fitted together
    /// with the RVs (repeat for several).
    #[arg(long, value_name = "COLUMN")]
    activity_indicator: Vec<String>,
    /// One activity amplitude per instrument (quasiperiodic and oscillator models).
    #[arg(long)]
    activity_per_instrument: bool,
    /// 1σ uncertainty of the rotation period, days (default for the prior: 10 % of it).
    #[arg(long, requires = "rotation_d")]
    rotation_err_d: Option<f64>,
    /// Seed of the sampler and the Monte Carlo draws.
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Outliers (beyond 5 robust standard deviations of the normalised residuals): leave
    /// them out and refit until none is left (clip), keep them under a Student-t
    /// likelihood with 4 degrees of freedom (student-t), or keep them (keep); flagged
    /// points are listed either way.
    #[arg(long, value_enum, default_value = "clip")]
    outliers: OutliersArg,
    /// Print results as JSON (schema heft-results/1).
    #[arg(long)]
    json: bool,
}

/// Outlier treatment as given on the command line.
#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum OutliersArg {
    /// Leave flagged points out and refit.
    Clip,
    /// Keep them under a Student-t likelihood.
    StudentT,
    /// Keep them under the Gaussian likelihood.
    Keep,
}

impl FitArgs {
    /// The stellar mass given on the command line, if any.
    pub fn star(&self) -> Result<Option<Star>, Failure> {
        match self.mstar_msun {
            Some(m) if !(m.is_finite() && m > 0.0) => Err(Failure::Input(anyhow::anyhow!(
                "--mstar-msun must be positive, got {m}"
            ))),
            Some(m) => Ok(Some(Star::from_mass(m, self.mstar_err.max(0.0)))),
            None => Ok(None),
        }
    }

    /// The rotation period and its 1σ (0 when not given), days.
    ///
    /// # Errors
    /// A non-positive period or a negative uncertainty.
    pub fn rotation(&self) -> Result<Option<(f64, f64)>, Failure> {
        let Some(p) = self.rotation_d else {
            if self.activity != Activity::None {
                return Err(Failure::Input(anyhow::anyhow!(
                    "--activity needs the rotation period: --rotation-d P"
                )));
            }
            return Ok(None);
        };
        let err = self.rotation_err_d.unwrap_or(0.0);
        if !(p.is_finite() && p > 0.0 && err.is_finite() && err >= 0.0) {
            return Err(Failure::Input(anyhow::anyhow!(
                "--rotation-d must be positive and --rotation-err-d zero or positive, got {p} and {err}"
            )));
        }
        Ok(Some((p, err)))
    }

    /// The periods given with --period.
    pub fn periods(&self) -> &[f64] {
        &self.periods
    }

    /// Whether the JSON output was asked for.
    pub fn json(&self) -> bool {
        self.json
    }

    /// Seed of every random draw.
    pub fn seed(&self) -> u64 {
        self.seed
    }

    /// Reads the data and builds the analysis request.
    pub fn request<'a>(&self, star: Option<&'a Star>) -> Result<Request<'a>, Failure> {
        let defaults = Settings::default();
        if let Some(p) = self.periods.iter().find(|p| !(p.is_finite() && **p > 0.0)) {
            return Err(Failure::Input(anyhow::anyhow!(
                "--period must be positive, got {p}"
            )));
        }
        let count = match self.planets {
            Some(n) => SignalCount::Exactly(n.max(self.periods.len())),
            None => SignalCount::UpTo(defaults.max_signals.max(self.periods.len())),
        };
        let rotation = self.rotation()?;
        let set = self.input.load()?;
        if self.activity_per_instrument && self.activity == Activity::None {
            return Err(Failure::Input(anyhow::anyhow!(
                "--activity-per-instrument needs an activity model: --activity quasiperiodic|oscillator"
            )));
        }
        if !self.activity_indicator.is_empty() && self.activity == Activity::None {
            return Err(Failure::Input(anyhow::anyhow!(
                "--activity-indicator needs an activity model: --activity quasiperiodic|oscillator|joint"
            )));
        }
        let mut options = FitOptions {
            shape: if self.circular {
                OrbitShape::Circular
            } else {
                OrbitShape::Eccentric
            },
            trend: usize::from(self.trend),
            activity: self.activity,
            rotation_d: rotation.map(|(p, e)| rotation_prior(p, e)),
            activity_per_instrument: self.activity_per_instrument,
            ..FitOptions::default()
        };
        pipeline::activity_columns(&mut options, &set, &self.activity_indicator)
            .map_err(|e| Failure::Input(e.into()))?;
        let log = DataLog::new(set.len());
        Ok(Request {
            name: self
                .input
                .files
                .iter()
                .map(|f| f.display().to_string())
                .collect::<Vec<_>>()
                .join(", "),
            set,
            star,
            transits: &[],
            periods: self.periods.clone(),
            fix_periods: self.fix_period,
            search: SearchSettings {
                period_min_d: defaults.period_min_d,
                period_max_d: None,
                oversample: defaults.oversample,
                fap_threshold: defaults.fap_threshold,
                count,
                options,
            },
            seed: self.seed,
            draws: defaults.draws,
            profile: pipeline::profile_settings(&defaults),
            sampler: self.sample.then(|| {
                Settings {
                    seed: self.seed,
                    ..defaults.clone()
                }
                .sampler()
            }),
            priors: Default::default(),
            warm: Vec::new(),
            outliers: OutlierPolicy {
                mode: match self.outliers {
                    OutliersArg::Clip => OutlierMode::Clip,
                    OutliersArg::StudentT => OutlierMode::StudentT,
                    OutliersArg::Keep => OutlierMode::Keep,
                },
                ..OutlierPolicy::default()
            },
            log,
        })
    }
}

/// Runs the analysis of a request with a progress bar for the sampler.
pub fn analyse(request: Request) -> Result<heft::pipeline::Analysis, Failure> {
    let (bar, mut progress) = super::sampler_progress();
    let analysis = pipeline::analyse(request, &mut progress);
    bar.finish_and_clear();
    analysis.map_err(|e| Failure::Input(e.into()))
}

/// Runs the command.
pub fn run(args: &FitArgs) -> Result<ExitCode, Failure> {
    let star = args.star()?;
    let analysis = analyse(args.request(star.as_ref())?)?;
    print_results(&analysis, args.json)
}
