//! Caps on what one run may ask for, and the run's time budget.
//!
//! The caps stop a target file from asking for hours of work or gigabytes of memory by a
//! slip of the keyboard; each is far above any sensible analysis. The time budget
//! (`time_budget_s`) lets a run stop cleanly with what it has: the sampler stops early
//! (its result is then not converged) and later stages are skipped, never losing what
//! was computed.

use std::time::{Duration, Instant};

use serde::Serialize;

/// Most walkers per ensemble.
pub const MAX_WALKERS: usize = 4096;
/// Most sampler steps (`max_steps`).
pub const MAX_STEPS: usize = 10_000_000;
/// Most Monte Carlo draws for derived quantities (`draws`): about 40 columns of 8 bytes
/// each, so 2 000 000 draws take some 640 MB.
pub const MAX_DRAWS: usize = 2_000_000;
/// Most independent ensembles.
pub const MAX_ENSEMBLES: usize = 16;
/// Most signals the search may add (`max_signals`).
pub const MAX_SIGNALS: usize = 20;
/// Largest periodogram oversampling factor.
pub const MAX_OVERSAMPLE: f64 = 1000.0;

/// A run's time budget, counted from its creation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Budget {
    /// The budget, seconds.
    pub seconds: f64,
    deadline: Instant,
}

impl Budget {
    /// A budget of `seconds` (> 0) from now.
    pub fn new(seconds: f64) -> Budget {
        let span = Duration::try_from_secs_f64(seconds).unwrap_or(Duration::MAX);
        let now = Instant::now();
        Budget {
            seconds,
            deadline: now
                .checked_add(span)
                .unwrap_or(now + Duration::from_secs(1 << 40)),
        }
    }

    /// When the budget runs out.
    pub fn deadline(&self) -> Instant {
        self.deadline
    }

    /// Whether the budget has run out.
    pub fn exhausted(&self) -> bool {
        Instant::now() >= self.deadline
    }
}

/// What a run with a time budget left out (results.json `time_budget`). It holds no
/// times, so that a run that finishes within its budget gives the same file as one
/// without a budget apart from this block.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct BudgetReport {
    /// The budget, seconds.
    pub time_budget_s: f64,
    /// The sampler was stopped by the budget before it converged.
    pub sampler_stopped_early: bool,
    /// Stages skipped because the budget had run out, in pipeline order (`posterior`,
    /// `periodogram report`, `audit`).
    pub skipped: Vec<String>,
}

impl BudgetReport {
    /// Whether the budget cut the run short.
    pub fn cut_short(&self) -> bool {
        self.sampler_stopped_early || !self.skipped.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn budgets_run_out() {
        assert!(Budget::new(0.0).exhausted());
        assert!(!Budget::new(3600.0).exhausted());
        // Budgets beyond what an Instant can hold never run out.
        assert!(!Budget::new(1e300).exhausted());
        assert!(!BudgetReport::default().cut_short());
    }
}
