//! Draws of the inputs of the derivation: orbit, star and transit.
//!
//! Every draw vector of one derivation has the same length; draw j of the orbit goes with
//! draw j of the star and of the transit. Where an input is known as a value ± 1σ, draws
//! come from a normal distribution truncated to the physical range by rejection.

use rand::Rng;
use rand_distr::StandardNormal;

use super::DeriveError;
use crate::target::{Star, Transit};

/// Allowed range of a quantity: `lo < x < hi`, or `lo ≤ x < hi` when `lo_inclusive`.
/// `hi` may be infinite.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Support {
    /// Lower bound.
    pub lo: f64,
    /// Whether `lo` itself is allowed.
    pub lo_inclusive: bool,
    /// Upper bound (excluded).
    pub hi: f64,
}

impl Support {
    /// x > 0.
    pub const POSITIVE: Support = Support {
        lo: 0.0,
        lo_inclusive: false,
        hi: f64::INFINITY,
    };
    /// x ≥ 0.
    pub const NON_NEGATIVE: Support = Support {
        lo: 0.0,
        lo_inclusive: true,
        hi: f64::INFINITY,
    };
    /// Eccentricity, 0 ≤ e < 1.
    pub const ECCENTRICITY: Support = Support {
        lo: 0.0,
        lo_inclusive: true,
        hi: 1.0,
    };
    /// Radius ratio, 0 < Rp/R* < 1.
    pub const RADIUS_RATIO: Support = Support {
        lo: 0.0,
        lo_inclusive: false,
        hi: 1.0,
    };
    /// Inclination in degrees, 0 < i < 180 (sin i > 0).
    pub const INCLINATION_DEG: Support = Support {
        lo: 0.0,
        lo_inclusive: false,
        hi: 180.0,
    };

    /// Whether `x` lies in the range (NaN never does).
    pub fn contains(self, x: f64) -> bool {
        let above = if self.lo_inclusive {
            x >= self.lo
        } else {
            x > self.lo
        };
        above && x < self.hi
    }

    /// Checks one value, naming it in the error.
    ///
    /// # Errors
    /// [`DeriveError::OutOfRange`] when `value` is outside the range.
    pub fn check(self, name: &'static str, value: f64) -> Result<f64, DeriveError> {
        if self.contains(value) {
            Ok(value)
        } else {
            Err(DeriveError::OutOfRange {
                name,
                value,
                support: self,
            })
        }
    }
}

impl std::fmt::Display for Support {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match (self.lo_inclusive, self.hi.is_infinite()) {
            (false, true) => write!(f, "positive"),
            (true, true) => write!(f, "zero or positive"),
            (false, false) => write!(f, "in ({}, {})", self.lo, self.hi),
            (true, false) => write!(f, "in [{}, {})", self.lo, self.hi),
        }
    }
}

/// Rejections allowed per accepted draw before sampling gives up.
const MAX_TRIES: usize = 10_000;

/// One draw of N(mean, sigma) accepted by `accept`, or `None` after [`MAX_TRIES`].
fn draw_accepted(
    mean: f64,
    sigma: f64,
    rng: &mut impl Rng,
    accept: impl Fn(f64) -> bool,
) -> Option<f64> {
    (0..MAX_TRIES)
        .map(|_| mean + sigma * rng.sample::<f64, _>(StandardNormal))
        .find(|&x| accept(x))
}

/// Checks a mean and its 1σ error before drawing.
fn check_mean_sigma(
    name: &'static str,
    mean: f64,
    sigma: f64,
    support: Support,
) -> Result<(), DeriveError> {
    support.check(name, mean)?;
    if sigma.is_finite() && sigma >= 0.0 {
        Ok(())
    } else {
        Err(DeriveError::BadUncertainty { name, value: sigma })
    }
}

