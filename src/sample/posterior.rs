//! The log-posterior the sampler explores: the likelihood of [`crate::model`] plus
//! log-priors on physical quantities, in a sampling parametrisation that the stretch
//! move handles well.
//!
//! Sampling vector ψ, in the order of the fit's θ ([`Layout`]): per planet `P` [d]
//! (unless fixed), `K` [m/s], `√e cos ω`, `√e sin ω`, `Tc` [d from the reference epoch];
//! per instrument the offset [m/s]; per instrument `ln s` (s = jitter in m/s); the trend
//! coefficients [m/s/yr^k]; the indicator coefficients; and the natural logarithm of each
//! activity hyperparameter.
//!
//! # Jacobians
//! Priors are densities of the physical quantities. The map (e, ω) → (√e cos ω,
//! √e sin ω) has Jacobian determinant 1/2 (constant), so a prior p(e) with ω uniform on
//! [0, 2π) is the density p(e) in ψ up to a constant. For s = exp(ψ) the density in ψ is
//! p(s) · s, and likewise for each activity hyperparameter x = exp(ψ). Every other
//! coordinate is the physical quantity itself.

use super::SampleError;
use super::prior::Prior;
use crate::data::RvSet;
use crate::fit::{Fit, Layout, Role};
use crate::model::DAYS_PER_YEAR;
use crate::target::PriorChoices;

/// Highest eccentricity any prior may reach (the Kepler solver and the model are fine
/// up to e → 1, but such orbits are not what RV data constrain).
pub const ECC_LIMIT: f64 = 0.99;

/// The prior of one sampled coordinate.
#[derive(Clone, Debug, PartialEq)]
pub struct PriorEntry {
    /// Physical parameter, e.g. `b.k_mps`, `b.tc_bjd`, `jitter_mps.Quill`.
    pub parameter: String,
    /// Prior density on the physical quantity.
    pub prior: Prior,
    /// `default`, `transit` or `target file`.
    pub source: &'static str,
    /// Added to the coordinate before the prior is evaluated (the reference epoch for
    /// conjunction times, whose priors are in full BJD_TDB).
    shift: f64,
}

/// Priors of every sampled coordinate, aligned with ψ (`None` for `√e sin ω`, whose
/// angle is uniform and whose eccentricity prior sits with `√e cos ω`).
#[derive(Clone, Debug, PartialEq)]
pub struct PriorSet {
    /// One entry per ψ coordinate.
    pub entries: Vec<Option<PriorEntry>>,
}

/// Median of a non-empty set of values.
fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    crate::summary::percentile_sorted(&v, 50.0)
}

