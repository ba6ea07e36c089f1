//! Iterative signal search: periodogram of the residuals, strongest peak, joint refit of
//! all signals, until the strongest peak's false-alarm probability is above the threshold.
//! The periodograms use the fast method (within ~1e-11 of the exact sums, and like them
//! independent of the thread count).

use super::{FRESH_STARTS, Fit, FitError, FitOptions, PlanetSpec, fit};
use crate::data::RvSet;
use crate::periodogram::{self, Grid, Peak, Periodogram};
use crate::target::OrbitShape;

/// How many signals the search adds.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum SignalCount {
    /// Add signals while the strongest residual peak has FAP below the threshold, at
    /// most this many in all (known planets included).
    UpTo(usize),
    /// Exactly this many signals in all, whatever their FAP.
    Exactly(usize),
}

/// Settings of the search.
#[derive(Clone, Debug, PartialEq)]
pub struct SearchSettings {
    /// Shortest period searched, days.
    pub period_min_d: f64,
    /// Longest period searched, days (default: the data's time span).
    pub period_max_d: Option<f64>,
    /// Frequency step = 1/(oversample × span).
    pub oversample: f64,
    /// FAP below which a peak counts as a signal.
    pub fap_threshold: f64,
    /// How many signals.
    pub count: SignalCount,
    /// Model options of each fit.
    pub options: FitOptions,
}

/// One round of the search.
#[derive(Clone, Debug)]
pub struct SearchStep {
    /// Periodogram of the residuals of the fit so far.
    pub periodogram: Periodogram,
    /// Its strongest peak, if any.
    pub peak: Option<Peak>,
    /// Whether that peak was added as a signal.
    pub accepted: bool,
}

/// Result of the search: the final joint fit and each round's periodogram.
#[derive(Clone, Debug)]
pub struct Search {
    /// Final joint fit of all signals.
    pub fit: Fit,
    /// Rounds in order (the first is the periodogram of the data after the known planets).
    pub steps: Vec<SearchStep>,
    /// Labels of the planets started from a previous solution ([`search_warm`]).
    pub warm_started: Vec<String>,
    /// Wall time of the search's fits, s.
    pub fit_s: f64,
    /// Optimiser starts the warm start spared (each warm planet with an eccentricity
    /// would otherwise have started circular, with [`FRESH_STARTS`] extra starts).
    pub starts_spared: usize,
    /// Estimated time that saved, s: the spared starts at this search's mean time per
    /// optimiser start.
    pub saved_s: f64,
}

/// Label for a new signal: the first of b, c, d, … not in use.
pub fn next_label(used: &[PlanetSpec]) -> String {
    (b'b'..=b'z')
        .map(|c| (c as char).to_string())
        .find(|l| used.iter().all(|p| &p.label != l))
        .unwrap_or_else(|| format!("s{}", used.len() + 1))
}

/// Searches for signals beyond the `known` planets and fits all of them jointly.
///
/// # Errors
/// [`FitError`] from the periodogram (too few points, zero baseline, bad range) or the fit.
pub fn search(
    set: &RvSet,
    known: &[PlanetSpec],
    settings: &SearchSettings,
) -> Result<Search, FitError> {
    search_warm(set, known, settings, &[])
}

/// As [`search`], started from a previous solution `warm` (e.g. the last run's): a known
/// planet starts at the K and eccentricity of the warm planet with its label, and a signal
/// the search adds starts at the warm planet whose frequency is within `1/span` of the
/// peak's, which spares the optimiser the extra starts of a new, circular signal. Which
/// signals are found is decided exactly as without a warm start.
///
/// # Errors
/// As [`search`].
pub fn search_warm(
    set: &RvSet,
    known: &[PlanetSpec],
    settings: &SearchSettings,
    warm: &[PlanetSpec],
) -> Result<Search, FitError> {
    let span = set.baseline_d();
    let pmax = settings.period_max_d.unwrap_or(span);
    let fmin = 1.0 / pmax;
    let fmax = 1.0 / settings.period_min_d;
    let grid = Grid::with_oversampling(fmin, fmax, span, settings.oversample)?;
    // Labels of the planets started warm, and of the warm planets used.
    let (mut warm_started, mut used) = (Vec::new(), Vec::new());
    let mut planets: Vec<PlanetSpec> = known
        .iter()
        .map(|k| match warm.iter().find(|w| w.label == k.label) {
            Some(w) => {
                warm_started.push(k.label.clone());
                used.push(w.label.clone());
                PlanetSpec {
                    k_mps: w.k_mps,
                    ecc_vector: w.ecc_vector,
                    ..k.clone()
                }
            }
            None => k.clone(),
        })
        .collect();
    let mut fit_s = 0.0;
    let mut n_starts = 0;
    let mut timed_fit = |planets: &[PlanetSpec]| -> Result<Fit, FitError> {
        let start = std::time::Instant::now();
        let f = fit(set, planets, &settings.options)?;
        fit_s += start.elapsed().as_secs_f64();
        n_starts += f.starts;
        Ok(f)
    };
    let mut current = timed_fit(&planets)?;
    let mut steps = Vec::new();
    let (limit, forced) = match settings.count {
        SignalCount::UpTo(n) => (n, false),
        SignalCount::Exactly(n) => (n, true),
    };
    loop {
        let residual = current.residual_set(set, None);
        let pg = periodogram::compute_with(
            &residual,
            &current.params.jitters_mps,
            &grid,
            periodogram::Method::FAST,
        )?;
        let peak = pg.peaks(1, 0.0).into_iter().next();
        let wanted = planets.len() < limit;
        let accepted = wanted && peak.is_some_and(|p| forced || p.fap < settings.fap_threshold);
        steps.push(SearchStep {
            periodogram: pg,
            peak,
            accepted,
        });
        let (true, Some(peak)) = (accepted, peak) else {
            break;
        };
        let label = next_label(&planets);
        let previous = warm.iter().find(|w| {
            (1.0 / w.period_d - peak.frequency).abs() < 1.0 / span && !used.contains(&w.label)
        });
        let spec = match previous {
            Some(w) => {
                warm_started.push(label.clone());
                used.push(w.label.clone());
                PlanetSpec {
                    label: label.clone(),
                    ..w.clone()
                }
            }
            None => {
                let sine = periodogram::sinusoid_at(
                    &residual,
                    &current.params.jitters_mps,
                    peak.frequency,
                )?;
                PlanetSpec::from_sinusoid(&sine, &label)
            }
        };
        // Start the known signals where the last fit left them.
        planets = current.planet_specs();
        planets.push(spec);
        current = timed_fit(&planets)?;
    }
    // Each warm planet with an eccentricity spared the extra starts of a circular one.
    let eccentric = settings.options.shape == OrbitShape::Eccentric;
    let starts_spared = if eccentric {
        FRESH_STARTS
            * warm
                .iter()
                .filter(|w| used.contains(&w.label) && w.ecc_vector != (0.0, 0.0))
                .count()
    } else {
        0
    };
    let saved_s = starts_spared as f64 * fit_s / n_starts.max(1) as f64;
    Ok(Search {
        fit: current,
        steps,
        warm_started,
        fit_s,
        starts_spared,
        saved_s,
    })
}
