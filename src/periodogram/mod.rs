//! Generalised Lomb–Scargle periodogram with one offset per instrument, frequency grids,
//! peaks and analytic false-alarm probabilities.
//!
//! Entry point: [`compute`] evaluates the power on a [`Grid`] for an [`RvSet`] with given
//! per-instrument jitters (the weights are `1/(σ² + s²)`), by exact sums or, with
//! [`Method::Fast`], by non-uniform FFTs ([`compute_with`]).

mod bootstrap;
mod fap;
mod fast;
mod gls;
mod overview;
mod window;

pub use bootstrap::{Bootstrap, bootstrap};
pub use fap::{baluev_fap, power_at_fap};
pub use fast::{DEFAULT_TOLERANCE, MIN_TOLERANCE};
pub use gls::{Sinusoid, sinusoid_at};
pub use overview::{Candidate, Overview, OverviewSettings, Panel, overview, table_csv};
pub use window::{Alias, WindowPeak, aliases, spectral_window, window_peaks};

use rayon::prelude::*;
use serde::Serialize;

use crate::data::RvSet;

/// Largest grid [`Grid::new`] accepts (frequencies); a grid this size takes 8 bytes a
/// point of memory for the power alone.
pub const MAX_GRID: usize = 50_000_000;

/// Why a periodogram could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PeriodogramError {
    /// Too few points for the floating-mean sinusoid fit.
    #[error(
        "a periodogram needs at least {need} points (one offset per instrument plus 2), got {got}"
    )]
    TooFewPoints {
        /// Points needed.
        need: usize,
        /// Points given.
        got: usize,
    },
    /// All times equal.
    #[error("all times are equal: the time baseline is zero, no frequency can be resolved")]
    ZeroBaseline,
    /// Bad frequency range.
    #[error("invalid frequency range: {0}")]
    Range(String),
    /// Grid too large.
    #[error(
        "a grid of {0} frequencies is larger than the {MAX_GRID} allowed; use fewer points (--nfreq), a narrower range or a coarser step (in a target file: a larger period_min_d or a smaller oversample)"
    )]
    TooLarge(usize),
    /// Fast-method tolerance out of range.
    #[error("the fast method's tolerance must be between {MIN_TOLERANCE:e} and 0.1, got {0}")]
    Tolerance(f64),
}

/// How the trigonometric sums are evaluated.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "name")]
pub enum Method {
    /// Direct sums, O(N M): block-wise trigonometric recurrences, rayon across blocks.
    Exact,
    /// Non-uniform FFTs (Press & Rybicki 1989 with the kernel of Barnett et al. 2019),
    /// O(N w + M log M); `tolerance` is the relative accuracy of the sums
    /// ([`DEFAULT_TOLERANCE`] keeps the power within 1e-9 of the exact one).
    Fast {
        /// Relative accuracy of each sum, in [`MIN_TOLERANCE`, 0.1].
        tolerance: f64,
    },
}

impl Method {
    /// The fast method at [`DEFAULT_TOLERANCE`].
    pub const FAST: Method = Method::Fast {
        tolerance: DEFAULT_TOLERANCE,
    };
}

/// A linear frequency grid `fmin, fmin + df, ..., fmin + (n-1) df` (cycles/day).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Grid {
    /// First frequency, 1/day.
    pub fmin: f64,
    /// Step, 1/day.
    pub df: f64,
    /// Number of frequencies.
    pub n: usize,
}

impl Grid {
    /// Grid of `n` frequencies from `fmin` to `fmax` inclusive (1/day).
    ///
    /// # Errors
    /// Non-finite, negative or inverted ranges, `n` < 2 (unless fmin = fmax and n = 1),
    /// grids above [`MAX_GRID`].
    pub fn new(fmin: f64, fmax: f64, n: usize) -> Result<Grid, PeriodogramError> {
        if !(fmin.is_finite() && fmax.is_finite()) || fmin < 0.0 {
            return Err(PeriodogramError::Range(format!(
                "frequencies must be finite and non-negative, got fmin = {fmin}, fmax = {fmax}"
            )));
        }
        if n > MAX_GRID {
            return Err(PeriodogramError::TooLarge(n));
        }
        if n == 1 && fmax == fmin && fmin > 0.0 {
            return Ok(Grid { fmin, df: 0.0, n });
        }
        if fmax <= fmin || n < 2 {
            return Err(PeriodogramError::Range(format!(
                "need fmax > fmin and at least 2 frequencies, got fmin = {fmin}, fmax = {fmax}, n = {n}"
            )));
        }
        Ok(Grid {
            fmin,
            df: (fmax - fmin) / (n - 1) as f64,
            n,
        })
    }

    /// Grid from `fmin` to `fmax` with step `1/(oversample × baseline)`.
    ///
    /// # Errors
    /// As [`Grid::new`].
    pub fn with_oversampling(
        fmin: f64,
        fmax: f64,
        baseline_d: f64,
        oversample: f64,
    ) -> Result<Grid, PeriodogramError> {
        if !(baseline_d > 0.0) {
            return Err(PeriodogramError::ZeroBaseline);
        }
        let df = 1.0 / (oversample * baseline_d);
        let steps = ((fmax - fmin) / df).ceil();
        if !(steps.is_finite() && steps >= 1.0) {
            return Err(PeriodogramError::Range(format!(
                "need fmax > fmin, got fmin = {fmin}, fmax = {fmax}"
            )));
        }
        if steps >= MAX_GRID as f64 {
            return Err(PeriodogramError::TooLarge(steps as usize + 1));
        }
        Grid::new(fmin, fmax, steps as usize + 1)
    }

