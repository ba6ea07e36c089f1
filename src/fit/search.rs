//! Iterative signal search: periodogram of the residuals, strongest peak, joint refit of
//! all signals, until the strongest peak's false-alarm probability is above the threshold.
//! With an activity model the periodogram only proposes: the residuals it sees still hold
//! the activity signal, so a peak is kept only when the fit with it, activity model
//! included, beats the fit without it by [`ACTIVITY_SEARCH_BIC`] in BIC. The candidates are
//! the [`ACTIVITY_SEARCH_PEAKS`] highest peaks of the likelihood-ratio periodogram under
//! the activity model ([`activity_periodogram`]); each is fitted and the one that lowers
//! the BIC most is added.
//! The periodograms use the fast method (within ~1e-11 of the exact sums, and like them
//! independent of the thread count).

use super::{FRESH_STARTS, Fit, FitError, FitOptions, PlanetSpec, fit};
use crate::data::RvSet;
use crate::gp::Activity;
use crate::gp::Factor;
use crate::periodogram::{self, Grid, Peak, Periodogram, local_maxima};
use crate::target::OrbitShape;
use rayon::prelude::*;

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
    /// Its strongest peak, or the peak whose signal was added (with an activity model the
    /// one whose signal lowers the BIC most), if any.
    pub peak: Option<Peak>,
    /// Whether that peak was added as a signal.
    pub accepted: bool,
    /// With an activity model, the BIC of the fit without the added signal minus that
    /// with it (at least [`ACTIVITY_SEARCH_BIC`]); `None` when no signal was added or
    /// none tested (no activity model, a forced count).
    pub activity_delta_bic: Option<f64>,
    /// With an activity model, the other peaks tried and not added this round:
    /// `(period [d], BIC gain)`; a gain below [`ACTIVITY_SEARCH_BIC`] means the activity
    /// model explains the peak.
    pub activity_rejected: Vec<(f64, f64)>,
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

/// BIC improvement a new signal must bring under an activity model to be kept: 10, "very
/// strong" evidence on the scale of Kass & Raftery (1995, JASA 90, 773).
pub const ACTIVITY_SEARCH_BIC: f64 = 10.0;

/// Peaks of each residual periodogram (highest first, below the false-alarm threshold,
/// at least one resolution element apart) tried in turn under an activity model.
pub const ACTIVITY_SEARCH_PEAKS: usize = 10;

/// Work budget of [`activity_periodogram`], floating-point operations: above it the
/// frequency grid is thinned (about a second on one core).
const ACTIVITY_PERIODOGRAM_FLOPS: f64 = 2e9;

/// Likelihood-ratio periodogram under `fit`'s activity model: at each frequency the gain
/// in ln L from a sinusoid added to the mean model with the covariance `K` held,
/// `ΔlnL = ½ bᵀA⁻¹b` with `b = Xᵀα`, `α = K⁻¹r`, `A = XᵀK⁻¹X` and `X` the cosine and
/// sine at the RV epochs (zero at the joint model's indicator points): generalised least
/// squares, the correlated-noise form of the floating-mean periodogram (Zechmeister &
/// Kürster 2009 with `K` for the diagonal weights). Two solves per frequency, so on a
/// dense factor the grid is thinned to [`ACTIVITY_PERIODOGRAM_FLOPS`]. Returns the gains
/// and the grid they are on; `None` without an activity model.
fn activity_periodogram(fit: &Fit, set: &RvSet, grid: &Grid) -> Option<(Vec<f64>, Grid)> {
    let (factor, r) = fit.activity_factor(set)?;
    let m = r.len();
    let per_frequency = match factor {
        Factor::Dense(_) => 4.0 * (m * m) as f64,
        Factor::Semiseparable(_) => 40.0 * m as f64,
    };
    let stride = (grid.n as f64 * per_frequency / ACTIVITY_PERIODOGRAM_FLOPS)
        .ceil()
        .max(1.0) as usize;
    let coarse = Grid {
        fmin: grid.fmin,
        df: grid.df * stride as f64,
        n: grid.n.div_ceil(stride),
    };
    let alpha = factor.solve(&r);
    let gains = (0..coarse.n)
        .into_par_iter()
        .map(|j| {
            let w = std::f64::consts::TAU * coarse.frequency(j);
            let mut c = vec![0.0; m];
            let mut s = vec![0.0; m];
            for (i, &t) in set.time_d.iter().enumerate() {
                (s[i], c[i]) = (w * t).sin_cos();
            }
            let (kc, ks) = (factor.solve(&c), factor.solve(&s));
            let dot = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(x, y)| x * y).sum::<f64>();
            let (bc, bs) = (dot(&c, &alpha), dot(&s, &alpha));
            let (acc, acs, ass) = (dot(&c, &kc), dot(&c, &ks), dot(&s, &ks));
            let det = acc * ass - acs * acs;
            if det > 0.0 {
                0.5 * (ass * bc * bc - 2.0 * acs * bc * bs + acc * bs * bs) / det
            } else {
                0.0
            }
        })
        .collect();
    Some((gains, coarse))
}

