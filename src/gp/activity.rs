//! The stellar-activity noise models an RV fit can use, their hyperparameters (fitted as
//! natural logarithms), bounds, starting values and the rotation-period prior.

use serde::{Deserialize, Serialize};

use super::{Kernel, Term};

/// Noise model of the RV residuals beyond the white errors and jitters.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default, Deserialize, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Activity {
    /// White errors and per-instrument jitter only.
    #[default]
    None,
    /// One quasi-periodic GP term ([`Term::QuasiPeriodic`]); hyperparameters
    /// `amplitude_mps`, `evolution_d`, `rotation_d`, `smoothness`.
    QuasiPeriodic,
    /// Two oscillator terms ([`Term::Oscillator`]) at the rotation period and at half of
    /// it, with one quality factor; hyperparameters `amplitude_mps` (at the rotation
    /// period), `amplitude_half_mps` (at half of it), `rotation_d`, `quality`.
    Oscillator,
    /// RV and activity indicators fitted together as combinations of one latent
    /// quasi-periodic process and its time derivative (Rajpaul et al. 2015;
    /// [`super::JointKernel`]); hyperparameters of the latent process (unit amplitude)
    /// `evolution_d`, `smoothness`, `rotation_d`; each series' coupling is fitted beside
    /// them.
    Joint,
}

impl Activity {
    /// Every model, in the order they are offered.
    pub const ALL: [Activity; 4] = [
        Activity::None,
        Activity::QuasiPeriodic,
        Activity::Oscillator,
        Activity::Joint,
    ];

    /// The model's name on the command line and in target files.
    pub fn name(self) -> &'static str {
        match self {
            Activity::None => "none",
            Activity::QuasiPeriodic => "quasiperiodic",
            Activity::Oscillator => "oscillator",
            Activity::Joint => "joint",
        }
    }
}

impl std::str::FromStr for Activity {
    type Err = String;
    fn from_str(s: &str) -> Result<Activity, String> {
        Activity::ALL
            .into_iter()
            .find(|a| a.name() == s)
            .ok_or_else(|| {
                format!(
                    "unknown activity model `{s}`: use none, quasiperiodic, oscillator or joint"
                )
            })
    }
}

impl Activity {
    /// Hyperparameter keys (units in the names), in θ order; empty for `None`.
    pub fn keys(self) -> &'static [&'static str] {
        match self {
            Activity::None => &[],
            Activity::QuasiPeriodic => {
                &["amplitude_mps", "evolution_d", "rotation_d", "smoothness"]
            }
            Activity::Oscillator => &[
                "amplitude_mps",
                "amplitude_half_mps",
                "rotation_d",
                "quality",
            ],
            Activity::Joint => &["evolution_d", "smoothness", "rotation_d"],
        }
    }

    /// Position of the rotation period among the hyperparameters.
    pub const ROTATION: usize = 2;

    /// The kernel of hyperparameters `values` (physical units, in [`Activity::keys`]
    /// order); `None` for the white model and the joint model (see [`Activity::latent`]).
    pub fn kernel(self, values: &[f64]) -> Option<Kernel> {
        let terms = match (self, values) {
            (Activity::QuasiPeriodic, &[h, l, p, w]) => vec![Term::QuasiPeriodic {
                amplitude_mps: h,
                evolution_d: l,
                period_d: p,
                smoothness: w,
            }],
            (Activity::Oscillator, &[a1, a2, p, q]) => vec![
                Term::Oscillator {
                    amplitude_mps: a1,
                    period_d: p,
                    quality: q,
                },
                Term::Oscillator {
                    amplitude_mps: a2,
                    period_d: 0.5 * p,
                    quality: q,
                },
            ],
            _ => return None,
        };
        Some(Kernel { terms })
    }

    /// The joint model's latent quasi-periodic term (unit amplitude) of hyperparameters
    /// `values` ([`Activity::keys`] order); `None` for the other models.
    pub fn latent(self, values: &[f64]) -> Option<Term> {
        match (self, values) {
            (Activity::Joint, &[l, w, p]) => Some(Term::QuasiPeriodic {
                amplitude_mps: 1.0,
                evolution_d: l,
                period_d: p,
                smoothness: w,
            }),
            _ => None,
        }
    }
}