impl PriorSet {
    /// The default priors for a fitted model (docs/user-guide.md lists them):
    /// - period: log-uniform on the search range widened to [P̂/2, 2P̂] if needed, or the
    ///   transit's Gaussian;
    /// - K: uniform on [0, K_max], K_max = the larger of twice the largest peak-to-peak RV
    ///   range of an instrument, 3 K̂ and 10 × the median error;
    /// - e: uniform on [0, e_cap] (e_cap = the fit's cap, 0.95 by default), ω uniform;
    /// - Tc: uniform over one period centred on the fitted conjunction, or the transit's
    ///   Gaussian;
    /// - offsets: uniform on [min − R, max + R] of the instrument's RVs, R = the largest
    ///   peak-to-peak range;
    /// - jitter: uniform on [0, s_max], s_max = the larger of the instrument's
    ///   peak-to-peak range, 10 × its median error and 3 ŝ;
    /// - trend order k: uniform on ±10 R / (span in years)^k;
    /// - activity hyperparameters: log-uniform on their bounds
    ///   ([`crate::gp::ActivityLayout::new`]), the rotation period and any hyperparameter
    ///   trained on an indicator Gaussian (the fit's priors) cut at its bounds;
    /// - per-instrument activity amplitude factors: log-uniform on
    ///   [`crate::gp::SCALE_BOUNDS`];
    /// - the joint model's couplings, indicator offsets and jitters: uniform
    ///   ([`crate::fit::JointLayout::new`]), widened to 3 × the fitted value if needed; the
    ///   sign reference coupling from 0 only (the likelihood is symmetric under G → −G).
    pub fn defaults(set: &RvSet, fit: &Fit, period_range_d: (f64, f64)) -> PriorSet {
        let layout = &fit.layout;
        let n_inst = set.n_instruments();
        let of = |k: usize| -> (Vec<f64>, Vec<f64>) {
            (0..set.len())
                .filter(|&i| set.instrument[i] == k)
                .map(|i| (set.rv_mps[i], set.err_mps[i]))
                .unzip()
        };
        let per_inst: Vec<(f64, f64, f64)> = (0..n_inst)
            .map(|k| {
                let (rv, err) = of(k);
                let lo = rv.iter().copied().fold(f64::INFINITY, f64::min);
                let hi = rv.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                (lo, hi, median(err))
            })
            .collect();
        let range = per_inst
            .iter()
            .map(|(lo, hi, _)| hi - lo)
            .fold(0.0, f64::max);
        let median_err = median(set.err_mps.clone());
        let years = (set.baseline_d() / DAYS_PER_YEAR).max(1e-3);
        let epoch = set.epoch_bjd;
        let theta = &fit.theta;
        let names = layout.names(set);
        let entries = layout
            .roles()
            .into_iter()
            .enumerate()
            .map(|(j, role)| {
                let default = |parameter: String, prior: Result<Prior, _>| {
                    Some(PriorEntry {
                        parameter,
                        prior: prior.expect("default bounds are finite and ordered"),
                        source: "default",
                        shift: 0.0,
                    })
                };
                let label = |i: usize| layout.planets[i].label.clone();
                match role {
                    Role::Period(i) => match layout.planets[i].period_prior {
                        Some((m, sd)) => Some(PriorEntry {
                            parameter: format!("{}.period_d", label(i)),
                            prior: Prior::gaussian(m, sd, None)
                                .expect("transit periods are checked on load")
                                .clipped(f64::MIN_POSITIVE, f64::INFINITY),
                            source: "transit",
                            shift: 0.0,
                        }),
                        None => {
                            let p = theta[j];
                            default(
                                format!("{}.period_d", label(i)),
                                Prior::log_uniform(
                                    period_range_d.0.min(0.5 * p),
                                    period_range_d.1.max(2.0 * p),
                                ),
                            )
                        }
                    },
                    Role::K(i) => default(
                        format!("{}.k_mps", label(i)),
                        Prior::uniform(
                            0.0,
                            (2.0 * range)
                                .max(3.0 * theta[j].abs())
                                .max(10.0 * median_err),
                        ),
                    ),
                    Role::ECosW(i) => default(
                        format!("{}.ecc", label(i)),
                        Prior::uniform(0.0, fit.options.max_ecc.min(ECC_LIMIT)),
                    ),
                    Role::ESinW(_) => None,
                    Role::Tc(i) => {
                        let parameter = format!("{}.tc_bjd", label(i));
                        match layout.planets[i].tc_prior {
                            Some((m, sd)) => Some(PriorEntry {
                                parameter,
                                prior: Prior::gaussian(m + epoch, sd, None)
                                    .expect("transit times are checked on load"),
                                source: "transit",
                                shift: epoch,
                            }),
                            None => {
                                let [p, ..] = layout.planet_elements(theta, i);
                                let c = theta[j] + epoch;
                                Some(PriorEntry {
                                    shift: epoch,
                                    ..default(parameter, Prior::uniform(c - 0.5 * p, c + 0.5 * p))?
                                })
                            }
                        }
                    }
                    Role::Offset(k) => default(
                        format!("offset_mps.{}", set.instruments[k]),
                        Prior::uniform(per_inst[k].0 - range, per_inst[k].1 + range),
                    ),
                    Role::Jitter(k) => default(
                        format!("jitter_mps.{}", set.instruments[k]),
                        Prior::uniform(
                            0.0,
                            (per_inst[k].1 - per_inst[k].0)
                                .max(10.0 * per_inst[k].2)
                                .max(3.0 * theta[j].abs()),
                        ),
                    ),
                    Role::Trend(p) => {
                        let b = 10.0 * range.max(median_err) / years.powi(p as i32);
                        default(format!("trend_mps_per_yr{p}"), Prior::uniform(-b, b))
                    }
                    Role::Regressor(r) => {
                        let c = layout.regressor_target(r).0;
                        let b = 10.0 * range.max(median_err) / set.indicator_spread(c);
                        default(names[j].clone(), Prior::uniform(-b, b))
                    }
                    Role::ActivityScale(_) => {
                        let (lo, hi) = crate::gp::SCALE_BOUNDS;
                        default(
                            names[j].replace("ln_activity.", "activity."),
                            Prior::log_uniform(lo, hi),
                        )
                    }
                    Role::Joint(q) => {
                        let b = layout.joint.as_ref().expect("joint roles have the model");
                        let (lo, hi) = b.prior_bounds[q];
                        let reach = 3.0 * theta[j].abs();
                        // The sign reference coupling is ≥ 0 (the fit's is): one half of
                        // the posterior, which is symmetric under G → −G.
                        let (lo, hi) = if q == b.sign_reference {
                            (0.0, hi.max(reach))
                        } else if lo < 0.0 {
                            (lo.min(-reach), hi.max(reach))
                        } else {
                            (lo, hi.max(reach))
                        };
                        default(names[j].clone(), Prior::uniform(lo, hi))
                    }
                    Role::Activity(q) => {
                        let a = layout.activity.as_ref().expect("activity roles have a GP");
                        let parameter = format!("activity.{}", a.model.keys()[q]);
                        let (lo, hi) = a.bounds[q];
                        let gaussian = if q == crate::gp::Activity::ROTATION {
                            Some((a.rotation, "rotation"))
                        } else {
                            a.trained[q].map(|p| (p, "indicator"))
                        };
                        match gaussian.and_then(|((m, sd), source)| {
                            Some((Prior::gaussian(m, sd, Some((lo, hi))).ok()?, source))
                        }) {
                            Some((prior, source)) => Some(PriorEntry {
                                parameter,
                                prior,
                                source,
                                shift: 0.0,
                            }),
                            None => default(parameter, Prior::log_uniform(lo, hi)),
                        }
                    }
                }
            })
            .collect();
        PriorSet { entries }
    }

