//! What the mass and radius say about a planet: bulk properties, irradiation and escape,
//! position against published mass–radius relations, class probabilities, and the
//! alternatives to a low-density planet (an opaque ring, diluting light). Everything is
//! computed per Monte Carlo draw, so correlations between the inputs are kept.

use std::collections::BTreeMap;
use std::f64::consts::TAU;

use rand::Rng;
use serde::Serialize;

use super::atmosphere::{
    EscapeRegime, energy_limited_rate_kg_s, equilibrium_temperature_k, erkaev_k, insolation_earth,
    jeans_lambda, kg_per_mearth, luminosity_lsun, roche_xi, xuv_flux_ribas_wm2,
};
use super::composition::{CompositionClass, classify, zeng_rocky_radius_rearth};
use super::constants::{DAY, JULIAN_YEAR};
use super::draws::{
    OrbitDraws, RadiusDraws, StarDraws, Support, TransitDraws, truncated_normal_draws,
};
use super::relations::{chen_kipping_radius, envelope_fraction, lopez_fortney_range};
use super::{DeriveError, PlanetDerived};
use crate::summary::{Summary, percentile_sorted};
use crate::target::{Star, Transit};

/// Bulk density of rock a ring could be made of, g/cm³ (common practice: silicates ~3).
pub const RING_DENSITY_ROCK_GCC: f64 = 3.0;
/// Bulk density of water ice, g/cm³ (common practice).
pub const RING_DENSITY_ICE_GCC: f64 = 0.93;
/// Tilts (angle between the ring normal and the line of sight, degrees) at which the
/// ring scenario is evaluated.
pub const RING_TILTS_DEG: [f64; 6] = [0.0, 30.0, 50.0, 70.0, 80.0, 85.0];
/// Density thresholds (g/cm³) whose exceedance probabilities are reported: Saturn-like
/// 0.3 (used as a super-puff cut) and 0.1 (a stricter cut; references.md §12).
pub const DENSITY_CUTS_GCC: [f64; 2] = [0.1, 0.3];

/// Model choices for the density profile.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct ProfileSettings {
    /// Bond albedo for T_eq.
    pub albedo: f64,
    /// Heating efficiency of energy-limited escape.
    pub escape_efficiency: f64,
    /// XUV flux at the planet, W/m², overriding the age-based estimate.
    pub xuv_flux_wm2: Option<f64>,
}

/// Energy-limited escape estimate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct MassLoss {
    /// XUV flux at the planet, W/m².
    pub xuv_flux_wm2: Summary,
    /// Where the XUV flux came from.
    pub xuv_source: String,
    /// Heating efficiency used.
    pub efficiency: f64,
    /// Mass-loss rate, kg/s.
    pub rate_kg_s: Summary,
    /// Mass-loss rate, Earth masses per Gyr.
    pub rate_mearth_per_gyr: Summary,
    /// Time to lose the H/He envelope at the present rate, Gyr.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub envelope_loss_gyr: Option<Summary>,
}

/// One ring scenario: how large an opaque ring would have to be.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RingScenario {
    /// Angle between ring normal and line of sight, degrees.
    pub tilt_deg: f64,
    /// Outer ring radius needed, in planet radii (ring from the planet's surface out).
    pub outer_radius_rp: f64,
    /// Whether that fits inside the Roche limit for rocky ring material.
    pub inside_roche_rock: bool,
    /// Whether it fits inside the Roche limit for icy ring material.
    pub inside_roche_ice: bool,
}

/// Alternatives to an intrinsically low-density planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Alternatives {
    /// Radius a planet of this mass typically has (Chen & Kipping 2017 mean), R⊕: the
    /// size assumed for the planet behind a ring.
    pub typical_radius_rearth: f64,
    /// Density that radius implies, g/cm³.
    pub typical_density_gcc: f64,
    /// Ring sizes needed at several tilts (empty when the radius is not larger than
    /// typical).
    pub rings: Vec<RingScenario>,
    /// Roche limit for rocky / icy ring particles around the typical planet, planet radii.
    pub roche_limit_rp: (f64, f64),
    /// Factor (total light / host light) by which unresolved light would have to dilute
    /// the transit for the true radius to be typical.
    pub dilution_factor_needed: f64,
    /// What that factor means.
    pub dilution_verdict: String,
}

