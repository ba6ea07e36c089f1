//! Joint GP model of several time series (RV and activity indicators) driven by one latent
//! activity process `G` and its time derivative `G′` (the multi-output framework of
//! Rajpaul et al. 2015, MNRAS 452, 2269): each series is `X(t) = a_X G(t) + b_X G′(t)`,
//! `G` has the quasi-periodic covariance `k` ([`Term::QuasiPeriodic`]), and with
//! `τ = t − t′`
//!
//! `cov(G(t), G′(t′)) = ∂k(t − t′)/∂t′ = −k′(τ)`, `cov(G′(t), G(t′)) = k′(τ)`,
//! `cov(G′(t), G′(t′)) = −k″(τ)`, so
//! `cov(X(t), Y(t′)) = a_X a_Y k + (b_X a_Y − a_X b_Y) k′ − b_X b_Y k″`.
//!
//! Each point adds its white variance (error² + jitter², in its series' unit squared) on
//! the diagonal. The stacked covariance is factorised densely (nalgebra's Cholesky).

use nalgebra::{Cholesky, DMatrix};

use super::{Factor, GpError, Term};

/// How one series follows the latent process: `X(t) = a G(t) + b G′(t)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Coupling {
    /// `a`, the series' unit per unit of `G`.
    pub level: f64,
    /// `b`, the series' unit × days per unit of `G` (0 for an indicator such as a
    /// chromospheric index or a line width, common practice).
    pub slope: f64,
}

/// A validated joint covariance model: the latent quasi-periodic term and one
/// [`Coupling`] per series.
#[derive(Clone, Debug, PartialEq)]
pub struct JointKernel {
    latent: Term,
    series: Vec<Coupling>,
}

impl JointKernel {
    /// The joint model with latent covariance `latent` (a [`Term::QuasiPeriodic`]; its
    /// amplitude multiplies every coupling, so with amplitude 1 the couplings are the
    /// series' amplitudes) and couplings `series`, series `i` being `series[i]`.
    ///
    /// # Errors
    /// [`GpError::Parameter`] for a latent term that is not quasi-periodic or has invalid
    /// parameters, no series, or a coupling coefficient that is not finite.
    pub fn new(latent: Term, series: Vec<Coupling>) -> Result<JointKernel, GpError> {
        latent.check()?;
        if latent.lag_derivatives(0.0).is_none() {
            return Err(GpError::Parameter(
                "the joint model needs a quasi-periodic latent term".into(),
            ));
        }
        if series.is_empty() {
            return Err(GpError::Parameter("the joint model needs a series".into()));
        }
        if let Some((i, c)) = series
            .iter()
            .enumerate()
            .find(|(_, c)| !(c.level.is_finite() && c.slope.is_finite()))
        {
            return Err(GpError::Parameter(format!(
                "series {i}: coupling a = {}, b = {}",
                c.level, c.slope
            )));
        }
        Ok(JointKernel { latent, series })
    }

    /// The series' couplings.
    pub fn series(&self) -> &[Coupling] {
        &self.series
    }

    /// `cov(X(t), Y(t′))` for series `x` and `y` at lag `tau_d = t − t′` (days), in the
    /// product of the two series' units.
    ///
    /// # Panics
    /// If `x` or `y` is not a series of this model.
    pub fn covariance(&self, x: usize, y: usize, tau_d: f64) -> f64 {
        self.combine(x, y, self.latent_at(tau_d))
    }

    /// `[k, k′, k″]` of the latent term at lag `tau_d` (days).
    fn latent_at(&self, tau_d: f64) -> [f64; 3] {
        self.latent
            .lag_derivatives(tau_d)
            .expect("checked in JointKernel::new")
    }

    /// `cov(X, Y)` of series `x` and `y` from the latent `[k, k′, k″]` at their lag.
    fn combine(&self, x: usize, y: usize, [k, d1, d2]: [f64; 3]) -> f64 {
        let (cx, cy) = (self.series[x], self.series[y]);
        cx.level * cy.level * k + (cx.slope * cy.level - cx.level * cy.slope) * d1
            - cx.slope * cy.slope * d2
    }
}

