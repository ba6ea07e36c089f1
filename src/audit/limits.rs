//! Is the signal detected? If not: upper limits on K and mass, and the probability of
//! detecting a signal of a given K at that period.
//!
//! Detection: the false-alarm probability of the GLS power at the planet's frequency in
//! the data with everything else removed must be below the threshold. For a period found
//! in the RV data it is the Baluev (2008, MNRAS 385, 1279) FAP over the searched range
//! (look-elsewhere included); for a period set by transits no search was made, and it is
//! the χ² tail of twice the ln-likelihood gain of a sinusoid at that fixed frequency (two
//! parameters; Wilks 1938, Ann. Math. Stat. 9, 60): `p = exp(−Δχ²/2)`.
//!
//! Upper limits: at the fixed period, the sinusoid's coefficients `(a, b)` have a Gaussian
//! likelihood (mean and covariance from weighted least squares with the instrument offsets
//! and the fitted jitters). With uniform priors on K ≥ 0 and on the phase, the posterior of
//! K is `p(K) ∝ ∫ N((K cos φ, K sin φ); μ, C) dφ` (the Jacobian K cancels the prior's 1/K
//! in the (a, b) plane); its 95th and 99th percentiles are the limits on K, and mass limits
//! follow from K draws of it joined with the stellar (and transit) draws. The orbit is
//! taken circular.
//!
//! Detection probability: sinusoids of each K and random phase are injected into the
//! residuals of the full fit (the real sampling and noise) and the same detection test is
//! applied at that frequency.

use std::f64::consts::TAU;

use rand::Rng;
use rayon::prelude::*;
use serde::Serialize;

use super::AuditError;
use super::common::{Refitter, SineFit, Stream, rng, sine_fit};
use crate::data::RvSet;
use crate::periodogram::{Periodogram, sinusoid_at};

/// Grid points of K and of the phase in the posterior of K.
const K_GRID: usize = 1500;
const PHASE_GRID: usize = 180;
/// Semi-amplitudes of the detection curve, in units of the 99 % upper limit on K.
const CURVE_STEPS: [f64; 8] = [0.25, 0.5, 0.75, 1.0, 1.25, 1.5, 2.0, 3.0];

/// Probability of detecting a signal of one semi-amplitude.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct DetectionPoint {
    /// Injected semi-amplitude, m/s.
    pub k_mps: f64,
    /// Fraction of injections detected.
    pub probability: f64,
}

/// Upper limits of a signal that is not detected.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Limits {
    /// 95 % upper limit on K, m/s.
    pub k95_mps: f64,
    /// 99 % upper limit on K, m/s.
    pub k99_mps: f64,
    /// 95 % upper limit on the mass (true mass with a known inclination, else m sin i),
    /// Earth masses.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass95_mearth: Option<f64>,
    /// 99 % upper limit on the mass, Earth masses.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass99_mearth: Option<f64>,
    /// Detection probability against K at this period.
    pub detection_curve: Vec<DetectionPoint>,
}

/// Significance of one planet's signal.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Detection {
    /// False-alarm probability below the threshold.
    pub detected: bool,
    /// The false-alarm probability (see `fap_method`).
    pub fap: f64,
    /// `baluev` (searched period) or `fixed-period` (period set by transits).
    pub fap_method: &'static str,
    /// GLS power at the planet's frequency, everything else removed.
    pub power: f64,
    /// K over its 1σ error in the fit.
    pub k_over_sigma: f64,
    /// Limits, when not detected.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limits: Option<Limits>,
}

/// The detection test at frequency `f`: a FAP for the GLS power (Baluev over `pg`'s range)
/// or, without `pg` (fixed period), the χ² tail of the sinusoid's Δχ².
fn fap_at(set: &RvSet, jit: &[f64], f: f64, pg: Option<&Periodogram>) -> Option<(f64, f64)> {
    let power = sinusoid_at(set, jit, f).ok()?.power;
    let fap = match pg {
        Some(pg) => pg.fap(power),
        None => (-0.5 * sine_fit(set, jit, f)?.delta_chi2.max(0.0)).exp(),
    };
    Some((fap, power))
}

/// Tests base planet `i` and, when it is not detected, adds its limits.
///
/// # Errors
/// [`AuditError`] when a periodogram cannot be computed.
pub fn detection(refit: &Refitter, i: usize) -> Result<Detection, AuditError> {
    let est = &refit.base.planets[i];
    let f = 1.0 / est.period_d.value;
    let residual = refit.residual_without(i);
    let jit = refit.jitters();
    let pg = if refit.has_transit(i) {
        None
    } else {
        Some(refit.periodogram(&residual)?)
    };
    let (fap, power) = fap_at(&residual, jit, f, pg.as_ref()).unwrap_or((1.0, 0.0));
    let threshold = refit.settings.fap_threshold;
    let detected = fap < threshold;
    let limits = if detected {
        None
    } else {
        sine_fit(&residual, jit, f).and_then(|sf| limits(refit, i, &sf, pg.as_ref()))
    };
    Ok(Detection {
        detected,
        fap,
        fap_method: if pg.is_some() {
            "baluev"
        } else {
            "fixed-period"
        },
        power,
        k_over_sigma: est.k_mps.value / est.k_mps.plus.max(1e-300),
        limits,
    })
}

