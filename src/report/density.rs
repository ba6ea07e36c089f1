//! The density report (Markdown): for each planet with a mass and a radius, what they say
//! about its nature, with the assumptions and alternatives spelled out.

use std::fmt::Write;

use super::text::format_summary;
use crate::derive::PlanetDerived;
use crate::derive::profile::DensityProfile;
use crate::pipeline::Analysis;
use crate::summary::Summary;

fn row(s: &mut String, name: &str, value: &str) {
    let _ = writeln!(s, "| {name} | {value} |");
}

fn opt(s: &mut String, name: &str, v: &Option<Summary>, unit: &str) {
    if let Some(v) = v {
        row(s, name, &format!("{} {unit}", format_summary(v)));
    }
}

/// One planet's section.
fn planet_section(s: &mut String, label: &str, d: &PlanetDerived, p: &DensityProfile) {
    let _ = writeln!(s, "## Planet {label}\n");
    let _ = writeln!(s, "| quantity | value |\n|---|---|");
    opt(s, "mass", &d.mass_mearth, "M⊕");
    row(
        s,
        "m sin i",
        &format!("{} M⊕", format_summary(&d.msini_mearth)),
    );
    opt(s, "radius", &d.radius_rearth, "R⊕");
    opt(s, "density", &d.density_gcc, "g/cm³");
    row(s, "density / Earth's", &format_summary(&p.density_earth));
    opt(s, "surface gravity (GM/R²)", &d.gravity_mps2, "m/s²");
    opt(
        s,
        "surface gravity (observables only)",
        &p.gravity_direct_mps2,
        "m/s²",
    );
    opt(s, "escape velocity", &d.vesc_kms, "km/s");
    row(
        s,
        "semi-major axis",
        &format!("{} au", format_summary(&d.a_au)),
    );
    opt(s, "equilibrium temperature", &p.teq_k, "K");
    opt(s, "incident flux", &p.insolation_earth, "S⊕");
    opt(s, "Jeans parameter Λ", &p.jeans_lambda, "");
    if let Some(r) = p.escape_regime {
        row(s, "escape regime", &format!("{r:?}").to_lowercase());
    }
    opt(s, "H/He envelope fraction", &p.envelope_fraction, "");
    if let Some(m) = &p.mass_loss {
        row(
            s,
            "XUV flux",
            &format!(
                "{} W/m² ({})",
                format_summary(&m.xuv_flux_wm2),
                m.xuv_source
            ),
        );
        row(
            s,
            "energy-limited mass loss",
            &format!("{} M⊕/Gyr", format_summary(&m.rate_mearth_per_gyr)),
        );
        opt(
            s,
            "envelope lifetime at that rate",
            &m.envelope_loss_gyr,
            "Gyr",
        );
    }
    let _ = writeln!(
        s,
        "\n**Composition.** Rock-only radius at this mass {:.2} R⊕, Earth-like {:.2} R⊕ (Zeng et al. 2016); a typical planet of this mass has {} R⊕ (Chen & Kipping 2017), and the measured radius lies {:.1} σ above that.",
        p.composition.rocky_radius_rearth,
        p.composition.earthlike_radius_rearth,
        format_summary(&p.composition.predicted_radius_rearth),
        p.composition.radius_excess_sigma
    );
    let classes: Vec<String> = p
        .class_probabilities
        .iter()
        .filter(|(_, v)| **v > 0.0)
        .map(|(k, v)| format!("{k} {:.0} %", 100.0 * v))
        .collect();
    let cuts: Vec<String> = p
        .p_density_below
        .iter()
        .map(|(cut, v)| format!("P(ρ < {cut} g/cm³) = {:.2}", v))
        .collect();
    let _ = writeln!(
        s,
        "\n**Class.** {} ({}); {}.",
        d.class.map_or("unclassified", |c| c.name()),
        classes.join(", "),
        cuts.join(", ")
    );
    let alt = &p.alternatives;
    let _ = writeln!(
        s,
        "\n**If not intrinsically puffy.** A typical planet of this mass ({:.2} R⊕, {:.2} g/cm³) would need:",
        alt.typical_radius_rearth, alt.typical_density_gcc
    );
    if alt.rings.is_empty() {
        let _ = writeln!(
            s,
            "- no ring: the measured radius is not larger than typical."
        );
    } else {
        let _ = writeln!(
            s,
            "- an opaque ring (Roche limit {:.2} R_p for rock, {:.2} R_p for ice):",
            alt.roche_limit_rp.0, alt.roche_limit_rp.1
        );
        for r in &alt.rings {
            let fits = match (r.inside_roche_rock, r.inside_roche_ice) {
                (true, _) => "inside the Roche limit for rock",
                (false, true) => "inside the Roche limit for ice only",
                _ => "beyond the Roche limit (would form moons)",
            };
            let _ = writeln!(
                s,
                "  - tilt {:>2}°: out to {:.2} R_p, {fits}",
                r.tilt_deg, r.outer_radius_rp
            );
        }
    }
    let _ = writeln!(s, "- diluting light: {}.", alt.dilution_verdict);
    let mut notes: Vec<&String> = d.notes.iter().collect();
    notes.extend(&p.cautions);
    if !notes.is_empty() {
        let _ = writeln!(s, "\n**Assumptions and cautions.**");
        for n in notes {
            let _ = writeln!(s, "- {n}");
        }
    }
    let _ = writeln!(s);
}

/// The Markdown density report, or `None` when no planet has both a mass and a radius.
pub fn density_markdown(a: &Analysis) -> Option<String> {
    let mut s = format!("# Density report: {}\n\n", a.name);
    let mut any = false;
    for ((planet, d), p) in a.search.fit.planets.iter().zip(&a.derived).zip(&a.profiles) {
        if let (Some(d), Some(p)) = (d, p) {
            planet_section(&mut s, &planet.label, d, p);
            any = true;
        }
    }
    if let Some(t) = &a.system.trend_companion
        && t.significant
    {
        let _ = writeln!(
            s,
            "## System\n\nThe trend of {} m/s/yr needs an outer companion of at least {:.3} M_J if its period exceeds the {:.0}-day span.",
            format_summary(&t.trend_mps_per_yr),
            t.min_mass_mjup,
            t.min_period_d
        );
    }
    for sp in &a.system.spacings {
        let _ = writeln!(
            s,
            "\nPlanets {} and {}: {} mutual Hill radii apart; orbits cross in {:.1} % of draws.",
            sp.pair.0,
            sp.pair.1,
            format_summary(&sp.hill_spacing),
            100.0 * sp.p_orbits_cross
        );
    }
    any.then_some(s)
}