    /// The `j`-th frequency, 1/day.
    #[inline]
    pub fn frequency(&self, j: usize) -> f64 {
        self.fmin + self.df * j as f64
    }

    /// Last frequency, 1/day.
    pub fn fmax(&self) -> f64 {
        self.frequency(self.n - 1)
    }
}

/// GLS power on a grid, with what the false-alarm probability needs.
#[derive(Clone, Debug, PartialEq)]
pub struct Periodogram {
    /// The frequency grid.
    pub grid: Grid,
    /// Power in [0, 1] at each grid frequency: the fraction of χ² about the
    /// per-instrument weighted means removed by the best sinusoid.
    pub power: Vec<f64>,
    /// Number of points.
    pub n_points: usize,
    /// Number of instrument offsets fitted together with the sinusoid.
    pub n_offsets: usize,
    /// Effective time span `sqrt(4 π D_t)` (days) of Baluev (2008), `D_t` the weighted
    /// variance of the times.
    pub t_eff_d: f64,
}

/// One periodogram peak.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Peak {
    /// Frequency, 1/day.
    pub frequency: f64,
    /// Period, days.
    pub period: f64,
    /// GLS power.
    pub power: f64,
    /// Baluev (2008) false-alarm probability for the grid's maximum frequency.
    pub fap: f64,
}

/// Computes the generalised Lomb–Scargle periodogram (Zechmeister & Kürster 2009, A&A
/// 496, 577) with one floating offset per instrument, weights `1/(σ² + s²)` with `s`
/// the instrument's jitter (`jitters_mps` may be empty for no jitter).
///
/// For one instrument the power is exactly that of Zechmeister & Kürster; for several,
/// it is `(χ²_offsets − χ²_offsets+sinusoid)/χ²_offsets`, computed from the same sums
/// with each instrument's own weighted means.
///
/// # Errors
/// [`PeriodogramError`] when there are too few points or the times have no spread.
pub fn compute(
    set: &RvSet,
    jitters_mps: &[f64],
    grid: &Grid,
) -> Result<Periodogram, PeriodogramError> {
    compute_with(set, jitters_mps, grid, Method::Exact)
}

/// As [`compute`], with the sums evaluated by `method`.
///
/// # Errors
/// As [`compute`]; for [`Method::Fast`] also a tolerance out of range.
pub fn compute_with(
    set: &RvSet,
    jitters_mps: &[f64],
    grid: &Grid,
    method: Method,
) -> Result<Periodogram, PeriodogramError> {
    let prep = gls::Prepared::new(set, jitters_mps)?;
    let mut power = vec![0.0; grid.n];
    match method {
        Method::Exact => power
            .par_chunks_mut(gls::BLOCK)
            .enumerate()
            .for_each(|(b, out)| prep.block(grid, b * gls::BLOCK, out)),
        Method::Fast { tolerance } => fast::powers(&prep, grid, tolerance, &mut power)?,
    }
    Ok(Periodogram {
        grid: *grid,
        power,
        n_points: set.len(),
        n_offsets: set.n_instruments(),
        t_eff_d: prep.t_eff_d(),
    })
}

impl Periodogram {
    /// Baluev (2008) false-alarm probability of power `z` over this grid's frequency range.
    pub fn fap(&self, z: f64) -> f64 {
        baluev_fap(
            z,
            self.n_points,
            self.n_offsets,
            self.grid.fmax(),
            self.t_eff_d,
        )
    }

    /// Up to `n` highest local maxima, highest first, at least `min_sep` (1/day) apart
    /// (the grid's ends count as maxima).
    pub fn peaks(&self, n: usize, min_sep: f64) -> Vec<Peak> {
        local_maxima(&self.power, &self.grid, n, min_sep, true)
            .into_iter()
            .map(|j| self.peak_at(j))
            .collect()
    }

    /// The grid's `j`-th frequency as a [`Peak`] (its power and false-alarm probability).
    pub fn peak_at(&self, j: usize) -> Peak {
        let f = self.grid.frequency(j);
        Peak {
            frequency: f,
            period: 1.0 / f,
            power: self.power[j],
            fap: self.fap(self.power[j]),
        }
    }
}

/// Indices of up to `n` highest local maxima of `p` on `grid`, highest first, at least
/// `min_sep` (1/day) apart; the ends of the grid count only when `ends` is set.
pub fn local_maxima(p: &[f64], grid: &Grid, n: usize, min_sep: f64, ends: bool) -> Vec<usize> {
    let last = p.len().saturating_sub(1);
    let mut idx: Vec<usize> = (0..p.len())
        .filter(|&j| {
            let left = if j == 0 { ends } else { p[j] >= p[j - 1] };
            let right = if j == last { ends } else { p[j] > p[j + 1] };
            left && right
        })
        .collect();
    idx.sort_by(|&a, &b| p[b].total_cmp(&p[a]));
    let mut chosen: Vec<usize> = Vec::new();
    for j in idx {
        if chosen.len() == n {
            break;
        }
        let f = grid.frequency(j);
        if chosen
            .iter()
            .all(|&c| (grid.frequency(c) - f).abs() >= min_sep)
        {
            chosen.push(j);
        }
    }
    chosen
}
