//! Refits of a model with one planet's period held near each alias of its period, for the
//! audit's alias test and the sampler's period modes.
//!
//! Candidates are `|f ± f_w|` for the planet's frequency `f` and each of the three
//! strongest peaks `f_w` of the spectral window (power ≥ 0.1), inside the given frequency
//! range and at least `1/span` from `f` and from each other (the aliases of Dawson &
//! Fabrycky 2010, ApJ 722, 937). Each is refitted with all other signals free, started
//! from the best sinusoid at the alias (the planet's eccentricity vector kept), its period
//! held near the alias by a Gaussian constraint of width `1/span` in frequency so that the
//! optimiser cannot slide to another alias; the refit's ln L excludes the constraint.

use rayon::prelude::*;

use super::{Fit, PlanetSpec, fit};
use crate::data::RvSet;
use crate::periodogram::{PeriodogramError, sinusoid_at, window_peaks};

/// Window peaks whose aliases are refitted.
const WINDOW_PEAKS: usize = 3;
/// Weakest window peak (power |W|²) whose aliases are refitted.
const MIN_WINDOW_POWER: f64 = 0.1;

/// One alias of a planet's period and the model refitted there.
#[derive(Clone, Debug)]
pub struct AliasRefit {
    /// How the alias relates to the planet's frequency `f`, e.g. `f + 1.0027/d`.
    pub relation: String,
    /// Alias frequency the refit started from, 1/day.
    pub frequency: f64,
    /// GLS power at the alias of the data with everything but the planet removed.
    pub observed_power: f64,
    /// The refit; `None` when it failed.
    pub fit: Option<Fit>,
}

/// The aliases of planet `i` of `base` inside `[fmin, fmax]` (1/day), each with the model
/// refitted there (in parallel; the order is that of the window peaks).
///
/// # Errors
/// [`PeriodogramError`] when the window or a sinusoid cannot be computed.
pub fn alias_refits(
    set: &RvSet,
    base: &Fit,
    i: usize,
    fmin: f64,
    fmax: f64,
) -> Result<Vec<AliasRefit>, PeriodogramError> {
    let f0 = 1.0 / base.planets[i].period_d.value;
    let span = set.baseline_d();
    let jit = &base.params.jitters_mps;
    let residual = base.residual_set(set, Some(i));
    let mut freqs: Vec<(f64, String)> = Vec::new();
    for wp in window_peaks(set, jit, fmax, WINDOW_PEAKS)? {
        if wp.power < MIN_WINDOW_POWER {
            continue;
        }
        for sign in [1.0, -1.0] {
            let fa = (f0 + sign * wp.frequency).abs();
            let inside = fa >= fmin && fa <= fmax;
            let distinct = std::iter::once(f0)
                .chain(freqs.iter().map(|x| x.0))
                .all(|g| (g - fa).abs() > 1.0 / span);
            if inside && distinct {
                let op = if sign > 0.0 { '+' } else { '−' };
                let rel = if f0 + sign * wp.frequency < 0.0 {
                    format!("f_w − f, f_w = {:.4}/d", wp.frequency)
                } else {
                    format!("f {op} {:.4}/d", wp.frequency)
                };
                freqs.push((fa, rel));
            }
        }
    }
    freqs
        .into_par_iter()
        .map(|(fa, relation)| {
            let sine = sinusoid_at(&residual, jit, fa)?;
            let mut specs = base.planet_specs();
            let mut spec = PlanetSpec::from_sinusoid(&sine, &base.planets[i].label);
            spec.period_prior = Some((1.0 / fa, 1.0 / (fa * fa * span)));
            // The planet's orbit shape is a fair start (and spares the circular
            // multi-start).
            spec.ecc_vector = specs[i].ecc_vector;
            specs[i] = spec;
            Ok(AliasRefit {
                relation,
                frequency: fa,
                observed_power: sine.power,
                fit: fit(set, &specs, &base.options).ok(),
            })
        })
        .collect()
}
