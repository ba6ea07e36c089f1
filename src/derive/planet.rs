//! Monte Carlo propagation: draws of orbit, star and transit → draws and summaries of the
//! planet's mass, size and density; and the `heft mass` calculator built on it.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use super::composition::{CompositionClass, classify};
use super::constants::MJUP_IN_MEARTH;
use super::density::{
    bulk_density_gcc, escape_velocity_kms, radius_rearth_from_ratio, surface_gravity_mps2,
};
use super::draws::{
    InclinationDraws, InclinationSource, OrbitDraws, RadiusDraws, StarDraws, Support, TransitDraws,
    truncated_normal_draws,
};
use super::mass::{MassSum, semi_major_axis_au, solve_msini};
use super::{DeriveError, MIN_DRAWS};
use crate::summary::Summary;
use crate::target::Star;

/// Draws of the derived quantities, one per input draw.
#[derive(Clone, Debug, PartialEq)]
pub struct DerivedDraws {
    /// Minimum mass, Earth masses.
    pub msini_mearth: Vec<f64>,
    /// True mass, Earth masses (inclination known or assumed).
    pub mass_mearth: Option<Vec<f64>>,
    /// Semi-major axis, au.
    pub a_au: Vec<f64>,
    /// Orbital inclination, degrees (given or from the impact parameter).
    pub incl_deg: Option<Vec<f64>>,
    /// Radius, nominal equatorial Earth radii.
    pub radius_rearth: Option<Vec<f64>>,
    /// Bulk density, g/cm³.
    pub density_gcc: Option<Vec<f64>>,
    /// Surface gravity, m/s².
    pub gravity_mps2: Option<Vec<f64>>,
    /// Escape velocity, km/s.
    pub vesc_kms: Option<Vec<f64>>,
}

/// One planet's derived quantities: summaries (median and 15.87/84.13 percentiles of the
/// draws) under the JSON keys of the results schema, the class, and how they were derived.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlanetDerived {
    /// Minimum mass m sin i, Earth masses.
    pub msini_mearth: Summary,
    /// Minimum mass m sin i, Jupiter masses.
    pub msini_mjup: Summary,
    /// True mass, Earth masses, when the inclination is known or assumed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_mearth: Option<Summary>,
    /// True mass, Jupiter masses, likewise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_mjup: Option<Summary>,
    /// Orbital inclination, degrees, when given or derived (not when assumed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub incl_deg: Option<Summary>,
    /// Semi-major axis, au (Kepler's third law with M* + m_p).
    pub a_au: Summary,
    /// Radius, nominal equatorial Earth radii.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub radius_rearth: Option<Summary>,
    /// Bulk density, g/cm³.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub density_gcc: Option<Summary>,
    /// Surface gravity GM/R², m/s².
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gravity_mps2: Option<Summary>,
    /// Escape velocity, km/s.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub vesc_kms: Option<Summary>,
    /// Composition class from the median mass and radius.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub class: Option<CompositionClass>,
    /// Which total mass entered the mass function.
    pub mass_sum: MassSum,
    /// Where the inclination came from, when there is one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub inclination: Option<InclinationSource>,
    /// Assumptions made, in words.
    pub notes: Vec<String>,
    /// The draws behind the summaries.
    #[serde(skip)]
    pub draws: DerivedDraws,
}

impl PlanetDerived {
    /// Number of draws behind the summaries (1 for an exact computation).
    pub fn n_draws(&self) -> usize {
        self.draws.msini_mearth.len()
    }

    /// Adds the 95th and 99th percentiles of the draws as upper limits to m sin i and the
    /// mass (for a signal not significantly detected).
    pub fn with_upper_limits(mut self) -> PlanetDerived {
        let to_mjup = |v: &[f64]| -> Vec<f64> { v.iter().map(|m| m / MJUP_IN_MEARTH).collect() };
        let msini = &self.draws.msini_mearth;
        self.msini_mearth = self.msini_mearth.with_upper_limits(msini);
        self.msini_mjup = self.msini_mjup.with_upper_limits(&to_mjup(msini));
        if let Some(m) = &self.draws.mass_mearth {
            self.mass_mearth = self.mass_mearth.map(|s| s.with_upper_limits(m));
            self.mass_mjup = self.mass_mjup.map(|s| s.with_upper_limits(&to_mjup(m)));
        }
        self
    }
}

