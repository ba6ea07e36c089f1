//! A coarse composition class from mass and radius.
//!
//! The rules, applied in this order to the mass M (Earth masses), the radius R (Earth
//! radii) and the bulk density ρ they imply:
//!
//! 1. `super-puff`: R ≥ 4 R⊕, M < 20 M⊕, and either M ≤ 6 M⊕ or ρ < 0.3 g/cm³. Lee &
//!    Chiang (2016, ApJ 817, 90) describe super-puffs as 2–6 M⊕ planets with 4–10 R⊕ (and
//!    the super-Earth/sub-Neptune population as 2–20 M⊕); heavier low-mass planets count
//!    when their density is below 0.3 g/cm³, a cut used for super-puffs in the literature
//!    (arXiv:2606.11330; others use 0.1 g/cm³).
//! 2. `giant`: R ≥ 6 R⊕, the lower edge of the "Jupiter-size" class of Borucki et al.
//!    (2011, ApJ 736, 19).
//! 3. `rocky`: R at or below the pure-silicate (core mass fraction 0) radius of Zeng,
//!    Sasselov & Jacobsen (2016, ApJ 819, 127), R = (1.07 − 0.21 CMF) M^(1/3.7); anything
//!    smaller can be rock and iron alone. The relation was fitted for 1–8 M⊕ and is
//!    extrapolated outside that range.
//! 4. `water-rich`: above the rocky radius but at most 1.75 R⊕, the divide between rocky
//!    planets and planets with gas envelopes suggested by Lopez & Fortney (2014, ApJ 792, 1):
//!    too large for rock, too small for an envelope, so a light condensed component.
//! 5. `sub-neptune`: everything else below 6 R⊕ (planets with a volatile envelope, the ice
//!    giants Uranus and Neptune included).
//!
//! This is a label, not an interior model: a fuller composition analysis is a separate
//! stage.

use serde::Serialize;

use super::density::bulk_density_gcc;

/// Composition class of a planet, see the module documentation for the rules.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CompositionClass {
    /// At or below the pure-silicate mass–radius relation.
    Rocky,
    /// Above the rocky relation but below the envelope divide.
    WaterRich,
    /// A volatile envelope, below giant size.
    SubNeptune,
    /// Very low density for its mass.
    SuperPuff,
    /// Jupiter- or Saturn-size.
    Giant,
}

impl CompositionClass {
    /// The name used in JSON and printed output.
    pub fn name(self) -> &'static str {
        match self {
            CompositionClass::Rocky => "rocky",
            CompositionClass::WaterRich => "water-rich",
            CompositionClass::SubNeptune => "sub-neptune",
            CompositionClass::SuperPuff => "super-puff",
            CompositionClass::Giant => "giant",
        }
    }
}

impl std::fmt::Display for CompositionClass {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Smallest super-puff radius, Earth radii (Lee & Chiang 2016).
pub const SUPER_PUFF_MIN_RADIUS_REARTH: f64 = 4.0;
/// Upper mass of Lee & Chiang's super-puff box, Earth masses.
pub const SUPER_PUFF_BOX_MAX_MASS_MEARTH: f64 = 6.0;
/// Super-puffs are lighter than this, Earth masses (top of Lee & Chiang's low-mass range).
pub const SUPER_PUFF_MAX_MASS_MEARTH: f64 = 20.0;
/// Above the box mass, a super-puff is less dense than this, g/cm³.
pub const SUPER_PUFF_MAX_DENSITY_GCC: f64 = 0.3;
/// Smallest giant-planet radius, Earth radii (Borucki et al. 2011).
pub const GIANT_MIN_RADIUS_REARTH: f64 = 6.0;
/// Largest radius without a gas envelope, Earth radii (Lopez & Fortney 2014).
pub const ENVELOPE_MIN_RADIUS_REARTH: f64 = 1.75;

/// Radius of a rocky planet, Earth radii, from its mass (Earth masses) and core mass
/// fraction: R = (1.07 − 0.21 CMF) M^(1/3.7) (Zeng, Sasselov & Jacobsen 2016, ApJ 819, 127;
/// fitted for 1–8 M⊕ and CMF 0–0.4).
pub fn zeng_rocky_radius_rearth(mass_mearth: f64, core_mass_fraction: f64) -> f64 {
    (1.07 - 0.21 * core_mass_fraction) * mass_mearth.powf(1.0 / 3.7)
}

/// Composition class from the mass (Earth masses) and radius (Earth radii); `None` unless
/// both are positive and finite.
pub fn classify(mass_mearth: f64, radius_rearth: f64) -> Option<CompositionClass> {
    let valid = |x: f64| x.is_finite() && x > 0.0;
    if !(valid(mass_mearth) && valid(radius_rearth)) {
        return None;
    }
    let density = bulk_density_gcc(mass_mearth, radius_rearth);
    let class = if radius_rearth >= SUPER_PUFF_MIN_RADIUS_REARTH
        && mass_mearth < SUPER_PUFF_MAX_MASS_MEARTH
        && (mass_mearth <= SUPER_PUFF_BOX_MAX_MASS_MEARTH || density < SUPER_PUFF_MAX_DENSITY_GCC)
    {
        CompositionClass::SuperPuff
    } else if radius_rearth >= GIANT_MIN_RADIUS_REARTH {
        CompositionClass::Giant
    } else if radius_rearth <= zeng_rocky_radius_rearth(mass_mearth, 0.0) {
        CompositionClass::Rocky
    } else if radius_rearth <= ENVELOPE_MIN_RADIUS_REARTH {
        CompositionClass::WaterRich
    } else {
        CompositionClass::SubNeptune
    };
    Some(class)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn zeng_relation_check_values() {
        // references.md §11 [C] from the Zeng et al. (2016) formula.
        let cases = [
            (1.0, 0.325, 1.0018),
            (1.0, 0.0, 1.0700),
            (4.0, 0.2, 1.4952),
            (5.0, 0.325, 1.5476),
            (8.0, 0.4, 1.7296),
        ];
        for (m, cmf, r) in cases {
            assert!(
                (zeng_rocky_radius_rearth(m, cmf) - r).abs() < 5e-5,
                "{m} {cmf}"
            );
        }
    }

    #[test]
    fn water_rich_between_rock_and_envelope() {
        // Zeng et al. (2016): pure silicate at 2 M_earth has R = 1.07 * 2^(1/3.7) = 1.289;
        // 1.5 R_earth is above it and below the 1.75 R_earth divide of Lopez & Fortney
        // (2014); 1.2 R_earth is below it; 2.5 R_earth is above both.
        assert_eq!(classify(2.0, 1.5), Some(CompositionClass::WaterRich));
        assert_eq!(classify(2.0, 1.2), Some(CompositionClass::Rocky));
        assert_eq!(classify(2.0, 2.5), Some(CompositionClass::SubNeptune));
    }

    #[test]
    fn no_class_without_a_positive_mass() {
        // A zero mass (K = 0) or a missing radius has no composition (common practice).
        assert_eq!(classify(0.0, 2.0), None);
        assert_eq!(classify(3.0, f64::NAN), None);
    }
}
