//! The human-readable summary printed after a fit or run.

use std::fmt::Write;

use super::table::{round_to_uncertainty, significant};
use crate::audit::Audit;
use crate::derive::PlanetDerived;
use crate::derive::profile::DensityProfile;
use crate::fit::ACTIVITY_SEARCH_BIC;
use crate::pipeline::Analysis;
use crate::summary::Summary;

/// `value ± err` (or `value +plus/-minus` when asymmetric), rounded to the uncertainty
/// (see [`round_to_uncertainty`]); exact values print with 7 significant digits.
pub fn format_summary(s: &Summary) -> String {
    match round_to_uncertainty(s) {
        None => significant(s.value, 7),
        Some(r) if r.symmetric() => format!("{} ± {}", r.value, r.minus),
        Some(r) => format!("{} +{}/-{}", r.value, r.plus, r.minus),
    }
}

/// One line of a planet's derived quantities: masses, radius, density, class.
fn derived_line(d: &PlanetDerived) -> String {
    let mut parts = vec![format!("m sin i = {} M⊕", format_summary(&d.msini_mearth))];
    if let Some(m) = &d.mass_mearth {
        parts.push(format!("mass = {} M⊕", format_summary(m)));
    }
    if let Some(r) = &d.radius_rearth {
        parts.push(format!("radius = {} R⊕", format_summary(r)));
    }
    if let Some(rho) = &d.density_gcc {
        parts.push(format!("density = {} g/cm³", format_summary(rho)));
    }
    parts.push(format!("a = {} au", format_summary(&d.a_au)));
    if let Some(c) = d.class {
        parts.push(format!("class: {}", c.name()));
    }
    let mut line = parts.join(", ");
    for note in &d.notes {
        line.push_str(&format!("\n     note: {note}"));
    }
    line
}

/// One line of a planet's density report: density relative to Earth, T_eq, Jeans
/// parameter, envelope fraction, P(ρ < 0.3 g/cm³).
fn profile_line(p: &DensityProfile) -> String {
    let mut parts = vec![format!("ρ/ρ⊕ = {}", format_summary(&p.density_earth))];
    if let Some(t) = &p.teq_k {
        parts.push(format!("T_eq = {} K", format_summary(t)));
    }
    if let (Some(l), Some(r)) = (&p.jeans_lambda, p.escape_regime) {
        parts.push(format!(
            "Λ = {} ({})",
            format_summary(l),
            format!("{r:?}").to_lowercase()
        ));
    }
    if let Some(f) = &p.envelope_fraction {
        parts.push(format!("H/He fraction = {}", format_summary(f)));
    }
    if let Some(p03) = p.p_density_below.get("0.3") {
        parts.push(format!("P(ρ < 0.3 g/cm³) = {p03:.2}"));
    }
    parts.join(", ")
}

