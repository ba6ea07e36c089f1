//! Prior distributions on physical quantities. Every prior is bounded, so that every
//! posterior is proper.

use serde::Serialize;

/// A bounded prior density on one physical quantity (in that quantity's unit).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Prior {
    /// Constant density on `[lo, hi]`.
    Uniform {
        /// Lower bound.
        lo: f64,
        /// Upper bound.
        hi: f64,
    },
    /// Density ∝ 1/x on `[lo, hi]`, `0 < lo`.
    LogUniform {
        /// Lower bound (> 0).
        lo: f64,
        /// Upper bound.
        hi: f64,
    },
    /// Normal density N(mean, sd²) truncated to `[lo, hi]`.
    Gaussian {
        /// Mean.
        mean: f64,
        /// Standard deviation (> 0).
        sd: f64,
        /// Lower bound.
        lo: f64,
        /// Upper bound.
        hi: f64,
    },
}

/// Why a prior was refused.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum PriorError {
    /// Bounds not finite or not increasing.
    #[error("bounds [{lo}, {hi}] must be finite with lo < hi")]
    Bounds {
        /// Lower bound.
        lo: f64,
        /// Upper bound.
        hi: f64,
    },
    /// A log-uniform prior needs a positive lower bound.
    #[error("a log-uniform prior needs lo > 0, got {0}")]
    LogLowerBound(f64),
    /// A Gaussian needs a finite mean and a positive, finite standard deviation.
    #[error("a gaussian prior needs a finite mean and sd > 0, got mean {mean}, sd {sd}")]
    Gaussian {
        /// Mean.
        mean: f64,
        /// Standard deviation.
        sd: f64,
    },
    /// The prior allows values outside the quantity's physical range.
    #[error("bounds [{lo}, {hi}] leave the allowed range [{min}, {max}]")]
    Support {
        /// Lower bound.
        lo: f64,
        /// Upper bound.
        hi: f64,
        /// Smallest allowed value.
        min: f64,
        /// Largest allowed value.
        max: f64,
    },
}

/// Number of standard deviations a Gaussian prior reaches on each side when no bounds
/// are given.
pub const GAUSSIAN_REACH_SD: f64 = 10.0;

fn check_bounds(lo: f64, hi: f64) -> Result<(), PriorError> {
    if lo.is_finite() && hi.is_finite() && lo < hi {
        Ok(())
    } else {
        Err(PriorError::Bounds { lo, hi })
    }
}

impl Prior {
    /// Uniform on `[lo, hi]`.
    ///
    /// # Errors
    /// [`PriorError::Bounds`] unless `lo < hi`, both finite.
    pub fn uniform(lo: f64, hi: f64) -> Result<Prior, PriorError> {
        check_bounds(lo, hi)?;
        Ok(Prior::Uniform { lo, hi })
    }

    /// Log-uniform on `[lo, hi]`.
    ///
    /// # Errors
    /// [`PriorError`] unless `0 < lo < hi`, both finite.
    pub fn log_uniform(lo: f64, hi: f64) -> Result<Prior, PriorError> {
        check_bounds(lo, hi)?;
        if !(lo > 0.0) {
            return Err(PriorError::LogLowerBound(lo));
        }
        Ok(Prior::LogUniform { lo, hi })
    }

    /// Gaussian N(mean, sd²) truncated to `bounds`, by default mean ± 10 sd.
    ///
    /// # Errors
    /// [`PriorError`] for a non-finite mean, sd ≤ 0 or bad bounds.
    pub fn gaussian(mean: f64, sd: f64, bounds: Option<(f64, f64)>) -> Result<Prior, PriorError> {
        if !(mean.is_finite() && sd.is_finite() && sd > 0.0) {
            return Err(PriorError::Gaussian { mean, sd });
        }
        let (lo, hi) =
            bounds.unwrap_or((mean - GAUSSIAN_REACH_SD * sd, mean + GAUSSIAN_REACH_SD * sd));
        check_bounds(lo, hi)?;
        Ok(Prior::Gaussian { mean, sd, lo, hi })
    }