/// The latent term's `[k, k′, k″]` between every two distinct times of a set of points,
/// computed once per pair of epochs however many series share them.
struct LagTable {
    /// Index of each point's time among the distinct times.
    index: Vec<usize>,
    /// Number of distinct times.
    m: usize,
    /// `[k, k′, k″]` at lag `tᵤ − tᵥ` at `u * m + v`.
    values: Vec<[f64; 3]>,
    /// With [`LagTable::with_gradients`], their derivatives with respect to ln λ, ln w and
    /// ln P ([`Term::lag_derivative_gradients`]), at the same places.
    gradients: Vec<[[f64; 3]; 3]>,
}

impl LagTable {
    fn new(kernel: &JointKernel, time_d: &[f64]) -> LagTable {
        let mut distinct = time_d.to_vec();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup_by(|a, b| a.total_cmp(b).is_eq());
        let index = time_d
            .iter()
            .map(|t| {
                distinct
                    .binary_search_by(|d| d.total_cmp(t))
                    .expect("every time is among the distinct ones")
            })
            .collect();
        let m = distinct.len();
        let mut values = vec![[0.0; 3]; m * m];
        for u in 0..m {
            for v in 0..=u {
                let [k, d1, d2] = kernel.latent_at(distinct[u] - distinct[v]);
                values[u * m + v] = [k, d1, d2];
                // k and k″ are even in the lag, k′ odd.
                values[v * m + u] = [k, -d1, d2];
            }
        }
        LagTable {
            index,
            m,
            values,
            gradients: Vec::new(),
        }
    }

    /// The same table with the hyperparameter derivatives of every entry.
    fn with_gradients(mut self, kernel: &JointKernel, time_d: &[f64]) -> LagTable {
        let m = self.m;
        let mut distinct = vec![0.0; m];
        for (i, &u) in self.index.iter().enumerate() {
            distinct[u] = time_d[i];
        }
        self.gradients = vec![[[0.0; 3]; 3]; m * m];
        for u in 0..m {
            for v in 0..=u {
                let g = kernel
                    .latent
                    .lag_derivative_gradients(distinct[u] - distinct[v])
                    .expect("checked in JointKernel::new");
                self.gradients[u * m + v] = g;
                self.gradients[v * m + u] = g.map(|[k, d1, d2]| [k, -d1, d2]);
            }
        }
        self
    }

    /// `[k, k′, k″]` at the lag between points `i` and `j` (`tᵢ − tⱼ`).
    fn at(&self, i: usize, j: usize) -> [f64; 3] {
        self.values[self.index[i] * self.m + self.index[j]]
    }
}

/// The likelihood gradient pieces of a joint problem ([`JointPoints::gradient`]).
#[derive(Clone, Debug, PartialEq)]
pub struct JointGradient {
    /// `α = K⁻¹r`, in the inverse of each point's unit.
    pub alpha: Vec<f64>,
    /// `∂(−ln L)/∂` each coupling, `[a₀, b₀, a₁, b₁, …]`.
    pub couplings: Vec<f64>,
    /// `∂(−ln L)/∂` ln λ, ln w and ln P of the latent term.
    pub latent: [f64; 3],
    /// Diagonal of `W = K⁻¹ − ααᵀ`; `∂(−ln L)/∂(white variance of point i) = ½ W_ii`.
    pub w_diag: Vec<f64>,
}

/// The points of a joint problem, in any order: each one's time, series and white variance.
#[derive(Clone, Copy, Debug)]
pub struct JointPoints<'a> {
    /// Times, days.
    pub time_d: &'a [f64],
    /// Series of each point (an index into the kernel's couplings).
    pub series: &'a [usize],
    /// White variance of each point (error² + jitter², its series' unit squared).
    pub white: &'a [f64],
}