/// Where the planet sits against published composition relations.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Composition {
    /// Pure-silicate radius at the median mass (Zeng et al. 2016, CMF 0), R⊕.
    pub rocky_radius_rearth: f64,
    /// Earth-like radius at the median mass (Zeng et al. 2016, CMF 0.325), R⊕.
    pub earthlike_radius_rearth: f64,
    /// Radius predicted from the mass by Chen & Kipping (2017), intrinsic scatter included.
    pub predicted_radius_rearth: Summary,
    /// How many σ (measurement and intrinsic scatter, in log10 R) the measured radius lies
    /// above the prediction.
    pub radius_excess_sigma: f64,
    /// Fraction of draws whose radius exceeds what any envelope up to 90 % reaches.
    pub p_envelope_beyond_model: f64,
}

/// The density report of one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DensityProfile {
    /// Bulk density relative to Earth's (M/R³ in Earth units).
    pub density_earth: Summary,
    /// Surface gravity from the observables alone (Southworth, Wheatley & Sams 2007), m/s².
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gravity_direct_mps2: Option<Summary>,
    /// Orbit-averaged equilibrium temperature, K.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub teq_k: Option<Summary>,
    /// Orbit-averaged incident flux, Earth units.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub insolation_earth: Option<Summary>,
    /// Restricted Jeans escape parameter.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub jeans_lambda: Option<Summary>,
    /// Regime of the median Jeans parameter.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub escape_regime: Option<EscapeRegime>,
    /// Energy-limited escape.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_loss: Option<MassLoss>,
    /// H/He envelope mass fraction explaining the radius (Lopez & Fortney 2014), over the
    /// draws where one exists.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub envelope_fraction: Option<Summary>,
    /// Composition relations.
    pub composition: Composition,
    /// Probability of each class over the draws.
    pub class_probabilities: BTreeMap<&'static str, f64>,
    /// P(density < cut) for each cut of [`DENSITY_CUTS_GCC`], keyed by the cut.
    pub p_density_below: BTreeMap<String, f64>,
    /// Rings and dilution.
    pub alternatives: Alternatives,
    /// Assumptions and cautions, in words.
    pub cautions: Vec<String>,
}

/// Everything [`density_profile`] needs.
pub struct ProfileInputs<'a> {
    /// The planet's derived draws (mass and radius needed).
    pub planet: &'a PlanetDerived,
    /// The orbit draws the planet was derived from.
    pub orbit: &'a OrbitDraws,
    /// Star draws used for the planet.
    pub star_draws: &'a StarDraws,
    /// Transit draws used for the planet.
    pub transit_draws: &'a TransitDraws,
    /// The star as given (T_eff, age).
    pub star: &'a Star,
    /// The transit as given (a/R*).
    pub transit: &'a Transit,
    /// Model choices.
    pub settings: ProfileSettings,
}

fn summary(v: &[f64]) -> Summary {
    Summary::from_draws(v).unwrap_or(Summary::exact(f64::NAN))
}

fn median(v: &[f64]) -> f64 {
    summary(v).value
}

fn fraction(v: &[f64], pred: impl Fn(f64) -> bool) -> f64 {
    v.iter().filter(|&&x| pred(x)).count() as f64 / v.len().max(1) as f64
}

/// Outer ring radius (planet radii) an opaque ring from the planet's surface needs to
/// make a planet of radius `rp` look as large as `r_app` at `tilt_deg`:
/// `R_app² = R_p² + (R_out² − R_p²) |cos θ|` (projected ring area adds; Zuluaga et al.
/// 2015 frame the geometry). Infinite for an edge-on ring.
pub fn ring_outer_radius_rp(r_app: f64, rp: f64, tilt_deg: f64) -> f64 {
    let c = tilt_deg.to_radians().cos().abs();
    if c < 1e-12 {
        return f64::INFINITY;
    }
    (1.0 + (r_app * r_app - rp * rp) / (rp * rp * c)).sqrt()
}

