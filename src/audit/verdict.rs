//! The verdict: plain words from the numbers of the other parts.
//!
//! For each planet, in order of precedence:
//! 1. `not-detected` — the false-alarm probability is not below the threshold;
//! 2. `alias-ambiguous` — another alias is within the decisive ln L lead, or the
//!    simulations say another candidate explains the observed alias pattern better;
//! 3. `model-dependent` — a competitive model variant moves K by more than the set number
//!    of σ, or a variant without the planet is preferred, or cross-validation prefers the
//!    model without it, or dropping an instrument or season changes K beyond the jackknife
//!    limit, or one epoch moves K by more than 1σ, or the signal behaves like activity
//!    (changes between seasons, an indicator peak at the period, the rotation period);
//! 4. `robust` otherwise.
//!
//! The overall verdict is the first of these that applies to any audited planet.

use serde::Serialize;

use super::{AuditSettings, PlanetAudit};

/// The audit's conclusion, in order of precedence.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    /// The signal is not significant: only upper limits are meaningful.
    NotDetected,
    /// The period (and so the mass) depends on which alias is chosen.
    AliasAmbiguous,
    /// The mass depends on the model, the data subset, or may be activity.
    ModelDependent,
    /// None of the above.
    Robust,
}

impl Verdict {
    /// The verdict's name as in the JSON output.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::NotDetected => "not-detected",
            Verdict::AliasAmbiguous => "alias-ambiguous",
            Verdict::ModelDependent => "model-dependent",
            Verdict::Robust => "robust",
        }
    }
}