/// `n` draws of a normal distribution N(mean, sigma) truncated to `support` (by
/// rejection); `sigma = 0` gives `n` copies of `mean` without touching `rng`.
///
/// # Errors
/// [`DeriveError`] when `mean` is outside `support`, `sigma` is negative or not finite, or
/// the distribution is so wide that the support rejects nearly every draw.
pub fn truncated_normal_draws(
    name: &'static str,
    mean: f64,
    sigma: f64,
    support: Support,
    n: usize,
    rng: &mut impl Rng,
) -> Result<Vec<f64>, DeriveError> {
    check_mean_sigma(name, mean, sigma, support)?;
    if sigma == 0.0 {
        return Ok(vec![mean; n]);
    }
    (0..n)
        .map(|_| {
            draw_accepted(mean, sigma, rng, |x| support.contains(x)).ok_or(DeriveError::TooWide {
                name,
                mean,
                sigma,
                support,
            })
        })
        .collect()
}

/// Draws of the orbital elements that set the mass (equal lengths), e.g. from a Gaussian
/// approximation of a fit or from posterior draws.
#[derive(Clone, Debug, PartialEq)]
pub struct OrbitDraws {
    /// Orbital period, days.
    pub period_d: Vec<f64>,
    /// Semi-amplitude, m/s.
    pub k_mps: Vec<f64>,
    /// Eccentricity.
    pub ecc: Vec<f64>,
}

/// Draws of the stellar parameters.
#[derive(Clone, Debug, PartialEq)]
pub struct StarDraws {
    /// Stellar mass, solar masses.
    pub mass_msun: Vec<f64>,
    /// Stellar radius, nominal solar radii, where known.
    pub radius_rsun: Option<Vec<f64>>,
}

impl StarDraws {
    /// `n` draws of the stellar mass (and radius, where known), each from a normal
    /// distribution with the star's 1σ truncated to positive values.
    ///
    /// # Errors
    /// [`DeriveError`] for a non-positive value, a negative uncertainty, or an uncertainty
    /// far wider than the value.
    pub fn sample(star: &Star, n: usize, rng: &mut impl Rng) -> Result<StarDraws, DeriveError> {
        let pairs =
            |count: usize, rng: &mut _| -> Result<(Vec<f64>, Option<Vec<f64>>), DeriveError> {
                let mass = truncated_normal_draws(
                    "mstar_msun",
                    star.mass_msun,
                    star.mass_err_msun,
                    Support::POSITIVE,
                    count,
                    rng,
                )?;
                let radius = star
                    .radius_rsun
                    .map(|r| {
                        truncated_normal_draws(
                            "rstar_rsun",
                            r,
                            star.radius_err_rsun,
                            Support::POSITIVE,
                            count,
                            rng,
                        )
                    })
                    .transpose()?;
                Ok((mass, radius))
            };
        let (Some(rho), Some(_)) = (star.density_gcc, star.radius_rsun) else {
            let (mass_msun, radius_rsun) = pairs(n, rng)?;
            return Ok(StarDraws {
                mass_msun,
                radius_rsun,
            });
        };
        // With a measured stellar density (e.g. from transits), mass and radius are drawn
        // jointly: independent candidates weighted by the density likelihood, then
        // resampled (sampling–importance resampling; Rubin 1988).
        check_mean_sigma(
            "star.density_gcc",
            rho,
            star.density_err_gcc,
            Support::POSITIVE,
        )?;
        let sd = star.density_err_gcc.max(1e-6 * rho);
        let (mass, radius) = pairs(RESAMPLE_FACTOR * n, rng)?;
        let radius = radius.expect("radius drawn when given");
        let weights: Vec<f64> = mass
            .iter()
            .zip(&radius)
            .map(|(&m, &r)| (-0.5 * ((stellar_density_gcc(m, r) - rho) / sd).powi(2)).exp())
            .collect();
        let total: f64 = weights.iter().sum();
        if !(total > 0.0) {
            return Err(DeriveError::InconsistentStar { density_gcc: rho });
        }
        // Systematic resampling: one uniform offset, n evenly spaced pointers.
        let step = total / n as f64;
        let mut pointer = rng.random::<f64>() * step;
        let (mut mass_msun, mut radius_rsun) = (Vec::with_capacity(n), Vec::with_capacity(n));
        let mut cumulative = 0.0;
        for (j, w) in weights.iter().enumerate() {
            cumulative += w;
            while pointer < cumulative && mass_msun.len() < n {
                mass_msun.push(mass[j]);
                radius_rsun.push(radius[j]);
                pointer += step;
            }
        }
        Ok(StarDraws {
            mass_msun,
            radius_rsun: Some(radius_rsun),
        })
    }
}