/// Derives the planet from draws of its orbit, its star and (optionally) its transit.
///
/// Draw j of every input forms one Monte Carlo sample. For each, m sin i solves the full
/// mass function ([`solve_msini`]) with M* + m_p when an inclination is given, derived or
/// assumed (then the mass is reported too), else with M* + m sin i; a follows from
/// Kepler's third law; with a radius come density, gravity and escape velocity. The
/// summaries are the median and 15.87/84.13 percentiles; identical draws give
/// minus = plus = 0.
///
/// # Errors
/// [`DeriveError`] for no draws, unequal lengths, a value out of range (P ≤ 0, K < 0,
/// e ∉ [0, 1), M* ≤ 0, Rp/R* ∉ (0, 1), R ≤ 0, i ∉ (0°, 180°)), a radius ratio without a
/// stellar radius, or a result that overflows.
pub fn derive_planet(
    orbit: &OrbitDraws,
    star: &StarDraws,
    transit: Option<&TransitDraws>,
) -> Result<PlanetDerived, DeriveError> {
    let n = orbit.period_d.len();
    if n == 0 {
        return Err(DeriveError::NoDraws);
    }
    let same_length = |name: &'static str, v: &[f64]| {
        if v.len() == n {
            Ok(())
        } else {
            Err(DeriveError::LengthMismatch {
                name,
                len: v.len(),
                expected: n,
            })
        }
    };
    let checked = |name: &'static str, v: &[f64], support: Support| {
        same_length(name, v)?;
        v.iter()
            .map(|&x| support.check(name, x))
            .collect::<Result<Vec<f64>, DeriveError>>()
    };
    let period = checked("period_d", &orbit.period_d, Support::POSITIVE)?;
    let k = checked("k_mps", &orbit.k_mps, Support::NON_NEGATIVE)?;
    let ecc = checked("ecc", &orbit.ecc, Support::ECCENTRICITY)?;
    let mstar = checked("mstar_msun", &star.mass_msun, Support::POSITIVE)?;

    let incl_deg = match transit.map(|t| &t.inclination) {
        Some(InclinationDraws::Degrees(_, d)) => {
            Some(checked("incl_deg", d, Support::INCLINATION_DEG)?)
        }
        _ => None,
    };
    let sin_i: Option<Vec<f64>> = transit.is_some().then(|| match &incl_deg {
        Some(d) => d.iter().map(|i| i.to_radians().sin()).collect(),
        None => vec![1.0; n],
    });
    let radius_rearth = match transit.and_then(|t| t.radius.as_ref()) {
        None => None,
        Some(RadiusDraws::Rearth(r)) => Some(checked("radius_rearth", r, Support::POSITIVE)?),
        Some(RadiusDraws::RatioToStar(q)) => {
            let rs = star
                .radius_rsun
                .as_ref()
                .ok_or(DeriveError::MissingStellarRadius)?;
            let q = checked("rp_rs", q, Support::RADIUS_RATIO)?;
            let rs = checked("rstar_rsun", rs, Support::POSITIVE)?;
            Some(
                q.iter()
                    .zip(&rs)
                    .map(|(&q, &rs)| radius_rearth_from_ratio(q, rs))
                    .collect(),
            )
        }
    };

    let mut msini_mearth = Vec::with_capacity(n);
    let mut mass_mearth = Vec::with_capacity(if sin_i.is_some() { n } else { 0 });
    let mut a_au = Vec::with_capacity(n);
    let mut mass_sum = MassSum::StarPlusMinimumMass;
    for j in 0..n {
        let sol = solve_msini(
            period[j],
            k[j],
            ecc[j],
            mstar[j],
            sin_i.as_ref().map(|s| s[j]),
        );
        mass_sum = sol.sum;
        msini_mearth.push(sol.msini_mearth);
        mass_mearth.extend(sol.mass_mearth);
        let mp = sol.mass_mearth.unwrap_or(sol.msini_mearth);
        a_au.push(semi_major_axis_au(period[j], mstar[j], mp));
    }
    let mass_mearth = sin_i.is_some().then_some(mass_mearth);
    let per_draw = |f: fn(f64, f64) -> f64| {
        mass_mearth
            .as_ref()
            .zip(radius_rearth.as_ref())
            .map(|(m, r)| {
                m.iter()
                    .zip(r)
                    .map(|(&m, &r)| f(m, r))
                    .collect::<Vec<f64>>()
            })
    };
    let draws = DerivedDraws {
        density_gcc: per_draw(bulk_density_gcc),
        gravity_mps2: per_draw(surface_gravity_mps2),
        vesc_kms: per_draw(escape_velocity_kms),
        msini_mearth,
        mass_mearth,
        a_au,
        incl_deg,
        radius_rearth,
    };
    summarise(draws, mass_sum, transit.map(|t| t.inclination.source()))
}

