//! Convergence diagnostics of MCMC chains: integrated autocorrelation time, split R̂
//! and effective sample size.

use std::sync::Arc;

use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlanner};
use statrs::function::erf::erf_inv;

/// Normalised autocorrelation function ρ(t), t = 0 … n−1, of one chain, by FFT of the
/// chain zero-padded to a power of two ≥ 2n (so the correlation is not circular).
/// A constant chain gives ρ = 1 at t = 0 and 0 elsewhere.
pub fn autocorrelation(x: &[f64]) -> Vec<f64> {
    Autocorrelation::new(x.len()).of(x)
}

/// FFT plans for autocorrelation functions of chains of one length (planning computes
/// twiddle factors, so it is done once for all the chains of an estimate).
struct Autocorrelation {
    size: usize,
    forward: Arc<dyn Fft<f64>>,
    inverse: Arc<dyn Fft<f64>>,
}

impl Autocorrelation {
    /// Plans for chains of `n` draws.
    fn new(n: usize) -> Autocorrelation {
        let size = (2 * n).next_power_of_two();
        let mut planner = FftPlanner::new();
        Autocorrelation {
            size,
            forward: planner.plan_fft_forward(size),
            inverse: planner.plan_fft_inverse(size),
        }
    }

    /// ρ(t) of `x` (see [`autocorrelation`]); `x` has the planned length.
    fn of(&self, x: &[f64]) -> Vec<f64> {
        let n = x.len();
        if n == 0 {
            return Vec::new();
        }
        let mean = x.iter().sum::<f64>() / n as f64;
        let mut buf: Vec<Complex<f64>> = x
            .iter()
            .map(|v| Complex::new(v - mean, 0.0))
            .chain(std::iter::repeat(Complex::new(0.0, 0.0)))
            .take(self.size)
            .collect();
        self.forward.process(&mut buf);
        for c in buf.iter_mut() {
            *c = Complex::new(c.norm_sqr(), 0.0);
        }
        self.inverse.process(&mut buf);
        let c0 = buf[0].re;
        if !(c0 > 0.0) {
            let mut rho = vec![0.0; n];
            rho[0] = 1.0;
            return rho;
        }
        buf[..n].iter().map(|c| c.re / c0).collect()
    }
}

/// Integrated autocorrelation time `τ = 1 + 2 Σ_{t≥1} ρ(t)` of a set of chains of equal
/// length (the walkers of an ensemble), in steps.
///
/// ρ is the average of the chains' normalised autocorrelation functions (averaging the
/// functions, not the chains, which would hide slow walker-to-walker differences). The
/// sum is cut at the smallest window M with `M ≥ c τ(M)` (Sokal 1997, "Monte Carlo
/// methods in statistical mechanics", windowing with c = 5 as used for ensemble samplers
/// by Goodman & Weare 2010, CAMCoS 5, 65). The estimate is trustworthy only when the
/// chains are much longer than τ (about 50 τ).
pub fn integrated_time(chains: &[Vec<f64>], c: f64) -> f64 {
    let Some(n) = chains.first().map(Vec::len) else {
        return f64::NAN;
    };
    if n == 0 {
        return f64::NAN;
    }
    let mut rho = vec![0.0; n];
    let plans = Autocorrelation::new(n);
    for chain in chains {
        for (r, a) in rho.iter_mut().zip(plans.of(chain)) {
            *r += a;
        }
    }
    for r in &mut rho {
        *r /= chains.len() as f64;
    }
    let mut tau = 1.0;
    for (m, r) in rho.iter().enumerate().skip(1) {
        tau += 2.0 * r;
        if m as f64 >= c * tau {
            return tau;
        }
    }
    tau
}

/// Plain split R̂: each chain is cut into halves (an odd middle draw is dropped), and
/// `R̂ = sqrt(var⁺/W)` with W the mean within-half variance (n−1 denominator), B = n × the
/// variance of the half means (2m−1 denominator), `var⁺ = (n−1)/n W + B/n`
/// (Gelman et al., *Bayesian Data Analysis* 3rd ed.; Vehtari et al. 2021, Bayesian
/// Analysis 16, 667, eq. 3–4). NaN for chains shorter than 4 draws.
pub fn split_rhat(chains: &[Vec<f64>]) -> f64 {
    let Some(len) = chains.iter().map(Vec::len).min() else {
        return f64::NAN;
    };
    let n = len / 2;
    if n < 2 {
        return f64::NAN;
    }
    let halves: Vec<&[f64]> = chains
        .iter()
        .flat_map(|c| [&c[..n], &c[len - n..len]])
        .collect();
    let m = halves.len() as f64;
    let nf = n as f64;
    let means: Vec<f64> = halves.iter().map(|h| h.iter().sum::<f64>() / nf).collect();
    let w = halves
        .iter()
        .zip(&means)
        .map(|(h, mu)| h.iter().map(|x| (x - mu).powi(2)).sum::<f64>() / (nf - 1.0))
        .sum::<f64>()
        / m;
    let grand = means.iter().sum::<f64>() / m;
    let b = nf * means.iter().map(|mu| (mu - grand).powi(2)).sum::<f64>() / (m - 1.0);
    let var_plus = (nf - 1.0) / nf * w + b / nf;
    if w > 0.0 {
        (var_plus / w).sqrt()
    } else if b > 0.0 {
        f64::INFINITY
    } else {
        1.0
    }
}