/// Candidates drawn per kept draw when mass and radius are resampled jointly.
const RESAMPLE_FACTOR: usize = 8;

/// Mean stellar density, g/cm³, of mass (M☉) and radius (R☉).
pub fn stellar_density_gcc(mass_msun: f64, radius_rsun: f64) -> f64 {
    use super::constants::{G, GM_SUN, R_SUN};
    3.0 * mass_msun * GM_SUN
        / (4.0 * std::f64::consts::PI * G * (radius_rsun * R_SUN).powi(3))
        / 1000.0
}

/// Draws of the planet's size.
#[derive(Clone, Debug, PartialEq)]
pub enum RadiusDraws {
    /// Radius ratio Rp/R* (needs the stellar radius).
    RatioToStar(Vec<f64>),
    /// Radius in Earth radii.
    Rearth(Vec<f64>),
}

/// Where the orbital inclination comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
pub enum InclinationSource {
    /// Given directly (transit fit, astrometry, ...).
    #[serde(rename = "given")]
    Given,
    /// From the impact parameter and a/R* (cos i = b R*/a, circular orbit).
    #[serde(rename = "impact-parameter")]
    ImpactParameter,
    /// Not known; 90° assumed for a transiting planet.
    #[serde(rename = "assumed-90")]
    Assumed90,
}

/// Draws of the inclination.
#[derive(Clone, Debug, PartialEq)]
pub enum InclinationDraws {
    /// Draws in degrees and where they come from (given or from the impact parameter).
    Degrees(InclinationSource, Vec<f64>),
    /// i = 90° assumed (the mass is then m sin i, flagged in the output).
    Assumed90,
}

impl InclinationDraws {
    /// The source of the inclination.
    pub fn source(&self) -> InclinationSource {
        match self {
            InclinationDraws::Degrees(source, _) => *source,
            InclinationDraws::Assumed90 => InclinationSource::Assumed90,
        }
    }
}

/// Draws of what a transit (or another constraint on the orbit's orientation) adds.
#[derive(Clone, Debug, PartialEq)]
pub struct TransitDraws {
    /// The planet's size, where known.
    pub radius: Option<RadiusDraws>,
    /// The orbital inclination.
    pub inclination: InclinationDraws,
}

impl TransitDraws {
    /// The first `n` draws (`None` when there are fewer).
    pub fn head(&self, n: usize) -> Option<TransitDraws> {
        let cut = |v: &Vec<f64>| (v.len() >= n).then(|| v[..n].to_vec());
        let radius = match &self.radius {
            None => None,
            Some(RadiusDraws::RatioToStar(v)) => Some(RadiusDraws::RatioToStar(cut(v)?)),
            Some(RadiusDraws::Rearth(v)) => Some(RadiusDraws::Rearth(cut(v)?)),
        };
        let inclination = match &self.inclination {
            InclinationDraws::Degrees(source, v) => InclinationDraws::Degrees(*source, cut(v)?),
            InclinationDraws::Assumed90 => InclinationDraws::Assumed90,
        };
        Some(TransitDraws {
            radius,
            inclination,
        })
    }