/// Median and 1σ percentiles of finite draws.
fn summary(name: &'static str, draws: &[f64]) -> Result<Summary, DeriveError> {
    if draws.iter().all(|x| x.is_finite()) {
        Summary::from_draws(draws).ok_or(DeriveError::NoDraws)
    } else {
        Err(DeriveError::NonFinite { name })
    }
}

/// [`summary`] of optional draws.
fn optional_summary(
    name: &'static str,
    draws: &Option<Vec<f64>>,
) -> Result<Option<Summary>, DeriveError> {
    draws.as_deref().map(|d| summary(name, d)).transpose()
}

/// A summary in other units (the percentiles of draws scale with a positive factor).
fn scaled(s: Summary, factor: f64) -> Summary {
    Summary {
        value: s.value * factor,
        minus: s.minus * factor,
        plus: s.plus * factor,
        ..s
    }
}

/// Summaries, class and notes of a set of derived draws.
fn summarise(
    draws: DerivedDraws,
    mass_sum: MassSum,
    inclination: Option<InclinationSource>,
) -> Result<PlanetDerived, DeriveError> {
    let msini_mearth = summary("msini_mearth", &draws.msini_mearth)?;
    let mass_mearth = optional_summary("mass_mearth", &draws.mass_mearth)?;
    let radius_rearth = optional_summary("radius_rearth", &draws.radius_rearth)?;
    let class = mass_mearth
        .zip(radius_rearth)
        .and_then(|(m, r)| classify(m.value, r.value));
    let mut notes = vec![
        match mass_sum {
            MassSum::StarPlusMinimumMass => {
                "m sin i solved with M* + m sin i (inclination unknown)"
            }
            MassSum::StarPlusTrueMass => "m sin i solved with M* + m_p, m_p = m sin i / sin i",
        }
        .to_string(),
    ];
    match inclination {
        Some(InclinationSource::Assumed90) => {
            notes.push("inclination assumed 90 deg: mass = m sin i".into());
        }
        Some(InclinationSource::ImpactParameter) => notes.push(
            "inclination from the impact parameter and a/R* (cos i = b R*/a, circular orbit)"
                .into(),
        ),
        Some(InclinationSource::Given) | None => {}
    }
    Ok(PlanetDerived {
        msini_mearth,
        msini_mjup: scaled(msini_mearth, 1.0 / MJUP_IN_MEARTH),
        mass_mearth,
        mass_mjup: mass_mearth.map(|m| scaled(m, 1.0 / MJUP_IN_MEARTH)),
        incl_deg: optional_summary("incl_deg", &draws.incl_deg)?,
        a_au: summary("a_au", &draws.a_au)?,
        radius_rearth,
        density_gcc: optional_summary("density_gcc", &draws.density_gcc)?,
        gravity_mps2: optional_summary("gravity_mps2", &draws.gravity_mps2)?,
        vesc_kms: optional_summary("vesc_kms", &draws.vesc_kms)?,
        class,
        mass_sum,
        inclination,
        notes,
        draws,
    })
}

