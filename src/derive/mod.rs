//! Derivation stage: semi-amplitude → m sin i → mass, semi-major axis, radius, density,
//! surface gravity, escape velocity and a composition class, with uncertainties carried
//! by Monte Carlo draws.
//!
//! - [`constants`]: IAU 2015 nominal values and CODATA 2018 constants.
//! - [`mass`]: exact semi-amplitude formula, the full mass function, Kepler's third law.
//! - [`density`]: radius from Rp/R*, bulk density, gravity, escape velocity.
//! - [`composition`]: the composition class and its documented thresholds.
//! - [`atmosphere`]: equilibrium temperature, flux, Jeans parameter, energy-limited escape.
//! - [`relations`]: Chen & Kipping (2017) and Lopez & Fortney (2014) mass–radius relations.
//! - [`profile`]: the density report of a planet from draws.
//! - [`system`]: companion implied by a trend, secular acceleration, Hill spacing.
//! - [`draws`]: input draws ([`OrbitDraws`], [`StarDraws`], [`TransitDraws`]).
//! - [`derive_planet`]: draws in, [`PlanetDerived`] (draws + summaries) out;
//!   [`calculate`] is the `heft mass` calculator built on it.

pub mod atmosphere;
pub mod composition;
pub mod constants;
pub mod density;
pub mod draws;
pub mod mass;
mod planet;
pub mod profile;
pub mod relations;
pub mod system;

pub use composition::CompositionClass;
pub use draws::{
    InclinationDraws, InclinationSource, OrbitDraws, RadiusDraws, StarDraws, Support, TransitDraws,
    truncated_normal_draws,
};
pub use mass::MassSum;
pub use planet::{DerivedDraws, MassQuery, PlanetDerived, RadiusQuery, calculate, derive_planet};

/// Fewest Monte Carlo draws [`calculate`] accepts when an input is uncertain.
pub const MIN_DRAWS: usize = 100;

/// Why a derivation could not be done.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum DeriveError {
    /// The stellar mass and radius never agree with the stated stellar density.
    #[error("star.density_gcc = {density_gcc}: no drawn stellar mass and radius agree with it")]
    InconsistentStar {
        /// The stated density, g/cm³.
        density_gcc: f64,
    },
    /// A value lies outside its physical range.
    #[error("{name} = {value}: must be {support}")]
    OutOfRange {
        /// The quantity, e.g. `ecc`.
        name: &'static str,
        /// The offending value.
        value: f64,
        /// The allowed range.
        support: Support,
    },
    /// A 1σ uncertainty is negative or not finite.
    #[error("uncertainty of {name} = {value}: must be zero or positive")]
    BadUncertainty {
        /// The quantity whose uncertainty is wrong.
        name: &'static str,
        /// The offending uncertainty.
        value: f64,
    },
    /// A normal distribution almost never falls inside the allowed range.
    #[error(
        "{name} = {mean} ± {sigma}: the uncertainty is so wide that almost no draw is {support}"
    )]
    TooWide {
        /// The quantity.
        name: &'static str,
        /// Its value.
        mean: f64,
        /// Its 1σ uncertainty.
        sigma: f64,
        /// The allowed range.
        support: Support,
    },
    /// The impact parameter puts the planet's path outside the orbit.
    #[error("impact parameter b = {b} is not below a/R* = {a_rs}: no inclination follows")]
    ImpactTooLarge {
        /// Impact parameter.
        b: f64,
        /// Scaled semi-major axis.
        a_rs: f64,
    },
    /// Draw vectors of different lengths.
    #[error("{name} has {len} draws, but the orbit has {expected}")]
    LengthMismatch {
        /// The quantity with the wrong number of draws.
        name: &'static str,
        /// Its number of draws.
        len: usize,
        /// The number of orbit draws.
        expected: usize,
    },
    /// Empty draw vectors.
    #[error("no draws to derive from")]
    NoDraws,
    /// Too few draws to summarise an uncertainty.
    #[error("{draws} draws are too few to summarise uncertainties: use at least {MIN_DRAWS}")]
    TooFewDraws {
        /// The number asked for.
        draws: usize,
    },
    /// A radius ratio was given without the stellar radius.
    #[error("a radius ratio Rp/R* needs the stellar radius")]
    MissingStellarRadius,
    /// A result overflowed.
    #[error("{name} is not finite for these inputs")]
    NonFinite {
        /// The quantity.
        name: &'static str,
    },
}