    /// `n` draws from a transit's values ± 1σ (normal, truncated to the physical range):
    /// the radius ratio where given; the inclination from `incl_deg`, else from the impact
    /// parameter b and a/R* via cos i = b / (a/R*) (circular orbit; pairs with b ≥ a/R*
    /// are redrawn), else 90° assumed.
    ///
    /// # Errors
    /// [`DeriveError`] for out-of-range values or uncertainties, or b ≥ a/R*.
    pub fn sample(
        transit: &Transit,
        n: usize,
        rng: &mut impl Rng,
    ) -> Result<TransitDraws, DeriveError> {
        let radius = transit
            .rp_rs
            .map(|(r, e)| truncated_normal_draws("rp_rs", r, e, Support::RADIUS_RATIO, n, rng))
            .transpose()?
            .map(RadiusDraws::RatioToStar);
        let inclination = match (transit.incl_deg, transit.impact, transit.a_rs) {
            (Some((i, e)), _, _) => InclinationDraws::Degrees(
                InclinationSource::Given,
                truncated_normal_draws("incl_deg", i, e, Support::INCLINATION_DEG, n, rng)?,
            ),
            (None, Some((b, b_err)), Some((a_rs, a_err))) => InclinationDraws::Degrees(
                InclinationSource::ImpactParameter,
                inclination_from_impact(b, b_err, a_rs, a_err, n, rng)?,
            ),
            _ => InclinationDraws::Assumed90,
        };
        Ok(TransitDraws {
            radius,
            inclination,
        })
    }
}

