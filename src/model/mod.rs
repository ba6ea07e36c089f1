//! The full RV model: planets + one offset and one jitter per instrument + a polynomial
//! trend + optional linear terms in activity indicators, and its log-likelihood (Gaussian,
//! or Student-t for data with outliers, see [`Noise`]). Pure functions of [`Params`] and
//! the data.

use statrs::function::gamma::ln_gamma;

use crate::data::RvSet;
use crate::orbit::Orbit;

/// Distribution of one residual `r` (m/s) given its variance `V = σ² + s²` (m²/s²).
#[derive(Clone, Copy, Debug, Default, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Noise {
    /// Normal with variance `V`.
    #[default]
    Gaussian,
    /// Student-t with `dof` degrees of freedom and scale `√V`, whose heavy tails let a few
    /// outliers pull the fit far less than under a normal (Lange, Little & Taylor 1989,
    /// JASA 84, 881): `ln p = lnΓ((ν+1)/2) − lnΓ(ν/2) − ½ ln(νπV) − (ν+1)/2 ln(1 + r²/(νV))`.
    StudentT {
        /// Degrees of freedom ν (> 0).
        dof: f64,
    },
}

impl Noise {
    /// `ln p(r | V)` for residual `r` (m/s) and variance `var` (m²/s²).
    pub fn ln_density(self, r: f64, var: f64) -> f64 {
        match self {
            Noise::Gaussian => -0.5 * (r * r / var + (std::f64::consts::TAU * var).ln()),
            Noise::StudentT { dof } => {
                ln_gamma(0.5 * (dof + 1.0))
                    - ln_gamma(0.5 * dof)
                    - 0.5 * (dof * std::f64::consts::PI * var).ln()
                    - 0.5 * (dof + 1.0) * (r * r / (dof * var)).ln_1p()
            }
        }
    }

    /// Derivatives of `f = −ln p(r | V)`: `(∂f/∂r, 2 ∂f/∂V)` in 1/(m/s) and 1/(m²/s²).
    #[inline]
    pub fn gradient_terms(self, r: f64, var: f64) -> (f64, f64) {
        match self {
            Noise::Gaussian => (r / var, 1.0 / var - r * r / (var * var)),
            Noise::StudentT { dof } => {
                let d = dof * var + r * r;
                (
                    (dof + 1.0) * r / d,
                    1.0 / var - (dof + 1.0) * r * r / (var * d),
                )
            }
        }
    }
}

/// Days per Julian year, the time unit of trend coefficients.
pub const DAYS_PER_YEAR: f64 = 365.25;

/// Values of every model parameter.
#[derive(Clone, Debug, PartialEq)]
pub struct Params {
    /// One Keplerian per planet (times in days from the data's reference epoch).
    pub planets: Vec<Orbit>,
    /// Zero point of each instrument, m/s.
    pub offsets_mps: Vec<f64>,
    /// Extra white noise of each instrument, m/s (≥ 0).
    pub jitters_mps: Vec<f64>,
    /// Trend coefficients: `trend[k-1]` multiplies `(t / 1 yr)^k`, in m/s/yr^k, with `t`
    /// counted from the reference epoch. Empty for no trend.
    pub trend: Vec<f64>,
    /// Coefficients of the data's first indicator columns, m/s per indicator unit (a
    /// missing value contributes 0): one per column, or with
    /// [`Params::regressors_per_instrument`] one per column and instrument (column-major:
    /// `[c * n_instruments + k]`). Empty for none.
    pub regressors: Vec<f64>,
    /// One indicator coefficient per instrument instead of one for all.
    pub regressors_per_instrument: bool,
    /// Distribution of the residuals.
    pub noise: Noise,
}

impl Params {
    /// Sum of the planets' Keplerian RVs at `t_d`, m/s.
    #[inline]
    pub fn planets_rv(&self, t_d: f64) -> f64 {
        self.planets.iter().map(|p| p.rv(t_d)).sum()
    }

    /// Trend value at `t_d` (days from the reference epoch), m/s.
    #[inline]
    pub fn trend_rv(&self, t_d: f64) -> f64 {
        let x = t_d / DAYS_PER_YEAR;
        self.trend.iter().rev().fold(0.0, |acc, c| (acc + c) * x)
    }

    /// Indicator terms of point `i` of `set`, m/s.
    #[inline]
    pub fn regressors_rv(&self, set: &RvSet, i: usize) -> f64 {
        let (stride, k) = if self.regressors_per_instrument {
            (self.offsets_mps.len(), set.instrument[i])
        } else {
            (1, 0)
        };
        self.regressors
            .chunks(stride)
            .zip(&set.indicators)
            .map(|(c, ind)| {
                let x = ind.values[i];
                if x.is_finite() { c[k] * x } else { 0.0 }
            })
            .sum()
    }