/// An activity model fitted to one data set: its hyperparameters' bounds and starting
/// values (physical units, [`Activity::keys`] order) and the Gaussian prior on the
/// rotation period.
#[derive(Clone, Debug, PartialEq)]
pub struct ActivityLayout {
    /// The model (not `None`).
    pub model: Activity,
    /// `(lo, hi)` of each hyperparameter.
    pub bounds: Vec<(f64, f64)>,
    /// Starting value of each hyperparameter.
    pub start: Vec<f64>,
    /// Rotation-period prior `(mean, sd)`, days.
    pub rotation: (f64, f64),
    /// Gaussian priors `(mean, sd)` on the other hyperparameters (physical units),
    /// from a fit of the same model to an activity indicator; `None` where free.
    pub trained: Vec<Option<(f64, f64)>>,
}

/// Fraction of the rotation period used as its prior's standard deviation when none is
/// given (a choice of heft's: photometric rotation periods of active stars are typically
/// known to several per cent).
pub const ROTATION_SD_FRACTION: f64 = 0.1;

/// The rotation-period prior `(mean, sd)` in days for a period `p_d` with 1σ `err_d`
/// (a non-positive `err_d` means unknown: [`ROTATION_SD_FRACTION`] of the period).
pub fn rotation_prior(p_d: f64, err_d: f64) -> (f64, f64) {
    if err_d > 0.0 {
        (p_d, err_d)
    } else {
        (p_d, ROTATION_SD_FRACTION * p_d)
    }
}

/// Fractional distance from a rotation harmonic that counts as "near" (5 %, a choice of
/// heft's: wider than the typical uncertainty of a photometric rotation period).
pub const ROTATION_TOLERANCE: f64 = 0.05;

/// Which of the rotation period and its first two harmonics (`P_rot`, `P_rot/2`,
/// `P_rot/3`; activity puts signals there: Boisse et al. 2011, A&A 528, A4) `period_d`
/// lies within [`ROTATION_TOLERANCE`] of, in words with the harmonic's period.
pub fn near_rotation(period_d: f64, rotation_d: f64) -> Option<String> {
    let names = [
        "the rotation period",
        "half the rotation period",
        "a third of the rotation period",
    ];
    (1..=3).find_map(|h| {
        let target = rotation_d / h as f64;
        ((period_d / target - 1.0).abs() < ROTATION_TOLERANCE)
            .then(|| format!("{} ({target:.3} d)", names[h - 1]))
    })
}

/// Weight of the quadratic wall at the hyperparameter bounds, per (ln unit)².
pub const BOUND_PENALTY: f64 = 1e6;

/// Bounds of an instrument's activity amplitude relative to the first instrument's (a
/// choice of heft's: spot-driven RV amplitudes fall with wavelength, but not by a factor
/// 10 between spectrographs).
pub const SCALE_BOUNDS: (f64, f64) = (0.1, 10.0);

/// The smooth wall at bounds `(lo, hi)` for a positive quantity of natural logarithm `x`:
/// [`BOUND_PENALTY`] × (ln of the factor by which it leaves them)², and its derivative in
/// `x`.
pub fn log_wall(x: f64, (lo, hi): (f64, f64)) -> (f64, f64) {
    let above = x - hi.ln();
    let below = lo.ln() - x;
    if above > 0.0 {
        (BOUND_PENALTY * above * above, 2.0 * BOUND_PENALTY * above)
    } else if below > 0.0 {
        (BOUND_PENALTY * below * below, -2.0 * BOUND_PENALTY * below)
    } else {
        (0.0, 0.0)
    }
}

impl ActivityLayout {
    /// Bounds and starts for data of standard deviation `rv_sd_mps` (about the
    /// instruments' means) over `baseline_d` days, rotation prior `rotation = (mean, sd)`.
    ///
    /// Bounds: amplitudes 0.01 m/s to 10 × the data's standard deviation (at least 1 m/s);
    /// rotation period within a factor 2 of the prior mean; evolution timescale from half
    /// the rotation period (active regions live at least that long) to 10 × the baseline;
    /// smoothness 0.1 to 10; quality 0.55 to 1000.
    pub fn new(
        model: Activity,
        rotation: (f64, f64),
        rv_sd_mps: f64,
        baseline_d: f64,
    ) -> ActivityLayout {
        let p = rotation.0;
        let amp = (0.01, (10.0 * rv_sd_mps).max(1.0));
        let amp_start = (0.7 * rv_sd_mps).clamp(0.02, amp.1 / 2.0);
        let per = (0.5 * p, 2.0 * p);
        let (bounds, start) = match model {
            Activity::None => (vec![], vec![]),
            Activity::QuasiPeriodic => (
                vec![
                    amp,
                    (0.5 * p, (10.0 * baseline_d).max(5.0 * p)),
                    per,
                    (0.1, 10.0),
                ],
                vec![amp_start, 2.0 * p, p, 0.5],
            ),
            Activity::Oscillator => (
                vec![amp, amp, per, (0.55, 1000.0)],
                vec![amp_start, 0.5 * amp_start, p, 5.0],
            ),
            Activity::Joint => (
                vec![
                    (0.5 * p, (10.0 * baseline_d).max(5.0 * p)),
                    (0.1, 10.0),
                    per,
                ],
                vec![2.0 * p, 0.5, p],
            ),
        };
        let trained = vec![None; start.len()];
        ActivityLayout {
            model,
            bounds,
            start,
            rotation,
            trained,
        }
    }