/// Fluid Roche limit, planet radii, for ring particles of density `ring_gcc` around a
/// planet of density `planet_gcc`: `2.44 (ρ_p/ρ_ring)^(1/3)` (common practice).
pub fn roche_limit_rp(planet_gcc: f64, ring_gcc: f64) -> f64 {
    2.44 * (planet_gcc / ring_gcc).cbrt()
}

/// Surface gravity from transit and RV observables (Southworth, Wheatley & Sams 2007,
/// MNRAS 379, L11): `g = 2π sqrt(1 − e²) K / (P (R_p/a)² sin i)`, m/s², with P in days
/// and K in m/s.
pub fn southworth_gravity_mps2(
    period_d: f64,
    k_mps: f64,
    ecc: f64,
    rp_over_a: f64,
    sin_i: f64,
) -> f64 {
    TAU * (1.0 - ecc * ecc).sqrt() * k_mps / (period_d * DAY * rp_over_a * rp_over_a * sin_i)
}

/// The density profile of a planet with a mass and a radius.
///
/// # Errors
/// [`DeriveError`] when the planet has no radius or mass draws, or the transit's a/R*
/// cannot be drawn.
pub fn density_profile(
    inputs: &ProfileInputs,
    rng: &mut impl Rng,
) -> Result<DensityProfile, DeriveError> {
    let d = &inputs.planet.draws;
    let mass = d.mass_mearth.as_ref().unwrap_or(&d.msini_mearth);
    let (Some(radius), Some(rho)) = (&d.radius_rearth, &d.density_gcc) else {
        return Err(DeriveError::NoDraws);
    };
    let n = mass.len();
    let ecc = &inputs.orbit.ecc;
    let mut cautions = Vec::new();

    let density_earth: Vec<f64> = (0..n).map(|j| mass[j] / radius[j].powi(3)).collect();

    // Gravity from the observables: needs Rp/R* draws and a/R*.
    let gravity_direct = match (&inputs.transit_draws.radius, inputs.transit.a_rs) {
        (Some(RadiusDraws::RatioToStar(q)), Some((a_rs, a_err))) => {
            let a = truncated_normal_draws("a_rs", a_rs, a_err, Support::POSITIVE, n, rng)?;
            let sin_i: Vec<f64> = match &d.incl_deg {
                Some(i) => i.iter().map(|x| x.to_radians().sin()).collect(),
                None => vec![1.0; n],
            };
            let g: Vec<f64> = (0..n)
                .map(|j| {
                    southworth_gravity_mps2(
                        inputs.orbit.period_d[j],
                        inputs.orbit.k_mps[j],
                        ecc[j],
                        q[j] / a[j],
                        sin_i[j],
                    )
                })
                .collect();
            Some(summary(&g))
        }
        _ => None,
    };

    // Irradiation needs T_eff and R*.
    let thermal = match (inputs.star.teff_k, &inputs.star_draws.radius_rsun) {
        (Some(teff), Some(rstar)) => {
            let t = truncated_normal_draws(
                "teff_k",
                teff,
                inputs.star.teff_err_k,
                Support::POSITIVE,
                n,
                rng,
            )?;
            let teq: Vec<f64> = (0..n)
                .map(|j| {
                    equilibrium_temperature_k(
                        t[j],
                        rstar[j],
                        d.a_au[j],
                        inputs.settings.albedo,
                        ecc[j],
                    )
                })
                .collect();
            let flux: Vec<f64> = (0..n)
                .map(|j| insolation_earth(t[j], rstar[j], d.a_au[j], ecc[j]))
                .collect();
            let lum: Vec<f64> = (0..n).map(|j| luminosity_lsun(rstar[j], t[j])).collect();
            Some((teq, flux, lum))
        }
        _ => {
            cautions.push(
                "no T_eff or stellar radius: no equilibrium temperature, flux or escape estimate"
                    .into(),
            );
            None
        }
    };

    let age = inputs.star.age_gyr;
    let age_for_envelope = age.unwrap_or(5.0);
    if age.is_none() {
        cautions.push("no stellar age: envelope fractions assume 5 Gyr".into());
    }
    let flux_draws = thermal.as_ref().map(|t| t.1.clone());
    let env: Vec<Option<f64>> = (0..n)
        .map(|j| {
            let f = flux_draws.as_ref().map_or(1.0, |fl| fl[j]);
            envelope_fraction(mass[j], radius[j], f, age_for_envelope)
        })
        .collect();
    let env_found: Vec<f64> = env.iter().flatten().copied().collect();
    let envelope = (!env_found.is_empty()).then(|| summary(&env_found));
    let p_beyond = fraction(
        &env.iter()
            .map(|e| if e.is_none() { 1.0 } else { 0.0 })
            .collect::<Vec<_>>(),
        |x| x > 0.5,
    );

    let m_med = median(mass);
    let r_med = median(radius);
    let (lf_mass, lf_frac, lf_flux, lf_age) = (
        lopez_fortney_range::MASS_MEARTH,
        lopez_fortney_range::ENVELOPE_FRACTION,
        lopez_fortney_range::FLUX_EARTH,
        lopez_fortney_range::AGE_GYR,
    );
    let outside = |v: f64, (lo, hi): (f64, f64)| v < lo || v > hi;
    if outside(m_med, lf_mass) {
        cautions.push(format!(
            "mass {m_med:.1} M⊕ is outside the 1–20 M⊕ range of the Lopez & Fortney (2014) envelope fits: envelope fraction extrapolated"
        ));
    }
    if let Some(e) = &envelope
        && outside(e.value, lf_frac)
    {
        cautions.push(format!(
            "envelope fraction {:.3} is outside the 1–20 % range of the Lopez & Fortney (2014) fits: extrapolated",
            e.value
        ));
    }
    if let Some(fl) = &flux_draws
        && outside(median(fl), lf_flux)
    {
        cautions.push(
            "incident flux outside the 0.1–1000 S⊕ of the Lopez & Fortney (2014) fits".into(),
        );
    }
    if outside(age_for_envelope, lf_age) {
        cautions.push("age outside the 0.1–10 Gyr of the Lopez & Fortney (2014) fits".into());
    }
    if outside(m_med, (1.0, 8.0)) {
        cautions.push(format!(
            "mass {m_med:.1} M⊕ is outside the 1–8 M⊕ of the Zeng et al. (2016) rocky relation: extrapolated"
        ));
    }

    // Chen & Kipping prediction with intrinsic scatter, and the excess in σ.
    let mut predicted = Vec::with_capacity(n);
    let mut log_obs = Vec::with_capacity(n);
    for j in 0..n {
        let (r, sigma) = chen_kipping_radius(mass[j]);
        let z: f64 = rng.sample(rand_distr::StandardNormal);
        predicted.push(r * 10f64.powf(sigma * z));
        log_obs.push(radius[j].log10());
    }
    let log_pred: Vec<f64> = predicted.iter().map(|r| r.log10()).collect();
    let spread = |v: &[f64]| {
        let s = summary(v);
        0.5 * (s.minus + s.plus)
    };
    let excess = (median(&log_obs) - median(&log_pred)) / spread(&log_obs).hypot(spread(&log_pred));

    let jeans = thermal.as_ref().map(|(teq, _, _)| {
        let l: Vec<f64> = (0..n)
            .map(|j| jeans_lambda(mass[j], radius[j], teq[j]))
            .collect();
        l
    });
    let regime = jeans.as_ref().map(|l| EscapeRegime::of(median(l)));
    if regime == Some(EscapeRegime::BoilOff) {
        cautions.push(
            "Jeans parameter below 15 (boil-off regime, Fossati et al. 2017): the energy-limited escape rate does not hold there and underestimates the loss".into(),
        );
    }

    let mass_loss = thermal.as_ref().and_then(|(_, _, lum)| {
        let (xuv, source): (Vec<f64>, String) = match (inputs.settings.xuv_flux_wm2, age) {
            (Some(f), _) => (vec![f; n], "given in the settings".into()),
            (None, Some(age)) => (
                (0..n).map(|j| xuv_flux_ribas_wm2(age, lum[j], d.a_au[j])).collect(),
                format!("Ribas et al. (2005) solar-analogue relation at age {age} Gyr, scaled by luminosity and distance"),
            ),
            (None, None) => return None,
        };
        let eff = inputs.settings.escape_efficiency;
        let mstar = &inputs.star_draws.mass_msun;
        let rate: Vec<f64> = (0..n)
            .map(|j| {
                let k = erkaev_k(roche_xi(mass[j], mstar[j], d.a_au[j], radius[j]));
                energy_limited_rate_kg_s(eff, xuv[j], mass[j], radius[j], k)
            })
            .collect();
        let per_gyr: Vec<f64> = rate.iter().map(|r| r * 1e9 * JULIAN_YEAR / kg_per_mearth()).collect();
        let loss: Vec<f64> = (0..n)
            .filter_map(|j| env[j].map(|f| f * mass[j] / per_gyr[j]))
            .collect();
        Some(MassLoss {
            xuv_flux_wm2: summary(&xuv),
            xuv_source: source,
            efficiency: eff,
            rate_kg_s: summary(&rate),
            rate_mearth_per_gyr: summary(&per_gyr),
            envelope_loss_gyr: (!loss.is_empty()).then(|| summary(&loss)),
        })
    });
    if thermal.is_some() && mass_loss.is_none() {
        cautions.push("no stellar age and no XUV flux given: no mass-loss estimate".into());
    }
    if mass_loss.is_some() {
        cautions.push(format!(
            "energy-limited escape assumes heating efficiency {} and absorption at the transit radius; against hydrodynamic models it is right within a factor 10 for most planets but can be off by 2–3 dex (Krenn et al. 2021)",
            inputs.settings.escape_efficiency
        ));
    }

    // Classes and density cuts over the draws.
    let mut counts: BTreeMap<&'static str, f64> = [
        CompositionClass::Rocky,
        CompositionClass::WaterRich,
        CompositionClass::SubNeptune,
        CompositionClass::SuperPuff,
        CompositionClass::Giant,
    ]
    .iter()
    .map(|c| (c.name(), 0.0))
    .collect();
    for j in 0..n {
        if let Some(c) = classify(mass[j], radius[j]) {
            *counts.entry(c.name()).or_default() += 1.0;
        }
    }
    for p in counts.values_mut() {
        *p /= n as f64;
    }
    let p_density_below = DENSITY_CUTS_GCC
        .iter()
        .map(|&cut| (format!("{cut}"), fraction(rho, |x| x < cut)))
        .collect();

    // Alternatives: a typical planet of this mass behind a ring, or diluted light.
    let (typical, _) = chen_kipping_radius(m_med);
    let typical_rho = super::density::bulk_density_gcc(m_med, typical);
    let roche = (
        roche_limit_rp(typical_rho, RING_DENSITY_ROCK_GCC),
        roche_limit_rp(typical_rho, RING_DENSITY_ICE_GCC),
    );
    let rings = if r_med > typical {
        RING_TILTS_DEG
            .iter()
            .map(|&tilt| {
                let outer = ring_outer_radius_rp(r_med, typical, tilt);
                RingScenario {
                    tilt_deg: tilt,
                    outer_radius_rp: outer,
                    inside_roche_rock: outer <= roche.0,
                    inside_roche_ice: outer <= roche.1,
                }
            })
            .collect()
    } else {
        Vec::new()
    };
    let dilution = (typical / r_med).powi(2);
    let dilution_verdict = if dilution < 1.0 {
        "cannot explain the radius: diluting light makes a transit shallower, so the true radius would be even larger".to_string()
    } else {
        format!(
            "the transit would have to be diluted by a factor {dilution:.2} (total/host light) for the radius to be typical"
        )
    };
    cautions.push(
        "the radius assumes the transit depth equals (Rp/R*)²; limb darkening and grazing geometry change that".into(),
    );

    let mut sorted_mass = mass.clone();
    sorted_mass.sort_by(f64::total_cmp);
    let m_for_curves = percentile_sorted(&sorted_mass, 50.0);
    Ok(DensityProfile {
        density_earth: summary(&density_earth),
        gravity_direct_mps2: gravity_direct,
        teq_k: thermal.as_ref().map(|t| summary(&t.0)),
        insolation_earth: thermal.as_ref().map(|t| summary(&t.1)),
        jeans_lambda: jeans.as_ref().map(|l| summary(l)),
        escape_regime: regime,
        mass_loss,
        envelope_fraction: envelope,
        composition: Composition {
            rocky_radius_rearth: zeng_rocky_radius_rearth(m_for_curves, 0.0),
            earthlike_radius_rearth: zeng_rocky_radius_rearth(m_for_curves, 0.325),
            predicted_radius_rearth: summary(&predicted),
            radius_excess_sigma: excess,
            p_envelope_beyond_model: p_beyond,
        },
        class_probabilities: counts,
        p_density_below,
        alternatives: Alternatives {
            typical_radius_rearth: typical,
            typical_density_gcc: typical_rho,
            rings,
            roche_limit_rp: roche,
            dilution_factor_needed: dilution,
            dilution_verdict,
        },
        cautions,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::derive::constants::{AU, GM_JUP, R_JUP};

    /// Southworth's gravity equals GM/R² for consistent inputs: Sun–Jupiter of
    /// references.md §7 ([C]): K = 12.474003 m/s, P = 4332.589 d, e = 0.0489,
    /// a = 5.202804 au, R = 71 492 km, i = 90° → 24.7865 m/s².
    #[test]
    fn southworth_gravity_is_gm_over_r2() {
        let g = southworth_gravity_mps2(4332.589, 12.474003, 0.0489, R_JUP / (5.202804 * AU), 1.0);
        assert!((g - GM_JUP / (R_JUP * R_JUP)).abs() < 2e-3, "g {g}");
        assert!((g - 24.7865).abs() < 2e-3);
    }

    /// Ring geometry of references.md §12 ([C]): a 3.7 R⊕ planet with an opaque ring from
    /// 1.05 to 2.59 R_p tilted 25° looks about 9.12 R⊕; inverting from the planet surface
    /// (inner edge 1 R_p) needs a slightly larger ring.
    #[test]
    fn ring_size_inverts_the_projected_area() {
        let (rp, r_in, r_out, tilt) = (3.7_f64, 1.05_f64, 2.59_f64, 25.0_f64);
        let c = tilt.to_radians().cos();
        let r_app = (rp * rp + (r_out * r_out - r_in * r_in) * rp * rp * c).sqrt();
        assert!((r_app - 9.12).abs() < 0.01, "{r_app}");
        let need = ring_outer_radius_rp(r_app, rp, tilt);
        let back = (rp * rp + (need * need - 1.0) * rp * rp * c).sqrt();
        assert!((back - r_app).abs() < 1e-12);
        assert!(need > r_out - 0.1 && need < r_out + 0.2);
        assert!(ring_outer_radius_rp(r_app, rp, 90.0).is_infinite());
    }

    /// Equal densities put the fluid Roche limit at 2.44 planet radii (common practice).
    #[test]
    fn roche_limit_scaling() {
        assert!((roche_limit_rp(3.0, 3.0) - 2.44).abs() < 1e-12);
        assert!(roche_limit_rp(0.3, 3.0) < 2.44);
    }
}
