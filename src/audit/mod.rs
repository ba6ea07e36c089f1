//! Audit of a mass claim: is each fitted signal, and the mass that follows from it,
//! robust to the alias choice, the model, the data subset and stellar activity?
//!
//! Entry point: [`audit`], which takes a finished [`Analysis`] and refits the data under
//! alternatives. Every part reports numbers; [`verdict`] turns them into one of
//! `robust`, `alias-ambiguous`, `model-dependent` or `not-detected` with the reasons.
//! All refits are maximum likelihood (curvature errors); the mass under each refit comes
//! from the same stellar and transit draws as the run's, so differences are the model's.

mod activity;
mod aliases;
mod common;
mod jackknife;
mod limits;
mod variants;
mod verdict;

pub use activity::{Activity, Correlation, IndicatorPeak, Season, SeasonFit};
pub use aliases::{AliasCandidate, AliasTest, SimulationMatch};
pub use jackknife::{Jackknife, JackknifeFit};
pub use limits::{Detection, DetectionPoint, Limits};
pub use variants::{CrossValidation, Variant};
pub use verdict::Verdict;

use std::time::Instant;

use serde::Serialize;

use crate::derive::DeriveError;
use crate::fit::{Fit, FitError, PlanetSpec};
use crate::periodogram::PeriodogramError;
use crate::pipeline::Analysis;
use crate::summary::Summary;
use crate::target::{Star, Transit};
use common::Refitter;

/// Why an audit could not be made.
#[derive(Debug, thiserror::Error)]
pub enum AuditError {
    /// A refit failed in a way that is not just "this variant cannot be fitted".
    #[error("audit refit: {0}")]
    Fit(#[from] FitError),
    /// A periodogram could not be computed.
    #[error("audit periodogram: {0}")]
    Periodogram(#[from] PeriodogramError),
    /// Stellar or transit draws could not be made.
    #[error("audit masses: {0}")]
    Derive(#[from] DeriveError),
    /// Nothing to audit.
    #[error("the fit has no planet to audit")]
    NoPlanet,
}

/// Settings of the audit; the defaults are stated in docs/methods.md.
#[derive(Clone, Debug, PartialEq)]
pub struct AuditSettings {
    /// Seed of every simulation and resampling.
    pub seed: u64,
    /// Noise realisations per alias candidate in the Dawson & Fabrycky (2010) test.
    pub simulations: usize,
    /// A gap longer than this (days) starts a new observing season.
    pub season_gap_d: f64,
    /// Single epochs dropped one at a time in the jackknife (a seeded sample).
    pub jackknife_epochs: usize,
    /// Contiguous time blocks of the cross-validation of the number of signals.
    pub cv_folds: usize,
    /// ln-likelihood lead that makes one alias decisively better than the next
    /// (5 ≈ a likelihood ratio of 150, "very strong" on the scale of Kass & Raftery 1995).
    pub decisive_delta_lnl: f64,
    /// A model variant within this ΔBIC of the best is a competitive alternative
    /// (Kass & Raftery 1995: ΔBIC > 10 is very strong evidence against).
    pub competitive_delta_bic: f64,
    /// A competitive variant whose K differs from the baseline by more than this many σ_K
    /// makes the mass model-dependent.
    pub variant_sigma: f64,
    /// A jackknife fit whose K differs from the full fit by more than this many σ of the
    /// difference flags the dropped subset.
    pub jackknife_sigma: f64,
    /// False-alarm probability below which a signal counts as detected.
    pub fap_threshold: f64,
    /// p-value below which a test of activity (seasonal change, indicator peak) counts.
    pub activity_p: f64,
    /// Injections per semi-amplitude in the detection-probability curve.
    pub injections: usize,
    /// Monte Carlo draws of the mass under each refit.
    pub mass_draws: usize,
    /// Stellar rotation period and its 1σ, days, when known.
    pub rotation_d: Option<(f64, f64)>,
    /// Also sample the posterior of the baseline and of every model variant with these
    /// settings (requested by sampling the run; default: maximum likelihood only).
    pub sampler: Option<crate::sample::SamplerSettings>,
}

impl Default for AuditSettings {
    fn default() -> Self {
        AuditSettings {
            seed: 1,
            simulations: 200,
            season_gap_d: 60.0,
            jackknife_epochs: 20,
            cv_folds: 5,
            decisive_delta_lnl: 5.0,
            competitive_delta_bic: 10.0,
            variant_sigma: 2.0,
            jackknife_sigma: 3.0,
            fap_threshold: 1e-3,
            activity_p: 0.01,
            injections: 100,
            mass_draws: 4000,
            rotation_d: None,
            sampler: None,
        }
    }
}

/// What the audit needs beside the analysis.
#[derive(Clone, Copy, Debug)]
pub struct Context<'a> {
    /// The star (for masses); without it masses are left out.
    pub star: Option<&'a Star>,
    /// Transit constraints of known planets (their periods are not alias-tested).
    pub transits: &'a [Transit],
    /// Labels of the planets to audit; empty for all.
    pub labels: &'a [String],
}

/// Seconds spent in each part.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct Timing {
    /// Alias refits and simulations.
    pub aliases_s: f64,
    /// Model variants and cross-validation.
    pub variants_s: f64,
    /// Seasons, correlations and indicator periodograms.
    pub activity_s: f64,
    /// Jackknife refits.
    pub jackknife_s: f64,
    /// Significance, upper limits and injections.
    pub detection_s: f64,
}

/// The audit of one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlanetAudit {
    /// Planet label.
    pub label: String,
    /// Period of the fit that was audited, days.
    pub claimed_period_d: f64,
    /// Period the data prefer among the aliases, days.
    pub preferred_period_d: f64,
    /// This planet's verdict.
    pub verdict: Verdict,
    /// Reasons for it, in words.
    pub reasons: Vec<String>,
    /// Significance and, when not detected, limits.
    pub detection: Detection,
    /// Alias candidates and the simulation test.
    pub aliases: AliasTest,
    /// K and mass under each model variant.
    pub variants: Vec<Variant>,
    /// Time-split cross-validation of the number of signals.
    pub signal_count: Option<CrossValidation>,
    /// Planet-or-activity checks.
    pub activity: Activity,
    /// Refits without an instrument, a season or single epochs.
    pub jackknife: Jackknife,
}