impl std::fmt::Display for Verdict {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Compact number for reasons: three decimals, scientific below 0.001.
fn num(x: f64) -> String {
    if x != 0.0 && x.abs() < 1e-3 {
        format!("{x:.1e}")
    } else {
        format!("{x:.3}")
    }
}

/// One planet's verdict and its reasons (the problems found; when there are none, the
/// evidence that it is robust), plus a note when a variant fits much better.
pub fn judge(pa: &PlanetAudit, settings: &AuditSettings) -> (Verdict, Vec<String>) {
    let mut found: Vec<(Verdict, String)> = Vec::new();
    let mut evidence = Vec::new();
    let d = &pa.detection;
    if d.detected {
        evidence.push(format!(
            "detected: FAP {} ({}), K/σ = {:.1}",
            num(d.fap),
            d.fap_method,
            d.k_over_sigma
        ));
    } else {
        let limit = d
            .limits
            .as_ref()
            .map(|l| {
                format!(
                    "; K < {:.2} m/s (95 %), < {:.2} m/s (99 %)",
                    l.k95_mps, l.k99_mps
                )
            })
            .unwrap_or_default();
        found.push((
            Verdict::NotDetected,
            format!(
                "not significant: FAP {} ≥ {} ({}){limit}",
                num(d.fap),
                settings.fap_threshold,
                d.fap_method
            ),
        ));
    }

    let a = &pa.aliases;
    if a.tested {
        let claimed = a.candidates.iter().find(|c| c.relation == "claimed");
        if !a.decisive {
            if let Some(second) = a.candidates.get(1) {
                found.push((
                    Verdict::AliasAmbiguous,
                    format!(
                        "{:.5} d and {:.5} d ({}) differ by only ΔlnL = {:.2} (decisive: {})",
                        a.candidates[0].values.period_d,
                        second.values.period_d,
                        second.relation,
                        a.lead_lnl,
                        settings.decisive_delta_lnl
                    ),
                ));
            }
            if let Some(p) = a.explained_by_period_d
                && p != a.preferred_period_d
            {
                found.push((
                    Verdict::AliasAmbiguous,
                    format!(
                        "the simulated alias patterns favour {p:.5} d over the best-fitting {:.5} d",
                        a.preferred_period_d
                    ),
                ));
            }
        } else if claimed.is_some_and(|c| c.values.period_d != a.preferred_period_d) {
            evidence.push(format!(
                "the claimed period {:.5} d is an alias: the data prefer {:.5} d decisively (ΔlnL = {:.1})",
                pa.claimed_period_d, a.preferred_period_d, a.lead_lnl
            ));
        } else if a.candidates.len() > 1 {
            evidence.push(format!(
                "aliases rejected: the best alternative trails by ΔlnL = {:.1}",
                a.lead_lnl
            ));
        }
    }

    for v in pa.variants.iter().skip(1) {
        match (&v.planet, v.k_shift_sigma) {
            (Some(_), Some(z)) if v.competitive && z.abs() > settings.variant_sigma => {
                found.push((
                    Verdict::ModelDependent,
                    format!(
                        "K moves by {z:+.1} σ under '{}' (ΔBIC = {:+.1})",
                        v.name, v.delta_bic
                    ),
                ));
            }
            (None, _) if v.delta_bic < 0.0 => found.push((
                Verdict::ModelDependent,
                format!(
                    "the model '{}' has no signal {} and a lower BIC (ΔBIC = {:+.1})",
                    v.name, pa.label, v.delta_bic
                ),
            )),
            _ => {}
        }
    }
    if let Some(cv) = &pa.signal_count {
        let dropped_this = format!("without {}", pa.label);
        if cv.significant
            && cv
                .scores
                .iter()
                .any(|s| s.signals == cv.preferred_signals && s.change == dropped_this)
        {
            found.push((
                Verdict::ModelDependent,
                format!(
                    "cross-validation predicts the data better without {}",
                    pa.label
                ),
            ));
        }
    }
    for j in pa.jackknife.fits.iter().filter(|j| j.flagged) {
        let z = j.k_shift_sigma.unwrap_or(f64::NAN);
        found.push((
            Verdict::ModelDependent,
            match j.kind {
                "epoch" => format!("the single epoch {} moves K by {z:+.1} σ", j.dropped),
                _ => format!("{}, K changes by {z:+.1} σ", j.description),
            },
        ));
    }
    let act = &pa.activity;
    if let Some(p) = act.season_p {
        if p < settings.activity_p {
            found.push((
                Verdict::ModelDependent,
                format!(
                    "amplitude or phase changes between seasons (p = {})",
                    num(p)
                ),
            ));
        } else {
            evidence.push(format!(
                "amplitude and phase steady across seasons (p = {})",
                num(p)
            ));
        }
    }
    for ip in act
        .indicator_peaks
        .iter()
        .filter(|ip| ip.fap < settings.activity_p)
    {
        found.push((
            Verdict::ModelDependent,
            format!(
                "{} has a periodogram peak at {:.4} d (FAP {})",
                ip.indicator,
                ip.period_d,
                num(ip.fap)
            ),
        ));
    }
    if let Some(r) = &act.near_rotation {
        found.push((Verdict::ModelDependent, format!("the period is near {r}")));
    }
    let stable = pa
        .variants
        .iter()
        .skip(1)
        .filter(|v| v.competitive && v.planet.is_some())
        .count();
    if stable > 0 {
        evidence.push(format!(
            "K within {} σ under {stable} competitive model variants",
            settings.variant_sigma
        ));
    }

    // A much better model is worth knowing either way.
    let best = pa
        .variants
        .iter()
        .skip(1)
        .min_by(|a, b| a.delta_bic.total_cmp(&b.delta_bic));
    let note = best
        .filter(|v| v.delta_bic < -settings.competitive_delta_bic)
        .map(|v| match (&v.planet, v.k_shift_sigma) {
            (Some(p), Some(z)) => format!(
                "note: '{}' fits much better (ΔBIC = {:+.1}); K under it {:.2} ± {:.2} m/s ({z:+.1} σ)",
                v.name, v.delta_bic, p.k_mps.value, p.k_mps.plus
            ),
            _ => format!(
                "note: '{}' fits much better (ΔBIC = {:+.1})",
                v.name, v.delta_bic
            ),
        });
    let verdict = found.iter().map(|f| f.0).min().unwrap_or(Verdict::Robust);
    let mut reasons: Vec<String> = if found.is_empty() {
        evidence
    } else {
        found.into_iter().map(|f| f.1).collect()
    };
    reasons.extend(note);
    (verdict, reasons)
}

/// The overall verdict of several planet audits and their reasons, labelled.
pub fn overall(planets: &[PlanetAudit]) -> (Verdict, Vec<String>) {
    let verdict = planets
        .iter()
        .map(|p| p.verdict)
        .min()
        .unwrap_or(Verdict::Robust);
    let reasons = planets
        .iter()
        .flat_map(|p| p.reasons.iter().map(move |r| format!("{}: {r}", p.label)))
        .collect();
    (verdict, reasons)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Precedence stated in the command-line contract (design.md): not-detected, then
    /// alias-ambiguous, then model-dependent.
    #[test]
    fn precedence_follows_the_contract() {
        assert!(Verdict::NotDetected < Verdict::AliasAmbiguous);
        assert!(Verdict::AliasAmbiguous < Verdict::ModelDependent);
        assert!(Verdict::ModelDependent < Verdict::Robust);
        assert_eq!(
            serde_json::to_value(Verdict::AliasAmbiguous).unwrap(),
            "alias-ambiguous"
        );
    }
}
