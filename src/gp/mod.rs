//! Gaussian-process (GP) noise models of stellar activity: kernels ([`kernel`]), the
//! exact dense Cholesky solver and the O(N) semiseparable solver of Foreman-Mackey et al.
//! (2017, AJ 154, 220) ([`semiseparable`]), the GP log-likelihood and the GP prediction
//! (mean and variance) at any times (Rasmussen & Williams 2006, *Gaussian Processes for
//! Machine Learning*, eqs. 2.25–2.26 and 2.30), and the joint model of several series
//! driven by one latent process and its derivative (Rajpaul et al. 2015) ([`joint`]).
//!
//! The covariance of N points at times `t` (days) is
//! `K[n][m] = white[n] δ[n][m] + s_n s_m k(t_n − t_m)` with `white` the white variance of
//! each point (error² + jitter², m²/s²), `s` a per-point amplitude scale (1 unless each
//! instrument has its own GP amplitude) and `k` a [`Kernel`].

pub mod activity;
pub mod joint;
pub mod kernel;
pub mod semiseparable;

pub use activity::{
    Activity, ActivityLayout, ROTATION_SD_FRACTION, ROTATION_TOLERANCE, SCALE_BOUNDS, log_wall,
    near_rotation, rotation_prior,
};
pub use joint::{Coupling, JointGradient, JointKernel, JointPoints};
pub use kernel::{Kernel, Term};
pub use semiseparable::SemiseparableFactor;

use nalgebra::{Cholesky, DMatrix, DVector, Dyn};

/// Why a GP computation failed.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum GpError {
    /// A kernel parameter is out of range.
    #[error("invalid kernel parameter: {0}")]
    Parameter(String),
    /// The semiseparable solver was asked for a kernel that is not a sum of exponential
    /// terms (the quasi-periodic kernel).
    #[error("the semiseparable solver needs oscillator terms only; use the dense solver")]
    NotSemiseparable,
    /// The semiseparable solver needs times in increasing order.
    #[error("times must not decrease (point {0})")]
    Unsorted(usize),
    /// The covariance matrix is not numerically positive definite.
    #[error("the covariance matrix is not positive definite")]
    NotPositiveDefinite,
    /// Input lengths differ.
    #[error("{0} values where {1} are needed")]
    Length(usize, usize),
}

/// Which factorisation to use.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Solver {
    /// Exact dense Cholesky (nalgebra), O(N³), any kernel.
    Dense,
    /// Semiseparable factorisation, O(N), oscillator terms only.
    Semiseparable,
    /// Semiseparable when the kernel allows it, else dense.
    Auto,
}

/// A factorised covariance matrix.
#[derive(Clone, Debug)]
pub enum Factor {
    /// Dense Cholesky factor.
    Dense(Cholesky<f64, Dyn>),
    /// Semiseparable `L D Lᵀ` factor.
    Semiseparable(SemiseparableFactor),
}

/// One GP problem: the points' times, white variances and amplitude scales.
#[derive(Clone, Copy, Debug)]
pub struct Points<'a> {
    /// Times, days (non-decreasing for the semiseparable solver).
    pub time_d: &'a [f64],
    /// White variance of each point, m²/s².
    pub white: &'a [f64],
    /// Amplitude scale of each point (dimensionless).
    pub scale: &'a [f64],
}

