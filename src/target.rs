//! The target file (TOML): the star, the RV data files, known transits and analysis
//! settings, turned into a typed [`Target`] by [`load`]. Unknown keys are errors.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::data::{DataSpec, RvUnit, TimeStandard};
use crate::fit::OffsetPrior;
use crate::prep::{Era, OutlierMode, OutlierPolicy, Preparation, TransitWindow};
use crate::sample::Prior;

/// Everything a run needs to know about one star.
#[derive(Clone, Debug, PartialEq)]
pub struct Target {
    /// Name of the star/system (free text).
    pub name: String,
    /// The target file this came from.
    pub path: PathBuf,
    /// Stellar parameters.
    pub star: Star,
    /// RV files, paths resolved relative to the target file.
    pub data: Vec<DataSpec>,
    /// Known transits, one per transiting planet.
    pub transits: Vec<Transit>,
    /// Analysis settings.
    pub settings: Settings,
    /// Priors chosen in the target file (the rest keep their defaults).
    pub priors: PriorChoices,
    /// Instruments whose hardware changed, split into eras.
    pub eras: Vec<Era>,
    /// Known offsets between instruments or eras (e.g. from standard stars).
    pub offset_priors: Vec<OffsetPrior>,
}

/// Priors set in the target file's `[priors]` table, by planet label and instrument name.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct PriorChoices {
    /// Per planet label.
    pub planets: BTreeMap<String, PlanetPriors>,
    /// Per instrument name.
    pub instruments: BTreeMap<String, InstrumentPriors>,
}

/// Priors of one planet's physical elements.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct PlanetPriors {
    /// Period, days.
    pub period_d: Option<Prior>,
    /// Semi-amplitude, m/s.
    pub k_mps: Option<Prior>,
    /// Eccentricity (ω is always uniform).
    pub ecc: Option<Prior>,
    /// Conjunction time, full BJD_TDB.
    pub tc_bjd: Option<Prior>,
}

/// Priors of one instrument's offset and jitter.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct InstrumentPriors {
    /// Offset, m/s.
    pub offset_mps: Option<Prior>,
    /// Jitter, m/s.
    pub jitter_mps: Option<Prior>,
}

/// Stellar parameters with 1σ uncertainties.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Star {
    /// Mass, solar masses.
    pub mass_msun: f64,
    /// 1σ uncertainty of the mass, solar masses.
    #[serde(default)]
    pub mass_err_msun: f64,
    /// Radius, nominal solar radii.
    pub radius_rsun: Option<f64>,
    /// 1σ uncertainty of the radius, solar radii.
    #[serde(default)]
    pub radius_err_rsun: f64,
    /// Effective temperature, K.
    pub teff_k: Option<f64>,
    /// 1σ uncertainty of the effective temperature, K.
    #[serde(default)]
    pub teff_err_k: f64,
    /// Age, Gyr.
    pub age_gyr: Option<f64>,
    /// Mean stellar density, g/cm³ (e.g. from transit a/R*); with a radius, the mass and
    /// radius are then drawn jointly.
    pub density_gcc: Option<f64>,
    /// 1σ uncertainty of the stellar density, g/cm³.
    #[serde(default)]
    pub density_err_gcc: f64,
    /// Distance, parsecs (with the proper motion: the secular acceleration).
    pub distance_pc: Option<f64>,
    /// Total proper motion, milliarcseconds per year.
    pub pm_mas_per_yr: Option<f64>,
    /// Rotation period, days (e.g. from photometry): the audit tests a signal there.
    pub rotation_d: Option<f64>,
    /// 1σ uncertainty of the rotation period, days.
    #[serde(default)]
    pub rotation_err_d: f64,
}

impl Star {
    /// A star known only by its mass (solar masses) and its 1σ uncertainty.
    pub fn from_mass(mass_msun: f64, mass_err_msun: f64) -> Star {
        Star {
            mass_msun,
            mass_err_msun,
            radius_rsun: None,
            radius_err_rsun: 0.0,
            teff_k: None,
            teff_err_k: 0.0,
            age_gyr: None,
            density_gcc: None,
            density_err_gcc: 0.0,
            distance_pc: None,
            pm_mas_per_yr: None,
            rotation_d: None,
            rotation_err_d: 0.0,
        }
    }
}

