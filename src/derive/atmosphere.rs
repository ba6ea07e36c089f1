//! Irradiation and atmospheric escape: equilibrium temperature, incident flux, the
//! restricted Jeans escape parameter and the energy-limited mass-loss rate.

use std::f64::consts::PI;

use serde::Serialize;

use super::constants::{AU, G, GM_EARTH, GM_SUN, K_B, M_H, R_EARTH, R_SUN, TEFF_SUN};

/// Default Bond albedo for the equilibrium temperature (Earth-like 0.3; common practice
/// to state it, since T_eq scales as (1 − A)^(1/4)).
pub const DEFAULT_ALBEDO: f64 = 0.3;
/// Default heating efficiency ε of the energy-limited escape rate (0.1; values of
/// 0.1–0.15 are usual in the literature, from memory).
pub const DEFAULT_ESCAPE_EFFICIENCY: f64 = 0.1;
/// Jeans parameters below this put a planet in the boil-off regime, above
/// [`JEANS_STABLE`] it is safe from it; between them lies the band where Fossati et al.
/// (2017) place the transition (15–35).
pub const JEANS_BOIL_OFF: f64 = 15.0;
/// Upper edge of the Jeans-parameter transition band (see [`JEANS_BOIL_OFF`]).
pub const JEANS_STABLE: f64 = 35.0;

/// Orbit-averaged equilibrium temperature, K, for full heat redistribution:
/// `T_eq = T_eff sqrt(R*/(2a)) (1 − A)^(1/4) (1 − e²)^(−1/8)`. The last factor is the
/// time average of the flux over an eccentric orbit, `⟨a²/r²⟩ = (1 − e²)^(−1/2)`, taken
/// to the ¼ power.
pub fn equilibrium_temperature_k(
    teff_k: f64,
    rstar_rsun: f64,
    a_au: f64,
    albedo: f64,
    ecc: f64,
) -> f64 {
    teff_k * (rstar_rsun * R_SUN / (2.0 * a_au * AU)).sqrt() * (1.0 - albedo).powf(0.25)
        / (1.0 - ecc * ecc).powf(0.125)
}

/// Orbit-averaged incident bolometric flux relative to Earth's:
/// `S/S⊕ = (R*/R☉)² (T_eff/5772 K)⁴ / (a/1 au)² / sqrt(1 − e²)`.
pub fn insolation_earth(teff_k: f64, rstar_rsun: f64, a_au: f64, ecc: f64) -> f64 {
    rstar_rsun.powi(2) * (teff_k / TEFF_SUN).powi(4) / a_au.powi(2) / (1.0 - ecc * ecc).sqrt()
}

/// Restricted Jeans escape parameter `Λ = G M_p m_H / (k_B T_eq R_p)` of Fossati et al.
/// (2017, A&A 598, A90), mass in Earth masses, radius in Earth radii, T_eq in K.
pub fn jeans_lambda(mass_mearth: f64, radius_rearth: f64, teq_k: f64) -> f64 {
    mass_mearth * GM_EARTH * M_H / (K_B * teq_k * radius_rearth * R_EARTH)
}

/// What the Jeans parameter implies (Fossati et al. 2017).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum EscapeRegime {
    /// Λ < 15: escape driven by the atmosphere's own heat and weak gravity ("boil-off");
    /// the energy-limited formula does not apply.
    BoilOff,
    /// 15 ≤ Λ ≤ 35: near the transition.
    Transition,
    /// Λ > 35: hydrostatic; XUV-driven escape, if any.
    Hydrostatic,
}

impl EscapeRegime {
    /// Regime of a Jeans parameter.
    pub fn of(lambda: f64) -> EscapeRegime {
        if lambda < JEANS_BOIL_OFF {
            EscapeRegime::BoilOff
        } else if lambda <= JEANS_STABLE {
            EscapeRegime::Transition
        } else {
            EscapeRegime::Hydrostatic
        }
    }
}

/// Tidal enhancement factor of Erkaev et al. (2007, A&A 472, 329),
/// `K(ξ) = 1 − 3/(2ξ) + 1/(2ξ³)`, with ξ the Roche-lobe radius over the planet radius.
pub fn erkaev_k(xi: f64) -> f64 {
    1.0 - 1.5 / xi + 0.5 / xi.powi(3)
}

/// `ξ = R_Roche/R_p ≈ (M_p/(3 M*))^(1/3) a / R_p` (masses in Earth and solar masses,
/// a in au, radius in Earth radii).
pub fn roche_xi(mass_mearth: f64, mstar_msun: f64, a_au: f64, radius_rearth: f64) -> f64 {
    (mass_mearth * GM_EARTH / (3.0 * mstar_msun * GM_SUN)).cbrt() * a_au * AU
        / (radius_rearth * R_EARTH)
}

