//! How significant each fitted signal is, from the maximum-likelihood fits alone (not from
//! posterior draws, which near K = 0 depend on the prior): the likelihood gain over the
//! model without the planet, the periodogram false-alarm probability, and the Lucy &
//! Sweeney test of the eccentricity.

use serde::Serialize;

use super::{FitError, PlanetSpec, Search, fit};
use crate::data::RvSet;
use crate::target::OrbitShape;

/// Probability below which an eccentricity counts as significant (Lucy & Sweeney 1971).
pub const LUCY_SWEENEY_LEVEL: f64 = 0.05;

/// Lucy & Sweeney (1971, AJ 76, 544): for a truly circular orbit the fitted e is
/// Rayleigh-distributed, so `P(ê ≥ e | circular) = exp(−e² / (2 σ_e²))`. A zero σ_e
/// gives 0 for e > 0 and 1 for e = 0.
pub fn lucy_sweeney_p(ecc: f64, sigma_ecc: f64) -> f64 {
    if sigma_ecc > 0.0 {
        (-ecc * ecc / (2.0 * sigma_ecc * sigma_ecc)).exp()
    } else if ecc > 0.0 {
        0.0
    } else {
        1.0
    }
}

/// The Lucy & Sweeney test of one fitted eccentricity.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct EccentricityTest {
    /// Fitted eccentricity.
    pub ecc: f64,
    /// Its 1σ from the curvature of the likelihood.
    pub sigma_ecc: f64,
    /// Probability of fitting an eccentricity this large if the orbit were circular.
    pub p_circular: f64,
    /// `p_circular` below 0.05: keep the eccentric orbit.
    pub significant: bool,
}

/// Significance of one fitted planet.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct SignalTest {
    /// ln L of the fit minus ln L of the best fit without this planet.
    pub delta_lnl: f64,
    /// Baluev FAP of the periodogram peak at which the search added the planet (none for
    /// planets given in advance).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub fap: Option<f64>,
    /// Eccentricity test (eccentric orbits only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub eccentricity: Option<EccentricityTest>,
}

/// Tests every planet of the search's final fit; the first `n_known` planets were given
/// in advance, the others were added by the search in order.
///
/// # Errors
/// [`FitError`] when a refit without a planet fails.
pub fn signal_tests(
    set: &RvSet,
    search: &Search,
    n_known: usize,
) -> Result<Vec<SignalTest>, FitError> {
    let best = &search.fit;
    let faps: Vec<f64> = search
        .steps
        .iter()
        .filter(|s| s.accepted)
        .filter_map(|s| s.peak.map(|p| p.fap))
        .collect();
    let started = best.planet_specs();
    (0..started.len())
        .map(|i| {
            let others: Vec<PlanetSpec> = started
                .iter()
                .enumerate()
                .filter(|&(j, _)| j != i)
                .map(|(_, s)| s.clone())
                .collect();
            let without = fit(set, &others, &best.options)?;
            let estimate = &best.planets[i];
            let eccentricity = (best.options.shape == OrbitShape::Eccentric).then(|| {
                let p = lucy_sweeney_p(estimate.ecc.value, estimate.ecc.plus);
                EccentricityTest {
                    ecc: estimate.ecc.value,
                    sigma_ecc: estimate.ecc.plus,
                    p_circular: p,
                    significant: p < LUCY_SWEENEY_LEVEL,
                }
            });
            Ok(SignalTest {
                delta_lnl: best.log_likelihood - without.log_likelihood,
                fap: i.checked_sub(n_known).and_then(|j| faps.get(j).copied()),
                eccentricity,
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check values of references.md §13 (computed there from the formula): e/σ_e = 1, 2,
    /// 2.4477, 3 → 0.6065, 0.1353, 0.0500, 0.0111.
    #[test]
    fn lucy_sweeney_reference_values() {
        for (ratio, p) in [
            (1.0, 0.6065),
            (2.0, 0.1353),
            (2.4477, 0.0500),
            (3.0, 0.0111),
        ] {
            let got = lucy_sweeney_p(ratio * 0.05, 0.05);
            assert!((got - p).abs() < 5e-5, "e/σ = {ratio}: {got}");
        }
        assert_eq!(lucy_sweeney_p(0.0, 0.0), 1.0);
        assert_eq!(lucy_sweeney_p(0.1, 0.0), 0.0);
    }
}