/// A planet's transit constraints (times in the declared standard, converted on load).
#[derive(Clone, Debug, PartialEq)]
pub struct Transit {
    /// Label of the planet (e.g. "b").
    pub label: String,
    /// Orbital period, days.
    pub period_d: f64,
    /// 1σ uncertainty of the period, days.
    pub period_err_d: f64,
    /// Conjunction (mid-transit) time, full BJD_TDB.
    pub tc_bjd: f64,
    /// 1σ uncertainty of the conjunction time, days.
    pub tc_err_d: f64,
    /// Planet-to-star radius ratio and its 1σ uncertainty.
    pub rp_rs: Option<(f64, f64)>,
    /// Orbital inclination and its 1σ uncertainty, degrees.
    pub incl_deg: Option<(f64, f64)>,
    /// Impact parameter and its 1σ uncertainty (used for the inclination when `a_rs` is
    /// known and `incl_deg` is not).
    pub impact: Option<(f64, f64)>,
    /// Scaled semi-major axis a/R* and its 1σ uncertainty.
    pub a_rs: Option<(f64, f64)>,
    /// Total transit duration and its 1σ uncertainty, hours.
    pub duration_h: Option<(f64, f64)>,
}

/// Orbit shape fitted to each planet.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default, Deserialize, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum OrbitShape {
    /// Free eccentricity.
    #[default]
    Eccentric,
    /// e = 0.
    Circular,
}

/// One indicator column name or a list of them.
#[derive(Clone, Debug, PartialEq, Deserialize, serde::Serialize)]
#[serde(
    untagged,
    expecting = "an indicator column name or a list of names, e.g. \"line_width\" or [\"line_width\", \"s_index\"]"
)]
pub enum Columns {
    /// One column.
    One(String),
    /// Several columns.
    Several(Vec<String>),
}

impl Columns {
    /// The column names.
    pub fn names(&self) -> Vec<String> {
        match self {
            Columns::One(name) => vec![name.clone()],
            Columns::Several(names) => names.clone(),
        }
    }
}