    /// The same priors with planet `i`'s default conjunction prior moved to one period
    /// `period_d` centred on `tc_d` (days from the reference epoch): the default prior of
    /// a fit at another period (a period mode), of density 1/period as in every mode.
    pub fn with_conjunction_window(
        &self,
        layout: &Layout,
        i: usize,
        tc_d: f64,
        period_d: f64,
    ) -> PriorSet {
        let mut out = self.clone();
        let j = layout.roles().iter().position(|r| *r == Role::Tc(i));
        if let Some(e) = j
            .and_then(|j| out.entries[j].as_mut())
            .filter(|e| e.source == "default")
        {
            let c = tc_d + e.shift;
            e.prior = Prior::uniform(c - 0.5 * period_d, c + 0.5 * period_d)
                .expect("a positive period gives ordered bounds");
        }
        out
    }

    /// Replaces defaults by the target file's choices. Returns warnings for priors on
    /// planets that were not fitted.
    ///
    /// # Errors
    /// [`SampleError::Prior`] for an instrument not in the data or a prior on a period
    /// that is held fixed.
    pub fn apply(
        &mut self,
        choices: &PriorChoices,
        layout: &Layout,
        instruments: &[String],
    ) -> Result<Vec<String>, SampleError> {
        let mut warnings = Vec::new();
        let roles = layout.roles();
        let mut set = |role: Role, prior: Prior, name: &str| -> Result<(), SampleError> {
            let j = roles.iter().position(|r| *r == role).ok_or_else(|| {
                SampleError::Prior(format!("{name}: the parameter is held fixed"))
            })?;
            let entry = self.entries[j]
                .as_mut()
                .expect("every role but √e sin ω has a prior");
            entry.prior = prior;
            entry.source = "target file";
            Ok(())
        };
        for (label, p) in &choices.planets {
            let Some(i) = layout.planets.iter().position(|s| &s.label == label) else {
                warnings.push(format!(
                    "priors for planet {label} not used: no planet of that label was fitted"
                ));
                continue;
            };
            let pairs = [
                (Role::Period(i), p.period_d, "period_d"),
                (Role::K(i), p.k_mps, "k_mps"),
                (Role::ECosW(i), p.ecc, "ecc"),
                (Role::Tc(i), p.tc_bjd, "tc_bjd"),
            ];
            for (role, prior, key) in pairs {
                if let Some(prior) = prior {
                    set(role, prior, &format!("priors.planet.{label}.{key}"))?;
                }
            }
        }
        for (name, p) in &choices.instruments {
            let k = instruments.iter().position(|n| n == name).ok_or_else(|| {
                SampleError::Prior(format!(
                    "priors.instrument.{name}: no instrument of that name in the data ({})",
                    instruments.join(", ")
                ))
            })?;
            if let Some(prior) = p.offset_mps {
                set(Role::Offset(k), prior, "offset_mps")?;
            }
            if let Some(prior) = p.jitter_mps {
                set(Role::Jitter(k), prior, "jitter_mps")?;
            }
        }
        Ok(warnings)
    }
}