/// The summary of an analysis, several lines of plain text.
pub fn summary_text(a: &Analysis) -> String {
    let fit = &a.search.fit;
    let mut s = String::new();
    let _ = writeln!(s, "heft — {}", a.name);
    let _ = writeln!(
        s,
        "data: {} points from {} instrument(s) over {:.1} d (reference epoch BJD_TDB {})",
        a.set.len(),
        a.set.n_instruments(),
        a.set.baseline_d(),
        a.set.epoch_bjd
    );
    s.push_str(&data_changes_text(a));
    let heading = if fit.layout.activity.is_some() {
        format!(
            "signal search (GLS of residuals, Baluev FAP; with the activity model, candidates from its likelihood-ratio periodogram, kept when ΔBIC ≥ {ACTIVITY_SEARCH_BIC}):"
        )
    } else {
        "signal search (GLS of residuals, Baluev FAP):".to_string()
    };
    let _ = writeln!(s, "\n{heading}");
    for step in &a.search.steps {
        for (period, gain) in &step.activity_rejected {
            let why = if *gain < ACTIVITY_SEARCH_BIC {
                format!("explained by the activity model (ΔBIC {gain:.1} < {ACTIVITY_SEARCH_BIC})")
            } else {
                format!("tried (ΔBIC {gain:.1}); another peak's signal lowers the BIC more")
            };
            let _ = writeln!(s, "  peak at {period:>10.4} d  {why}");
        }
        if let Some(p) = step.peak {
            let outcome = match (step.accepted, step.activity_delta_bic) {
                (true, Some(d)) => format!("→ fitted (ΔBIC {d:.1} with the activity model)"),
                (true, None) => "→ fitted".to_string(),
                (false, _) if !step.activity_rejected.is_empty() => {
                    "→ stop: no peak's signal beats the activity model".to_string()
                }
                (false, _) => "→ stop".to_string(),
            };
            let _ = writeln!(
                s,
                "  peak at {:>10.4} d  power {:.3}  FAP {:.2e}  {outcome}",
                p.period, p.power, p.fap,
            );
        }
    }
    let post = a.posterior.as_ref();
    let heading = match post {
        Some(_) => "posterior median, 15.87–84.13 % interval",
        None => "maximum likelihood; ± from the curvature",
    };
    let _ = writeln!(s, "\nplanets ({heading}):");
    let planets = post.map_or(&fit.planets, |p| &p.planets);
    for (i, ((p, d), profile)) in planets.iter().zip(&a.derived).zip(&a.profiles).enumerate() {
        let _ = writeln!(
            s,
            "  {}: P = {} d, K = {} m/s, e = {}, ω = {}°, Tc = {} BJD_TDB",
            p.label,
            format_summary(&p.period_d),
            format_summary(&p.k_mps),
            format_summary(&p.ecc),
            format_summary(&p.omega_deg),
            format_summary(&p.tc_d),
        );
        if let Some(d) = d {
            let _ = writeln!(s, "     {}", derived_line(d));
        }
        if let Some(pr) = profile {
            let _ = writeln!(s, "     {}", profile_line(pr));
        }
        if let Some(line) = significance_line(a, i) {
            let _ = writeln!(s, "     {line}");
        }
    }
    let _ = writeln!(s, "\ninstruments:");
    for inst in post.map_or(&fit.instruments, |p| &p.instruments) {
        let _ = writeln!(
            s,
            "  {:<16} {:>4} pts  span {:.1} d  median err {:.2} m/s  offset {} m/s  jitter {} m/s  rms {:.2} m/s",
            inst.name,
            inst.n_points,
            inst.span_d,
            inst.median_err_mps,
            format_summary(&inst.offset_mps),
            format_summary(&inst.jitter_mps),
            inst.rms_mps
        );
    }
    let units = ["m/s/yr", "m/s/yr²"];
    for (t, unit) in post.map_or(&fit.trend, |p| &p.trend).iter().zip(units) {
        let _ = writeln!(s, "trend: {} {unit}", format_summary(t));
    }
    if let Some(model) = fit.layout.activity.as_ref().map(|a| a.model) {
        let _ = writeln!(s, "activity ({}):", model.name());
        for (key, v) in post.map_or(&fit.activity, |p| &p.activity) {
            let _ = writeln!(s, "  {key} = {}", format_summary(v));
        }
    }
    let _ = writeln!(
        s,
        "\nln L = {:.2}, BIC = {:.2}, AIC = {:.2}, {} points, {} free parameters",
        fit.log_likelihood,
        fit.bic(),
        fit.aic(),
        fit.n_points,
        fit.n_params
    );
    if let Some(p) = post {
        let d = &p.chains.diagnostics;
        let _ = writeln!(
            s,
            "sampler: {} ensembles × {} walkers, {} steps ({} burn-in), acceptance {:.2}, min ESS {:.0}; {}",
            d.ensembles, d.walkers, d.steps, d.burn_in_steps, d.acceptance, d.min_ess, d.reason
        );
        if p.modes.len() > 1 {
            s.push_str("period modes (weight, periods):\n");
            for m in &p.modes {
                let periods: Vec<String> = m
                    .planets
                    .iter()
                    .map(|q| format!("{} {:.6} d", q.label, q.period_d.value))
                    .collect();
                let _ = writeln!(
                    s,
                    "  {:.3}  {}  ({})",
                    m.weight,
                    periods.join(", "),
                    m.relation
                );
            }
        }
    }
    if let Some(audit) = &a.audit {
        s.push_str(&audit_text(audit));
    }
    let extra = post.map(|p| p.warnings.as_slice()).unwrap_or_default();
    for w in a.set.warnings.iter().chain(&fit.warnings).chain(extra) {
        let _ = writeln!(s, "warning: {w}");
    }
    s
}