    /// Model RV of every point of `set` (planets + offset + trend + indicator terms), m/s.
    pub fn predict(&self, set: &RvSet) -> Vec<f64> {
        let mut model = vec![0.0; set.len()];
        for p in &self.planets {
            p.add_rv(&set.time_d, &mut model);
        }
        for (i, m) in model.iter_mut().enumerate() {
            let t = set.time_d[i];
            *m +=
                self.offsets_mps[set.instrument[i]] + self.trend_rv(t) + self.regressors_rv(set, i);
        }
        model
    }

    /// Observed minus model, m/s.
    pub fn residuals(&self, set: &RvSet) -> Vec<f64> {
        self.predict(set)
            .iter()
            .zip(&set.rv_mps)
            .map(|(m, v)| v - m)
            .collect()
    }

    /// Residuals (m/s) and variances `σ² + s²` (m²/s²) of every point of `set`, 64 at a
    /// time in stack buffers, handed to `block` (the planets' RVs summed by the vectorised
    /// [`Orbit::add_rv`]). Allocates nothing.
    #[inline]
    fn for_each_block(&self, set: &RvSet, mut block: impl FnMut(&[f64], &[f64])) {
        let (mut r, mut var) = ([0.0; CHUNK], [0.0; CHUNK]);
        for start in (0..set.len()).step_by(CHUNK) {
            let end = (start + CHUNK).min(set.len());
            let (r, var) = (&mut r[..end - start], &mut var[..end - start]);
            r.fill(0.0);
            for p in &self.planets {
                p.add_rv(&set.time_d[start..end], r);
            }
            for (j, i) in (start..end).enumerate() {
                let t = set.time_d[i];
                let k = set.instrument[i];
                r[j] = set.rv_mps[i]
                    - r[j]
                    - self.offsets_mps[k]
                    - self.trend_rv(t)
                    - self.regressors_rv(set, i);
                let (sigma, s) = (set.err_mps[i], self.jitters_mps[k]);
                var[j] = sigma * sigma + s * s;
            }
            block(r, var);
        }
    }

    /// Log-likelihood of `set` under these parameters: for Gaussian noise as
    /// [`log_likelihood`], for Student-t noise the sum of [`Noise::ln_density`].
    /// Allocates nothing; each planet's constants (ω terms, 1/P, the Kepler solver's
    /// table) are cached in its [`Orbit`].
    pub fn log_likelihood(&self, set: &RvSet) -> f64 {
        if let Noise::StudentT { .. } = self.noise {
            let mut total = 0.0;
            self.for_each_block(set, |r, var| {
                for (&r, &v) in r.iter().zip(var) {
                    total += self.noise.ln_density(r, v);
                }
            });
            return total;
        }
        let mut sum = GaussianSum::default();
        self.for_each_block(set, |r, var| sum.add_block(r, var));
        sum.total()
    }
}

/// Epochs per block of [`Params::log_likelihood`].
const CHUNK: usize = 64;

/// Points whose variances are multiplied before one logarithm is taken.
const LOG_CHUNK: usize = 16;

/// Running `−1/2 Σ [r²/V + ln(2πV)]` over points with residual `r` (m/s) and variance
/// `V` (m²/s²), a block of points at a time. `Σ r²/V` runs in four interleaved partial
/// sums; `Σ ln V` is taken as the logarithm of the product of [`LOG_CHUNK`] variances at
/// a time (one `ln` per chunk instead of one per point; a chunk whose product under- or
/// overflows falls back to one `ln` per point). Both change the sum by a few units in
/// the last place per chunk.
#[derive(Default)]
struct GaussianSum {
    chi2: [f64; 4],
    ln_var: f64,
    points: usize,
}

impl GaussianSum {
    /// Adds the points with residuals `r` and variances `var` (same length).
    #[inline]
    fn add_block(&mut self, r: &[f64], var: &[f64]) {
        let (rs, vs) = (r.chunks_exact(4), var.chunks_exact(4));
        for (&x, &v) in rs.remainder().iter().zip(vs.remainder()) {
            self.chi2[0] += x * x / v;
        }
        for (x, v) in rs.zip(vs) {
            for l in 0..4 {
                self.chi2[l] += x[l] * x[l] / v[l];
            }
        }
        for vars in var.chunks(LOG_CHUNK) {
            let product: f64 = vars.iter().product();
            self.ln_var += if product.is_normal() {
                product.ln()
            } else {
                vars.iter().map(|v| v.ln()).sum()
            };
        }
        self.points += r.len();
    }

    fn total(self) -> f64 {
        let chi2 = (self.chi2[0] + self.chi2[1]) + (self.chi2[2] + self.chi2[3]);
        -0.5 * (chi2 + self.ln_var + self.points as f64 * std::f64::consts::TAU.ln())
    }
}

/// Log-density of one residual `r` with error `sigma` and jitter `s` (all m/s):
/// `-1/2 [r²/(σ² + s²) + ln(2π(σ² + s²))]` (for scoring single points, e.g. held-out
/// ones; sums over a data set go through [`log_likelihood`]).
pub fn point_log_likelihood(r: f64, sigma: f64, s: f64) -> f64 {
    Noise::Gaussian.ln_density(r, sigma * sigma + s * s)
}

