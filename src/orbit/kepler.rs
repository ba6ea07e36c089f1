//! Kepler's equation `M = E - e sin E`, solved for the eccentric anomaly `E`.

use std::f64::consts::PI;

/// `E - e sin E - M`, written as `(1 - e) E + e (E - sin E) - M` so that it keeps its
/// relative precision for `e → 1` and small `E`, where the plain form cancels.
fn residual(ecc_anom: f64, ecc: f64, mean_anom: f64) -> f64 {
    (1.0 - ecc) * ecc_anom + ecc * e_minus_sin_e(ecc_anom) - mean_anom
}

/// `x - sin x` without cancellation for small `x` (Taylor series below |x| = 0.25, whose
/// truncation error after the x^13 term is below 1e-17 relative).
fn e_minus_sin_e(x: f64) -> f64 {
    if x.abs() >= 0.25 {
        return x - x.sin();
    }
    // x^3/3! - x^5/5! + ... - x^13/13!, Horner form in x^2.
    const C: [f64; 6] = [
        1.0 / 6.0,
        -1.0 / 120.0,
        1.0 / 5040.0,
        -1.0 / 362_880.0,
        1.0 / 39_916_800.0,
        -1.0 / 6_227_020_800.0,
    ];
    let x2 = x * x;
    let sum = C.iter().rev().fold(0.0, |acc, c| acc * x2 + c);
    x * x2 * sum
}

/// Eccentric anomaly `E` (radians) for mean anomaly `mean_anom` (radians, any value) and
/// eccentricity `0 <= ecc < 1`, accurate to a few units in the last place.
///
/// # Method
/// The mean anomaly is reduced to [0, π] (the equation is odd and 2π-periodic in `M`);
/// the starting value `E0 = M + 0.85 e` (Danby 1987, Celest. Mech. 40, 303) is refined by
/// the quartically convergent iteration of Danby & Burkardt (1983, Celest. Mech. 31, 95)
/// until the correction is at the level of rounding (or below 1e-5 where 1 − e cos E
/// exceeds 0.2, after which the next correction would be below rounding), with a bisection fallback that can
/// never fail because `E - e sin E` is monotonic.
///
/// # Panics
/// Debug builds assert `0 <= ecc < 1`; callers validate eccentricities when building
/// an [`crate::orbit::Orbit`].
pub fn eccentric_anomaly(mean_anom: f64, ecc: f64) -> f64 {
    debug_assert!(
        (0.0..1.0).contains(&ecc),
        "eccentricity {ecc} outside [0, 1)"
    );
    if ecc == 0.0 || !mean_anom.is_finite() {
        return mean_anom;
    }
    let (m, sign, base) = reduce(mean_anom);
    if m == 0.0 || m == PI {
        return base + sign * m;
    }
    let mut e_anom = (m + 0.85 * ecc).min(PI);
    for _ in 0..12 {
        let (s, c) = e_anom.sin_cos();
        // The residual in the form of [`residual`], reusing sin E where the series is
        // not needed.
        let f = if e_anom >= 0.25 {
            (1.0 - ecc) * e_anom + ecc * (e_anom - s) - m
        } else {
            residual(e_anom, ecc, m)
        };
        let f1 = 1.0 - ecc * c;
        let f2 = ecc * s;
        let f3 = ecc * c;
        let d1 = -f / f1;
        let d2 = -f / (f1 + 0.5 * d1 * f2);
        let d3 = -f / (f1 + 0.5 * d2 * f2 + d2 * d2 * f3 / 6.0);
        e_anom = (e_anom + d3).clamp(0.0, PI);
        // Quartic convergence: after a step below 1e-5 (away from the near-parabolic
        // corner, where f' = 1 − e cos E is small) the next one would be below rounding.
        let done =
            d3.abs() <= 4.0 * f64::EPSILON * e_anom.max(1e-300) || (d3.abs() < 1e-5 && f1 > 0.2);
        if done {
            return base + sign * e_anom;
        }
    }
    base + sign * eccentric_anomaly_bisection(m, ecc)
}

/// Splits `M` into `base + sign * m` with `m` in [0, π] (base a multiple of 2π).
fn reduce(mean_anom: f64) -> (f64, f64, f64) {
    let two_pi = 2.0 * PI;
    let base = (mean_anom / two_pi).round() * two_pi;
    let r = mean_anom - base; // in [-π, π]
    if r < 0.0 {
        (-r, -1.0, base)
    } else {
        (r, 1.0, base)
    }
}