/// What was done to the data: eras, in-transit points, binning (with the unbinned fit
/// beside the binned one when asked for) and outliers, one line each and one per point.
fn data_changes_text(a: &Analysis) -> String {
    let log = &a.data_log;
    let mut s = String::new();
    for e in &log.eras {
        let eras: Vec<String> = e
            .names
            .iter()
            .zip(&e.n_points)
            .map(|(n, k)| format!("{n} ({k} pts)"))
            .collect();
        let splits: Vec<String> = e.splits_bjd.iter().map(|t| t.to_string()).collect();
        let _ = writeln!(
            s,
            "eras: {} split at BJD_TDB {} into {}",
            e.instrument,
            splits.join(", "),
            eras.join(", ")
        );
    }
    if !log.in_transit.is_empty() {
        let left_out = log.in_transit.iter().filter(|f| f.excluded).count();
        let _ = writeln!(
            s,
            "in transit: {} point(s) inside a transit window, {} left out",
            log.in_transit.len(),
            left_out
        );
    }
    if let Some(b) = &log.binning {
        let _ = writeln!(
            s,
            "binning: {} points → {} within {} d per instrument ({} bins of several points); jitter {}",
            b.n_before,
            b.n_after,
            b.window_d,
            b.bins.len(),
            b.jitter
        );
        if let Some(c) = &b.unbinned_fit {
            let fit = &a.search.fit;
            for (binned, unbinned) in fit.planets.iter().zip(&c.planets) {
                let _ = writeln!(
                    s,
                    "  {}: K = {} m/s binned, {} m/s unbinned ({} points)",
                    binned.label,
                    format_summary(&binned.k_mps),
                    format_summary(&unbinned.k_mps),
                    c.n_points
                );
            }
        }
    }
    let o = &log.outlier_search;
    let action = match o.mode {
        crate::prep::OutlierMode::Clip => "left out".to_string(),
        crate::prep::OutlierMode::StudentT => format!(
            "kept, Student-t likelihood with ν = {}{}",
            o.dof.unwrap_or(f64::NAN),
            if o.dof_profile.is_empty() {
                ""
            } else {
                " (fitted)"
            }
        ),
        crate::prep::OutlierMode::Keep => "kept".to_string(),
    };
    let found = match log.outliers.len() {
        0 => "none flagged".to_string(),
        n => format!("{n} flagged, {action}"),
    };
    let _ = writeln!(
        s,
        "outliers (beyond {} robust σ, {} fit(s)): {found}",
        o.threshold_sigma, o.rounds
    );
    for f in &log.outliers {
        let _ = writeln!(
            s,
            "  {} row {}  BJD_TDB {:.5}  {}  {:+.1} σ{}",
            f.file,
            f.row,
            f.time_d,
            f.instrument,
            f.residual_sigma.unwrap_or(f64::NAN),
            if f.excluded { "  left out" } else { "" }
        );
    }
    s
}

/// `value ± err` of a mass or `—`.
fn mass_cell(m: Option<&Summary>) -> String {
    m.map_or_else(|| "—".into(), format_summary)
}