    /// The same layout with trained priors `(mean, sd)` in [`Activity::keys`] order (see
    /// [`crate::fit::train_activity`]): a rotation prior replaces the given one, the
    /// others are added; each trained hyperparameter starts at its prior mean (within
    /// its bounds).
    pub fn with_trained(mut self, priors: &[Option<(f64, f64)>]) -> ActivityLayout {
        for (q, p) in priors.iter().enumerate().take(self.start.len()) {
            let Some(p) = *p else { continue };
            if q == Activity::ROTATION {
                self.rotation = p;
            } else {
                self.trained[q] = Some(p);
            }
            self.start[q] = p.0.clamp(self.bounds[q].0, self.bounds[q].1);
        }
        self
    }

    /// Whether hyperparameter `q` at `value` sits at (within 0.1 % of) one of its bounds,
    /// where its curvature error is the wall's, not the data's.
    pub fn at_bound(&self, q: usize, value: f64) -> bool {
        let (lo, hi) = self.bounds[q];
        !(value > lo * 1.001 && value < hi / 1.001)
    }

    /// `values` moved into their bounds (the model is evaluated there; [`Self::penalty`]
    /// charges the excess).
    pub fn clamp(&self, values: &[f64]) -> Vec<f64> {
        values
            .iter()
            .zip(&self.bounds)
            .map(|(v, &(lo, hi))| v.clamp(lo, hi))
            .collect()
    }

    /// `−ln` of the rotation prior and any trained priors (up to a constant) at
    /// hyperparameters `values` (moved into their bounds), plus
    /// [`BOUND_PENALTY`] × (ln of the factor by which a value leaves its bounds)², a
    /// smooth wall that keeps the optimiser's line searches finite.
    pub fn penalty(&self, values: &[f64]) -> f64 {
        let walls: f64 = values
            .iter()
            .zip(&self.bounds)
            .map(|(v, &b)| log_wall(v.ln(), b).0)
            .sum();
        let gaussians: f64 = self
            .clamp(values)
            .iter()
            .enumerate()
            .filter_map(|(q, v)| {
                let (m, sd) = if q == Activity::ROTATION {
                    Some(self.rotation)
                } else {
                    self.trained[q]
                }?;
                Some(0.5 * ((v - m) / sd).powi(2))
            })
            .sum();
        walls + gaussians
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rotation harmonics at P, P/2 and P/3 within 5 % (common practice: activity signals
    /// appear at the rotation period and its first harmonics).
    #[test]
    fn rotation_harmonics() {
        let words = |p: f64| near_rotation(p, 12.0);
        assert!(words(12.5).unwrap().starts_with("the rotation period"));
        assert!(
            words(6.2)
                .unwrap()
                .starts_with("half the rotation period (6.000 d)")
        );
        assert!(words(3.9).unwrap().starts_with("a third"));
        assert_eq!(words(9.0), None);
        assert_eq!(words(3.0), None);
    }

    /// The fit's smooth wall: zero inside the bounds, growing with the excess outside;
    /// clamping keeps the model evaluable there.
    #[test]
    fn bounds_wall_and_clamp() {
        let a = ActivityLayout::new(Activity::QuasiPeriodic, (10.0, 1.0), 5.0, 200.0);
        assert_eq!(a.penalty(&a.start), 0.0);
        let mut out = a.start.clone();
        out[3] = 20.0;
        assert!((a.penalty(&out) - BOUND_PENALTY * 2f64.ln().powi(2)).abs() < 1e-6);
        assert_eq!(a.clamp(&out)[3], 10.0);
        assert_eq!("oscillator".parse::<Activity>(), Ok(Activity::Oscillator));
        assert!("spots".parse::<Activity>().is_err());
    }
}