impl JointPoints<'_> {
    fn check(&self, kernel: &JointKernel, r: &[f64]) -> Result<(), GpError> {
        let n = self.time_d.len();
        for len in [self.series.len(), self.white.len(), r.len()] {
            if len != n {
                return Err(GpError::Length(len, n));
            }
        }
        series_in_range(kernel, self.series)
    }

    /// The dense stacked covariance matrix of these points under `kernel`.
    ///
    /// # Panics
    /// If a point's series is not one of the kernel's.
    pub fn covariance(&self, kernel: &JointKernel) -> DMatrix<f64> {
        self.covariance_with(kernel, &LagTable::new(kernel, self.time_d))
    }

    fn covariance_with(&self, kernel: &JointKernel, table: &LagTable) -> DMatrix<f64> {
        let s = self.series;
        let n = s.len();
        let mut k = DMatrix::zeros(n, n);
        for j in 0..n {
            k[(j, j)] = self.white[j] + kernel.combine(s[j], s[j], table.at(j, j));
            for i in j + 1..n {
                let v = kernel.combine(s[i], s[j], table.at(i, j));
                k[(i, j)] = v;
                k[(j, i)] = v;
            }
        }
        k
    }

    /// Gradient of `−ln L` of the stacked residuals `r` with respect to every coupling,
    /// `[a₀, b₀, a₁, b₁, …]`, and the latent term's ln λ, ln w, ln P, and the diagonal of `W = K⁻¹ − ααᵀ` (α = K⁻¹r), with which
    /// `∂(−ln L)/∂K_ii = ½ W_ii` gives the white variances' derivatives
    /// (`∂(−ln L)/∂θ = ½ tr(W ∂K/∂θ)`, Rasmussen & Williams 2006, eq. 5.9). From
    /// `cov(X, Y) = a_X a_Y k + (b_X a_Y − a_X b_Y) k′ − b_X b_Y k″`:
    /// `∂cov/∂a_X = a_Y k − b_Y k′` and `∂cov/∂b_X = a_Y k′ − b_Y k″` on the `X` side, and
    /// `∂cov/∂a_Y = a_X k + b_X k′`, `∂cov/∂b_Y = −a_X k′ − b_X k″` on the `Y` side.
    ///
    /// # Errors
    /// As [`JointPoints::log_likelihood`].
    pub fn gradient(&self, kernel: &JointKernel, r: &[f64]) -> Result<JointGradient, GpError> {
        self.check(kernel, r)?;
        let table = LagTable::new(kernel, self.time_d).with_gradients(kernel, self.time_d);
        let chol = Cholesky::new(self.covariance_with(kernel, &table))
            .ok_or(GpError::NotPositiveDefinite)?;
        let alpha = chol.solve(&nalgebra::DVector::from_column_slice(r));
        let kinv = crate::gp::spd_inverse(&chol);
        let s = self.series;
        let c = &kernel.series;
        let mut grad = vec![0.0; 2 * c.len()];
        let mut latent = [0.0; 3];
        let mut diag = Vec::with_capacity(s.len());
        for i in 0..s.len() {
            for j in 0..s.len() {
                let w = 0.5 * (kinv[(i, j)] - alpha[i] * alpha[j]);
                if i == j {
                    diag.push(2.0 * w);
                }
                let [k, d1, d2] = table.at(i, j);
                let (x, y) = (s[i], s[j]);
                grad[2 * x] += w * (c[y].level * k - c[y].slope * d1);
                grad[2 * x + 1] += w * (c[y].level * d1 - c[y].slope * d2);
                grad[2 * y] += w * (c[x].level * k + c[x].slope * d1);
                grad[2 * y + 1] -= w * (c[x].level * d1 + c[x].slope * d2);
                let g = table.gradients[table.index[i] * table.m + table.index[j]];
                for (l, d) in latent.iter_mut().zip(g) {
                    *l += w * kernel.combine(x, y, d);
                }
            }
        }
        Ok(JointGradient {
            alpha: alpha.as_slice().to_vec(),
            couplings: grad,
            latent,
            w_diag: diag,
        })
    }

    /// Factorises the stacked covariance (dense Cholesky) after checking the inputs
    /// against residuals `r`.
    ///
    /// # Errors
    /// As [`JointPoints::log_likelihood`].
    pub fn factor(&self, kernel: &JointKernel, r: &[f64]) -> Result<Factor, GpError> {
        self.check(kernel, r)?;
        Cholesky::new(self.covariance(kernel))
            .map(Factor::Dense)
            .ok_or(GpError::NotPositiveDefinite)
    }

    /// Log-likelihood of the stacked residuals `r` (one per point, in its series' unit):
    /// `ln L = −½ [rᵀK⁻¹r + ln det K + N ln 2π]` (Rasmussen & Williams 2006, eq. 2.30).
    ///
    /// # Errors
    /// [`GpError::Length`] for mismatched inputs, [`GpError::Parameter`] for a series the
    /// kernel lacks, [`GpError::NotPositiveDefinite`].
    pub fn log_likelihood(&self, kernel: &JointKernel, r: &[f64]) -> Result<f64, GpError> {
        Ok(self.factor(kernel, r)?.log_likelihood(r))
    }

    /// Conditional mean and variance of the activity signal of series `at_series[i]` at
    /// time `at_d[i]` (days) given the stacked residuals `r`, in that series' unit and unit
    /// squared (no white noise; Rasmussen & Williams 2006, eqs. 2.25–2.26).
    ///
    /// # Errors
    /// As [`JointPoints::log_likelihood`], and for `at_d` and `at_series` of different
    /// lengths or naming a series the kernel lacks.
    pub fn predict(
        &self,
        kernel: &JointKernel,
        r: &[f64],
        at_d: &[f64],
        at_series: &[usize],
    ) -> Result<(Vec<f64>, Vec<f64>), GpError> {
        if at_series.len() != at_d.len() {
            return Err(GpError::Length(at_series.len(), at_d.len()));
        }
        series_in_range(kernel, at_series)?;
        let f = self.factor(kernel, r)?;
        let alpha = f.solve(r);
        Ok(at_d
            .iter()
            .zip(at_series)
            .map(|(&t, &x)| {
                let kstar: Vec<f64> = self
                    .time_d
                    .iter()
                    .zip(self.series)
                    .map(|(&ti, &y)| kernel.covariance(x, y, t - ti))
                    .collect();
                f.condition(&alpha, &kstar, kernel.covariance(x, x, 0.0))
            })
            .unzip())
    }
}

