//! Spectral window of the sampling, its peaks, and the aliases they predict for a
//! candidate signal.
//!
//! The window is `W(f) = Σ w_j exp(−2πi f t_j)` with the GLS weights normalised to
//! `Σ w_j = 1`, so `|W(0)| = 1` (Roberts, Lehar & Dreher 1987, AJ 93, 968); the observed
//! spectrum is the true one convolved with it, so a window peak at `f_w` puts copies of a
//! signal at `f` near `|f ± m f_w|` (Dawson & Fabrycky 2010, ApJ 722, 937).

use serde::Serialize;

use super::{Grid, PeriodogramError, fast, gls, local_maxima, sinusoid_at};
use crate::data::RvSet;

/// Window peaks are searched up to at least this frequency (1/day), so that the
/// one-cycle-per-day peak of nightly sampling is found even on a grid that stops at 1.
pub const WINDOW_SEARCH_FMAX: f64 = 1.5;
/// Window peaks closer to zero than this many `1/span` belong to the central lobe.
const CENTRAL_LOBE: f64 = 1.5;
/// Oversampling of the window-peak search grid (step `1/(10 × span)`).
const SEARCH_OVERSAMPLE: f64 = 10.0;

/// Spectral window power `|W(f)|²` on `grid`, in [0, 1].
///
/// # Errors
/// As [`super::compute`] (too few points, zero baseline).
pub fn spectral_window(
    set: &RvSet,
    jitters_mps: &[f64],
    grid: &Grid,
) -> Result<Vec<f64>, PeriodogramError> {
    let prep = gls::Prepared::new(set, jitters_mps)?;
    let sums = fast::exp_sums(prep.time, &prep.w, grid);
    Ok(sums.iter().map(|z| z.norm_sqr().min(1.0)).collect())
}

/// A peak of the spectral window.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct WindowPeak {
    /// Frequency, 1/day.
    pub frequency: f64,
    /// Period, days.
    pub period: f64,
    /// Window power `|W(f)|²`.
    pub power: f64,
}

/// The `n` strongest window peaks between `1.5/span` and `max(fmax, 1.5)` 1/day,
/// strongest first, at least `1/span` apart.
///
/// # Errors
/// As [`spectral_window`].
pub fn window_peaks(
    set: &RvSet,
    jitters_mps: &[f64],
    fmax: f64,
    n: usize,
) -> Result<Vec<WindowPeak>, PeriodogramError> {
    let span = set.baseline_d();
    if !(span > 0.0) {
        return Err(PeriodogramError::ZeroBaseline);
    }
    let grid = Grid::with_oversampling(
        CENTRAL_LOBE / span,
        fmax.max(WINDOW_SEARCH_FMAX),
        span,
        SEARCH_OVERSAMPLE,
    )?;
    let power = spectral_window(set, jitters_mps, &grid)?;
    Ok(local_maxima(&power, &grid, n, 1.0 / span, false)
        .into_iter()
        .map(|j| {
            let f = grid.frequency(j);
            WindowPeak {
                frequency: f,
                period: 1.0 / f,
                power: power[j],
            }
        })
        .collect())
}

/// An alias of a candidate frequency through one window peak.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Alias {
    /// Alias frequency `|f + m f_w|`, 1/day.
    pub frequency: f64,
    /// Alias period, days.
    pub period: f64,
    /// The window peak's frequency `f_w`, 1/day.
    pub window_frequency: f64,
    /// The order `m` (±1, ±2).
    pub order: i32,
    /// Power a pure sinusoid at the candidate frequency would put at the alias, scaled by
    /// the candidate's observed power (noise cross-terms neglected).
    pub predicted_power: f64,
    /// GLS power of the data at the alias frequency.
    pub observed_power: f64,
}

/// Aliases `|f ± m f_w|`, `m = 1, 2`, of candidate frequency `f` (1/day) through each
/// window peak, with the power predicted by the Dawson & Fabrycky (2010) construction:
/// the best sinusoid at `f` (with the instruments' offsets), noise-free at the observed
/// times and with the same weights, has GLS power `p₀` at the alias; the prediction is
/// `p₀ · p(f)`, `p(f)` the observed power at `f`. Sorted by decreasing predicted power.
///
/// # Errors
/// As [`super::compute`].
pub fn aliases(
    set: &RvSet,
    jitters_mps: &[f64],
    f: f64,
    peaks: &[WindowPeak],
) -> Result<Vec<Alias>, PeriodogramError> {
    let fit = sinusoid_at(set, jitters_mps, f)?;
    let mut model = set.clone();
    for i in 0..set.len() {
        let phase = std::f64::consts::TAU * f * set.time_d[i];
        model.rv_mps[i] = fit.offsets_mps[set.instrument[i]]
            + fit.cos_mps * phase.cos()
            + fit.sin_mps * phase.sin();
    }
    let mut out = Vec::new();
    for wp in peaks {
        for order in [-2, -1, 1, 2] {
            let fa = (f + f64::from(order) * wp.frequency).abs();
            if !(fa > 1e-9) {
                continue;
            }
            let noise_free = sinusoid_at(&model, jitters_mps, fa)?.power;
            out.push(Alias {
                frequency: fa,
                period: 1.0 / fa,
                window_frequency: wp.frequency,
                order,
                predicted_power: noise_free * fit.power,
                observed_power: sinusoid_at(set, jitters_mps, fa)?.power,
            });
        }
    }
    out.sort_by(|a, b| b.predicted_power.total_cmp(&a.predicted_power));
    Ok(out)
}