/// Log-posterior of an RV data set in the sampling parametrisation.
pub struct LogPosterior<'a> {
    /// The data.
    pub set: &'a RvSet,
    /// The fit's parameter layout.
    pub layout: &'a Layout,
    /// Priors aligned with ψ.
    pub priors: &'a PriorSet,
    roles: Vec<Role>,
    /// `(ψ index, lowest, highest)` of coordinates restricted to a window (a period mode).
    windows: Vec<(usize, f64, f64)>,
}

impl<'a> LogPosterior<'a> {
    /// The posterior of `set` under `layout` with `priors`.
    pub fn new(set: &'a RvSet, layout: &'a Layout, priors: &'a PriorSet) -> LogPosterior<'a> {
        LogPosterior {
            set,
            layout,
            priors,
            roles: layout.roles(),
            windows: Vec::new(),
        }
    }

    /// The same posterior with coordinates restricted to windows `(ψ index, lowest,
    /// highest)`: the density is unchanged inside and zero outside (one period mode).
    pub fn within(mut self, windows: Vec<(usize, f64, f64)>) -> LogPosterior<'a> {
        self.windows = windows;
        self
    }

    /// Sampling name of each ψ coordinate.
    pub fn names(&self) -> Vec<String> {
        self.layout
            .names(self.set)
            .into_iter()
            .zip(&self.roles)
            .map(|(n, role)| match role {
                Role::ECosW(_) => n.replace(".ecosw", ".sqrt_e_cosw"),
                Role::ESinW(_) => n.replace(".esinw", ".sqrt_e_sinw"),
                Role::Jitter(_) => format!("ln_{n}"),
                _ => n,
            })
            .collect()
    }

    /// θ of the fit (e cos ω, e sin ω, jitter) from ψ.
    pub fn to_theta(&self, psi: &[f64]) -> Vec<f64> {
        let mut theta = psi.to_vec();
        for (j, role) in self.roles.iter().enumerate() {
            match role {
                Role::ECosW(_) => {
                    let root_e = psi[j].hypot(psi[j + 1]);
                    theta[j] = psi[j] * root_e;
                    theta[j + 1] = psi[j + 1] * root_e;
                }
                Role::Jitter(_) => theta[j] = psi[j].exp(),
                _ => {}
            }
        }
        theta
    }