/// Analysis settings with stated defaults.
#[derive(Clone, Debug, PartialEq, Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields, default)]
pub struct Settings {
    /// Seed of every random draw (default 1).
    pub seed: u64,
    /// Shortest period searched, days (default 1.0).
    pub period_min_d: f64,
    /// Longest period searched, days (default: the time span of the data).
    pub period_max_d: Option<f64>,
    /// Periodogram oversampling factor: frequency step = 1/(oversample × span) (default 10).
    pub oversample: f64,
    /// Most signals the iterative search may add (default 4).
    pub max_signals: usize,
    /// A periodogram peak counts as a signal when its Baluev FAP is below this
    /// (default 0.001, i.e. 0.1 %, common practice).
    pub fap_threshold: f64,
    /// Orbit shape (default eccentric).
    pub orbit: OrbitShape,
    /// Polynomial trend order: 0 none, 1 linear, 2 quadratic (default 1).
    pub trend: usize,
    /// Monte Carlo draws used to propagate uncertainties into derived quantities
    /// (default 20 000); with sampling, at most this many posterior draws are kept.
    pub draws: usize,
    /// Bond albedo for equilibrium temperatures (default 0.3).
    pub albedo: f64,
    /// Heating efficiency of energy-limited escape (default 0.1).
    pub escape_efficiency: f64,
    /// XUV flux at each planet, W/m², overriding the estimate from the star's age.
    pub xuv_flux_wm2: Option<f64>,
    /// Sample the posterior (default false: the maximum-likelihood fit with curvature
    /// errors, which takes seconds where sampling a multi-planet model takes minutes).
    pub sample: bool,
    /// Independent ensembles compared by R̂ (default 2, at least 2).
    pub ensembles: usize,
    /// Walkers per ensemble (default 0 = automatic, 2 × parameters + 2, at least 16).
    pub walkers: usize,
    /// Required chain length in autocorrelation times (default 50).
    pub min_tau_multiple: f64,
    /// Required bound on R̂ (default 1.01).
    pub max_rhat: f64,
    /// Step limit of the sampler (default 200 000).
    pub max_steps: usize,
    /// Sample every alias of a planet's period that the data do not rule out as a mode
    /// of its own and weigh the modes (default true; false: the maximum-likelihood mode
    /// only).
    pub period_modes: bool,
    /// Also write the draws as CSV beside the Parquet file (default false).
    pub draws_csv: bool,
    /// Audit every planet (aliases, model variants, activity, jackknife; default true).
    pub audit: bool,
    /// Also sample the posterior of the baseline and of every model variant in the audit
    /// (default false: maximum likelihood; each posterior costs as much as the run's own).
    pub audit_posterior: bool,
    /// Stellar-activity noise model: `none` (default), `quasiperiodic`, `oscillator` or
    /// `joint` (Gaussian processes; need `star.rotation_d`, which centres the rotation
    /// prior).
    pub activity: crate::gp::Activity,
    /// Indicator column on which the activity model's hyperparameters are trained first
    /// (their fit becomes Gaussian priors of the RV fit); with `joint`, the column or
    /// columns fitted together with the RVs (default none).
    pub activity_indicator: Option<Columns>,
    /// One activity amplitude per instrument, a factor on the first instrument's
    /// (`quasiperiodic` and `oscillator`; default false).
    pub activity_per_instrument: bool,
    /// Start `heft run` from the latest complete run's solution (default false: every run
    /// starts afresh, so identical inputs give identical results).
    pub warm_start: bool,
    /// Outliers: `clip` (default), `student-t` or `keep`.
    pub outliers: OutlierMode,
    /// A point is an outlier beyond this many robust standard deviations (default 5).
    pub outlier_threshold: f64,
    /// Degrees of freedom of the Student-t likelihood (default 4).
    pub student_t_dof: f64,
    /// Fit the Student-t degrees of freedom instead of using `student_t_dof` (default
    /// false).
    pub fit_student_t_dof: bool,
    /// Leave points taken in transit out of the fit (default true; needs each transit's
    /// `duration_h`).
    pub exclude_in_transit: bool,
    /// Combine the points of an instrument within this many days, e.g. 0.5 for a night
    /// (default: no binning).
    pub bin_window_d: Option<f64>,
    /// With binning, also fit the unbinned points and report both (default false).
    pub bin_compare: bool,
    /// Linear terms in every indicator column of the data: `none` (default), `shared`
    /// (one coefficient per indicator) or `per-instrument` (one per indicator and
    /// instrument).
    pub indicator_terms: IndicatorTerms,
    /// Time budget of a run, seconds (default none): when it runs out the sampler stops
    /// early and later stages are skipped; results.json says what was left out.
    pub time_budget_s: Option<f64>,
    /// Refuse to start a run whose estimated peak memory exceeds this, MB (default none;
    /// see [`crate::runs::memory_estimate_mb`]).
    pub max_memory_mb: Option<f64>,
}

/// Linear decorrelation terms in the activity indicators.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum IndicatorTerms {
    /// No indicator terms.
    #[default]
    None,
    /// One coefficient per indicator for all instruments.
    Shared,
    /// One coefficient per indicator and instrument.
    PerInstrument,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            seed: 1,
            period_min_d: 1.0,
            period_max_d: None,
            oversample: 10.0,
            max_signals: 4,
            fap_threshold: 1e-3,
            orbit: OrbitShape::Eccentric,
            trend: 1,
            draws: 20_000,
            albedo: crate::derive::atmosphere::DEFAULT_ALBEDO,
            escape_efficiency: crate::derive::atmosphere::DEFAULT_ESCAPE_EFFICIENCY,
            xuv_flux_wm2: None,
            sample: false,
            ensembles: 2,
            walkers: 0,
            min_tau_multiple: 50.0,
            max_rhat: 1.01,
            max_steps: 200_000,
            period_modes: true,
            draws_csv: false,
            audit: true,
            audit_posterior: false,
            warm_start: false,
            outliers: OutlierMode::Clip,
            outlier_threshold: OutlierPolicy::default().threshold_sigma,
            student_t_dof: OutlierPolicy::default().dof,
            fit_student_t_dof: false,
            exclude_in_transit: true,
            bin_window_d: None,
            bin_compare: false,
            indicator_terms: IndicatorTerms::None,
            time_budget_s: None,
            max_memory_mb: None,
            activity: crate::gp::Activity::None,
            activity_indicator: None,
            activity_per_instrument: false,
        }
    }
}