/// Posterior CDF of K on a grid: `(K values, CDF)`; `None` for a singular covariance.
fn k_posterior(sf: &SineFit) -> Option<(Vec<f64>, Vec<f64>)> {
    let [[iaa, iab], [_, ibb]] = sf.precision()?;
    let sd = sf.cov[0][0].max(sf.cov[1][1]).sqrt();
    let k_max = sf.amplitude() + 10.0 * sd;
    let ks: Vec<f64> = (0..K_GRID)
        .map(|j| k_max * j as f64 / (K_GRID - 1) as f64)
        .collect();
    // Log of the phase-integrated density at each K, then normalised.
    let log_dens: Vec<f64> = ks
        .iter()
        .map(|&k| {
            let terms: Vec<f64> = (0..PHASE_GRID)
                .map(|q| {
                    let phi = TAU * q as f64 / PHASE_GRID as f64;
                    let (da, db) = (k * phi.cos() - sf.a, k * phi.sin() - sf.b);
                    -0.5 * (iaa * da * da + 2.0 * iab * da * db + ibb * db * db)
                })
                .collect();
            let m = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            m + terms.iter().map(|t| (t - m).exp()).sum::<f64>().ln()
        })
        .collect();
    let m = log_dens.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let dens: Vec<f64> = log_dens.iter().map(|l| (l - m).exp()).collect();
    let mut cdf = vec![0.0; K_GRID];
    for j in 1..K_GRID {
        cdf[j] = cdf[j - 1] + 0.5 * (dens[j] + dens[j - 1]);
    }
    let total = cdf[K_GRID - 1];
    cdf.iter_mut().for_each(|c| *c /= total);
    Some((ks, cdf))
}

/// K at cumulative probability `u` (linear interpolation of the CDF).
fn quantile(ks: &[f64], cdf: &[f64], u: f64) -> f64 {
    let j = cdf.partition_point(|&c| c < u).clamp(1, ks.len() - 1);
    let (c0, c1) = (cdf[j - 1], cdf[j]);
    let w = if c1 > c0 { (u - c0) / (c1 - c0) } else { 0.0 };
    ks[j - 1] + w * (ks[j] - ks[j - 1])
}

/// Upper limits and the detection curve of base planet `i` from its sinusoid fit; `None`
/// when the fit's covariance is singular.
fn limits(refit: &Refitter, i: usize, sf: &SineFit, pg: Option<&Periodogram>) -> Option<Limits> {
    let est = &refit.base.planets[i];
    let period = est.period_d.value;
    let f = 1.0 / period;
    let (ks, cdf) = k_posterior(sf)?;
    let k95 = quantile(&ks, &cdf, 0.95);
    let k99 = quantile(&ks, &cdf, 0.99);
    let seed = refit.settings.seed;
    let mut r = rng(seed, Stream::Injections, i as u64);
    let k_draws: Vec<f64> = (0..refit.n_draws())
        .map(|_| quantile(&ks, &cdf, r.random::<f64>()))
        .collect();
    let masses = refit.derive(period, k_draws, 0.0, i).map(|d| {
        let m = d.draws.mass_mearth.unwrap_or(d.draws.msini_mearth);
        let s = crate::summary::Summary::exact(0.0).with_upper_limits(&m);
        (s.upper95, s.upper99)
    });
    let noise = refit.base.residual_set(refit.set, None);
    let jit = refit.jitters();
    let n_inj = refit.settings.injections;
    let threshold = refit.settings.fap_threshold;
    let detection_curve = CURVE_STEPS
        .iter()
        .enumerate()
        .map(|(level, &scale)| {
            let k = scale * k99;
            let hits = (0..n_inj)
                .into_par_iter()
                .filter(|&j| {
                    let item = ((i as u64) << 40) | ((level as u64 + 1) << 24) | j as u64;
                    let mut r = rng(seed, Stream::Injections, item);
                    let phase = TAU * r.random::<f64>();
                    let mut data = noise.clone();
                    for (v, &t) in data.rv_mps.iter_mut().zip(&noise.time_d) {
                        *v += k * (TAU * f * t - phase).cos();
                    }
                    fap_at(&data, jit, f, pg).is_some_and(|(fap, _)| fap < threshold)
                })
                .count();
            DetectionPoint {
                k_mps: k,
                probability: hits as f64 / n_inj.max(1) as f64,
            }
        })
        .collect();
    Some(Limits {
        k95_mps: k95,
        k99_mps: k99,
        mass95_mearth: masses.and_then(|m| m.0),
        mass99_mearth: masses.and_then(|m| m.1),
        detection_curve,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// With an isotropic Gaussian likelihood centred on 0 (σ = 2 per coefficient) and
    /// uniform priors on K ≥ 0 and the phase, the posterior of K is half-normal,
    /// `p(K) ∝ exp(−K²/2σ²)`, so its 95 % and 99 % points are the two-sided normal
    /// quantiles 1.95996 σ and 2.57583 σ (normal tables, common practice). (A uniform
    /// prior on the coefficients instead would give the Rayleigh distribution.)
    #[test]
    fn null_signal_limits_are_half_normal_quantiles() {
        let sf = SineFit {
            a: 0.0,
            b: 0.0,
            cov: [[4.0, 0.0], [0.0, 4.0]],
            delta_chi2: 0.0,
        };
        let (ks, cdf) = k_posterior(&sf).unwrap();
        let k95 = quantile(&ks, &cdf, 0.95);
        let k99 = quantile(&ks, &cdf, 0.99);
        assert!((k95 / 2.0 - 1.959_964).abs() < 2e-3, "{k95}");
        assert!((k99 / 2.0 - 2.575_829).abs() < 2e-3, "{k99}");
    }
}
