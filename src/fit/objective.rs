//! The function the fit minimises: −ln L plus the Gaussian constraints of the planet
//! specs and a smooth penalty on eccentricities above the cap.

use crate::data::RvSet;

use super::layout::Layout;

/// Weight of the quadratic penalty `W (e − e_max)²` on eccentricities above the cap.
const ECC_PENALTY: f64 = 1e6;

/// −ln L(θ) + constraints + penalties, for one data set and layout.
pub struct Objective<'a> {
    /// The data.
    pub set: &'a RvSet,
    /// Parameter layout.
    pub layout: &'a Layout,
    /// Largest eccentricity the model evaluates.
    pub max_ecc: f64,
}

impl Objective<'_> {
    /// Negative log-likelihood only (no constraints, no penalties); +∞ for invalid θ.
    pub fn neg_log_likelihood(&self, theta: &[f64]) -> f64 {
        match self.layout.params(theta, self.max_ecc) {
            Some(p) => -p.log_likelihood(self.set),
            None => f64::INFINITY,
        }
    }

    /// The minimised function; +∞ for invalid θ.
    pub fn value(&self, theta: &[f64]) -> f64 {
        let mut total = self.neg_log_likelihood(theta);
        for (i, spec) in self.layout.planets.iter().enumerate() {
            let [p, _, ec, es, tc] = self.layout.planet_elements(theta, i);
            let excess = ec.hypot(es) - self.max_ecc;
            if excess > 0.0 {
                total += ECC_PENALTY * excess * excess;
            }
            if let Some((mean, sd)) = spec.period_prior {
                total += 0.5 * ((p - mean) / sd).powi(2);
            }
            if let Some((mean, sd)) = spec.tc_prior {
                total += 0.5 * ((tc - mean) / sd).powi(2);
            }
        }
        if total.is_nan() { f64::INFINITY } else { total }
    }
}

/// Central-difference gradient of `f` at `x` with steps `h`.
pub fn gradient(f: &dyn Fn(&[f64]) -> f64, x: &[f64], h: &[f64]) -> Vec<f64> {
    let mut xp = x.to_vec();
    (0..x.len())
        .map(|i| {
            xp[i] = x[i] + h[i];
            let up = f(&xp);
            xp[i] = x[i] - h[i];
            let down = f(&xp);
            xp[i] = x[i];
            (up - down) / (2.0 * h[i])
        })
        .collect()
}

/// Central-difference Hessian of `f` at `x` with steps `h`.
pub fn hessian(f: &dyn Fn(&[f64]) -> f64, x: &[f64], h: &[f64]) -> nalgebra::DMatrix<f64> {
    let n = x.len();
    let f0 = f(x);
    let mut m = nalgebra::DMatrix::zeros(n, n);
    let mut xp = x.to_vec();
    let eval = |xp: &mut Vec<f64>, moves: &[(usize, f64)]| {
        for &(i, d) in moves {
            xp[i] += d;
        }
        let v = f(xp);
        for &(i, d) in moves {
            xp[i] -= d;
        }
        v
    };
    for i in 0..n {
        let up = eval(&mut xp, &[(i, h[i])]);
        let down = eval(&mut xp, &[(i, -h[i])]);
        m[(i, i)] = (up - 2.0 * f0 + down) / (h[i] * h[i]);
        for j in 0..i {
            let pp = eval(&mut xp, &[(i, h[i]), (j, h[j])]);
            let pm = eval(&mut xp, &[(i, h[i]), (j, -h[j])]);
            let mp = eval(&mut xp, &[(i, -h[i]), (j, h[j])]);
            let mm = eval(&mut xp, &[(i, -h[i]), (j, -h[j])]);
            let v = (pp - pm - mp + mm) / (4.0 * h[i] * h[j]);
            m[(i, j)] = v;
            m[(j, i)] = v;
        }
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finite_differences_of_a_quadratic_are_exact() {
        // f = x0² + 3 x0 x1 + 2 x1²: gradient (2x0 + 3x1, 3x0 + 4x1), Hessian [[2,3],[3,4]].
        let f = |x: &[f64]| x[0] * x[0] + 3.0 * x[0] * x[1] + 2.0 * x[1] * x[1];
        let g = gradient(&f, &[1.0, -2.0], &[1e-3, 1e-3]);
        assert!((g[0] + 4.0).abs() < 1e-8 && (g[1] + 5.0).abs() < 1e-8);
        let h = hessian(&f, &[1.0, -2.0], &[1e-3, 1e-3]);
        assert!((h[(0, 0)] - 2.0).abs() < 1e-5 && (h[(0, 1)] - 3.0).abs() < 1e-5);
        assert!((h[(1, 1)] - 4.0).abs() < 1e-5);
    }
}
