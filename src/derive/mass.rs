//! Semi-amplitude ↔ minimum mass ↔ mass, and the semi-major axis (Kepler's third law).
//!
//! The reflex semi-amplitude of the star is
//!
//! ```text
//! K = (2π G / P)^(1/3) · m_p sin i · (M* + m_p)^(−2/3) · (1 − e²)^(−1/2)
//! ```
//!
//! and its inverse is the mass function
//! `f(m) = P K³ (1 − e²)^(3/2) / (2π G) = (m_p sin i)³ / (M* + m_p)²`
//! (e.g. Cumming, Marcy & Butler 1999, ApJ 526, 890). Everything is computed with GM
//! products (m³ s⁻²), so G's 2.2e-5 uncertainty never enters a mass in Earth or Jupiter
//! units.
//!
//! With these constants, K for m_p sin i = 1 M_J, M* + m_p = 1 M☉, P = 1 Julian year and
//! e = 0 is 28.4325 m/s (28.432 474 m/s, IAU 2015 nominal (GM)☉ and (GM)J). The literature
//! value 28.4329 m/s (Cumming, Marcy & Butler 1999) rests on an older M_J/M☉; the two
//! differ by 1.5e-5 relative.

use std::f64::consts::TAU;

use serde::Serialize;

use super::constants::{AU, DAY, GM_EARTH, GM_SUN, MJUP_IN_MEARTH};

/// Which total mass entered the mass function.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum MassSum {
    /// M* + m sin i: the inclination is unknown (the usual minimum-mass convention).
    #[serde(rename = "mstar+msini")]
    StarPlusMinimumMass,
    /// M* + m_p with m_p = m sin i / sin i: the inclination is known.
    #[serde(rename = "mstar+mp")]
    StarPlusTrueMass,
}

/// Solution of the mass function for one set of inputs.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MassSolution {
    /// Minimum mass m_p sin i, Earth masses.
    pub msini_mearth: f64,
    /// True mass m_p = m sin i / sin i, Earth masses, when sin i was given.
    pub mass_mearth: Option<f64>,
    /// Which total mass was used.
    pub sum: MassSum,
}

impl MassSolution {
    /// Minimum mass, Jupiter masses.
    pub fn msini_mjup(&self) -> f64 {
        self.msini_mearth / MJUP_IN_MEARTH
    }

    /// True mass, Jupiter masses, when sin i was given.
    pub fn mass_mjup(&self) -> Option<f64> {
        self.mass_mearth.map(|m| m / MJUP_IN_MEARTH)
    }
}

/// Semi-amplitude K of the star's reflex motion, m/s, from the period (days), the planet
/// mass (Earth masses), the eccentricity, the stellar mass (solar masses) and sin i.
/// Exact two-body formula; inputs are expected in range (P > 0, 0 ≤ e < 1, M* > 0).
pub fn semi_amplitude_mps(
    period_d: f64,
    mp_mearth: f64,
    ecc: f64,
    mstar_msun: f64,
    sin_i: f64,
) -> f64 {
    let gm_planet = mp_mearth * GM_EARTH;
    let gm_total = mstar_msun * GM_SUN + gm_planet;
    (TAU / (period_d * DAY)).cbrt() * gm_planet * sin_i
        / gm_total.powf(2.0 / 3.0)
        / (1.0 - ecc * ecc).sqrt()
}

/// G times the mass function, G f(m) = P K³ (1 − e²)^(3/2) / (2π), m³ s⁻².
fn gm_mass_function(period_d: f64, k_mps: f64, ecc: f64) -> f64 {
    period_d * DAY * k_mps.powi(3) * (1.0 - ecc * ecc).powf(1.5) / TAU
}

/// G m sin i in the small-planet approximation (M* + m_p ≈ M*), m³ s⁻².
fn gm_msini_small_planet(gm_f: f64, gm_star: f64) -> f64 {
    (gm_f * gm_star * gm_star).cbrt()
}

/// m sin i in Earth masses in the small-planet approximation (m_p ≪ M*):
/// m sin i = [f(m) M*²]^(1/3). Shown for comparison; [`solve_msini`] solves the full
/// mass function.
pub fn msini_small_planet_mearth(period_d: f64, k_mps: f64, ecc: f64, mstar_msun: f64) -> f64 {
    gm_msini_small_planet(gm_mass_function(period_d, k_mps, ecc), mstar_msun * GM_SUN) / GM_EARTH
}

