//! What every part of the audit shares: the baseline fit, refits under other settings,
//! and K → mass with fixed stellar and transit draws.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

use super::{AuditError, AuditSettings, Context, PlanetValues};
use crate::data::{Indicator, RvSet};
use crate::derive::{OrbitDraws, PlanetDerived, StarDraws, TransitDraws, derive_planet};
use crate::fit::{Fit, FitOptions, PlanetSpec};
use crate::periodogram::{Grid, Method, Periodogram, compute_with};
use crate::pipeline::Analysis;
use crate::summary::Summary;

/// Random-number streams of the audit's parts (one ChaCha8 stream each, so that adding
/// draws to one part never changes another).
#[derive(Clone, Copy, Debug)]
pub enum Stream {
    /// Stellar, transit and K draws of the masses.
    Masses = 1,
    /// Dawson & Fabrycky simulations.
    Aliases = 2,
    /// Choice of jackknifed epochs.
    Jackknife = 3,
    /// Injections of the detection curve.
    Injections = 4,
}

/// A generator for `stream`, item `item` (e.g. one simulation), under the audit's seed.
pub fn rng(seed: u64, stream: Stream, item: u64) -> ChaCha8Rng {
    let mut r = ChaCha8Rng::seed_from_u64(seed ^ ((stream as u64) << 56));
    r.set_stream(item);
    r
}

/// The baseline and the means to refit it.
pub struct Refitter<'a> {
    /// The data.
    pub set: &'a RvSet,
    /// The fit under audit (the claimed one, or the one at the periods the alias test
    /// preferred decisively).
    pub base: Fit,
    /// The search's frequency grid (range and step of every periodogram here).
    pub grid: Grid,
    /// Audit settings.
    pub settings: &'a AuditSettings,
    /// Stellar draws shared by every mass.
    star_draws: Option<StarDraws>,
    /// Transit draws of each planet of the base fit (same order), where it transits.
    transit_draws: Vec<Option<TransitDraws>>,
    /// Standard normal draws that turn K ± σ_K into K draws (common to all refits).
    k_normals: Vec<f64>,
    /// The fitted points with the clipped outliers put back, when outliers were clipped.
    pub before_clipping: Option<RvSet>,
}

