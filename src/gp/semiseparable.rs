//! The O(N J²) Cholesky factorisation of Foreman-Mackey et al. (2017, AJ 154, 220, §5)
//! for kernels that are sums of `e^{−cτ}[a cos(dτ) + b sin(dτ)]` terms, in the form with
//! the exponential factors applied between neighbouring times (Foreman-Mackey 2018,
//! RNAAS 2, 31), which never forms `e^{+ct}` and so stays finite at any time span.
//!
//! With `J = 2 × terms` columns,
//! `U[n] = s_n (a cos dt_n + b sin dt_n, a sin dt_n − b cos dt_n)`,
//! `V[n] = s_n (cos dt_n, sin dt_n)` per term and `φ[n] = e^{−c (t_n − t_{n−1})}`,
//! the covariance below the diagonal is `K[n][m] = U[n] · (∏ φ) V[m]`, and the factor is
//! `K = L D Lᵀ` with `L = I + tril(U Wᵀ)` (the same products of φ between rows).

use super::GpError;
use super::kernel::ExpTerm;

/// `K = L D Lᵀ` of a semiseparable covariance.
#[derive(Clone, Debug)]
pub struct SemiseparableFactor {
    /// Columns (2 per term).
    j: usize,
    /// `U`, row-major N × J.
    u: Vec<f64>,
    /// `W`, row-major N × J.
    w: Vec<f64>,
    /// `φ`, row-major N × J (row 0 unused).
    phi: Vec<f64>,
    /// `D`.
    d: Vec<f64>,
}

impl SemiseparableFactor {
    /// Factorises the covariance `diag(white) + s_n s_m Σ k(t_n − t_m)` at non-decreasing
    /// times `t` (days), white variances `white` (m²/s²) and per-point amplitude scales
    /// `scale`.
    ///
    /// # Errors
    /// [`GpError::Unsorted`] when the times decrease, [`GpError::NotPositiveDefinite`]
    /// when a pivot is not positive.
    pub fn new(
        terms: &[ExpTerm],
        t: &[f64],
        white: &[f64],
        scale: &[f64],
    ) -> Result<SemiseparableFactor, GpError> {
        let n = t.len();
        let j = 2 * terms.len();
        let mut u = vec![0.0; n * j];
        let mut v = vec![0.0; n * j];
        let mut phi = vec![0.0; n * j];
        let total_a: f64 = terms.iter().map(|x| x[0]).sum();
        for i in 0..n {
            if i > 0 && !(t[i] >= t[i - 1]) {
                return Err(GpError::Unsorted(i));
            }
            for (q, &[a, b, c, d]) in terms.iter().enumerate() {
                let (sn, cs) = (d * t[i]).sin_cos();
                let row = i * j + 2 * q;
                u[row] = scale[i] * (a * cs + b * sn);
                u[row + 1] = scale[i] * (a * sn - b * cs);
                v[row] = scale[i] * cs;
                v[row + 1] = scale[i] * sn;
                if i > 0 {
                    let p = (-c * (t[i] - t[i - 1])).exp();
                    phi[row] = p;
                    phi[row + 1] = p;
                }
            }
        }
        let mut d = vec![0.0; n];
        let mut w = v;
        let mut s = vec![0.0; j * j];
        let mut tmp = vec![0.0; j];
        for i in 0..n {
            let a_i = white[i] + scale[i] * scale[i] * total_a;
            if i > 0 {
                let (prev_w, p) = (&w[(i - 1) * j..i * j], &phi[i * j..(i + 1) * j]);
                let dp = d[i - 1];
                for r in 0..j {
                    for c in 0..j {
                        s[r * j + c] = p[r] * p[c] * (s[r * j + c] + dp * prev_w[r] * prev_w[c]);
                    }
                }
            }
            let ui = &u[i * j..(i + 1) * j];
            for c in 0..j {
                tmp[c] = (0..j).map(|r| ui[r] * s[r * j + c]).sum();
            }
            let di = a_i - ui.iter().zip(&tmp).map(|(x, y)| x * y).sum::<f64>();
            if !(di > 0.0) {
                return Err(GpError::NotPositiveDefinite);
            }
            d[i] = di;
            for c in 0..j {
                w[i * j + c] = (w[i * j + c] - tmp[c]) / di;
            }
        }
        Ok(SemiseparableFactor { j, u, w, phi, d })
    }

    /// `ln det K`.
    pub fn log_det(&self) -> f64 {
        self.d.iter().map(|x| x.ln()).sum()
    }

    /// `z = L⁻¹ y`.
    fn forward(&self, y: &[f64]) -> Vec<f64> {
        let j = self.j;
        let mut f = vec![0.0; j];
        let mut z = y.to_vec();
        for i in 1..z.len() {
            let (prev_w, p, ui) = (
                &self.w[(i - 1) * j..i * j],
                &self.phi[i * j..(i + 1) * j],
                &self.u[i * j..(i + 1) * j],
            );
            for c in 0..j {
                f[c] = p[c] * (f[c] + prev_w[c] * z[i - 1]);
            }
            z[i] -= ui.iter().zip(&f).map(|(a, b)| a * b).sum::<f64>();
        }
        z
    }

    /// `yᵀ K⁻¹ y`.
    pub fn quadratic(&self, y: &[f64]) -> f64 {
        self.forward(y)
            .iter()
            .zip(&self.d)
            .map(|(z, d)| z * z / d)
            .sum()
    }

    /// `K⁻¹ y`.
    pub fn solve(&self, y: &[f64]) -> Vec<f64> {
        let j = self.j;
        let n = y.len();
        let mut x: Vec<f64> = self
            .forward(y)
            .iter()
            .zip(&self.d)
            .map(|(z, d)| z / d)
            .collect();
        let mut g = vec![0.0; j];
        for i in (0..n.saturating_sub(1)).rev() {
            let (next_u, p, wi) = (
                &self.u[(i + 1) * j..(i + 2) * j],
                &self.phi[(i + 1) * j..(i + 2) * j],
                &self.w[i * j..(i + 1) * j],
            );
            for c in 0..j {
                g[c] = p[c] * (g[c] + next_u[c] * x[i + 1]);
            }
            x[i] -= wi.iter().zip(&g).map(|(a, b)| a * b).sum::<f64>();
        }
        x
    }
}