/// Inclination draws, degrees, from b ± σ_b and a/R* ± σ_a: i = arccos(b / (a/R*)) for a
/// circular orbit; b is truncated at 0, a/R* at positive values, and pairs with
/// b ≥ a/R* are redrawn.
fn inclination_from_impact(
    b: f64,
    b_err: f64,
    a_rs: f64,
    a_err: f64,
    n: usize,
    rng: &mut impl Rng,
) -> Result<Vec<f64>, DeriveError> {
    check_mean_sigma("impact", b, b_err, Support::NON_NEGATIVE)?;
    check_mean_sigma("a_rs", a_rs, a_err, Support::POSITIVE)?;
    if b >= a_rs {
        return Err(DeriveError::ImpactTooLarge { b, a_rs });
    }
    let too_wide = || DeriveError::TooWide {
        name: "impact",
        mean: b,
        sigma: b_err,
        support: Support {
            lo: 0.0,
            lo_inclusive: true,
            hi: a_rs,
        },
    };
    (0..n)
        .map(|_| {
            (0..MAX_TRIES)
                .find_map(|_| {
                    let bj = draw_accepted(b, b_err, rng, |x| x >= 0.0)?;
                    let aj = draw_accepted(a_rs, a_err, rng, |x| x > 0.0)?;
                    (bj < aj).then(|| (bj / aj).acos().to_degrees())
                })
                .ok_or_else(too_wide)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    use super::*;

    fn transit() -> Transit {
        Transit {
            label: "b".into(),
            period_d: 5.0,
            period_err_d: 0.0,
            tc_bjd: 2_460_000.0,
            tc_err_d: 0.0,
            rp_rs: None,
            incl_deg: None,
            impact: None,
            a_rs: None,
            duration_h: None,
        }
    }

    #[test]
    fn truncated_draws_stay_in_range_and_repeat_for_a_seed() {
        // A normal N(0.1, 0.2) truncated at 0 keeps only positive draws (definition of a
        // truncated distribution, common practice); the same seed gives the same draws.
        let draw = |seed| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            truncated_normal_draws("x", 0.1, 0.2, Support::POSITIVE, 2000, &mut rng).unwrap()
        };
        let a = draw(7);
        assert!(a.iter().all(|&x| x > 0.0));
        assert_eq!(a, draw(7));
        assert_ne!(a, draw(8));
    }

    /// The Sun's mean density is 1.41 g/cm³ (common practice); with a stated stellar
    /// density the joint draws follow it and mass and radius become correlated.
    #[test]
    fn stellar_density_couples_mass_and_radius() {
        assert!((stellar_density_gcc(1.0, 1.0) - 1.41).abs() < 0.01);
        let star = Star {
            radius_rsun: Some(1.0),
            radius_err_rsun: 0.1,
            density_gcc: Some(1.41),
            density_err_gcc: 0.03,
            ..Star::from_mass(1.0, 0.1)
        };
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let d = StarDraws::sample(&star, 4000, &mut rng).unwrap();
        let r = d.radius_rsun.unwrap();
        let rho: Vec<f64> = d
            .mass_msun
            .iter()
            .zip(&r)
            .map(|(m, r)| stellar_density_gcc(*m, *r))
            .collect();
        let mean = rho.iter().sum::<f64>() / rho.len() as f64;
        let sd = (rho.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / rho.len() as f64).sqrt();
        assert!(
            (mean - 1.41).abs() < 0.01 && sd < 0.05,
            "density {mean} ± {sd}"
        );
        let (mm, mr) = (
            d.mass_msun.iter().sum::<f64>() / 4000.0,
            r.iter().sum::<f64>() / 4000.0,
        );
        let cov: f64 = d
            .mass_msun
            .iter()
            .zip(&r)
            .map(|(m, x)| (m - mm) * (x - mr))
            .sum::<f64>()
            / 4000.0;
        assert!(cov > 0.0, "mass and radius should be positively correlated");
    }

    #[test]
    fn exact_values_need_no_random_numbers() {
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let v = truncated_normal_draws("x", 2.5, 0.0, Support::POSITIVE, 3, &mut rng).unwrap();
        assert_eq!(v, vec![2.5; 3]);
    }

    #[test]
    fn bad_means_and_sigmas_are_errors() {
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let e = truncated_normal_draws("ecc", 1.0, 0.0, Support::ECCENTRICITY, 1, &mut rng);
        assert_eq!(e.unwrap_err().to_string(), "ecc = 1: must be in [0, 1)");
        let e = truncated_normal_draws("rp_rs", 0.1, -0.01, Support::RADIUS_RATIO, 1, &mut rng);
        assert!(matches!(e, Err(DeriveError::BadUncertainty { .. })));
        // A ratio in (0, 1) with a 1σ of 1e9 is accepted once in ~1e9 draws: refused.
        let e = truncated_normal_draws("rp_rs", 0.1, 1e9, Support::RADIUS_RATIO, 1, &mut rng);
        assert!(matches!(e, Err(DeriveError::TooWide { .. })));
    }

    #[test]
    fn inclination_from_impact_parameter() {
        // cos i = b / (a/R*) for a circular orbit (Seager & Mallén-Ornelas 2003, ApJ 585,
        // 1038, from memory): b = 0.5, a/R* = 10 gives i = acos(0.05) = 87.134 deg.
        let t = Transit {
            impact: Some((0.5, 0.0)),
            a_rs: Some((10.0, 0.0)),
            ..transit()
        };
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let d = TransitDraws::sample(&t, 4, &mut rng).unwrap();
        assert_eq!(d.inclination.source(), InclinationSource::ImpactParameter);
        let InclinationDraws::Degrees(_, i) = d.inclination else {
            panic!("expected inclination draws");
        };
        assert!(i.iter().all(|&x| (x - 87.134_016).abs() < 1e-6), "{i:?}");
        assert!(d.radius.is_none());
    }

    #[test]
    fn impact_beyond_the_star_is_an_error() {
        let t = Transit {
            impact: Some((3.0, 0.1)),
            a_rs: Some((2.0, 0.1)),
            ..transit()
        };
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let e = TransitDraws::sample(&t, 4, &mut rng).unwrap_err();
        assert_eq!(e, DeriveError::ImpactTooLarge { b: 3.0, a_rs: 2.0 });
    }

    #[test]
    fn no_inclination_means_90_deg_assumed() {
        let t = Transit {
            rp_rs: Some((0.05, 0.001)),
            ..transit()
        };
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let d = TransitDraws::sample(&t, 50, &mut rng).unwrap();
        assert_eq!(d.inclination, InclinationDraws::Assumed90);
        let Some(RadiusDraws::RatioToStar(r)) = d.radius else {
            panic!("expected radius-ratio draws");
        };
        assert_eq!(r.len(), 50);
    }
}