impl<'a> Refitter<'a> {
    /// Prepares the draws.
    ///
    /// # Errors
    /// [`AuditError::Derive`] for stellar or transit values that cannot be drawn.
    pub fn new(
        analysis: &'a Analysis,
        ctx: &'a Context<'a>,
        settings: &'a AuditSettings,
    ) -> Result<Refitter<'a>, AuditError> {
        let base = &analysis.search.fit;
        let n = settings.mass_draws.max(100);
        let mut r = rng(settings.seed, Stream::Masses, 0);
        let star_draws = ctx
            .star
            .map(|s| StarDraws::sample(s, n, &mut r))
            .transpose()?;
        let transit_draws = base
            .planets
            .iter()
            .map(|p| {
                ctx.transits
                    .iter()
                    .find(|t| t.label == p.label)
                    .map(|t| TransitDraws::sample(t, n, &mut r))
                    .transpose()
            })
            .collect::<Result<Vec<_>, _>>()?;
        let k_normals = (0..n).map(|_| StandardNormal.sample(&mut r)).collect();
        Ok(Refitter {
            set: &analysis.set,
            base: base.clone(),
            grid: analysis.search.steps[0].periodogram.grid,
            settings,
            star_draws,
            transit_draws,
            k_normals,
            before_clipping: analysis.data_log.before_clipping(&analysis.set),
        })
    }

    /// Audits `fit` from now on (same planets and labels, e.g. at another alias).
    pub fn rebase(&mut self, fit: Fit) {
        self.base = fit;
    }

    /// Model options of the baseline.
    pub fn options(&self) -> FitOptions {
        self.base.options.clone()
    }

    /// Planet specs starting at the baseline optimum.
    pub fn specs(&self) -> Vec<PlanetSpec> {
        self.base.planet_specs()
    }

    /// Whether the period of base planet `i` is set by a transit ephemeris.
    pub fn has_transit(&self, i: usize) -> bool {
        self.transit_draws[i].is_some()
    }

    /// K, mass and density of the planet labelled like base planet `i` in `fit`; `None`
    /// when `fit` has no such planet.
    pub fn values(&self, fit: &Fit, i: usize) -> Option<PlanetValues> {
        let label = &self.base.planets[i].label;
        let est = fit.planets.iter().find(|p| &p.label == label)?;
        Some(self.values_of(est.period_d.value, est.k_mps, est.ecc.value, i))
    }

    /// K, mass and density for elements `(P, K ± σ, e)` of base planet `i` (its transit,
    /// if any, supplies the inclination and radius when `P` is its period).
    pub fn values_of(&self, period_d: f64, k: Summary, ecc: f64, i: usize) -> PlanetValues {
        let k_draws: Vec<f64> = self
            .k_normals
            .iter()
            .map(|z| (k.value + k.plus * z).abs())
            .collect();
        let derived = self.derive(period_d, k_draws, ecc, i);
        PlanetValues {
            period_d,
            k_mps: k,
            ecc,
            mass_mearth: derived
                .as_ref()
                .map(|d| d.mass_mearth.unwrap_or(d.msini_mearth)),
            density_gcc: derived.and_then(|d| d.density_gcc),
        }
    }

    /// Number of Monte Carlo draws behind every mass.
    pub fn n_draws(&self) -> usize {
        self.k_normals.len()
    }

    /// Mass (and density) draws of base planet `i` for period `period_d`, K draws
    /// `k_draws` ([`Refitter::n_draws`] of them) and eccentricity `ecc`, with the shared
    /// stellar draws (and transit draws when `period_d` is the base planet's period);
    /// `None` without a star or when the derivation fails.
    pub fn derive(
        &self,
        period_d: f64,
        k_draws: Vec<f64>,
        ecc: f64,
        i: usize,
    ) -> Option<PlanetDerived> {
        let star = self.star_draws.as_ref()?;
        let transit = self.transit_draws[i]
            .as_ref()
            .filter(|_| (period_d - self.base.planets[i].period_d.value).abs() < 1e-3 * period_d);
        let n = k_draws.len();
        let orbit = OrbitDraws {
            period_d: vec![period_d; n],
            k_mps: k_draws,
            ecc: vec![ecc.clamp(0.0, 0.99); n],
        };
        derive_planet(&orbit, star, transit).ok()
    }

    /// Mass and density of base planet `i` from posterior draws of its orbit (the first
    /// [`Refitter::n_draws`] at most), joined with the shared stellar (and transit) draws.
    pub fn derive_orbit(&self, orbit: &OrbitDraws, i: usize) -> Option<PlanetDerived> {
        let star = self.star_draws.as_ref()?;
        let n = orbit.period_d.len().min(star.mass_msun.len());
        if n == 0 {
            return None;
        }
        let head = |v: &[f64]| v[..n].to_vec();
        let star = StarDraws {
            mass_msun: head(&star.mass_msun),
            radius_rsun: star.radius_rsun.as_deref().map(head),
        };
        let orbit = OrbitDraws {
            period_d: head(&orbit.period_d),
            k_mps: head(&orbit.k_mps),
            ecc: head(&orbit.ecc),
        };
        let transit = self.transit_draws[i].as_ref().and_then(|t| t.head(n));
        derive_planet(&orbit, &star, transit.as_ref()).ok()
    }

    /// The data with everything of the base fit but planet `i` removed (other planets,
    /// trend, indicator terms); instrument offsets stay for the periodogram to refit.
    pub fn residual_without(&self, i: usize) -> RvSet {
        self.base.residual_set(self.set, Some(i))
    }

    /// Jitters of the base fit, m/s per instrument.
    pub fn jitters(&self) -> &[f64] {
        &self.base.params.jitters_mps
    }

    /// Fast GLS of `set` on the search grid with the base jitters.
    ///
    /// # Errors
    /// As [`compute_with`].
    pub fn periodogram(&self, set: &RvSet) -> Result<Periodogram, AuditError> {
        Ok(compute_with(set, self.jitters(), &self.grid, Method::FAST)?)
    }
}