/// Rank-normalised split R̂ of Vehtari, Gelman, Simpson, Carpenter & Bürkner (2021,
/// Bayesian Analysis 16, 667): the larger of the split R̂ of the rank-normalised draws
/// and that of the rank-normalised folded draws |x − median| (which sees differences in
/// scale). Ranks are pooled over all chains (ties get their average rank) and mapped to
/// normal scores `Φ⁻¹((r − 3/8)/(S + 1/4))`.
pub fn rank_normalised_rhat(chains: &[Vec<f64>]) -> f64 {
    let bulk = split_rhat(&rank_normalise(chains));
    let mut pooled: Vec<f64> = chains.iter().flatten().copied().collect();
    pooled.sort_by(f64::total_cmp);
    let median = crate::summary::percentile_sorted(&pooled, 50.0);
    let folded: Vec<Vec<f64>> = chains
        .iter()
        .map(|c| c.iter().map(|x| (x - median).abs()).collect())
        .collect();
    let tail = split_rhat(&rank_normalise(&folded));
    bulk.max(tail)
}

/// Normal scores of the pooled ranks, chain by chain.
fn rank_normalise(chains: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let mut all: Vec<(f64, usize, usize)> = chains
        .iter()
        .enumerate()
        .flat_map(|(c, v)| v.iter().enumerate().map(move |(i, &x)| (x, c, i)))
        .collect();
    all.sort_by(|a, b| a.0.total_cmp(&b.0));
    let s = all.len() as f64;
    let mut out: Vec<Vec<f64>> = chains.iter().map(|c| vec![0.0; c.len()]).collect();
    let mut i = 0;
    while i < all.len() {
        let mut j = i;
        while j + 1 < all.len() && all[j + 1].0 == all[i].0 {
            j += 1;
        }
        // Ranks i+1 … j+1 share their average.
        let rank = 0.5 * ((i + 1) + (j + 1)) as f64;
        let p = (rank - 0.375) / (s + 0.25);
        let z = std::f64::consts::SQRT_2 * erf_inv(2.0 * p - 1.0);
        for &(_, c, k) in &all[i..=j] {
            out[c][k] = z;
        }
        i = j + 1;
    }
    out
}

#[cfg(test)]
mod tests {
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, StandardNormal};

    use super::*;

    /// Check value of references.md §14 (computed there from the stated formula):
    /// chains [1,2,3,4] and [2,3,4,5] → plain split R̂ = 1.957890.
    #[test]
    fn split_rhat_reference_value() {
        let r = split_rhat(&[vec![1.0, 2.0, 3.0, 4.0], vec![2.0, 3.0, 4.0, 5.0]]);
        assert!((r - 1.957_890).abs() < 5e-7, "{r}");
    }

    /// Independent chains from one distribution give R̂ ≈ 1; a shifted chain does not.
    #[test]
    fn rank_rhat_separates_mixed_from_unmixed() {
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let mut chain = |shift: f64| -> Vec<f64> {
            (0..2000)
                .map(|_| shift + Distribution::<f64>::sample(&StandardNormal, &mut rng))
                .collect()
        };
        let good = [chain(0.0), chain(0.0), chain(0.0)];
        let r = rank_normalised_rhat(&good);
        assert!(r < 1.01, "{r}");
        let bad = [chain(0.0), chain(1.0)];
        assert!(rank_normalised_rhat(&bad) > 1.05);
    }

    /// AR(1) x_t = φ x_{t−1} + ε_t has ρ(t) = φ^t and so τ = (1 + φ)/(1 − φ), 9 for φ = 0.8
    /// (references.md §14). 32 chains of 20 000 steps: the estimate's relative standard
    /// error is about sqrt(2(2M + 1)/N) ≈ 2 % with window M ≈ 45 and N = 640 000 (Sokal
    /// 1997); 5 % allows for that and the small bias of the window.
    #[test]
    fn ar1_integrated_time() {
        let phi: f64 = 0.8;
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        let chains: Vec<Vec<f64>> = (0..32)
            .map(|_| {
                let mut x: f64 = StandardNormal.sample(&mut rng);
                x /= (1.0 - phi * phi).sqrt();
                (0..20_000)
                    .map(|_| {
                        let e: f64 = StandardNormal.sample(&mut rng);
                        x = phi * x + e;
                        x
                    })
                    .collect()
            })
            .collect();
        let tau = integrated_time(&chains, 5.0);
        let expected = (1.0 + phi) / (1.0 - phi);
        println!("AR(1) phi = 0.8: tau = {tau:.3} (expected {expected})");
        assert!((tau - expected).abs() < 0.05 * expected, "{tau}");
    }

    #[test]
    fn autocorrelation_of_an_alternating_chain() {
        // x = +1, −1, +1, … (mean 0): ρ(1) = −(n−1)/n exactly from the definition.
        let x: Vec<f64> = (0..8)
            .map(|i| if i % 2 == 0 { 1.0 } else { -1.0 })
            .collect();
        let rho = autocorrelation(&x);
        assert!((rho[0] - 1.0).abs() < 1e-12);
        assert!((rho[1] + 7.0 / 8.0).abs() < 1e-12, "{}", rho[1]);
    }
}
