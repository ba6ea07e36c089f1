//! Physical constants, SI units, all in one place.
//!
//! Solar and planetary values are the nominal values of IAU 2015 Resolution B3
//! (Prša et al. 2016, AJ 152, 41); the astronomical unit is fixed by IAU 2012
//! Resolution B2; G, k_B and the particle masses are CODATA 2018 (Tiesinga et al. 2021,
//! Rev. Mod. Phys. 93, 025010). Masses are carried as GM products, which are known far
//! better than G itself (relative uncertainty of G: 2.2e-5).

/// Nominal solar mass parameter (GM)☉, m³ s⁻² (IAU 2015 B3).
pub const GM_SUN: f64 = 1.327_124_4e20;

/// Nominal terrestrial mass parameter (GM)⊕, m³ s⁻² (IAU 2015 B3).
pub const GM_EARTH: f64 = 3.986_004e14;

/// Nominal Jovian mass parameter (GM)J, m³ s⁻² (IAU 2015 B3).
pub const GM_JUP: f64 = 1.266_865_3e17;

/// Nominal solar radius, m (IAU 2015 B3).
pub const R_SUN: f64 = 6.957e8;

/// Nominal equatorial Earth radius, m (IAU 2015 B3); the unit of `radius_rearth`.
pub const R_EARTH: f64 = 6.378_1e6;

/// Nominal equatorial Jupiter radius, m (IAU 2015 B3).
pub const R_JUP: f64 = 7.149_2e7;

/// Nominal solar effective temperature, K (IAU 2015 B3).
pub const TEFF_SUN: f64 = 5772.0;

/// Nominal solar luminosity, W (IAU 2015 B3).
pub const L_SUN: f64 = 3.828e26;

/// Astronomical unit, m (IAU 2012 B2, exact).
pub const AU: f64 = 149_597_870_700.0;

/// Newtonian constant of gravitation, m³ kg⁻¹ s⁻² (CODATA 2018; ±2.2e-5 relative).
pub const G: f64 = 6.674_30e-11;

/// Boltzmann constant, J K⁻¹ (CODATA 2018, exact in the 2019 SI).
pub const K_B: f64 = 1.380_649e-23;

/// Mass of the hydrogen atom, kg: CODATA 2018 proton plus electron mass
/// (1.672 621 923 69e-27 + 9.109 383 7015e-31); the 13.6 eV binding energy (1.5e-8 of the
/// mass) is neglected.
pub const M_H: f64 = 1.673_532_862_06e-27;

/// Day, s.
pub const DAY: f64 = 86_400.0;

/// Julian year (365.25 days), s.
pub const JULIAN_YEAR: f64 = 365.25 * DAY;

/// Converts a mass in kilograms to Earth masses (through G, so it inherits G's 2.2e-5
/// relative uncertainty).
pub fn mearth_from_kg(kg: f64) -> f64 {
    kg * G / GM_EARTH
}

/// Jupiter mass in Earth masses, (GM)J / (GM)⊕ ≈ 317.83.
pub const MJUP_IN_MEARTH: f64 = GM_JUP / GM_EARTH;

/// Solar-system planets for scale: name, mass (kg) and equatorial radius (km), from the
/// JPL Solar System Dynamics "Planets and Pluto: physical characteristics" table
/// (Neptune's radius from ESA's planet page; references.md §6).
pub const SOLAR_SYSTEM_PLANETS: [(&str, f64, f64); 5] = [
    ("Earth", 5.97237e24, 6378.1366),
    ("Uranus", 86.8127e24, 25559.0),
    ("Neptune", 102.43e24, 24764.0),
    ("Saturn", 568.3174e24, 60268.0),
    ("Jupiter", 1898.187e24, 71492.0),
];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn derived_mass_ratios() {
        // references.md §0 [C], identical to astropy 8.0.2: M_jup/M_earth = 317.828,
        // M_sun/M_earth = 332 946.08 (rounded as printed there).
        assert!((MJUP_IN_MEARTH - 317.828).abs() < 5e-4);
        assert!((GM_SUN / GM_EARTH - 332_946.08).abs() < 5e-3);
    }

    #[test]
    fn hydrogen_mass_from_codata_2018() {
        // astropy 8.0.2 `constants.codata2018`: m_p + m_e = 1.67353286206015e-27 kg.
        assert!((M_H / 1.673_532_862_060_15e-27 - 1.0).abs() < 1e-12);
    }

    #[test]
    fn earth_mass_in_kg() {
        // references.md §0 [C] (astropy 8.0.2): M_earth = 5.972168e24 kg.
        assert!((mearth_from_kg(5.972_168e24) - 1.0).abs() < 1e-6);
    }
}