/// Gaussian log-likelihood with per-instrument jitter,
/// `ln L = -1/2 Σ [r²/(σ² + s²) + ln(2π(σ² + s²))]` (jitter as a fitted parameter:
/// Baluev 2009, MNRAS 393, 969).
pub fn log_likelihood(
    residuals: &[f64],
    err: &[f64],
    instrument: &[usize],
    jitters: &[f64],
) -> f64 {
    let mut sum = GaussianSum::default();
    let mut var = [0.0; CHUNK];
    for (start, r) in (0..residuals.len())
        .step_by(CHUNK)
        .zip(residuals.chunks(CHUNK))
    {
        let var = &mut var[..r.len()];
        for (j, v) in var.iter_mut().enumerate() {
            let (e, s) = (err[start + j], jitters[instrument[start + j]]);
            *v = e * e + s * s;
        }
        sum.add_block(r, var);
    }
    sum.total()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check values of references.md §15 ([C], from the stated formula).
    #[test]
    fn reference_log_likelihoods() {
        assert!((log_likelihood(&[1.0], &[1.0], &[0], &[1.0]) + 1.5155121).abs() < 1e-7);
        assert!((log_likelihood(&[1.0], &[1.0], &[0], &[0.0]) + 1.4189385).abs() < 1e-7);
        let l = log_likelihood(&[1.0, -2.0, 0.5], &[1.0, 1.0, 2.0], &[0, 0, 0], &[1.5]);
        assert!((l + 5.6409921).abs() < 1e-7);
    }

    /// The chunked sum against the per-point definition (references.md §15), including
    /// chunks whose variance product overflows (two errors of 1e100 m/s) or underflows
    /// (two of 1e-100 m/s with zero residual and no jitter), which take the per-point
    /// fallback.
    #[test]
    fn chunked_logarithms_match_the_per_point_sum() {
        let n = 203;
        let mut r: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin() * 4.0).collect();
        let mut err: Vec<f64> = (0..n).map(|i| 0.5 + (i % 7) as f64).collect();
        err[40] = 1e100;
        err[41] = 1e100;
        for i in [100, 101] {
            err[i] = 1e-100;
            r[i] = 0.0;
        }
        let inst: Vec<usize> = (0..n).map(|i| i % 2).collect();
        for jit in [[0.0, 0.0], [1.3, 2.1]] {
            let direct: f64 = (0..n)
                .map(|i| {
                    let v = err[i] * err[i] + jit[inst[i]] * jit[inst[i]];
                    -0.5 * (r[i] * r[i] / v + (std::f64::consts::TAU * v).ln())
                })
                .sum();
            let got = log_likelihood(&r, &err, &inst, &jit);
            assert!(
                (got - direct).abs() <= 1e-12 * direct.abs(),
                "{got} vs {direct}"
            );
        }
    }

    /// Student-t with ν = 1 is the Cauchy density `1/(π γ (1 + r²/γ²))` (definition of
    /// the Cauchy distribution), and with ν → ∞ it tends to the normal density
    /// (textbook limit); its gradient terms against central differences of `ln_density`.
    #[test]
    fn student_t_limits_and_gradient() {
        for (r, var) in [(0.0, 1.0), (1.0, 1.0), (3.0, 4.0), (-7.5f64, 2.25f64)] {
            let gamma = var.sqrt();
            let cauchy = -(std::f64::consts::PI * gamma * (1.0 + r * r / var)).ln();
            let got = Noise::StudentT { dof: 1.0 }.ln_density(r, var);
            assert!((got - cauchy).abs() < 1e-12, "{got} vs {cauchy}");
            let wide = Noise::StudentT { dof: 1e7 }.ln_density(r, var);
            let normal = Noise::Gaussian.ln_density(r, var);
            assert!((wide - normal).abs() < 1e-4, "{wide} vs {normal}");
            for noise in [Noise::Gaussian, Noise::StudentT { dof: 3.0 }] {
                let h = 1e-5;
                let f = |r: f64, v: f64| -noise.ln_density(r, v);
                let dr = (f(r + h, var) - f(r - h, var)) / (2.0 * h);
                let dv = (f(r, var + h) - f(r, var - h)) / (2.0 * h);
                let (gr, gv) = noise.gradient_terms(r, var);
                assert!((gr - dr).abs() < 1e-6, "{noise:?}: {gr} vs {dr}");
                assert!(
                    (gv - 2.0 * dv).abs() < 1e-6,
                    "{noise:?}: {gv} vs {}",
                    2.0 * dv
                );
            }
        }
    }

    #[test]
    fn trend_polynomial_in_years() {
        let p = Params {
            planets: vec![],
            offsets_mps: vec![0.0],
            jitters_mps: vec![0.0],
            trend: vec![2.0, 0.5],
            regressors: vec![],
            regressors_per_instrument: false,
            noise: Noise::Gaussian,
        };
        let t = 2.0 * DAYS_PER_YEAR;
        assert!((p.trend_rv(t) - (2.0 * 2.0 + 0.5 * 4.0)).abs() < 1e-12);
    }
}