/// The planet's size as given to the calculator.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(untagged)]
pub enum RadiusQuery {
    /// Radius ratio (exact) and stellar radius ± 1σ, nominal solar radii.
    Ratio {
        /// Rp/R*.
        rp_rs: f64,
        /// Stellar radius, nominal solar radii.
        rstar_rsun: f64,
        /// 1σ of the stellar radius, solar radii.
        rstar_err_rsun: f64,
    },
    /// Radius ± 1σ, Earth radii.
    Absolute {
        /// Radius, nominal equatorial Earth radii.
        radius_rearth: f64,
        /// 1σ of the radius, Earth radii.
        radius_err_rearth: f64,
    },
}

/// Inputs of the mass calculator: an exact orbit, the stellar mass ± 1σ, and optionally
/// the inclination (exact) and the planet's size.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct MassQuery {
    /// Orbital period, days.
    pub period_d: f64,
    /// Semi-amplitude, m/s.
    pub k_mps: f64,
    /// Eccentricity.
    pub ecc: f64,
    /// Stellar mass, solar masses.
    pub mstar_msun: f64,
    /// 1σ of the stellar mass, solar masses.
    pub mstar_err_msun: f64,
    /// Orbital inclination, degrees.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub incl_deg: Option<f64>,
    /// The planet's size.
    #[serde(flatten)]
    pub radius: Option<RadiusQuery>,
}

impl MassQuery {
    /// Whether any input carries an uncertainty (then Monte Carlo draws are needed).
    pub fn is_uncertain(&self) -> bool {
        let radius_err = match self.radius {
            Some(RadiusQuery::Ratio { rstar_err_rsun, .. }) => rstar_err_rsun,
            Some(RadiusQuery::Absolute {
                radius_err_rearth, ..
            }) => radius_err_rearth,
            None => 0.0,
        };
        self.mstar_err_msun != 0.0 || radius_err != 0.0
    }
}

