//! Published mass–radius relations: Chen & Kipping (2017) and the envelope model of
//! Lopez & Fortney (2014), with their ranges of validity.

/// Segments of the Chen & Kipping (2017, ApJ 834, 17) broken power law
/// `R = C M^S` (Earth units): upper mass bound, exponent S, intrinsic scatter in
/// log10 R. Bounds and exponents as quoted from their table in public code (references.md
/// §11); the scatter values are from memory.
const CK_SEGMENTS: [(f64, f64, f64); 4] = [
    (2.04, 0.2790, 0.0403),
    (131.581, 0.589, 0.146),
    (26_635.7, -0.044, 0.0738),
    (f64::INFINITY, 0.881, 0.0440),
];
/// Chen & Kipping's Terran prefactor, R⊕.
const CK_C_TERRAN: f64 = 1.008;

/// Mean radius (R⊕) that Chen & Kipping (2017) predict for a mass (M⊕), and the
/// intrinsic scatter of log10 R at that mass. Prefactors of later segments follow from
/// continuity.
pub fn chen_kipping_radius(mass_mearth: f64) -> (f64, f64) {
    let mut c = CK_C_TERRAN;
    let mut lower = 0.0_f64;
    let mut prev_s = CK_SEGMENTS[0].1;
    for (i, &(upper, s, sigma)) in CK_SEGMENTS.iter().enumerate() {
        if i > 0 {
            c *= lower.powf(prev_s - s);
        }
        if mass_mearth < upper {
            return (c * mass_mearth.powf(s), sigma);
        }
        lower = upper;
        prev_s = s;
    }
    unreachable!("the last segment is unbounded")
}

/// Validity ranges of the Lopez & Fortney (2014) envelope fits.
pub mod lopez_fortney_range {
    /// Planet mass, M⊕.
    pub const MASS_MEARTH: (f64, f64) = (1.0, 20.0);
    /// Envelope mass fraction.
    pub const ENVELOPE_FRACTION: (f64, f64) = (0.01, 0.20);
    /// Incident flux, S⊕.
    pub const FLUX_EARTH: (f64, f64) = (0.1, 1000.0);
    /// Age, Gyr.
    pub const AGE_GYR: (f64, f64) = (0.1, 10.0);
}

/// Radius (R⊕) of a planet of total mass `mass_mearth` with H/He envelope mass fraction
/// `f_env`, incident flux `flux_earth` (S⊕) and age (Gyr), by Lopez & Fortney (2014, ApJ
/// 792, 1) for solar metallicity: `R = R_core + R_env`, `R_core = (M_core/M⊕)^0.25`,
/// `M_core = M (1 − f_env)`, `R_env = 2.06 M^−0.21 (f_env/5%)^0.59 (F/F⊕)^0.044
/// (age/5 Gyr)^−0.11`.
pub fn lopez_fortney_radius(mass_mearth: f64, f_env: f64, flux_earth: f64, age_gyr: f64) -> f64 {
    let core = (mass_mearth * (1.0 - f_env)).powf(0.25);
    let env = 2.06
        * mass_mearth.powf(-0.21)
        * (f_env / 0.05).powf(0.59)
        * flux_earth.powf(0.044)
        * (age_gyr / 5.0).powf(-0.11);
    core + env
}

/// Largest envelope fraction [`envelope_fraction`] searches.
pub const MAX_ENVELOPE_FRACTION: f64 = 0.9;

/// Envelope mass fraction that makes [`lopez_fortney_radius`] equal `radius_rearth`, by
/// bisection on (0, [`MAX_ENVELOPE_FRACTION`]]. `Some(0.0)` when even a bare core is at
/// least as large; `None` when no fraction up to the maximum reaches the radius.
pub fn envelope_fraction(
    mass_mearth: f64,
    radius_rearth: f64,
    flux_earth: f64,
    age_gyr: f64,
) -> Option<f64> {
    let r = |f: f64| lopez_fortney_radius(mass_mearth, f, flux_earth, age_gyr);
    if mass_mearth.powf(0.25) >= radius_rearth {
        return Some(0.0);
    }
    if r(MAX_ENVELOPE_FRACTION) < radius_rearth {
        return None;
    }
    let (mut lo, mut hi) = (0.0, MAX_ENVELOPE_FRACTION);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if r(mid) < radius_rearth {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Mean-relation check values of references.md §11 ([C] from the quoted coefficients).
    #[test]
    fn chen_kipping_checks() {
        for (m, r) in [
            (1.0, 1.0080),
            (2.04, 1.2298),
            (5.0, 2.0853),
            (17.147, 4.3094),
            (95.16, 11.8246),
            (317.83, 13.7666),
            (1000.0, 13.0895),
        ] {
            let (got, _) = chen_kipping_radius(m);
            assert!((got - r).abs() < 2e-4, "R({m}) = {got}, expected {r}");
        }
    }

    /// Lopez & Fortney checks of references.md §11 ([C] from the fit as published).
    #[test]
    fn lopez_fortney_checks() {
        let mp = 5.0 / 0.95;
        assert!((lopez_fortney_radius(mp, 0.05, 100.0, 5.0) - 3.2753).abs() < 1e-3);
        let mp1 = 5.0 / 0.99;
        assert!((lopez_fortney_radius(mp1, 0.01, 10.0, 1.0) - 2.2447).abs() < 1e-3);
        let f = envelope_fraction(mp, 3.2753, 100.0, 5.0).unwrap();
        assert!((f - 0.05).abs() < 1e-4, "f {f}");
        assert_eq!(envelope_fraction(5.0, 1.0, 100.0, 5.0), Some(0.0));
        assert_eq!(envelope_fraction(2.0, 40.0, 1.0, 5.0), None);
    }
}