    /// ψ from θ of the fit (a zero jitter maps to `ln` of 1e-6 m/s).
    pub fn from_theta(&self, theta: &[f64]) -> Vec<f64> {
        let mut psi = theta.to_vec();
        for (j, role) in self.roles.iter().enumerate() {
            match role {
                Role::ECosW(_) => {
                    let e = theta[j].hypot(theta[j + 1]);
                    let scale = if e > 0.0 { 1.0 / e.sqrt() } else { 0.0 };
                    psi[j] = theta[j] * scale;
                    psi[j + 1] = theta[j + 1] * scale;
                }
                Role::Jitter(_) => psi[j] = theta[j].abs().max(1e-6).ln(),
                _ => {}
            }
        }
        psi
    }

    /// Log-prior density of coordinate `j` of ψ (with the Jacobians of the module docs).
    fn coordinate_ln_prior(&self, j: usize, psi: &[f64]) -> f64 {
        let Some(entry) = &self.priors.entries[j] else {
            return 0.0;
        };
        match self.roles[j] {
            Role::ECosW(_) => entry
                .prior
                .ln_density(psi[j] * psi[j] + psi[j + 1] * psi[j + 1]),
            Role::Jitter(_) | Role::Activity(_) | Role::ActivityScale(_) => {
                entry.prior.ln_density(psi[j].exp()) + psi[j]
            }
            _ => entry.prior.ln_density(psi[j] + entry.shift),
        }
    }

    /// Log-prior density of ψ, −∞ outside the priors' bounds and the windows.
    pub fn ln_prior(&self, psi: &[f64]) -> f64 {
        if self
            .windows
            .iter()
            .any(|&(j, lo, hi)| !(psi[j] >= lo && psi[j] <= hi))
        {
            return f64::NEG_INFINITY;
        }
        // Offsets are the same in ψ as in θ.
        let mut total = -self.layout.offset_penalty(psi, None);
        for j in 0..psi.len() {
            total += self.coordinate_ln_prior(j, psi);
            if total == f64::NEG_INFINITY {
                return total;
            }
        }
        total
    }

    /// Physical parameters whose prior excludes ψ.
    pub fn outside_priors(&self, psi: &[f64]) -> Vec<String> {
        (0..psi.len())
            .filter(|&j| self.coordinate_ln_prior(j, psi) == f64::NEG_INFINITY)
            .filter_map(|j| self.priors.entries[j].as_ref().map(|e| e.parameter.clone()))
            .collect()
    }

    /// Log-likelihood at ψ (−∞ for invalid values).
    pub fn ln_likelihood(&self, psi: &[f64]) -> f64 {
        self.layout
            .log_likelihood(&self.to_theta(psi), 1.0, self.set)
    }

