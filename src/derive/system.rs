//! System-level checks from the fit: an outer companion implied by a trend, the star's
//! secular (perspective) acceleration, and the dynamical spacing of the fitted planets.

use std::f64::consts::TAU;

use serde::Serialize;

use super::constants::{AU, DAY, GM_EARTH, GM_JUP, GM_SUN, JULIAN_YEAR};
use crate::summary::Summary;

/// Metres per parsec (IAU 2015 B2: 648 000/π au).
const PARSEC: f64 = 648_000.0 / std::f64::consts::PI * AU;

/// Smallest companion that a linear trend implies.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TrendCompanion {
    /// The trend, m/s/yr.
    pub trend_mps_per_yr: Summary,
    /// Shortest companion period consistent with a trend without curvature, days (taken
    /// as the time span of the data).
    pub min_period_d: f64,
    /// Minimum companion mass, Jupiter masses: the acceleration G M_c/a² must reach the
    /// trend at the separation of the shortest period.
    pub min_mass_mjup: f64,
    /// Whether the trend differs from zero by more than 2σ.
    pub significant: bool,
}

/// Minimum mass (M_J) and period of an outer companion producing `trend_mps_per_yr` over a
/// data span of `span_d` days around a star of `mstar_msun`: with P ≥ span (else the
/// curve would show curvature; common practice), `a = (G M* P²/4π²)^(1/3)` and the
/// largest acceleration from a companion of mass M_c at separation a is `G M_c/a²`, so
/// `M_c ≥ |dv/dt| a²/G`.
pub fn trend_companion(trend: Summary, span_d: f64, mstar_msun: f64) -> TrendCompanion {
    let p = span_d * DAY;
    let a = (GM_SUN * mstar_msun * p * p / (TAU * TAU)).cbrt();
    let accel = trend.value.abs() / JULIAN_YEAR;
    TrendCompanion {
        trend_mps_per_yr: trend,
        min_period_d: span_d,
        min_mass_mjup: accel * a * a / GM_JUP,
        significant: trend.value.abs() > 2.0 * trend.minus.max(trend.plus),
    }
}

/// Secular (perspective) acceleration of the RV, m/s/yr, of a star at `distance_pc` with
/// total proper motion `pm_mas_per_yr`: `dv_r/dt = d μ²` (e.g. Kürster et al. 2003,
/// A&A 403, 1077).
pub fn secular_acceleration_mps_per_yr(distance_pc: f64, pm_mas_per_yr: f64) -> f64 {
    let mu = (pm_mas_per_yr * 1e-3 / 3600.0).to_radians() / JULIAN_YEAR;
    distance_pc * PARSEC * mu * mu * JULIAN_YEAR
}

/// Spacing of two adjacent planets.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PairSpacing {
    /// Inner and outer planet labels.
    pub pair: (String, String),
    /// Separation in mutual Hill radii.
    pub hill_spacing: Summary,
    /// Fraction of draws in which the orbits cross (a₁(1 + e₁) > a₂(1 − e₂)).
    pub p_orbits_cross: f64,
}

/// Mutual Hill radius spacing `Δ = (a₂ − a₁)/R_H`, `R_H = ((m₁ + m₂)/(3 M*))^(1/3)
/// (a₁ + a₂)/2` (e.g. Chambers, Wetherill & Boss 1996), masses in Earth and solar masses.
pub fn hill_spacing(
    a1_au: f64,
    a2_au: f64,
    m1_mearth: f64,
    m2_mearth: f64,
    mstar_msun: f64,
) -> f64 {
    let rh = ((m1_mearth + m2_mearth) * GM_EARTH / (3.0 * mstar_msun * GM_SUN)).cbrt()
        * 0.5
        * (a1_au + a2_au);
    (a2_au - a1_au) / rh
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Barnard's star: d = 1.83 pc, μ = 10 393 mas/yr → secular acceleration about
    /// 4.5 m/s/yr (Kürster et al. 2003 quote 4.50 m/s/yr; from memory).
    #[test]
    fn secular_acceleration_of_a_fast_nearby_star() {
        let a = secular_acceleration_mps_per_yr(1.8266, 10_393.0);
        assert!((a - 4.5).abs() < 0.1, "{a}");
    }

    /// Jupiter's pull on the Sun: at 5.2 au a Jupiter mass accelerates the Sun by
    /// G M_J / a² ≈ 2.1e-7 m/s² ≈ 6.6 m/s/yr; a companion at the shortest period with that
    /// trend comes out as one Jupiter mass (consistency of the inversion).
    #[test]
    fn trend_inverts_the_acceleration() {
        let span = 4332.589;
        let a = (GM_SUN * (span * DAY).powi(2) / (TAU * TAU)).cbrt();
        let trend = GM_JUP / (a * a) * JULIAN_YEAR;
        assert!((trend - 6.6).abs() < 0.2, "{trend}");
        let c = trend_companion(Summary::symmetric(trend, 0.1), span, 1.0);
        assert!((c.min_mass_mjup - 1.0).abs() < 1e-9);
        assert!(c.significant);
    }

    #[test]
    fn hill_spacing_scales_with_separation() {
        let d = hill_spacing(0.1, 0.2, 10.0, 10.0, 1.0);
        let rh = (20.0 * GM_EARTH / (3.0 * GM_SUN)).cbrt() * 0.15;
        assert!((d - 0.1 / rh).abs() < 1e-9);
    }
}