/// Weighted least-squares sinusoid `a cos 2πft + b sin 2πft` with one offset per
/// instrument, weights `1/(σ² + s²)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SineFit {
    /// Cosine coefficient, m/s.
    pub a: f64,
    /// Sine coefficient, m/s.
    pub b: f64,
    /// Covariance of `(a, b)`, (m/s)².
    pub cov: [[f64; 2]; 2],
    /// χ² with the offsets alone minus χ² with offsets and sinusoid (twice the ΔlnL of
    /// the sinusoid at fixed noise).
    pub delta_chi2: f64,
}

impl SineFit {
    /// Semi-amplitude, m/s.
    pub fn amplitude(&self) -> f64 {
        self.a.hypot(self.b)
    }

    /// Phase `atan2(b, a)`, radians: the model is `K cos(2πft − φ)`.
    pub fn phase(&self) -> f64 {
        self.b.atan2(self.a)
    }

    /// Inverse of the covariance of `(a, b)`; `None` when it is singular.
    pub fn precision(&self) -> Option<[[f64; 2]; 2]> {
        let [[caa, cab], [_, cbb]] = self.cov;
        let det = caa * cbb - cab * cab;
        (det > 0.0).then(|| [[cbb / det, -cab / det], [-cab / det, caa / det]])
    }
}

/// Fits [`SineFit`] at `f` (1/day) to `set`; `None` when the normal equations are singular
/// (fewer points than parameters, or no phase coverage).
pub fn sine_fit(set: &RvSet, jitters: &[f64], f: f64) -> Option<SineFit> {
    use nalgebra::{DMatrix, DVector};
    let present: Vec<usize> = (0..set.n_instruments())
        .filter(|&k| set.instrument.contains(&k))
        .collect();
    let m = present.len();
    let n = set.len();
    if n < m + 3 {
        return None;
    }
    let mut x = DMatrix::zeros(n, m + 2);
    let mut y = DVector::zeros(n);
    for i in 0..n {
        let k = set.instrument[i];
        let s = jitters.get(k).copied().unwrap_or(0.0);
        let w = (set.err_mps[i].powi(2) + s * s).sqrt().recip();
        let col = present.iter().position(|&q| q == k)?;
        x[(i, col)] = w;
        let (sn, cs) = (std::f64::consts::TAU * f * set.time_d[i]).sin_cos();
        x[(i, m)] = w * cs;
        x[(i, m + 1)] = w * sn;
        y[i] = w * set.rv_mps[i];
    }
    let chi2 = |cols: usize| -> Option<(DVector<f64>, DMatrix<f64>, f64)> {
        let xs = x.columns(0, cols).into_owned();
        let normal = xs.transpose() * &xs;
        let ch = normal.cholesky()?;
        let beta = ch.solve(&(xs.transpose() * &y));
        let r = &y - &xs * &beta;
        Some((beta, ch.inverse(), r.norm_squared()))
    };
    let (_, _, chi2_0) = chi2(m)?;
    let (beta, cov, chi2_1) = chi2(m + 2)?;
    Some(SineFit {
        a: beta[m],
        b: beta[m + 1],
        cov: [
            [cov[(m, m)], cov[(m, m + 1)]],
            [cov[(m + 1, m)], cov[(m + 1, m + 1)]],
        ],
        delta_chi2: chi2_0 - chi2_1,
    })
}

/// The set with each indicator centred on its mean within each instrument (missing
/// values stay missing), so a single coefficient per indicator does not mix instruments'
/// zero points.
pub fn centred_indicators(set: &RvSet) -> RvSet {
    let mut out = set.clone();
    out.indicators = set
        .indicators
        .iter()
        .map(|ind| {
            let mut values = ind.values.clone();
            for k in 0..set.n_instruments() {
                let idx: Vec<usize> = (0..set.len())
                    .filter(|&j| set.instrument[j] == k && ind.values[j].is_finite())
                    .collect();
                if idx.is_empty() {
                    continue;
                }
                let mean = idx.iter().map(|&j| ind.values[j]).sum::<f64>() / idx.len() as f64;
                for j in idx {
                    values[j] -= mean;
                }
            }
            Indicator {
                name: ind.name.clone(),
                values,
            }
        })
        .collect();
    out
}