impl Points<'_> {
    fn check(&self) -> Result<(), GpError> {
        let n = self.time_d.len();
        for len in [self.white.len(), self.scale.len()] {
            if len != n {
                return Err(GpError::Length(len, n));
            }
        }
        Ok(())
    }

    /// The dense covariance matrix of these points under `kernel`.
    pub fn covariance(&self, kernel: &Kernel) -> DMatrix<f64> {
        let (t, s) = (self.time_d, self.scale);
        let n = t.len();
        let mut k = DMatrix::zeros(n, n);
        for j in 0..n {
            k[(j, j)] = self.white[j] + s[j] * s[j] * kernel.covariance(0.0);
            for i in j + 1..n {
                let v = s[i] * s[j] * kernel.covariance(t[i] - t[j]);
                k[(i, j)] = v;
                k[(j, i)] = v;
            }
        }
        k
    }

    /// Factorises the covariance of these points under `kernel`.
    ///
    /// # Errors
    /// [`GpError`] for invalid kernels or inputs, a kernel the chosen solver cannot take,
    /// or a matrix that is not positive definite.
    pub fn factor(&self, kernel: &Kernel, solver: Solver) -> Result<Factor, GpError> {
        self.check()?;
        kernel.check()?;
        let exp_terms = kernel.exp_terms();
        match (solver, exp_terms) {
            (Solver::Semiseparable, None) => Err(GpError::NotSemiseparable),
            (Solver::Semiseparable | Solver::Auto, Some(terms)) => {
                SemiseparableFactor::new(&terms, self.time_d, self.white, self.scale)
                    .map(Factor::Semiseparable)
            }
            _ => Cholesky::new(self.covariance(kernel))
                .map(Factor::Dense)
                .ok_or(GpError::NotPositiveDefinite),
        }
    }

    /// GP log-likelihood of residuals `r` (m/s):
    /// `ln L = −½ [rᵀK⁻¹r + ln det K + N ln 2π]` (Rasmussen & Williams 2006, eq. 2.30).
    ///
    /// # Errors
    /// As [`Points::factor`].
    pub fn log_likelihood(
        &self,
        kernel: &Kernel,
        solver: Solver,
        r: &[f64],
    ) -> Result<f64, GpError> {
        if r.len() != self.time_d.len() {
            return Err(GpError::Length(r.len(), self.time_d.len()));
        }
        Ok(self.factor(kernel, solver)?.log_likelihood(r))
    }

    /// The GP's conditional mean and variance (m/s, m²/s²; the activity signal alone, no
    /// white noise) at times `at_d` with amplitude scales `at_scale`, given residuals `r`:
    /// `μ = K*ᵀ K⁻¹ r`, `v = k** − K*ᵀ K⁻¹ K*` (Rasmussen & Williams 2006, eqs. 2.25–2.26).
    ///
    /// # Errors
    /// As [`Points::factor`], and [`GpError::Length`] for mismatched inputs.
    pub fn predict(
        &self,
        kernel: &Kernel,
        solver: Solver,
        r: &[f64],
        at_d: &[f64],
        at_scale: &[f64],
    ) -> Result<(Vec<f64>, Vec<f64>), GpError> {
        if r.len() != self.time_d.len() {
            return Err(GpError::Length(r.len(), self.time_d.len()));
        }
        if at_scale.len() != at_d.len() {
            return Err(GpError::Length(at_scale.len(), at_d.len()));
        }
        let f = self.factor(kernel, solver)?;
        let alpha = f.solve(r);
        let k0 = kernel.covariance(0.0);
        Ok(at_d
            .iter()
            .zip(at_scale)
            .map(|(&t, &s)| {
                let kstar: Vec<f64> = self
                    .time_d
                    .iter()
                    .zip(self.scale)
                    .map(|(&ti, &si)| s * si * kernel.covariance(t - ti))
                    .collect();
                f.condition(&alpha, &kstar, s * s * k0)
            })
            .unzip())
    }
}

/// `K⁻¹` from the Cholesky factor `K = L Lᵀ`, as `L⁻ᵀ L⁻¹`: `L⁻¹` by forward
/// substitution a column at a time (`N³/6` multiply–adds), then the lower triangle of the
/// product from dot products of its columns (`N³/6`), mirrored. A third of the work of
/// solving against the identity (nalgebra's `Cholesky::inverse`), which ignores that
/// `L⁻¹` is triangular and `K⁻¹` symmetric.
pub fn spd_inverse(chol: &Cholesky<f64, Dyn>) -> DMatrix<f64> {
    let l = chol.l_dirty();
    let n = l.nrows();
    let l = l.as_slice();
    // Column j of X = L⁻¹ (column-major, like L) solves L x = e_j; its entries above j
    // are zero, and each step is an axpy down a column of L.
    let mut x = vec![0.0; n * n];
    for j in 0..n {
        let col = &mut x[j * n..(j + 1) * n];
        col[j] = 1.0;
        for k in j..n {
            let lk = &l[k * n..(k + 1) * n];
            let v = col[k] / lk[k];
            col[k] = v;
            if v != 0.0 {
                for (c, a) in col[k + 1..].iter_mut().zip(&lk[k + 1..]) {
                    *c -= v * a;
                }
            }
        }
    }
    let mut inv = DMatrix::<f64>::zeros(n, n);
    for j in 0..n {
        for i in j..n {
            // (XᵀX)_ij = Σ_k x_ki x_kj over k ≥ max(i, j) = i.
            let v = dot(&x[i * n + i..(i + 1) * n], &x[j * n + i..(j + 1) * n]);
            inv[(i, j)] = v;
            inv[(j, i)] = v;
        }
    }
    inv
}