/// Checks that every entry of `series` is one of the kernel's series.
fn series_in_range(kernel: &JointKernel, series: &[usize]) -> Result<(), GpError> {
    let n = kernel.series.len();
    match series.iter().position(|&s| s >= n) {
        Some(i) => Err(GpError::Parameter(format!(
            "point {i} is in series {}, but the model has {n}",
            series[i]
        ))),
        None => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::gp::{Kernel, Points, Solver};

    fn latent(amplitude: f64) -> Term {
        Term::QuasiPeriodic {
            amplitude_mps: amplitude,
            evolution_d: 35.0,
            period_d: 13.0,
            smoothness: 0.45,
        }
    }

    /// Invented, unevenly sampled times and residuals.
    fn data(n: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let t: Vec<f64> = (0..n)
            .map(|i| 2.1 * i as f64 + 1.3 * ((i * i) as f64 * 0.41).sin())
            .collect();
        let white: Vec<f64> = (0..n).map(|i| 0.8 + 0.3 * (i % 4) as f64).collect();
        let r: Vec<f64> = (0..n)
            .map(|i| 2.5 * (0.48 * t[i]).sin() + 0.7 * (i as f64 * 2.3).cos())
            .collect();
        (t, white, r)
    }

    /// One series with `b = 0` and `a = 1` is the single-series quasi-periodic GP: the
    /// joint log-likelihood and prediction equal those of [`Points`] (same formula,
    /// Rajpaul et al. 2015 with only the `a G` term).
    #[test]
    fn one_series_without_slope_is_the_plain_gp() {
        let (t, white, r) = data(60);
        let term = latent(3.0);
        let joint = JointKernel::new(
            term,
            vec![Coupling {
                level: 1.0,
                slope: 0.0,
            }],
        )
        .unwrap();
        let series = vec![0; t.len()];
        let jp = JointPoints {
            time_d: &t,
            series: &series,
            white: &white,
        };
        let ones = vec![1.0; t.len()];
        let plain = Points {
            time_d: &t,
            white: &white,
            scale: &ones,
        };
        let kernel = Kernel { terms: vec![term] };
        let a = jp.log_likelihood(&joint, &r).unwrap();
        let b = plain.log_likelihood(&kernel, Solver::Dense, &r).unwrap();
        assert!((a - b).abs() <= 1e-12 * b.abs(), "{a} vs {b}");
        let at = [-3.0, 10.5, 77.7];
        let (mj, vj) = jp.predict(&joint, &r, &at, &[0, 0, 0]).unwrap();
        let (mp, vp) = plain
            .predict(&kernel, Solver::Dense, &r, &at, &[1.0; 3])
            .unwrap();
        for i in 0..at.len() {
            assert!((mj[i] - mp[i]).abs() <= 1e-12 * 9.0);
            assert!((vj[i] - vp[i]).abs() <= 1e-12 * 9.0);
        }
    }

    /// The block covariances against their definition: `X(t) = a G(t) + b G′(t)`, so
    /// `cov(X(t), Y(t′)) = E[(a_X G(t) + b_X ∂ₜG(t)) (a_Y G(t′) + b_Y ∂ₜ′G(t′))]`,
    /// evaluated with central differences of `k(t − t′)` in `t` and in `t′` separately
    /// (this fixes the signs of the cross terms independently of the closed form).
    #[test]
    fn blocks_match_differentiated_latent_covariance() {
        let term = latent(1.7);
        let series = vec![
            Coupling {
                level: 2.0,
                slope: 15.0,
            },
            Coupling {
                level: -0.8,
                slope: 0.0,
            },
            Coupling {
                level: 0.3,
                slope: -4.0,
            },
        ];
        let joint = JointKernel::new(term, series.clone()).unwrap();
        let k = |t: f64, u: f64| term.covariance(t - u);
        let h = 1e-4;
        for (t, u) in [(3.0, 1.0), (0.0, 7.9), (20.0, 20.0), (-5.5, 30.2)] {
            let dt = (k(t + h, u) - k(t - h, u)) / (2.0 * h);
            let du = (k(t, u + h) - k(t, u - h)) / (2.0 * h);
            let dtu = (k(t + h, u + h) - k(t + h, u - h) - k(t - h, u + h) + k(t - h, u - h))
                / (4.0 * h * h);
            for x in 0..3 {
                for y in 0..3 {
                    let (cx, cy) = (series[x], series[y]);
                    let expected = cx.level * cy.level * k(t, u)
                        + cx.level * cy.slope * du
                        + cx.slope * cy.level * dt
                        + cx.slope * cy.slope * dtu;
                    let got = joint.covariance(x, y, t - u);
                    assert!(
                        (got - expected).abs() < 1e-5 * (1.0 + expected.abs()),
                        "({t}, {u}) series {x},{y}: {got} vs {expected}"
                    );
                    assert_eq!(got, joint.covariance(y, x, u - t));
                }
            }
        }
    }

    /// Bad inputs are refused with errors naming the problem, never a panic.
    #[test]
    fn bad_inputs_are_errors() {
        let osc = Term::Oscillator {
            amplitude_mps: 1.0,
            period_d: 5.0,
            quality: 2.0,
        };
        let one = vec![Coupling {
            level: 1.0,
            slope: 0.0,
        }];
        assert!(JointKernel::new(osc, one.clone()).is_err());
        assert!(JointKernel::new(latent(1.0), vec![]).is_err());
        let nan = vec![Coupling {
            level: 1.0,
            slope: f64::NAN,
        }];
        assert!(JointKernel::new(latent(1.0), nan).is_err());
        let joint = JointKernel::new(latent(1.0), one).unwrap();
        let (t, white, r) = data(5);
        let jp = JointPoints {
            time_d: &t,
            series: &[0, 0, 1, 0, 0],
            white: &white,
        };
        assert_eq!(
            jp.log_likelihood(&joint, &r),
            Err(GpError::Parameter(
                "point 2 is in series 1, but the model has 1".into()
            ))
        );
        let jp = JointPoints {
            series: &[0; 5],
            ..jp
        };
        assert_eq!(
            jp.log_likelihood(&joint, &r[..4]),
            Err(GpError::Length(4, 5))
        );
        assert_eq!(
            jp.predict(&joint, &r, &[1.0], &[0, 0]),
            Err(GpError::Length(2, 1))
        );
        assert!(jp.predict(&joint, &r, &[1.0], &[3]).is_err());
        let zero = vec![0.0; 5];
        let same_time = vec![1.0; 5];
        let degenerate = JointPoints {
            time_d: &same_time,
            white: &zero,
            ..jp
        };
        assert_eq!(
            degenerate.log_likelihood(&joint, &r),
            Err(GpError::NotPositiveDefinite)
        );
    }
}