    /// `[lo, hi]` of the prior.
    pub fn bounds(&self) -> (f64, f64) {
        match *self {
            Prior::Uniform { lo, hi }
            | Prior::LogUniform { lo, hi }
            | Prior::Gaussian { lo, hi, .. } => (lo, hi),
        }
    }

    /// Checks that the prior lies inside `[min, max]` (the physical range).
    ///
    /// # Errors
    /// [`PriorError::Support`] when a bound is outside.
    pub fn within(self, min: f64, max: f64) -> Result<Prior, PriorError> {
        let (lo, hi) = self.bounds();
        if lo >= min && hi <= max {
            Ok(self)
        } else {
            Err(PriorError::Support { lo, hi, min, max })
        }
    }

    /// The same prior with its bounds cut to `[min, max]` (for Gaussian priors whose
    /// default reach crosses a physical limit).
    pub fn clipped(self, min: f64, max: f64) -> Prior {
        match self {
            Prior::Gaussian { mean, sd, lo, hi } => Prior::Gaussian {
                mean,
                sd,
                lo: lo.max(min),
                hi: hi.min(max),
            },
            other => other,
        }
    }

    /// Log-density at `x` up to a constant that does not depend on `x`; −∞ outside the
    /// bounds (and for NaN).
    pub fn ln_density(&self, x: f64) -> f64 {
        let (lo, hi) = self.bounds();
        if !(x >= lo && x <= hi) {
            return f64::NEG_INFINITY;
        }
        match *self {
            Prior::Uniform { lo, hi } => -(hi - lo).ln(),
            Prior::LogUniform { lo, hi } => -x.ln() - (hi / lo).ln().ln(),
            Prior::Gaussian { mean, sd, .. } => {
                let z = (x - mean) / sd;
                -0.5 * z * z - sd.ln()
            }
        }
    }

    /// Short kind name, as in the target file: `uniform`, `log-uniform`, `gaussian`.
    pub fn kind(&self) -> &'static str {
        match self {
            Prior::Uniform { .. } => "uniform",
            Prior::LogUniform { .. } => "log-uniform",
            Prior::Gaussian { .. } => "gaussian",
        }
    }

    /// Description with values, e.g. `uniform on [0, 50]`.
    pub fn describe(&self) -> String {
        match *self {
            Prior::Uniform { lo, hi } => format!("uniform on [{lo}, {hi}]"),
            Prior::LogUniform { lo, hi } => format!("log-uniform on [{lo}, {hi}]"),
            Prior::Gaussian { mean, sd, lo, hi } => {
                format!("gaussian {mean} ± {sd}, truncated to [{lo}, {hi}]")
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn densities_and_bounds() {
        let u = Prior::uniform(0.0, 4.0).unwrap();
        assert_eq!(u.ln_density(1.0), -(4.0f64).ln());
        assert_eq!(u.ln_density(-0.1), f64::NEG_INFINITY);
        assert_eq!(u.ln_density(f64::NAN), f64::NEG_INFINITY);
        // Log-uniform: p(x) = 1/(x ln(hi/lo)), which integrates to 1 (definition).
        let l = Prior::log_uniform(1.0, std::f64::consts::E).unwrap();
        assert!((l.ln_density(2.0) + 2.0f64.ln()).abs() < 1e-15);
        let g = Prior::gaussian(1.0, 0.5, None).unwrap();
        assert_eq!(g.bounds(), (-4.0, 6.0));
        assert!((g.ln_density(1.5) - g.ln_density(1.0) + 0.5).abs() < 1e-15);
        assert!(Prior::uniform(1.0, 1.0).is_err());
        assert!(Prior::log_uniform(0.0, 1.0).is_err());
        assert!(Prior::gaussian(0.0, 0.0, None).is_err());
        assert!(u.within(0.0, 1.0).is_err());
        assert_eq!(g.clipped(0.0, 10.0).bounds(), (0.0, 6.0));
    }
}