    /// Log-posterior (up to a constant) at ψ; −∞ outside the priors or for NaN.
    pub fn ln_posterior(&self, psi: &[f64]) -> f64 {
        let prior = self.ln_prior(psi);
        if prior == f64::NEG_INFINITY {
            return prior;
        }
        let total = prior + self.ln_likelihood(psi);
        if total.is_nan() {
            f64::NEG_INFINITY
        } else {
            total
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::PlanetSpec;
    use crate::sample::chains::{self, SamplerSettings};
    use crate::target::OrbitShape;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// An offset constraint `offset(B) − offset(A) ~ N(2, 0.5²)` adds
    /// `−½ ((Δ − 2)/0.5)²` to the log-prior (Gaussian log-density up to a constant).
    #[test]
    fn offset_constraint_enters_the_prior() {
        let set = RvSet::from_columns(
            "p",
            0.0,
            vec![0.0, 1.0, 2.0, 3.0],
            vec![0.0; 4],
            vec![1.0; 4],
            vec![0, 1, 0, 1],
            vec!["A".into(), "B".into()],
        );
        let constraint = crate::fit::OffsetPrior {
            instruments: ["A".into(), "B".into()],
            mean_mps: 2.0,
            sd_mps: 0.5,
        };
        let layout = Layout::new(vec![], OrbitShape::Circular, 2, 0)
            .with_offset_priors(&[constraint], &set.instruments);
        // ψ: offset A, offset B, ln s_A, ln s_B; no prior entries.
        let priors = PriorSet {
            entries: vec![None; 4],
        };
        let post = LogPosterior::new(&set, &layout, &priors);
        for (b, want) in [(2.0, 0.0), (3.0, -2.0), (0.5, -4.5)] {
            let got = post.ln_prior(&[0.0, b, 0.0, 0.0]);
            assert!((got - want).abs() < 1e-12, "offset B {b}: {got} vs {want}");
        }
    }

    /// Sampling the prior alone must give back the physical priors: with e uniform on
    /// [0, 0.9] and the jitter uniform on [0, 5], the draws of e and s have the uniform
    /// means 0.45 and 2.5 and standard deviations 0.9/√12 and 5/√12 (definition of the
    /// uniform distribution). A missing Jacobian (e.g. p(s) instead of p(s)·s for ln s)
    /// moves these by far more than the 5 % allowed.
    #[test]
    fn prior_draws_follow_the_physical_priors() {
        let set = RvSet::from_columns(
            "p",
            0.0,
            vec![0.0, 1.0, 2.0],
            vec![0.0; 3],
            vec![1.0; 3],
            vec![0; 3],
            vec!["A".into()],
        );
        let spec = PlanetSpec {
            period_d: 10.0,
            fix_period: true,
            k_mps: 1.0,
            tc_d: 0.0,
            ecc_vector: (0.0, 0.0),
            period_prior: None,
            tc_prior: None,
            label: "b".into(),
        };
        let layout = Layout::new(vec![spec], OrbitShape::Eccentric, 1, 0);
        let entry = |prior: Prior| {
            Some(PriorEntry {
                parameter: String::new(),
                prior,
                source: "default",
                shift: 0.0,
            })
        };
        // ψ: K, √e cos ω, √e sin ω, Tc, offset, ln s.
        let priors = PriorSet {
            entries: vec![
                entry(Prior::uniform(0.0, 1.0).unwrap()),
                entry(Prior::uniform(0.0, 0.9).unwrap()),
                None,
                entry(Prior::uniform(-5.0, 5.0).unwrap()),
                entry(Prior::uniform(-1.0, 1.0).unwrap()),
                entry(Prior::uniform(0.0, 5.0).unwrap()),
            ],
        };
        let post = LogPosterior::new(&set, &layout, &priors);
        let ln_p = |psi: &[f64]| post.ln_prior(psi);
        // Walkers spread at random (collinear starts would confine the stretch move to
        // their line).
        let mut rng = ChaCha8Rng::seed_from_u64(2);
        let mut start = || -> Vec<f64> {
            let mut u = || rng.random::<f64>();
            vec![
                u(),
                0.6 * u() - 0.3,
                0.6 * u() - 0.3,
                u() - 0.5,
                u() - 0.5,
                u(),
            ]
        };
        let starts = (0..2).map(|_| (0..16).map(|_| start()).collect()).collect();
        let out = chains::run(
            &ln_p,
            starts,
            &SamplerSettings::default(),
            usize::MAX,
            &mut |_| {},
            &[],
        );
        assert!(out.diagnostics.converged, "{}", out.diagnostics.reason);
        let stats = |v: Vec<f64>| {
            let n = v.len() as f64;
            let m = v.iter().sum::<f64>() / n;
            (
                m,
                (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / n).sqrt(),
            )
        };
        let (em, es) = stats(
            out.positions
                .iter()
                .map(|p| p[1] * p[1] + p[2] * p[2])
                .collect(),
        );
        let (sm, ss) = stats(out.positions.iter().map(|p| p[5].exp()).collect());
        let root12 = 12f64.sqrt();
        assert!(
            (em - 0.45).abs() < 0.05 * 0.45 && (es - 0.9 / root12).abs() < 0.05 * 0.9 / root12,
            "e {em} {es}"
        );
        assert!(
            (sm - 2.5).abs() < 0.05 * 2.5 && (ss - 5.0 / root12).abs() < 0.05 * 5.0 / root12,
            "s {sm} {ss}"
        );
    }
}
