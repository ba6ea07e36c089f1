//! Summaries of estimated quantities in the shape every JSON output uses:
//! `{"value", "minus", "plus"}` plus optional `upper95`/`upper99`.

use serde::Serialize;

/// Lower and upper percentiles of a ±1σ interval of a normal distribution.
pub const SIGMA_PERCENTILES: (f64, f64) = (15.865_525_393_145_708, 84.134_474_606_854_29);

/// A value with asymmetric 1σ errors (`minus` = value − 15.87th percentile, `plus` =
/// 84.13th percentile − value) and, where requested, one-sided upper limits.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Summary {
    /// Median of the draws, or the best-fit value.
    pub value: f64,
    /// value − lower 1σ bound (≥ 0).
    pub minus: f64,
    /// upper 1σ bound − value (≥ 0).
    pub plus: f64,
    /// 95th percentile, for quantities that are not significantly detected.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub upper95: Option<f64>,
    /// 99th percentile, likewise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub upper99: Option<f64>,
}

impl Summary {
    /// A quantity known exactly (minus = plus = 0).
    pub fn exact(value: f64) -> Summary {
        Summary::symmetric(value, 0.0)
    }

    /// A value with a symmetric 1σ error (e.g. from the curvature of the likelihood).
    pub fn symmetric(value: f64, sigma: f64) -> Summary {
        Summary {
            value,
            minus: sigma,
            plus: sigma,
            upper95: None,
            upper99: None,
        }
    }

    /// Median and 15.87/84.13 percentiles of `draws` (non-finite draws are ignored).
    /// Returns `None` when no finite draw is left.
    pub fn from_draws(draws: &[f64]) -> Option<Summary> {
        let mut v: Vec<f64> = draws.iter().copied().filter(|x| x.is_finite()).collect();
        if v.is_empty() {
            return None;
        }
        v.sort_by(f64::total_cmp);
        let median = percentile_sorted(&v, 50.0);
        Some(Summary {
            value: median,
            minus: median - percentile_sorted(&v, SIGMA_PERCENTILES.0),
            plus: percentile_sorted(&v, SIGMA_PERCENTILES.1) - median,
            upper95: None,
            upper99: None,
        })
    }

    /// Adds the 95th and 99th percentiles of `draws` as upper limits.
    pub fn with_upper_limits(mut self, draws: &[f64]) -> Summary {
        let mut v: Vec<f64> = draws.iter().copied().filter(|x| x.is_finite()).collect();
        if !v.is_empty() {
            v.sort_by(f64::total_cmp);
            self.upper95 = Some(percentile_sorted(&v, 95.0));
            self.upper99 = Some(percentile_sorted(&v, 99.0));
        }
        self
    }

    /// Circular summary of angles in radians, reported in degrees in [0, 360): the value is
    /// the circular mean direction, and the errors are the 15.87/84.13 percentiles of the
    /// draws unwrapped around it. `None` when no finite draw is left.
    pub fn from_angle_draws_deg(draws_rad: &[f64]) -> Option<Summary> {
        let finite: Vec<f64> = draws_rad
            .iter()
            .copied()
            .filter(|x| x.is_finite())
            .collect();
        if finite.is_empty() {
            return None;
        }
        let (s, c) = finite
            .iter()
            .fold((0.0, 0.0), |(s, c), a| (s + a.sin(), c + a.cos()));
        let centre = s.atan2(c);
        let unwrapped: Vec<f64> = finite
            .iter()
            .map(|a| centre + wrap_pi(a - centre))
            .collect();
        let mut sum = Summary::from_draws(&unwrapped)?;
        sum.value = sum.value.to_degrees().rem_euclid(360.0);
        sum.minus = sum.minus.to_degrees();
        sum.plus = sum.plus.to_degrees();
        Some(sum)
    }
}

/// Wraps an angle in radians into (−π, π].
pub fn wrap_pi(a: f64) -> f64 {
    let w = a.rem_euclid(std::f64::consts::TAU);
    if w > std::f64::consts::PI {
        w - std::f64::consts::TAU
    } else {
        w
    }
}

/// Linear-interpolated percentile (0–100) of an ascending, non-empty slice.
///
/// # Panics
/// If `sorted` is empty.
pub fn percentile_sorted(sorted: &[f64], pct: f64) -> f64 {
    assert!(!sorted.is_empty(), "percentile of an empty sample");
    let pos = (pct / 100.0).clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = pos.ceil() as usize;
    let frac = pos - lo as f64;
    sorted[lo] + (sorted[hi] - sorted[lo]) * frac
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentiles_of_a_ramp() {
        let v: Vec<f64> = (0..=100).map(f64::from).collect();
        assert_eq!(percentile_sorted(&v, 50.0), 50.0);
        assert_eq!(percentile_sorted(&v, 95.0), 95.0);
        let s = Summary::from_draws(&v).unwrap();
        assert!((s.minus - (50.0 - SIGMA_PERCENTILES.0)).abs() < 1e-12);
    }

    #[test]
    fn angles_straddling_zero_summarise_near_zero() {
        let draws: Vec<f64> = (-10..=10).map(|k| f64::from(k).to_radians()).collect();
        let s = Summary::from_angle_draws_deg(&draws).unwrap();
        assert!(s.value < 1e-9 || (360.0 - s.value) < 1e-9, "{}", s.value);
        assert!((s.minus - s.plus).abs() < 1e-9);
    }
}