impl Settings {
    /// The sampler settings these choose.
    pub fn sampler(&self) -> crate::sample::SamplerSettings {
        crate::sample::SamplerSettings {
            ensembles: self.ensembles,
            walkers: self.walkers,
            min_tau_multiple: self.min_tau_multiple,
            max_rhat: self.max_rhat,
            max_steps: self.max_steps,
            period_modes: self.period_modes,
            seed: self.seed,
            ..crate::sample::SamplerSettings::default()
        }
    }

    /// The outlier policy these choose.
    pub fn outlier_policy(&self) -> OutlierPolicy {
        OutlierPolicy {
            mode: self.outliers,
            threshold_sigma: self.outlier_threshold,
            dof: self.student_t_dof,
            fit_dof: self.fit_student_t_dof,
        }
    }
}

impl Target {
    /// The data preparation this target asks for: its eras, the transit windows of the
    /// transits with a duration, and the binning settings.
    pub fn preparation(&self) -> Preparation {
        Preparation {
            eras: self.eras.clone(),
            windows: self
                .transits
                .iter()
                .filter_map(|t| {
                    t.duration_h.map(|(h, _)| TransitWindow {
                        label: t.label.clone(),
                        period_d: t.period_d,
                        tc_bjd: t.tc_bjd,
                        duration_d: h / 24.0,
                    })
                })
                .collect(),
            exclude_in_transit: self.settings.exclude_in_transit,
            bin_window_d: self.settings.bin_window_d,
        }
    }
}