/// Eccentric anomaly by bisection on the same residual as [`eccentric_anomaly`]: slow
/// (about 60 halvings) but cannot fail; the reference in tests, and the fallback.
pub fn eccentric_anomaly_bisection(mean_anom: f64, ecc: f64) -> f64 {
    if ecc == 0.0 || !mean_anom.is_finite() {
        return mean_anom;
    }
    let (m, sign, base) = reduce(mean_anom);
    // For M in [0, π] the root lies in [M, min(M + e, π)].
    let (mut lo, mut hi) = (m, (m + ecc).min(PI));
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if residual(mid, ecc, m) > 0.0 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    let root = if residual(hi, ecc, m).abs() < residual(lo, ecc, m).abs() {
        hi
    } else {
        lo
    };
    base + sign * root
}

/// True anomaly (radians) from eccentric anomaly: `nu = 2 atan2(sqrt(1+e) sin(E/2),
/// sqrt(1-e) cos(E/2))`.
pub fn true_anomaly(ecc_anom: f64, ecc: f64) -> f64 {
    let (s, c) = (0.5 * ecc_anom).sin_cos();
    2.0 * ((1.0 + ecc).sqrt() * s).atan2((1.0 - ecc).sqrt() * c)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Meeus, Astronomical Algorithms (2nd ed.), Example 30.a and the sample-results table
    /// quoted in references.md §4 (rows tagged [V]).
    #[test]
    fn meeus_worked_examples() {
        let cases = [
            (0.1, 5.0_f64.to_radians(), 5.554589_f64.to_radians(), 1e-6),
            (0.99, 1.0_f64.to_radians(), 24.725822_f64.to_radians(), 1e-6),
            (0.99, 0.2, 1.066997365282, 1e-12),
            (0.99, 2.0_f64.to_radians(), 32.361007_f64.to_radians(), 1e-6),
            (
                0.99,
                33.0_f64.to_radians(),
                89.722155_f64.to_radians(),
                1e-6,
            ),
            (
                0.75,
                70.0_f64.to_radians(),
                110.302_f64.to_radians(),
                1e-3_f64.to_radians(),
            ),
            (0.5, 5.0_f64.to_radians(), 9.950063_f64.to_radians(), 1e-6),
            (0.9, 5.0_f64.to_radians(), 33.344447_f64.to_radians(), 1e-6),
        ];
        for (e, m, expect, tol) in cases {
            let got = eccentric_anomaly(m, e);
            assert!((got - expect).abs() < tol, "e={e} M={m}: {got} vs {expect}");
        }
        // True anomalies of the same table, degrees ([V] rows of references.md §4).
        let nu = true_anomaly(eccentric_anomaly(5.0_f64.to_radians(), 0.1), 0.1);
        assert!((nu.to_degrees() - 6.139762).abs() < 1e-5);
        let nu = true_anomaly(eccentric_anomaly(0.2, 0.99), 0.99);
        assert!((nu.to_degrees() - 166.311977).abs() < 1e-5);
    }

    /// The fast solver against bisection over a dense grid of M and e up to 0.999.
    #[test]
    fn agrees_with_bisection_to_1e_14() {
        let mut worst = 0.0_f64;
        for ie in 0..=100 {
            let e = if ie == 100 { 0.999 } else { ie as f64 / 100.0 };
            for im in -400..=400 {
                let m = im as f64 * 0.0197;
                let fast = eccentric_anomaly(m, e);
                let slow = eccentric_anomaly_bisection(m, e);
                worst = worst.max((fast - slow).abs());
            }
        }
        assert!(worst <= 1e-14, "worst difference {worst}");
    }

    #[test]
    fn round_trip_mean_anomaly() {
        for &e in &[0.0, 0.3, 0.7, 0.95, 0.9999] {
            for k in 0..50 {
                let m = -7.0 + 0.29 * k as f64;
                let big_e = eccentric_anomaly(m, e);
                let back = big_e - e * big_e.sin();
                assert!((back - m).abs() < 1e-13, "e={e} M={m}: back {back}");
            }
        }
    }

    #[test]
    fn tiny_mean_anomaly_near_parabolic() {
        let (m, e) = (1e-9, 0.999_999);
        let big_e = eccentric_anomaly(m, e);
        let rel = residual(big_e, e, m).abs() / m;
        assert!(rel < 1e-12, "relative residual {rel}");
    }
}