/// `Σ aᵢbᵢ` in four interleaved partial sums (which the compiler can vectorise).
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0; 4];
    let (ca, cb) = (a.chunks_exact(4), b.chunks_exact(4));
    let tail: f64 = ca
        .remainder()
        .iter()
        .zip(cb.remainder())
        .map(|(x, y)| x * y)
        .sum();
    for (x, y) in ca.zip(cb) {
        for l in 0..4 {
            acc[l] += x[l] * y[l];
        }
    }
    (acc[0] + acc[1]) + (acc[2] + acc[3]) + tail
}

impl Factor {
    /// Log-likelihood of `r` under the factorised covariance:
    /// `ln L = −½ [rᵀK⁻¹r + ln det K + N ln 2π]` (Rasmussen & Williams 2006, eq. 2.30).
    pub fn log_likelihood(&self, r: &[f64]) -> f64 {
        -0.5 * (self.quadratic(r) + self.log_det() + r.len() as f64 * std::f64::consts::TAU.ln())
    }

    /// Conditional mean and variance of one unobserved value given `alpha = K⁻¹r`, its
    /// covariances `kstar` with the data and its prior variance `prior`:
    /// `μ = k*ᵀα`, `v = prior − k*ᵀK⁻¹k*` (Rasmussen & Williams 2006, eqs. 2.25–2.26).
    pub fn condition(&self, alpha: &[f64], kstar: &[f64], prior: f64) -> (f64, f64) {
        let mean = kstar.iter().zip(alpha).map(|(a, b)| a * b).sum();
        (mean, prior - self.quadratic(kstar))
    }

    /// `ln det K`.
    pub fn log_det(&self) -> f64 {
        match self {
            Factor::Dense(c) => 2.0 * c.l_dirty().diagonal().iter().map(|x| x.ln()).sum::<f64>(),
            Factor::Semiseparable(s) => s.log_det(),
        }
    }

    /// `yᵀ K⁻¹ y`.
    pub fn quadratic(&self, y: &[f64]) -> f64 {
        match self {
            Factor::Dense(c) => {
                let mut z = DVector::from_column_slice(y);
                c.l_dirty().solve_lower_triangular_mut(&mut z);
                z.norm_squared()
            }
            Factor::Semiseparable(s) => s.quadratic(y),
        }
    }

