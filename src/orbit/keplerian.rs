//! The Keplerian RV curve of one planet and the conjunction ↔ periastron time relation.

use std::f64::consts::{FRAC_PI_2, TAU};

use super::kepler::eccentric_anomaly;

/// Why orbital elements were refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum OrbitError {
    /// Period not a positive finite number.
    #[error("period must be positive and finite, got {0} d")]
    Period(f64),
    /// Eccentricity outside [0, 1).
    #[error("eccentricity must be in [0, 1), got {0}")]
    Eccentricity(f64),
    /// A non-finite semi-amplitude, angle or time.
    #[error("{0} must be finite")]
    NotFinite(&'static str),
}

/// Orbital elements of one planet as seen in the star's RV, with cached constants.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Orbit {
    period_d: f64,
    k_mps: f64,
    ecc: f64,
    omega_rad: f64,
    tc_d: f64,
    tp_d: f64,
    // Cached: cos ω, sin ω, sqrt(1 - e²), e cos ω.
    cos_w: f64,
    sin_w: f64,
    sqrt_1me2: f64,
    e_cos_w: f64,
}

impl Orbit {
    /// Builds an orbit from period (days), semi-amplitude (m/s, may be negative only as a
    /// sign flip of the curve), eccentricity, star's argument of periastron (radians) and
    /// conjunction time (days, in the caller's time frame).
    ///
    /// # Errors
    /// [`OrbitError`] for P ≤ 0, e outside [0, 1) or non-finite values.
    pub fn new(
        period_d: f64,
        k_mps: f64,
        ecc: f64,
        omega_rad: f64,
        tc_d: f64,
    ) -> Result<Orbit, OrbitError> {
        if !(period_d.is_finite() && period_d > 0.0) {
            return Err(OrbitError::Period(period_d));
        }
        if !(0.0..1.0).contains(&ecc) {
            return Err(OrbitError::Eccentricity(ecc));
        }
        for (name, v) in [("K", k_mps), ("omega", omega_rad), ("Tc", tc_d)] {
            if !v.is_finite() {
                return Err(OrbitError::NotFinite(name));
            }
        }
        let (sin_w, cos_w) = omega_rad.sin_cos();
        Ok(Orbit {
            period_d,
            k_mps,
            ecc,
            omega_rad,
            tc_d,
            tp_d: periastron_from_conjunction(period_d, ecc, omega_rad, tc_d),
            cos_w,
            sin_w,
            sqrt_1me2: (1.0 - ecc * ecc).sqrt(),
            e_cos_w: ecc * cos_w,
        })
    }

    /// Period, days.
    pub fn period_d(&self) -> f64 {
        self.period_d
    }
    /// Semi-amplitude, m/s.
    pub fn k_mps(&self) -> f64 {
        self.k_mps
    }
    /// Eccentricity.
    pub fn ecc(&self) -> f64 {
        self.ecc
    }
    /// Star's argument of periastron, radians.
    pub fn omega_rad(&self) -> f64 {
        self.omega_rad
    }
    /// Conjunction time, days.
    pub fn tc_d(&self) -> f64 {
        self.tc_d
    }
    /// Time of periastron, days (the one nearest before or after `tc_d`).
    pub fn tp_d(&self) -> f64 {
        self.tp_d
    }

    /// Star's radial velocity (m/s) due to this planet at time `t_d` (days):
    /// `K [cos(nu + omega) + e cos omega]`.
    ///
    /// Uses `cos nu = (cos E - e)/(1 - e cos E)` and
    /// `sin nu = sqrt(1 - e²) sin E/(1 - e cos E)`, so no arctangent is needed.
    #[inline]
    pub fn rv(&self, t_d: f64) -> f64 {
        let mean_anom = TAU * (t_d - self.tp_d) / self.period_d;
        if self.ecc == 0.0 {
            let (s, c) = mean_anom.sin_cos();
            return self.k_mps * (c * self.cos_w - s * self.sin_w);
        }
        let (s, c) = eccentric_anomaly(mean_anom, self.ecc).sin_cos();
        let inv = 1.0 / (1.0 - self.ecc * c);
        let cos_nu = (c - self.ecc) * inv;
        let sin_nu = self.sqrt_1me2 * s * inv;
        self.k_mps * (cos_nu * self.cos_w - sin_nu * self.sin_w + self.e_cos_w)
    }
}