/// Energy-limited mass-loss rate, kg/s (Watson, Donahue & Walker 1981, Icarus 48, 150,
/// with the tidal factor of Erkaev et al. 2007), absorbing radius = planet radius:
/// `Ṁ = ε π F_XUV R_p³ / (G M_p K(ξ))`. Inputs: efficiency, XUV flux in W/m², mass in
/// Earth masses, radius in Earth radii, `k` = [`erkaev_k`].
pub fn energy_limited_rate_kg_s(
    efficiency: f64,
    f_xuv_wm2: f64,
    mass_mearth: f64,
    radius_rearth: f64,
    k: f64,
) -> f64 {
    let r = radius_rearth * R_EARTH;
    // G M_p from the Earth's GM keeps G's uncertainty out.
    efficiency * PI * f_xuv_wm2 * r.powi(3) / (mass_mearth * GM_EARTH * k)
}

/// XUV flux, W/m², at `a_au` from a star of age `age_gyr` and luminosity `l_lsun` (solar
/// units): the solar-analogue relation of Ribas et al. (2005, ApJ 622, 680),
/// `F(1 au) = 29.7 τ^(−1.23) erg s⁻¹ cm⁻²` for 1–1200 Å (coefficients from memory),
/// scaled by luminosity and distance. Meant for roughly solar-type stars older than
/// ~0.1 Gyr; outside that the result is an extrapolation.
pub fn xuv_flux_ribas_wm2(age_gyr: f64, l_lsun: f64, a_au: f64) -> f64 {
    // 1 erg s⁻¹ cm⁻² = 1e-3 W m⁻².
    29.7e-3 * age_gyr.powf(-1.23) * l_lsun / (a_au * a_au)
}

/// Stellar luminosity, L☉, from radius (R☉) and effective temperature (K):
/// `L = (R/R☉)² (T/5772 K)⁴` with the IAU 2015 nominal solar values.
pub fn luminosity_lsun(rstar_rsun: f64, teff_k: f64) -> f64 {
    rstar_rsun.powi(2) * (teff_k / TEFF_SUN).powi(4)
}

/// Kilograms per Earth mass (from (GM)⊕ and G).
pub fn kg_per_mearth() -> f64 {
    GM_EARTH / G
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Earth with T_eff = 5772 K, R☉, 1 au, A = 0.3 → 254.59 K; A = 0 → 278.33 K
    /// (references.md §8, [C] from the stated formula).
    #[test]
    fn earth_equilibrium_temperature() {
        assert!((equilibrium_temperature_k(5772.0, 1.0, 1.0, 0.3, 0.0) - 254.59).abs() < 0.01);
        assert!((equilibrium_temperature_k(5772.0, 1.0, 1.0, 0.0, 0.0) - 278.33).abs() < 0.01);
        assert!((insolation_earth(5772.0, 1.0, 1.0, 0.0) - 1.0).abs() < 1e-12);
    }

    /// Jeans parameters of references.md §9 ([C] from Fossati et al.'s definition).
    #[test]
    fn jeans_parameter_checks() {
        assert!((jeans_lambda(1.0, 1.0, 255.0) - 29.71).abs() < 0.01);
        assert!((jeans_lambda(5.0, 4.0, 1000.0) - 9.47).abs() < 0.01);
        assert!((jeans_lambda(5.0, 10.0, 500.0) - 7.58).abs() < 0.01);
        assert!((jeans_lambda(12.0, 9.2, 294.0) - 33.6).abs() < 0.1);
        assert_eq!(EscapeRegime::of(9.47), EscapeRegime::BoilOff);
        assert_eq!(EscapeRegime::of(29.7), EscapeRegime::Transition);
        assert_eq!(EscapeRegime::of(1953.0), EscapeRegime::Hydrostatic);
    }

    /// Erkaev K(ξ) checks and the energy-limited example of references.md §10 ([C];
    /// 1/K(3) = 1.92 printed in Erkaev et al. 2007, Table 1).
    #[test]
    fn energy_limited_example() {
        assert!((erkaev_k(2.0) - 0.3125).abs() < 1e-12);
        assert!((1.0 / erkaev_k(3.0) - 1.92).abs() < 0.01);
        let xi = roche_xi(5.0, 1.0, 0.05, 2.5);
        assert!((xi - 8.0246).abs() < 1e-3, "xi {xi}");
        let k = erkaev_k(xi);
        assert!((k - 0.81404).abs() < 1e-4);
        let mdot = energy_limited_rate_kg_s(0.1, 1.0, 5.0, 2.5, k);
        assert!((mdot / 7.85e5 - 1.0).abs() < 0.005, "Mdot {mdot}");
    }
}