    /// `K⁻¹ y`.
    pub fn solve(&self, y: &[f64]) -> Vec<f64> {
        match self {
            Factor::Dense(c) => c.solve(&DVector::from_column_slice(y)).as_slice().to_vec(),
            Factor::Semiseparable(s) => s.solve(y),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The triangular-structure inverse against nalgebra's general one (solving against
    /// the identity) and against `K K⁻¹ = I`.
    #[test]
    fn spd_inverse_matches_general_inverse() {
        let n = 37;
        let a = DMatrix::from_fn(n, n, |i, j| ((i * 7 + j * 3) % 11) as f64 / 11.0 - 0.4);
        let k = &a * a.transpose() + DMatrix::identity(n, n) * 0.5;
        let chol = Cholesky::new(k.clone()).unwrap();
        let ours = spd_inverse(&chol);
        let general = chol.inverse();
        assert!((&ours - &general).amax() < 1e-10 * general.amax());
        assert!((&k * &ours - DMatrix::identity(n, n)).amax() < 1e-9);
    }

    /// Invented, unevenly sampled times (sorted) with varied white variances and two
    /// amplitude scales.
    fn points(n: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>) {
        let mut t: Vec<f64> = (0..n)
            .map(|i| 3.0 * i as f64 + 2.5 * ((i * i) as f64 * 0.37).sin())
            .collect();
        t.sort_by(f64::total_cmp);
        let white: Vec<f64> = (0..n).map(|i| 1.0 + 0.5 * (i % 5) as f64).collect();
        let scale: Vec<f64> = (0..n).map(|i| if i % 3 == 0 { 1.4 } else { 1.0 }).collect();
        let r: Vec<f64> = (0..n)
            .map(|i| 3.0 * (0.21 * t[i]).sin() + (i as f64 * 1.7).cos())
            .collect();
        (t, white, scale, r)
    }

    fn oscillators() -> Kernel {
        Kernel {
            terms: vec![
                Term::Oscillator {
                    amplitude_mps: 4.0,
                    period_d: 23.0,
                    quality: 5.0,
                },
                Term::Oscillator {
                    amplitude_mps: 2.0,
                    period_d: 11.5,
                    quality: 5.0,
                },
                Term::Oscillator {
                    amplitude_mps: 1.0,
                    period_d: 3.0,
                    quality: 0.7,
                },
            ],
        }
    }

    /// The semiseparable solver against the dense Cholesky: log-likelihood to 1e-8
    /// relative for N up to 2000, and solves and predictions to 1e-8 (the requirement
    /// of the method's own test, Foreman-Mackey et al. 2017, §5: the two are the same
    /// exact computation).
    #[test]
    fn semiseparable_matches_dense() {
        let kernel = oscillators();
        for n in [1, 2, 7, 150, 2000] {
            let (t, white, scale, r) = points(n);
            let p = Points {
                time_d: &t,
                white: &white,
                scale: &scale,
            };
            let dense = p.log_likelihood(&kernel, Solver::Dense, &r).unwrap();
            let semi = p
                .log_likelihood(&kernel, Solver::Semiseparable, &r)
                .unwrap();
            assert!(
                (dense - semi).abs() <= 1e-8 * dense.abs(),
                "N = {n}: {dense} vs {semi}"
            );
            if n <= 150 {
                let fd = p.factor(&kernel, Solver::Dense).unwrap();
                let fs = p.factor(&kernel, Solver::Semiseparable).unwrap();
                let (xd, xs) = (fd.solve(&r), fs.solve(&r));
                let norm = xd.iter().map(|x| x.abs()).fold(0.0, f64::max);
                for (a, b) in xd.iter().zip(&xs) {
                    assert!((a - b).abs() <= 1e-8 * norm, "N = {n}: {a} vs {b}");
                }
                let at: Vec<f64> = (0..20).map(|i| -10.0 + 25.0 * i as f64).collect();
                let ones = vec![1.0; at.len()];
                let (md, vd) = p.predict(&kernel, Solver::Dense, &r, &at, &ones).unwrap();
                let (ms, vs) = p
                    .predict(&kernel, Solver::Semiseparable, &r, &at, &ones)
                    .unwrap();
                for i in 0..at.len() {
                    assert!((md[i] - ms[i]).abs() <= 1e-8 * md[i].abs().max(1.0));
                    assert!((vd[i] - vs[i]).abs() <= 1e-8 * 21.0);
                }
            }
        }
    }

    /// The quasi-periodic kernel has no semiseparable form: the solver says so, and Auto
    /// falls back to the dense one. Decreasing times are refused.
    #[test]
    fn solver_choice_and_errors() {
        let (t, white, scale, r) = points(30);
        let p = Points {
            time_d: &t,
            white: &white,
            scale: &scale,
        };
        let qp = Kernel {
            terms: vec![Term::QuasiPeriodic {
                amplitude_mps: 3.0,
                evolution_d: 30.0,
                period_d: 12.0,
                smoothness: 0.5,
            }],
        };
        assert_eq!(
            p.log_likelihood(&qp, Solver::Semiseparable, &r),
            Err(GpError::NotSemiseparable)
        );
        let auto = p.log_likelihood(&qp, Solver::Auto, &r).unwrap();
        let dense = p.log_likelihood(&qp, Solver::Dense, &r).unwrap();
        assert_eq!(auto, dense);
        let rev: Vec<f64> = t.iter().rev().copied().collect();
        let q = Points { time_d: &rev, ..p };
        assert_eq!(
            q.log_likelihood(&oscillators(), Solver::Semiseparable, &r),
            Err(GpError::Unsorted(1))
        );
        assert_eq!(
            p.log_likelihood(&qp, Solver::Dense, &r[..3]),
            Err(GpError::Length(3, 30))
        );
    }
}