/// Time of periastron (days) from conjunction time: with `nu_c = pi/2 - omega`,
/// `E_c = atan2(sqrt(1-e²) sin nu_c, e + cos nu_c)` and
/// `Tp = Tc - P/(2 pi) (E_c - e sin E_c)` (e.g. Kane et al. 2009, PASP 121, 886).
pub fn periastron_from_conjunction(period_d: f64, ecc: f64, omega_rad: f64, tc_d: f64) -> f64 {
    let nu_c = FRAC_PI_2 - omega_rad;
    let e_c = ((1.0 - ecc * ecc).sqrt() * nu_c.sin()).atan2(ecc + nu_c.cos());
    tc_d - period_d / TAU * (e_c - ecc * e_c.sin())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::orbit::true_anomaly;

    /// (Tc − Tp)/P check values of references.md §4 ([C], computed from the stated chain).
    #[test]
    fn conjunction_to_periastron_checks() {
        let cases = [
            (0.1, 0.0, 0.218222),
            (0.1, 90.0, 0.0),
            (0.5, 45.0, 0.038717),
            (0.3, 200.0, -0.209761),
        ];
        for (e, w_deg, expect) in cases {
            let tp = periastron_from_conjunction(1.0, e, f64::to_radians(w_deg), 0.0);
            assert!((-tp - expect).abs() < 1e-6, "e={e} w={w_deg}: {}", -tp);
        }
    }

    /// At conjunction the true anomaly is pi/2 − omega (design.md convention).
    #[test]
    fn conjunction_has_the_stated_true_anomaly() {
        for &(e, w) in &[(0.0, 0.3), (0.2, 1.0), (0.6, 4.0), (0.9, 2.5)] {
            let o = Orbit::new(7.0, 10.0, e, w, 3.0).unwrap();
            let m = TAU * (o.tc_d() - o.tp_d()) / o.period_d();
            let nu = true_anomaly(eccentric_anomaly(m, e), e);
            let d = crate::summary::wrap_pi(nu - (FRAC_PI_2 - w));
            assert!(d.abs() < 1e-12, "e={e} w={w}: off by {d}");
        }
    }

    /// Invariants (common practice): periodic in P, sinusoid for e = 0, mean over one
    /// orbit (in time) zero because `e cos omega` cancels the mean of `cos(nu + omega)`.
    #[test]
    fn curve_invariants() {
        let o = Orbit::new(5.3, 12.0, 0.45, 2.1, 1.7).unwrap();
        for k in 0..20 {
            let t = 0.37 * k as f64;
            assert!((o.rv(t) - o.rv(t + 3.0 * 5.3)).abs() < 1e-9);
        }
        let n = 200_000;
        let mean: f64 = (0..n).map(|k| o.rv(5.3 * k as f64 / n as f64)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 1e-6, "orbit-averaged RV {mean}");
        let c = Orbit::new(5.3, 12.0, 0.0, 0.0, 0.0).unwrap();
        for k in 0..20 {
            let t = 0.41 * k as f64;
            // Circular: v = -K sin(2 pi (t - Tc)/P) with the conjunction convention.
            let expect = -12.0 * (TAU * t / 5.3).sin();
            assert!((c.rv(t) - expect).abs() < 1e-9);
        }
    }

    #[test]
    fn bad_elements_are_refused() {
        assert!(Orbit::new(0.0, 1.0, 0.1, 0.0, 0.0).is_err());
        assert!(Orbit::new(1.0, 1.0, 1.0, 0.0, 0.0).is_err());
        assert!(Orbit::new(1.0, f64::NAN, 0.1, 0.0, 0.0).is_err());
    }
}