/// Runs the calculator. With no uncertainty in the inputs the computation is exact (one
/// draw, minus = plus = 0); otherwise `draws` samples (at least [`MIN_DRAWS`]) come from
/// normal distributions truncated to the physical range, generated by a ChaCha8 generator
/// seeded with `seed`. A radius without an inclination assumes 90° (noted in the result).
///
/// # Errors
/// [`DeriveError`] for out-of-range inputs or too few draws.
pub fn calculate(query: &MassQuery, draws: usize, seed: u64) -> Result<PlanetDerived, DeriveError> {
    let n = if query.is_uncertain() {
        if draws < MIN_DRAWS {
            return Err(DeriveError::TooFewDraws { draws });
        }
        draws
    } else {
        1
    };
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (rstar, rstar_err) = match query.radius {
        Some(RadiusQuery::Ratio {
            rstar_rsun,
            rstar_err_rsun,
            ..
        }) => (Some(rstar_rsun), rstar_err_rsun),
        _ => (None, 0.0),
    };
    let star = Star {
        radius_rsun: rstar,
        radius_err_rsun: rstar_err,
        ..Star::from_mass(query.mstar_msun, query.mstar_err_msun)
    };
    let star = StarDraws::sample(&star, n, &mut rng)?;
    let radius = match query.radius {
        None => None,
        Some(RadiusQuery::Ratio { rp_rs, .. }) => Some(RadiusDraws::RatioToStar(vec![rp_rs; n])),
        Some(RadiusQuery::Absolute {
            radius_rearth,
            radius_err_rearth,
        }) => Some(RadiusDraws::Rearth(truncated_normal_draws(
            "radius_rearth",
            radius_rearth,
            radius_err_rearth,
            Support::POSITIVE,
            n,
            &mut rng,
        )?)),
    };
    let transit = match (query.incl_deg, radius) {
        (None, None) => None,
        (Some(i), radius) => Some(TransitDraws {
            radius,
            inclination: InclinationDraws::Degrees(InclinationSource::Given, vec![i; n]),
        }),
        (None, radius) => Some(TransitDraws {
            radius,
            inclination: InclinationDraws::Assumed90,
        }),
    };
    let orbit = OrbitDraws {
        period_d: vec![query.period_d; n],
        k_mps: vec![query.k_mps; n],
        ecc: vec![query.ecc; n],
    };
    derive_planet(&orbit, &star, transit.as_ref())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn query() -> MassQuery {
        MassQuery {
            period_d: 3.0,
            k_mps: 100.0,
            ecc: 0.0,
            mstar_msun: 1.0,
            mstar_err_msun: 0.0,
            incl_deg: None,
            radius: None,
        }
    }

    #[test]
    fn exact_inputs_give_exact_outputs() {
        // references.md §4 [C]: 100 m/s, 3 d, 1 M_sun -> 0.709946 M_jup (full solution);
        // design.md: nothing uncertain -> minus = plus = 0.
        let p = calculate(&query(), 20_000, 1).unwrap();
        assert_eq!(p.n_draws(), 1);
        assert!((p.msini_mjup.value - 0.709_946).abs() < 5e-7);
        assert_eq!((p.msini_mjup.minus, p.msini_mjup.plus), (0.0, 0.0));
        assert_eq!(p.mass_sum, MassSum::StarPlusMinimumMass);
        assert!(p.mass_mearth.is_none() && p.class.is_none() && p.inclination.is_none());
    }

    #[test]
    fn radius_without_inclination_assumes_90_deg() {
        // design.md: a radius without an inclination assumes 90 deg and says so.
        let q = MassQuery {
            radius: Some(RadiusQuery::Absolute {
                radius_rearth: 11.0,
                radius_err_rearth: 0.0,
            }),
            ..query()
        };
        let p = calculate(&q, 1000, 1).unwrap();
        assert_eq!(p.inclination, Some(InclinationSource::Assumed90));
        assert_eq!(p.mass_mearth.unwrap().value, p.msini_mearth.value);
        assert!(p.notes.iter().any(|n| n.contains("assumed 90 deg")));
        assert_eq!(p.class, Some(CompositionClass::Giant));
    }

    #[test]
    fn same_seed_same_result_and_errors_need_draws() {
        let q = MassQuery {
            mstar_err_msun: 0.1,
            ..query()
        };
        let a = calculate(&q, 500, 42).unwrap();
        assert_eq!(a, calculate(&q, 500, 42).unwrap());
        assert!(a.msini_mearth.minus > 0.0 && a.msini_mearth.plus > 0.0);
        assert_eq!(
            calculate(&q, 10, 42).unwrap_err(),
            DeriveError::TooFewDraws { draws: 10 }
        );
    }

    #[test]
    fn radius_ratio_without_stellar_radius_is_an_error() {
        let orbit = OrbitDraws {
            period_d: vec![3.0],
            k_mps: vec![10.0],
            ecc: vec![0.0],
        };
        let star = StarDraws {
            mass_msun: vec![1.0],
            radius_rsun: None,
        };
        let transit = TransitDraws {
            radius: Some(RadiusDraws::RatioToStar(vec![0.1])),
            inclination: InclinationDraws::Assumed90,
        };
        assert_eq!(
            derive_planet(&orbit, &star, Some(&transit)).unwrap_err(),
            DeriveError::MissingStellarRadius
        );
        let short = StarDraws {
            mass_msun: vec![1.0, 1.1],
            radius_rsun: None,
        };
        assert!(matches!(
            derive_planet(&orbit, &short, None),
            Err(DeriveError::LengthMismatch { .. })
        ));
    }
}