/// The audit section of the summary: verdict and reasons, then per planet the aliases,
/// the model variants and the jackknife ranges.
pub fn audit_text(audit: &Audit) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "
audit verdict: {}",
        audit.verdict
    );
    for r in &audit.reasons {
        let _ = writeln!(s, "  - {r}");
    }
    for pa in &audit.planets {
        let _ = writeln!(
            s,
            "
  {} (claimed {:.5} d, preferred {:.5} d): {}",
            pa.label, pa.claimed_period_d, pa.preferred_period_d, pa.verdict
        );
        if let Some(l) = &pa.detection.limits {
            let mass = match (l.mass95_mearth, l.mass99_mearth) {
                (Some(m95), Some(m99)) => {
                    format!("; mass < {m95:.2} M⊕ (95 %), < {m99:.2} M⊕ (99 %)")
                }
                _ => String::new(),
            };
            let _ = writeln!(
                s,
                "    upper limits: K < {:.2} m/s (95 %), < {:.2} m/s (99 %){mass}",
                l.k95_mps, l.k99_mps
            );
        }
        if pa.aliases.tested {
            let _ = writeln!(
                s,
                "    {:<34} {:>11} {:>9} {:>9} {:>18} {:>18} {:>9}",
                "alias", "period (d)", "ΔlnL", "ΔBIC", "K (m/s)", "mass (M⊕)", "sim. top"
            );
            for c in &pa.aliases.candidates {
                let _ = writeln!(
                    s,
                    "    {:<34} {:>11.5} {:>9.2} {:>9.2} {:>18} {:>18} {:>9}",
                    c.relation,
                    c.values.period_d,
                    c.delta_lnl,
                    c.delta_bic,
                    format_summary(&c.values.k_mps),
                    mass_cell(c.values.mass_mearth.as_ref()),
                    c.simulation
                        .map_or_else(|| "—".into(), |m| format!("{:.2}", m.top_fraction)),
                );
            }
        }
        let _ = writeln!(
            s,
            "    {:<44} {:>9} {:>18} {:>18} {:>7}",
            "model variant", "ΔBIC", "K (m/s)", "mass (M⊕)", "ΔK/σ"
        );
        for v in &pa.variants {
            let (k, m) = match &v.planet {
                Some(p) => (format_summary(&p.k_mps), mass_cell(p.mass_mearth.as_ref())),
                None => ("(no such signal)".into(), "—".into()),
            };
            let _ = write!(
                s,
                "    {:<44} {:>9.2} {:>18} {:>18} {:>7}",
                v.name,
                v.delta_bic,
                k,
                m,
                v.k_shift_sigma
                    .map_or_else(|| "—".into(), |z| format!("{z:+.2}")),
            );
            if let Some(p) = &v.posterior {
                let _ = write!(
                    s,
                    "   posterior: K {} m/s, mass {} M⊕{}",
                    format_summary(&p.k_mps),
                    mass_cell(p.mass_mearth.as_ref()),
                    if p.converged { "" } else { " (not converged)" }
                );
            }
            s.push('\n');
        }
        if let Some(cv) = &pa.signal_count {
            let scores: Vec<String> = cv
                .scores
                .iter()
                .map(|c| {
                    format!(
                        "{} signals ({}): {:+.1} ± {:.1}",
                        c.signals, c.change, c.delta, c.delta_se
                    )
                })
                .collect();
            let _ = writeln!(
                s,
                "    cross-validation ({} time blocks, Δ log predictive vs fitted): {}",
                cv.folds,
                scores.join("; ")
            );
        }
        if let Some((lo, hi)) = pa.jackknife.k_range_mps {
            let mass = pa
                .jackknife
                .mass_range_mearth
                .map(|(a, b)| format!(", mass {a:.2}–{b:.2} M⊕"))
                .unwrap_or_default();
            let _ = writeln!(
                s,
                "    jackknife (instruments, seasons): K {lo:.2}–{hi:.2} m/s{mass}"
            );
        }
    }
    let t = &audit.timing;
    let _ = writeln!(
        s,
        "  audit time: detection {:.1} s, aliases {:.1} s, variants {:.1} s, activity {:.1} s, jackknife {:.1} s",
        t.detection_s, t.aliases_s, t.variants_s, t.activity_s, t.jackknife_s
    );
    s
}

/// Significance of planet `i`: ΔlnL against the model without it, FAP, K/σ_K with the
/// upper limits to quote, and the eccentricity test.
fn significance_line(a: &Analysis, i: usize) -> Option<String> {
    let t = a.signals.get(i)?;
    let mut parts = vec![format!("ΔlnL vs no planet = {:.1}", t.delta_lnl)];
    if let Some(fap) = t.fap {
        parts.push(format!("FAP {fap:.2e}"));
    }
    if let Some(det) = a.posterior.as_ref().and_then(|p| p.detections.get(i)) {
        parts.push(format!("K/σ_K = {:.1}", det.k_over_sigma));
        if det.quote_upper_limits {
            let k = &a.posterior.as_ref()?.planets[i].k_mps;
            parts.push(format!(
                "not significant: quote K < {:.3} (95 %), < {:.3} m/s (99 %)",
                k.upper95.unwrap_or(f64::NAN),
                k.upper99.unwrap_or(f64::NAN)
            ));
        }
    }
    if let Some(e) = t.eccentricity {
        parts.push(format!(
            "eccentricity {} (Lucy & Sweeney p = {:.3})",
            if e.significant {
                "significant"
            } else {
                "consistent with 0"
            },
            e.p_circular
        ));
    }
    Some(parts.join("; "))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Two significant digits in the error, value rounded to match (common practice).
    #[test]
    fn rounds_to_the_uncertainty() {
        assert_eq!(
            format_summary(&Summary::symmetric(12.3456, 0.0234)),
            "12.346 ± 0.023"
        );
        assert_eq!(
            format_summary(&Summary::symmetric(1234.4, 56.0)),
            "1234 ± 56"
        );
        let asym = Summary {
            value: 5.0,
            minus: 0.5,
            plus: 1.2,
            upper95: None,
            upper99: None,
        };
        assert_eq!(format_summary(&asym), "5.00 +1.20/-0.50");
    }
}