/// Why a target file could not be used.
#[derive(Debug, thiserror::Error)]
pub enum TargetError {
    /// The file could not be read.
    #[error("{path}: cannot read: {source}")]
    Io {
        /// The target file.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// TOML syntax or schema error (unknown keys included).
    #[error("{path}: {message}")]
    Parse {
        /// The target file.
        path: PathBuf,
        /// What is wrong, with line and column where known.
        message: String,
    },
    /// A value is out of range or inconsistent.
    #[error("{path}: {key}: {message}")]
    Invalid {
        /// The target file.
        path: PathBuf,
        /// The offending key, e.g. `star.mass_msun`.
        key: String,
        /// What is wrong.
        message: String,
    },
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTarget {
    name: String,
    star: Star,
    data: Vec<RawData>,
    #[serde(default)]
    transit: Vec<RawTransit>,
    #[serde(default)]
    settings: Settings,
    #[serde(default)]
    priors: RawPriors,
    #[serde(default)]
    era: Vec<RawEra>,
    #[serde(default)]
    offset_prior: Vec<RawOffsetPrior>,
}

/// An `[[offset_prior]]` table: `instruments = [earlier, later]` and
/// `gaussian = [mean, sd]` of `offset(later) − offset(earlier)`, m/s.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawOffsetPrior {
    instruments: [String; 2],
    gaussian: [f64; 2],
}

/// An `[[era]]` table: `instrument`, `split_bjd` (a list of full BJD_TDB times) and
/// optional `names` (default `<instrument>-1`, `<instrument>-2`, …).
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEra {
    instrument: String,
    split_bjd: Vec<f64>,
    names: Option<Vec<String>>,
}

#[derive(Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct RawPriors {
    #[serde(default)]
    planet: BTreeMap<String, RawPlanetPriors>,
    #[serde(default)]
    instrument: BTreeMap<String, RawInstrumentPriors>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawPlanetPriors {
    period_d: Option<RawPrior>,
    k_mps: Option<RawPrior>,
    ecc: Option<RawPrior>,
    tc_bjd: Option<RawPrior>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawInstrumentPriors {
    offset_mps: Option<RawPrior>,
    jitter_mps: Option<RawPrior>,
}

/// One prior as written: exactly one of `uniform = [lo, hi]`, `log_uniform = [lo, hi]`,
/// `gaussian = [mean, sd]` (with optional `bounds = [lo, hi]`).
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawPrior {
    uniform: Option<[f64; 2]>,
    log_uniform: Option<[f64; 2]>,
    gaussian: Option<[f64; 2]>,
    bounds: Option<[f64; 2]>,
}

impl RawPrior {
    /// The prior, checked against the quantity's physical range `[min, max]` (a
    /// Gaussian without `bounds` reaches 10 sd each side, cut at that range).
    fn build(&self, min: f64, max: f64) -> Result<Prior, String> {
        if self.bounds.is_some() && self.gaussian.is_none() {
            return Err("`bounds` goes with `gaussian` only".into());
        }
        let prior = match (self.uniform, self.log_uniform, self.gaussian) {
            (Some([lo, hi]), None, None) => Prior::uniform(lo, hi),
            (None, Some([lo, hi]), None) => Prior::log_uniform(lo, hi),
            (None, None, Some([mean, sd])) => match self.bounds {
                Some([lo, hi]) => Prior::gaussian(mean, sd, Some((lo, hi))),
                None => Prior::gaussian(mean, sd, None).and_then(|p| {
                    let (lo, hi) = p.clipped(min, max).bounds();
                    Prior::gaussian(mean, sd, Some((lo, hi)))
                }),
            },
            _ => {
                return Err(
                    "give exactly one of uniform = [lo, hi], log_uniform = [lo, hi], gaussian = [mean, sd]"
                        .into(),
                );
            }
        };
        prior
            .and_then(|p| p.within(min, max))
            .map_err(|e| e.to_string())
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawData {
    file: PathBuf,
    instrument: Option<String>,
    #[serde(default)]
    unit: RvUnit,
    time: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTransit {
    label: String,
    period_d: f64,
    #[serde(default)]
    period_err_d: f64,
    tc: f64,
    #[serde(default)]
    tc_err_d: f64,
    time: Option<String>,
    rp_rs: Option<f64>,
    #[serde(default)]
    rp_rs_err: f64,
    depth_ppm: Option<f64>,
    #[serde(default)]
    depth_err_ppm: f64,
    incl_deg: Option<f64>,
    #[serde(default)]
    incl_err_deg: f64,
    impact: Option<f64>,
    #[serde(default)]
    impact_err: f64,
    a_rs: Option<f64>,
    #[serde(default)]
    a_rs_err: f64,
    duration_h: Option<f64>,
    #[serde(default)]
    duration_err_h: f64,
}

/// The `[priors]` table checked against each quantity's physical range.
fn prior_choices(
    raw: RawPriors,
    invalid: &dyn Fn(&str, String) -> TargetError,
) -> Result<PriorChoices, TargetError> {
    let one = |key: String, p: &Option<RawPrior>, min: f64, max: f64| match p {
        None => Ok(None),
        Some(p) => p.build(min, max).map(Some).map_err(|m| invalid(&key, m)),
    };
    let mut choices = PriorChoices::default();
    for (label, p) in raw.planet {
        let key = |k: &str| format!("priors.planet.{label}.{k}");
        let planet = PlanetPriors {
            period_d: one(
                key("period_d"),
                &p.period_d,
                f64::MIN_POSITIVE,
                f64::INFINITY,
            )?,
            k_mps: one(key("k_mps"), &p.k_mps, 0.0, f64::INFINITY)?,
            ecc: one(key("ecc"), &p.ecc, 0.0, crate::sample::posterior::ECC_LIMIT)?,
            tc_bjd: one(key("tc_bjd"), &p.tc_bjd, 2_000_000.0, f64::INFINITY)?,
        };
        choices.planets.insert(label, planet);
    }
    for (name, p) in raw.instrument {
        let key = |k: &str| format!("priors.instrument.{name}.{k}");
        let inst = InstrumentPriors {
            offset_mps: one(
                key("offset_mps"),
                &p.offset_mps,
                f64::NEG_INFINITY,
                f64::INFINITY,
            )?,
            jitter_mps: one(key("jitter_mps"), &p.jitter_mps, 0.0, f64::INFINITY)?,
        };
        choices.instruments.insert(name, inst);
    }
    Ok(choices)
}

/// Reads and checks a target file; data paths are resolved relative to its folder.
///
/// # Errors
/// [`TargetError`] naming the file and the key or line at fault.
pub fn load(path: &Path) -> Result<Target, TargetError> {
    let text = std::fs::read_to_string(path).map_err(|source| TargetError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    parse(&text, path)
}

/// Parses target-file text; `path` names the file in errors and anchors relative paths.
///
/// # Errors
/// [`TargetError`] naming the file and the key or line at fault.
pub fn parse(text: &str, path: &Path) -> Result<Target, TargetError> {
    let raw: RawTarget = toml::from_str(text).map_err(|e| TargetError::Parse {
        path: path.to_path_buf(),
        message: e.to_string().trim_end().replace('\n', " "),
    })?;
    let invalid = |key: &str, message: String| TargetError::Invalid {
        path: path.to_path_buf(),
        key: key.to_string(),
        message,
    };
    let positive = |key: &str, v: f64| {
        if v.is_finite() && v > 0.0 {
            Ok(())
        } else {
            Err(invalid(key, format!("must be a positive number, got {v}")))
        }
    };
    let non_negative = |key: &str, v: f64| {
        if v.is_finite() && v >= 0.0 {
            Ok(())
        } else {
            Err(invalid(key, format!("must be zero or positive, got {v}")))
        }
    };
    let time_standard = |key: &str, s: &Option<String>| -> Result<TimeStandard, TargetError> {
        match s {
            None => Ok(TimeStandard::default()),
            Some(s) => s
                .parse()
                .map_err(|e: crate::data::TimeStandardError| invalid(key, e.to_string())),
        }
    };

    let star = raw.star;
    positive("star.mass_msun", star.mass_msun)?;
    non_negative("star.mass_err_msun", star.mass_err_msun)?;
    if let Some(r) = star.radius_rsun {
        positive("star.radius_rsun", r)?;
    }
    non_negative("star.radius_err_rsun", star.radius_err_rsun)?;
    if let Some(t) = star.teff_k {
        positive("star.teff_k", t)?;
    }
    non_negative("star.teff_err_k", star.teff_err_k)?;
    for (key, v) in [
        ("star.age_gyr", star.age_gyr),
        ("star.distance_pc", star.distance_pc),
        ("star.density_gcc", star.density_gcc),
        ("star.rotation_d", star.rotation_d),
    ] {
        if let Some(v) = v {
            positive(key, v)?;
        }
    }
    non_negative("star.density_err_gcc", star.density_err_gcc)?;
    non_negative("star.rotation_err_d", star.rotation_err_d)?;
    if let Some(pm) = star.pm_mas_per_yr {
        non_negative("star.pm_mas_per_yr", pm)?;
    }

    if raw.data.is_empty() {
        return Err(invalid(
            "data",
            "at least one [[data]] file is needed".into(),
        ));
    }
    let base = path.parent().unwrap_or(Path::new("."));
    let data = raw
        .data
        .into_iter()
        .enumerate()
        .map(|(i, d)| {
            Ok(DataSpec {
                path: base.join(&d.file),
                instrument: d.instrument,
                unit: d.unit,
                time: time_standard(&format!("data[{i}].time"), &d.time)?,
            })
        })
        .collect::<Result<Vec<_>, TargetError>>()?;

    let mut transits = Vec::new();
    for (i, t) in raw.transit.into_iter().enumerate() {
        let key = |k: &str| format!("transit[{i}].{k}");
        positive(&key("period_d"), t.period_d)?;
        non_negative(&key("period_err_d"), t.period_err_d)?;
        non_negative(&key("tc_err_d"), t.tc_err_d)?;
        let std = time_standard(&key("time"), &t.time)?;
        let tc_bjd = std.full_jd(t.tc);
        if !(tc_bjd.is_finite() && tc_bjd > 2_000_000.0) {
            return Err(invalid(
                &key("tc"),
                format!(
                    "{} in {std} is full Julian date {tc_bjd}, not a plausible epoch; declare the time standard with `time`",
                    t.tc
                ),
            ));
        }
        let pair = |k: &str, v: Option<f64>, e: f64| -> Result<Option<(f64, f64)>, TargetError> {
            match v {
                None => Ok(None),
                Some(v) => {
                    positive(&key(k), v)?;
                    non_negative(&key(&format!("{k}_err")), e)?;
                    Ok(Some((v, e)))
                }
            }
        };
        let rp_rs = match (t.rp_rs, t.depth_ppm) {
            (Some(_), Some(_)) => {
                return Err(invalid(
                    &key("depth_ppm"),
                    "give rp_rs or depth_ppm, not both".into(),
                ));
            }
            (Some(r), None) => pair("rp_rs", Some(r), t.rp_rs_err)?,
            // Depth = (Rp/R*)^2 for a uniform disc (limb darkening ignored).
            (None, Some(d)) => pair("depth_ppm", Some(d), t.depth_err_ppm)?
                .map(|(d, e)| ((d * 1e-6).sqrt(), 0.5 * e / d * (d * 1e-6).sqrt())),
            (None, None) => None,
        };
        if let Some((r, _)) = rp_rs
            && r >= 1.0
        {
            return Err(invalid(
                &key("rp_rs"),
                format!("radius ratio {r} must be below 1"),
            ));
        }
        let incl = pair("incl_deg", t.incl_deg, t.incl_err_deg)?;
        if let Some((i_deg, _)) = incl
            && i_deg > 90.0
        {
            return Err(invalid(
                &key("incl_deg"),
                format!("{i_deg} must be in (0, 90]"),
            ));
        }
        transits.push(Transit {
            label: t.label,
            period_d: t.period_d,
            period_err_d: t.period_err_d,
            tc_bjd,
            tc_err_d: t.tc_err_d,
            rp_rs,
            incl_deg: incl,
            impact: match t.impact {
                Some(b) => {
                    non_negative(&key("impact"), b)?;
                    Some((b, t.impact_err))
                }
                None => None,
            },
            a_rs: pair("a_rs", t.a_rs, t.a_rs_err)?,
            duration_h: pair("duration_h", t.duration_h, t.duration_err_h)?,
        });
    }

    let s = &raw.settings;
    positive("settings.period_min_d", s.period_min_d)?;
    if let Some(p) = s.period_max_d {
        positive("settings.period_max_d", p)?;
        if p <= s.period_min_d {
            return Err(invalid(
                "settings.period_max_d",
                format!("{p} must exceed period_min_d = {}", s.period_min_d),
            ));
        }
    }
    if !(s.oversample.is_finite() && s.oversample >= 1.0) {
        return Err(invalid(
            "settings.oversample",
            format!("must be at least 1, got {}", s.oversample),
        ));
    }
    if !(s.fap_threshold > 0.0 && s.fap_threshold < 1.0) {
        return Err(invalid(
            "settings.fap_threshold",
            format!("must be in (0, 1), got {}", s.fap_threshold),
        ));
    }
    if s.trend > 2 {
        return Err(invalid(
            "settings.trend",
            format!("order must be 0, 1 or 2, got {}", s.trend),
        ));
    }
    if !(0.0..1.0).contains(&s.albedo) {
        return Err(invalid(
            "settings.albedo",
            format!("must be in [0, 1), got {}", s.albedo),
        ));
    }
    if !(s.escape_efficiency > 0.0 && s.escape_efficiency <= 1.0) {
        return Err(invalid(
            "settings.escape_efficiency",
            format!("must be in (0, 1], got {}", s.escape_efficiency),
        ));
    }
    if let Some(f) = s.xuv_flux_wm2 {
        positive("settings.xuv_flux_wm2", f)?;
    }
    if s.draws < 100 {
        return Err(invalid(
            "settings.draws",
            format!("need at least 100, got {}", s.draws),
        ));
    }

    if s.ensembles < 2 {
        return Err(invalid(
            "settings.ensembles",
            format!("R̂ needs at least 2 ensembles, got {}", s.ensembles),
        ));
    }
    if s.walkers != 0 && (s.walkers < 4 || s.walkers % 2 == 1) {
        return Err(invalid(
            "settings.walkers",
            format!(
                "must be 0 (automatic) or an even number ≥ 4, got {}",
                s.walkers
            ),
        ));
    }
    if !(s.min_tau_multiple.is_finite() && s.min_tau_multiple >= 1.0) {
        return Err(invalid(
            "settings.min_tau_multiple",
            format!("must be at least 1, got {}", s.min_tau_multiple),
        ));
    }
    if !(s.max_rhat.is_finite() && s.max_rhat > 1.0) {
        return Err(invalid(
            "settings.max_rhat",
            format!("must be above 1, got {}", s.max_rhat),
        ));
    }
    if s.max_steps < 1000 {
        return Err(invalid(
            "settings.max_steps",
            format!("need at least 1000, got {}", s.max_steps),
        ));
    }

    if let Some(b) = s.time_budget_s {
        positive("settings.time_budget_s", b)?;
    }
    if let Some(m) = s.max_memory_mb {
        positive("settings.max_memory_mb", m)?;
    }
    use crate::limits::{
        MAX_DRAWS, MAX_ENSEMBLES, MAX_OVERSAMPLE, MAX_SIGNALS, MAX_STEPS, MAX_WALKERS,
    };
    for (key, value, cap) in [
        ("settings.draws", s.draws, MAX_DRAWS),
        ("settings.walkers", s.walkers, MAX_WALKERS),
        ("settings.max_steps", s.max_steps, MAX_STEPS),
        ("settings.ensembles", s.ensembles, MAX_ENSEMBLES),
        ("settings.max_signals", s.max_signals, MAX_SIGNALS),
    ] {
        if value > cap {
            return Err(invalid(key, format!("{value} is above the limit of {cap}")));
        }
    }
    if s.oversample > MAX_OVERSAMPLE {
        return Err(invalid(
            "settings.oversample",
            format!("{} is above the limit of {MAX_OVERSAMPLE}", s.oversample),
        ));
    }

    if !(s.outlier_threshold.is_finite() && s.outlier_threshold > 0.0) {
        return Err(invalid(
            "settings.outlier_threshold",
            format!("must be a positive number, got {}", s.outlier_threshold),
        ));
    }
    positive("settings.student_t_dof", s.student_t_dof)?;
    if let Some(w) = s.bin_window_d {
        positive("settings.bin_window_d", w)?;
    }
    if s.bin_compare && s.bin_window_d.is_none() {
        return Err(invalid(
            "settings.bin_compare",
            "needs settings.bin_window_d".into(),
        ));
    }
    let mut eras = Vec::new();
    for (i, e) in raw.era.into_iter().enumerate() {
        let key = |k: &str| format!("era[{i}].{k}");
        if e.split_bjd.is_empty()
            || e.split_bjd
                .iter()
                .any(|t| !(t.is_finite() && *t > 2_000_000.0))
            || e.split_bjd.windows(2).any(|w| w[1] <= w[0])
        {
            return Err(invalid(
                &key("split_bjd"),
                format!(
                    "needs increasing full BJD_TDB times (above 2000000), got {:?}",
                    e.split_bjd
                ),
            ));
        }
        let names = e.names.unwrap_or_else(|| {
            (1..=e.split_bjd.len() + 1)
                .map(|n| format!("{}-{n}", e.instrument))
                .collect()
        });
        if names.len() != e.split_bjd.len() + 1 {
            return Err(invalid(
                &key("names"),
                format!(
                    "{} split times make {} eras, but {} names are given",
                    e.split_bjd.len(),
                    e.split_bjd.len() + 1,
                    names.len()
                ),
            ));
        }
        eras.push(Era {
            instrument: e.instrument,
            splits_bjd: e.split_bjd,
            names,
        });
    }

    let mut offset_priors = Vec::new();
    for (i, p) in raw.offset_prior.into_iter().enumerate() {
        let key = |k: &str| format!("offset_prior[{i}].{k}");
        let [mean, sd] = p.gaussian;
        if !mean.is_finite() {
            return Err(invalid(
                &key("gaussian"),
                format!("mean {mean} is not finite"),
            ));
        }
        positive(&key("gaussian"), sd)?;
        if p.instruments[0] == p.instruments[1] {
            return Err(invalid(
                &key("instruments"),
                format!("names the same instrument twice ('{}')", p.instruments[0]),
            ));
        }
        offset_priors.push(OffsetPrior {
            instruments: p.instruments,
            mean_mps: mean,
            sd_mps: sd,
        });
    }

    if s.activity != crate::gp::Activity::None && star.rotation_d.is_none() {
        return Err(invalid(
            "settings.activity",
            format!(
                "the {:?} activity model needs the rotation period star.rotation_d",
                s.activity
            ),
        ));
    }

    if s.activity_per_instrument && s.activity == crate::gp::Activity::None {
        return Err(invalid(
            "settings.activity_per_instrument",
            "needs an activity model: set settings.activity".into(),
        ));
    }

    if s.activity_indicator.is_some() && s.activity == crate::gp::Activity::None {
        return Err(invalid(
            "settings.activity_indicator",
            "needs an activity model: set settings.activity".into(),
        ));
    }

    let priors = prior_choices(raw.priors, &invalid)?;
    Ok(Target {
        name: raw.name,
        path: path.to_path_buf(),
        star,
        data,
        transits,
        settings: raw.settings,
        priors,
        eras,
        offset_priors,
    })
}
