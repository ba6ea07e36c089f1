//! The Keplerian RV curve of one planet and the conjunction ↔ periastron time relation.

use std::f64::consts::{FRAC_PI_2, TAU};

use super::kepler::KeplerSolver;
#[cfg(target_arch = "x86_64")]
use super::kepler::wide;

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
    // Cached per-orbit constants of [`Orbit::rv`]: 1/P, K cos ω, K sqrt(1 - e²) sin ω,
    // K e cos ω, and the Kepler solver's table for e.
    inv_period: f64,
    k_cos_w: f64,
    k_root_sin_w: f64,
    k_e_cos_w: f64,
    solver: KeplerSolver,
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
            inv_period: 1.0 / period_d,
            k_cos_w: k_mps * cos_w,
            k_root_sin_w: k_mps * (1.0 - ecc * ecc).sqrt() * sin_w,
            k_e_cos_w: k_mps * ecc * cos_w,
            solver: KeplerSolver::new(ecc),
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
    /// `sin nu = sqrt(1 - e²) sin E/(1 - e cos E)` with sin E and cos E from the Kepler
    /// solver, so no trigonometric function or arctangent is called:
    /// `v = [K cos ω (cos E − e) − K sqrt(1 − e²) sin ω sin E]/(1 − e cos E) + K e cos ω`.
    #[inline]
    pub fn rv(&self, t_d: f64) -> f64 {
        let a = self.solver.solve(TAU * (t_d - self.tp_d) * self.inv_period);
        (self.k_cos_w * (a.cos - self.ecc) - self.k_root_sin_w * a.sin) / (1.0 - self.ecc * a.cos)
            + self.k_e_cos_w
    }

    /// Adds this planet's RV (m/s) at each time of `t_d` (days) to `out`: [`Orbit::rv`]
    /// for many times, with the same results bit for bit, eight at a time on processors
    /// with AVX-512.
    ///
    /// # Panics
    /// If the two slices differ in length.
    pub fn add_rv(&self, t_d: &[f64], out: &mut [f64]) {
        assert_eq!(t_d.len(), out.len(), "one output per time");
        #[cfg(target_arch = "x86_64")]
        if wide::available() {
            let curve = wide::Curve {
                tp_d: self.tp_d,
                inv_period: self.inv_period,
                k_cos_w: self.k_cos_w,
                k_root_sin_w: self.k_root_sin_w,
                k_e_cos_w: self.k_e_cos_w,
            };
            // SAFETY: the processor has AVX-512.
            unsafe { wide::add_rv(&self.solver, &curve, t_d, out, |t| self.rv(t)) };
            return;
        }
        for (v, &t) in out.iter_mut().zip(t_d) {
            *v += self.rv(t);
        }
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
    use crate::orbit::{eccentric_anomaly, true_anomaly};

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

    /// `add_rv` (vectorised where the processor allows) adds exactly what `rv` gives at
    /// each time, high eccentricities included.
    #[test]
    fn add_rv_matches_rv_bit_for_bit() {
        let t: Vec<f64> = (0..203)
            .map(|i| -300.0 + 2.9 * i as f64 + (i as f64).sin())
            .collect();
        for &(e, w) in &[
            (0.0, 0.3),
            (0.2, 1.0),
            (0.6, 4.0),
            (0.95, 2.5),
            (0.999, 5.9),
        ] {
            let o = Orbit::new(7.3, 10.0, e, w, 3.0).unwrap();
            let base: Vec<f64> = t.iter().map(|x| 0.1 * x).collect();
            let mut out = base.clone();
            o.add_rv(&t, &mut out);
            for i in 0..t.len() {
                assert_eq!(
                    out[i].to_bits(),
                    (base[i] + o.rv(t[i])).to_bits(),
                    "e={e} t={}",
                    t[i]
                );
            }
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

    /// The trig-free curve against `K [cos(ν + ω) + e cos ω]` with ν from the arctangent
    /// formula (references.md §4) of the bisection root and the library's cos.
    #[test]
    fn curve_matches_the_true_anomaly_form() {
        use crate::orbit::eccentric_anomaly_bisection;
        for &(e, w) in &[(0.0, 0.7), (0.1, 2.0), (0.5, 4.5), (0.9, 1.2), (0.99, 5.9)] {
            let o = Orbit::new(3.7, 9.0, e, w, 0.4).unwrap();
            for k in 0..400 {
                let t = -20.0 + 0.113 * k as f64;
                // The mean anomaly exactly as `rv` forms it.
                let m = TAU * (t - o.tp_d()) * (1.0 / o.period_d());
                let nu = true_anomaly(eccentric_anomaly_bisection(m, e), e);
                let expect = 9.0 * ((nu + w).cos() + e * w.cos());
                assert!(
                    (o.rv(t) - expect).abs() < 1e-11,
                    "e={e} w={w} t={t}: {} vs {expect}",
                    o.rv(t)
                );
            }
        }
    }

    #[test]
    fn bad_elements_are_refused() {
        assert!(Orbit::new(0.0, 1.0, 0.1, 0.0, 0.0).is_err());
        assert!(Orbit::new(1.0, 1.0, 1.0, 0.0, 0.0).is_err());
        assert!(Orbit::new(1.0, f64::NAN, 0.1, 0.0, 0.0).is_err());
    }
}