/// Most Newton steps of [`solve_msini`]; it converges quadratically in a handful.
const MAX_NEWTON_STEPS: usize = 100;

/// Solves the full mass function for m sin i (and m_p when sin i is given).
///
/// With x = G m sin i and s = sin i (s = 1 when the inclination is unknown, giving the
/// usual M* + m sin i), the equation x³ = G f (GM* + x/s)² is written as
/// φ(x) = x − [G f (GM* + x/s)²]^(1/3) = 0. φ is increasing and convex, so Newton's method
/// started from the small-planet value (where φ ≤ 0) overshoots once and then converges
/// monotonically from above.
///
/// Inputs are expected in range (P > 0, K ≥ 0, 0 ≤ e < 1, M* > 0, 0 < sin i ≤ 1).
pub fn solve_msini(
    period_d: f64,
    k_mps: f64,
    ecc: f64,
    mstar_msun: f64,
    sin_i: Option<f64>,
) -> MassSolution {
    let gm_f = gm_mass_function(period_d, k_mps, ecc);
    let gm_star = mstar_msun * GM_SUN;
    let s = sin_i.unwrap_or(1.0);
    let mut x = gm_msini_small_planet(gm_f, gm_star);
    for _ in 0..MAX_NEWTON_STEPS {
        let total = gm_star + x / s;
        let h = (gm_f * total * total).cbrt();
        let dh = 2.0 / 3.0 * h / (total * s);
        let step = (x - h) / (1.0 - dh);
        x -= step;
        if step.abs() <= 4.0 * f64::EPSILON * x.abs() {
            break;
        }
    }
    let msini_mearth = x / GM_EARTH;
    MassSolution {
        msini_mearth,
        mass_mearth: sin_i.map(|s| msini_mearth / s),
        sum: if sin_i.is_some() {
            MassSum::StarPlusTrueMass
        } else {
            MassSum::StarPlusMinimumMass
        },
    }
}

/// Semi-major axis of the relative orbit, au, from Kepler's third law with the total mass
/// M* + m_p: a³ = G (M* + m_p) P² / (4π²).
pub fn semi_major_axis_au(period_d: f64, mstar_msun: f64, mp_mearth: f64) -> f64 {
    let gm_total = mstar_msun * GM_SUN + mp_mearth * GM_EARTH;
    let p = period_d * DAY;
    (gm_total * p * p / (TAU * TAU)).cbrt() / AU
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn full_solution_exceeds_small_planet_value() {
        // references.md §4 [C]: K = 100 m/s, P = 3 d, e = 0, M* = 1 M_sun gives
        // m sin i = 0.709946 M_jup (full) vs 0.709625 (m << M*).
        let full = solve_msini(3.0, 100.0, 0.0, 1.0, None);
        assert!((full.msini_mjup() - 0.709_946).abs() < 5e-7);
        assert_eq!(full.sum, MassSum::StarPlusMinimumMass);
        assert!(full.mass_mearth.is_none());
        let approx = msini_small_planet_mearth(3.0, 100.0, 0.0, 1.0) / MJUP_IN_MEARTH;
        assert!((approx - 0.709_625).abs() < 5e-7);
    }

    #[test]
    fn zero_semi_amplitude_gives_zero_mass() {
        // Mass function f = 0 when K = 0 (formula above, references.md §4).
        let s = solve_msini(10.0, 0.0, 0.3, 0.8, Some(0.5));
        assert_eq!(s.msini_mearth, 0.0);
        assert_eq!(s.mass_mearth, Some(0.0));
    }

    #[test]
    fn known_inclination_inverts_the_exact_semi_amplitude() {
        // Round trip through the exact K formula (references.md §4): with sin i = 0.3 the
        // true mass sits inside M* + m_p and is recovered; ignoring sin i in the sum
        // gives a smaller m sin i. 2 M_jup around a 0.5 M_sun star.
        let mp = 2.0 * MJUP_IN_MEARTH;
        let k = semi_amplitude_mps(12.0, mp, 0.2, 0.5, 0.3);
        let s = solve_msini(12.0, k, 0.2, 0.5, Some(0.3));
        assert_eq!(s.sum, MassSum::StarPlusTrueMass);
        assert!((s.mass_mearth.unwrap() / mp - 1.0).abs() < 1e-12);
        let naive = solve_msini(12.0, k, 0.2, 0.5, None);
        assert!(naive.msini_mearth < s.msini_mearth);
    }
}