/// The audit of a whole fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Audit {
    /// Overall verdict: the first of not-detected, alias-ambiguous, model-dependent that
    /// applies to any planet, else robust.
    pub verdict: Verdict,
    /// Reasons, each prefixed with the planet's label.
    pub reasons: Vec<String>,
    /// One audit per planet, in the fit's order.
    pub planets: Vec<PlanetAudit>,
    /// Seasons found in the data (shared by all planets).
    pub seasons: Vec<Season>,
    /// Time per part (in the summary, not in results.json, which must not change between
    /// identical runs).
    #[serde(skip)]
    pub timing: Timing,
}

impl Audit {
    /// Whether the verdict lets a run exit with status 0.
    pub fn is_robust(&self) -> bool {
        self.verdict == Verdict::Robust
    }
}

/// Audits every planet of `analysis`.
///
/// # Errors
/// [`AuditError`] when the analysis has no planet, or when stellar or transit draws or a
/// periodogram cannot be made. Refits that fail (too few points in a subset, say) are
/// left out of their table and named in its notes.
pub fn audit(
    analysis: &Analysis,
    ctx: &Context,
    settings: &AuditSettings,
) -> Result<Audit, AuditError> {
    let fit = &analysis.search.fit;
    if fit.planets.is_empty() {
        return Err(AuditError::NoPlanet);
    }
    let mut refit = Refitter::new(analysis, ctx, settings)?;
    let audited: Vec<usize> = (0..fit.planets.len())
        .filter(|&i| ctx.labels.is_empty() || ctx.labels.contains(&fit.planets[i].label))
        .collect();
    let mut timing = Timing::default();
    let seasons = activity::seasons(&analysis.set, settings.season_gap_d);

    // Aliases first: where another period is decisively better, the rest of the audit is
    // of the fit at that period (the claim corrected).
    let clock = Instant::now();
    let mut alias_tests = Vec::new();
    let mut corrected: Vec<(usize, Fit)> = Vec::new();
    for &i in &audited {
        let (test, preferred) = aliases::test(&refit, i)?;
        alias_tests.push(test);
        corrected.extend(preferred.map(|f| (i, f)));
    }
    if !corrected.is_empty() {
        let mut specs = refit.specs();
        for (i, f) in &corrected {
            if let Some(spec) = f.planet_specs().into_iter().nth(*i) {
                // The alias refit held the period near the alias; the corrected fit is free.
                specs[*i] = PlanetSpec {
                    period_prior: None,
                    ..spec
                };
            }
        }
        if let Ok(f) = crate::fit::fit(refit.set, &specs, &refit.options()) {
            refit.rebase(f);
            for (k, &i) in audited.iter().enumerate() {
                if corrected.iter().any(|c| c.0 == i) {
                    let test = &mut alias_tests[k];
                    let note = format!(
                        "the rest of the audit is of the fit at the preferred {:.5} d",
                        test.preferred_period_d
                    );
                    test.notes.push(note);
                }
            }
        }
    }
    timing.aliases_s = clock.elapsed().as_secs_f64();

    let clock = Instant::now();
    let detections = audited
        .iter()
        .map(|&i| limits::detection(&refit, i))
        .collect::<Result<Vec<_>, _>>()?;
    timing.detection_s = clock.elapsed().as_secs_f64();

    let clock = Instant::now();
    let more = variants::fit_one_more(&refit);
    let (mut variant_tables, signal_count) = rayon::join(
        || variants::variants(&refit, more.as_ref()),
        || variants::cross_validate(&refit, more.as_ref()),
    );
    timing.variants_s = clock.elapsed().as_secs_f64();

    let clock = Instant::now();
    let activities = audited
        .iter()
        .map(|&i| activity::activity(&refit, i, &seasons))
        .collect::<Result<Vec<_>, _>>()?;
    timing.activity_s = clock.elapsed().as_secs_f64();

    let clock = Instant::now();
    let mut jackknives = jackknife::jackknife(&refit, &seasons);
    timing.jackknife_s = clock.elapsed().as_secs_f64();

    let planets: Vec<PlanetAudit> = audited
        .iter()
        .zip(detections.into_iter().zip(alias_tests).zip(activities))
        .map(|(&i, ((detection, aliases), activity))| {
            let mut pa = PlanetAudit {
                label: fit.planets[i].label.clone(),
                claimed_period_d: fit.planets[i].period_d.value,
                preferred_period_d: aliases.preferred_period_d,
                verdict: Verdict::Robust,
                reasons: Vec::new(),
                detection,
                aliases,
                variants: std::mem::take(&mut variant_tables[i]),
                signal_count: signal_count.clone(),
                activity,
                jackknife: std::mem::take(&mut jackknives[i]),
            };
            (pa.verdict, pa.reasons) = verdict::judge(&pa, settings);
            pa
        })
        .collect();
    let (verdict, reasons) = verdict::overall(&planets);
    Ok(Audit {
        verdict,
        reasons,
        planets,
        seasons,
        timing,
    })
}

/// K and mass of one planet under one refit, as every table of the audit shows them.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlanetValues {
    /// Period, days.
    pub period_d: f64,
    /// Semi-amplitude, m/s.
    pub k_mps: Summary,
    /// Eccentricity.
    pub ecc: f64,
    /// Mass (true mass where the inclination is known, else m sin i), Earth masses.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_mearth: Option<Summary>,
    /// Bulk density, g/cm³, where the radius is known.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub density_gcc: Option<Summary>,
}
