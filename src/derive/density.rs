//! Planet radius, bulk density, surface gravity and escape velocity.
//!
//! Radii are in units of the nominal equatorial Earth radius (6 378.1 km), masses in
//! Earth masses ((GM)⊕ = 3.986 004e14 m³ s⁻²). The bulk density is 3M / (4πR³): quoting it
//! for a mean radius or an equatorial one differs by a few per cent for a giant planet, so
//! the caller decides which radius is passed.

use std::f64::consts::PI;

use super::constants::{G, GM_EARTH, R_EARTH, R_SUN};

/// Planet radius, Earth radii, from the radius ratio Rp/R* and the stellar radius in
/// nominal solar radii.
pub fn radius_rearth_from_ratio(rp_rs: f64, rstar_rsun: f64) -> f64 {
    rp_rs * rstar_rsun * R_SUN / R_EARTH
}

/// Bulk density 3M / (4πR³), g/cm³, from the mass (Earth masses) and radius (Earth radii).
pub fn bulk_density_gcc(mass_mearth: f64, radius_rearth: f64) -> f64 {
    let r = radius_rearth * R_EARTH;
    // kg/m³ → g/cm³: divide by 1000.
    3.0 * mass_mearth * GM_EARTH / (4.0 * PI * G * r.powi(3)) / 1000.0
}

/// Surface gravity GM/R², m/s², from the mass (Earth masses) and radius (Earth radii);
/// rotation is ignored.
pub fn surface_gravity_mps2(mass_mearth: f64, radius_rearth: f64) -> f64 {
    let r = radius_rearth * R_EARTH;
    mass_mearth * GM_EARTH / (r * r)
}

/// Escape velocity sqrt(2GM/R) from the surface, km/s, from the mass (Earth masses) and
/// radius (Earth radii).
pub fn escape_velocity_kms(mass_mearth: f64, radius_rearth: f64) -> f64 {
    (2.0 * mass_mearth * GM_EARTH / (radius_rearth * R_EARTH)).sqrt() / 1000.0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sun_radius_in_earth_radii() {
        // IAU 2015 B3 nominal values: R_sun / R_earth,eq = 695 700 / 6 378.1 = 109.076.
        assert!((radius_rearth_from_ratio(1.0, 1.0) - 109.076).abs() < 5e-4);
    }

    #[test]
    fn earth_escape_velocity() {
        // Earth's escape velocity 11.186 km/s (NASA Earth fact sheet, from memory), with
        // the mean radius 6 371.0084 km (JPL SSD physical parameters, references.md §6).
        let v = escape_velocity_kms(1.0, 6_371.008_4 / 6_378.1);
        assert!((v - 11.186).abs() < 1e-3, "{v}");
    }
}