/// A signal tried in one round of the search.
struct Trial {
    /// BIC of the fit without it minus that with it.
    gain: f64,
    /// The periodogram peak it started from.
    peak: Peak,
    /// All signals with it.
    planets: Vec<PlanetSpec>,
    /// Their joint fit.
    fit: Fit,
    /// Label of the warm planet it started from.
    warm: Option<String>,
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
        let testing = settings.options.activity != Activity::None && !forced;
        let strongest = pg.peaks(1, 0.0).into_iter().next();
        let wanted = planets.len() < limit;
        // With an activity model the BIC decides, not the false-alarm probability of a
        // periodogram that still holds the activity signal.
        let qualifies = |p: &Peak| forced || testing || p.fap < settings.fap_threshold;
        let accepted = wanted && strongest.as_ref().is_some_and(qualifies);
        let mut step = SearchStep {
            periodogram: pg,
            peak: strongest,
            accepted,
            activity_delta_bic: None,
            activity_rejected: Vec::new(),
        };
        if !accepted {
            steps.push(step);
            break;
        }
        // With an activity model the candidates come from the periodogram under it (the
        // strongest one for a requested number of signals).
        let n_candidates = if testing { ACTIVITY_SEARCH_PEAKS } else { 1 };
        let peaks = match activity_periodogram(&current, set, &grid) {
            Some((gain, coarse)) => local_maxima(&gain, &coarse, n_candidates, 1.0 / span, true)
                .into_iter()
                .map(|j| {
                    let f = coarse.frequency(j);
                    let at = ((f - grid.fmin) / grid.df).round() as usize;
                    step.periodogram.peak_at(at.min(grid.n - 1))
                })
                .collect(),
            None => strongest.into_iter().collect::<Vec<Peak>>(),
        };
        let label = next_label(&planets);
        let mut chosen = None;
        for peak in peaks.into_iter().filter(qualifies) {
            let previous = warm.iter().find(|w| {
                (1.0 / w.period_d - peak.frequency).abs() < 1.0 / span && !used.contains(&w.label)
            });
            let spec = match previous {
                Some(w) => PlanetSpec {
                    label: label.clone(),
                    ..w.clone()
                },
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
            let mut next = current.planet_specs();
            next.push(spec);
            let fit = timed_fit(&next)?;
            let trial = Trial {
                gain: current.bic() - fit.bic(),
                peak,
                planets: next,
                fit,
                warm: previous.map(|w| w.label.clone()),
            };
            if !testing {
                chosen = Some(trial);
                break;
            }
            let best = trial.gain >= ACTIVITY_SEARCH_BIC
                && chosen.as_ref().is_none_or(|c: &Trial| trial.gain > c.gain);
            let passed = if best {
                chosen.replace(trial)
            } else {
                Some(trial)
            };
            step.activity_rejected
                .extend(passed.map(|t| (t.peak.period, t.gain)));
        }
        let Some(trial) = chosen else {
            step.accepted = false;
            steps.push(step);
            break;
        };
        if testing {
            step.activity_delta_bic = Some(trial.gain);
        }
        step.peak = Some(trial.peak);
        if let Some(w) = trial.warm {
            warm_started.push(label);
            used.push(w);
        }
        steps.push(step);
        planets = trial.planets;
        current = trial.fit;
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::gp::{Points, rotation_prior};

    /// The likelihood-ratio periodogram against its definition: at each frequency, the
    /// generalised-least-squares sinusoid `β = (XᵀK⁻¹X)⁻¹XᵀK⁻¹r` subtracted from the
    /// residuals raises the dense GP log-likelihood (Rasmussen & Williams 2006, eq. 2.30)
    /// by exactly the periodogram's gain.
    #[test]
    fn activity_periodogram_is_the_likelihood_gain_of_a_sinusoid() {
        let n = 40;
        let t: Vec<f64> = (0..n)
            .map(|i| 3.1 * i as f64 + 1.7 * (i as f64 * 1.3).sin())
            .collect();
        let rv: Vec<f64> = t
            .iter()
            .map(|&x| 6.0 * (x / 2.3).sin() + 3.0 * (x / 6.1).cos())
            .collect();
        let set = RvSet::from_columns(
            "p",
            0.0,
            t.clone(),
            rv,
            vec![1.5; n],
            vec![0; n],
            vec!["a".into()],
        );
        let options = FitOptions {
            shape: OrbitShape::Circular,
            trend: 0,
            activity: Activity::QuasiPeriodic,
            rotation_d: Some(rotation_prior(14.0, 0.0)),
            ..FitOptions::default()
        };
        let f = fit(&set, &[], &options).unwrap();
        let grid = Grid::new(0.01, 0.4, 60).unwrap();
        let (gain, coarse) = activity_periodogram(&f, &set, &grid).unwrap();
        assert_eq!(coarse, grid);
        let kernel = f.layout.kernel(&f.theta).unwrap();
        let white = crate::fit::layout::white_variances(&f.params, &set);
        let ones = vec![1.0; n];
        let points = Points {
            time_d: &t,
            white: &white,
            scale: &ones,
        };
        let k = points.covariance(&kernel);
        let kinv = k.clone().try_inverse().unwrap();
        let r = nalgebra::DVector::from_vec(f.params.residuals(&set));
        let ln_l = |x: &nalgebra::DVector<f64>| {
            points
                .log_likelihood(&kernel, crate::gp::Solver::Dense, x.as_slice())
                .unwrap()
        };
        for j in [0, 7, 23, 59] {
            let w = std::f64::consts::TAU * grid.frequency(j);
            let x = nalgebra::DMatrix::from_fn(n, 2, |i, c| {
                if c == 0 {
                    (w * t[i]).cos()
                } else {
                    (w * t[i]).sin()
                }
            });
            let a = x.transpose() * &kinv * &x;
            let beta = a.try_inverse().unwrap() * x.transpose() * &kinv * &r;
            let direct = ln_l(&(&r - &x * beta)) - ln_l(&r);
            assert!(
                (gain[j] - direct).abs() < 1e-8 * direct.abs().max(1.0),
                "{j}: {} vs {direct}",
                gain[j]
            );
        }
    }
}
