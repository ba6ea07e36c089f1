//! The human-readable summary printed after a fit or run.

use std::fmt::Write;

use super::table::{round_to_uncertainty, significant};
use crate::derive::PlanetDerived;
use crate::derive::profile::DensityProfile;
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
    let _ = writeln!(s, "\nsignal search (GLS of residuals, Baluev FAP):");
    for step in &a.search.steps {
        if let Some(p) = step.peak {
            let _ = writeln!(
                s,
                "  peak at {:>10.4} d  power {:.3}  FAP {:.2e}  {}",
                p.period,
                p.power,
                p.fap,
                if step.accepted {
                    "→ fitted"
                } else {
                    "→ stop"
                }
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
            "  {:<16} {:>4} pts  offset {} m/s  jitter {} m/s  rms {:.2} m/s",
            inst.name,
            inst.n_points,
            format_summary(&inst.offset_mps),
            format_summary(&inst.jitter_mps),
            inst.rms_mps
        );
    }
    let units = ["m/s/yr", "m/s/yr²"];
    for (t, unit) in post.map_or(&fit.trend, |p| &p.trend).iter().zip(units) {
        let _ = writeln!(s, "trend: {} {unit}", format_summary(t));
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
    }
    let extra = post.map(|p| p.warnings.as_slice()).unwrap_or_default();
    for w in a.set.warnings.iter().chain(&fit.warnings).chain(extra) {
        let _ = writeln!(s, "warning: {w}");
    }
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
