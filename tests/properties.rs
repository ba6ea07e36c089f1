//! Property tests of the numerical core: Kepler's equation over all M and 0 ≤ e < 1,
//! conjunction ↔ periastron times, the inverse of the mass function, and invariances of
//! the generalised Lomb–Scargle power. Case counts follow `PROPTEST_CASES` (proptest's
//! default, 256, otherwise).

use std::f64::consts::{FRAC_PI_2, PI, TAU};

use heft::data::RvSet;
use heft::derive::mass::{semi_amplitude_mps, solve_msini};
use heft::orbit::{KeplerSolver, Orbit, true_anomaly};
use heft::periodogram::{Grid, compute};
use proptest::prelude::*;

/// Eccentricities over [0, 1), with e → 1 well represented (1 − 10⁻ᵏ, k up to 9).
fn eccentricity() -> impl Strategy<Value = f64> {
    prop_oneof![
        3 => 0.0f64..1.0,
        1 => Just(0.0),
        2 => (1.0f64..9.0).prop_map(|k| 1.0 - 10f64.powf(-k)),
    ]
}

/// Mean anomalies over several turns, with values near 0 and 2π well represented.
fn mean_anomaly() -> impl Strategy<Value = f64> {
    prop_oneof![
        3 => -4.0 * PI..4.0 * PI,
        1 => (-15.0f64..-1.0).prop_map(|k| 10f64.powf(k)),
        1 => (-15.0f64..-1.0).prop_map(|k| TAU - 10f64.powf(k)),
        1 => (-15.0f64..-1.0).prop_map(|k| -(10f64.powf(k))),
        1 => Just(0.0),
        1 => Just(PI),
    ]
}

/// Wraps an angle to (−π, π].
fn wrap(a: f64) -> f64 {
    let r = a.rem_euclid(TAU);
    if r > PI { r - TAU } else { r }
}

proptest! {
    /// E − e sin E = M (Kepler's equation, e.g. Meeus, Astronomical Algorithms, ch. 30),
    /// to rounding: the residual is within a few ulps of the terms' size; the returned
    /// sine and cosine are those of E; E lies in the same turn as M.
    #[test]
    fn kepler_solves_its_equation(e in eccentricity(), m in mean_anomaly()) {
        let a = KeplerSolver::new(e).solve(m);
        let residual = a.ecc_anom - e * a.ecc_anom.sin() - m;
        let scale = a.ecc_anom.abs() + m.abs() + 1e-300;
        prop_assert!(residual.abs() <= 32.0 * f64::EPSILON * scale,
            "e = {e}, M = {m}: E = {}, residual {residual:e}", a.ecc_anom);
        prop_assert!((a.sin - a.ecc_anom.sin()).abs() <= 1e-14, "sin E");
        prop_assert!((a.cos - a.ecc_anom.cos()).abs() <= 1e-14, "cos E");
        prop_assert!((a.ecc_anom - m).abs() <= e + 1e-12, "|E − M| = |e sin E| ≤ e");
    }

    /// The periastron time the orbit derives from Tc puts the conjunction at true anomaly
    /// ν = π/2 − ω (the convention of DEVELOPERS.md; Kane et al. 2009, PASP 121, 886),
    /// and the RV at Tp is K (1 + e) cos ω (ν = 0 in v = K[cos(ν + ω) + e cos ω]).
    #[test]
    fn conjunction_and_periastron_round_trip(
        period in 0.3f64..5000.0,
        e in 0.0f64..0.95,
        omega in -PI..PI,
        tc in -3000.0f64..3000.0,
        k in 0.1f64..500.0,
    ) {
        let orbit = Orbit::new(period, k, e, omega, tc).unwrap();
        let tp = orbit.tp_d();
        prop_assert!((tp - tc).abs() <= period, "Tp within a period of Tc");
        let m = TAU * (tc - tp) / period;
        let nu = true_anomaly(KeplerSolver::new(e).solve(m).ecc_anom, e);
        let scale = 1.0 + tc.abs() / period;
        prop_assert!(wrap(nu - (FRAC_PI_2 - omega)).abs() <= 1e-9 * scale / (1.0 - e),
            "ν(Tc) = {nu}, want {}", FRAC_PI_2 - omega);
        let v = orbit.rv(tp);
        prop_assert!((v - k * (1.0 + e) * omega.cos()).abs() <= 1e-8 * k * scale / (1.0 - e));
    }

    /// m sin i from K inverts K from the planet mass (the two-body semi-amplitude, e.g.
    /// Lovis & Fischer 2010, in Exoplanets ed. Seager, eq. 14), with sin i known or not.
    #[test]
    fn mass_function_inverse(
        period in 0.2f64..1e5,
        mp in 1e-3f64..3e4,
        e in 0.0f64..0.99,
        mstar in 0.08f64..3.0,
        sin_i in 0.05f64..1.0,
    ) {
        let k = semi_amplitude_mps(period, mp, e, mstar, sin_i);
        let sol = solve_msini(period, k, e, mstar, Some(sin_i));
        let mass = sol.mass_mearth.unwrap();
        prop_assert!((mass - mp).abs() <= 1e-9 * mp, "{mass} against {mp}");
        let k1 = semi_amplitude_mps(period, mp, e, mstar, 1.0);
        let msini = solve_msini(period, k1, e, mstar, None).msini_mearth;
        prop_assert!((msini - mp).abs() <= 1e-9 * mp, "{msini} against {mp}");
    }
}

/// A random unevenly sampled data set with one or two instruments.
fn data_set() -> impl Strategy<Value = RvSet> {
    (8usize..50, 1usize..3).prop_flat_map(|(n, n_inst)| {
        (
            prop::collection::vec(0.0f64..400.0, n),
            prop::collection::vec(-20.0f64..20.0, n),
            prop::collection::vec(0.5f64..5.0, n),
            prop::collection::vec(0..n_inst, n),
        )
            .prop_map(move |(mut t, noise, err, mut inst)| {
                // A time span of at least 300 days.
                t[0] = 0.0;
                t[1] = 300.0;
                // Every instrument gets at least two points.
                for (k, slot) in inst.iter_mut().take(2 * n_inst).enumerate() {
                    *slot = k % n_inst;
                }
                let rv = t
                    .iter()
                    .zip(&noise)
                    .map(|(t, z)| 7.0 * (TAU * t / 13.7).sin() + z)
                    .collect();
                let names = (0..n_inst).map(|k| format!("S{k}")).collect();
                RvSet::from_columns("p", 2_459_000.0, t, rv, err, inst, names)
            })
    })
}

fn power(set: &RvSet) -> Vec<f64> {
    let grid = Grid::new(0.002, 0.9, 400).unwrap();
    compute(set, &[], &grid).unwrap().power
}

fn assert_same(a: &[f64], b: &[f64], what: &str) -> Result<(), TestCaseError> {
    for (i, (x, y)) in a.iter().zip(b).enumerate() {
        prop_assert!(
            (x - y).abs() <= 1e-8,
            "{what}: power {x} against {y} at {i}"
        );
    }
    Ok(())
}

proptest! {
    /// The GLS power (Zechmeister & Kürster 2009, A&A 496, 577) with a floating mean per
    /// instrument does not depend on the time origin, the RV unit, the order of the rows,
    /// or a constant added to one instrument's RVs.
    #[test]
    fn periodogram_invariances(
        set in data_set(),
        shift in -5000.0f64..5000.0,
        scale in prop_oneof![0.001f64..0.1, 10.0f64..1000.0],
        constant in -1e4f64..1e4,
        seed in any::<u64>(),
    ) {
        let base = power(&set);

        let mut shifted = set.clone();
        shifted.time_d.iter_mut().for_each(|t| *t += shift);
        assert_same(&base, &power(&shifted), "shifted times")?;

        let mut scaled = set.clone();
        scaled.rv_mps.iter_mut().for_each(|v| *v *= scale);
        assert_same(&base, &power(&scaled), "scaled RVs")?;
        scaled.err_mps.iter_mut().for_each(|v| *v *= scale);
        assert_same(&base, &power(&scaled), "scaled RVs and errors")?;

        let mut order: Vec<usize> = (0..set.len()).collect();
        let mut state = seed | 1;
        for i in (1..order.len()).rev() {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            order.swap(i, (state % (i as u64 + 1)) as usize);
        }
        assert_same(&base, &power(&set.select(&order)), "permuted rows")?;

        let mut moved = set.clone();
        for (v, &k) in moved.rv_mps.iter_mut().zip(&set.instrument) {
            if k == 0 {
                *v += constant;
            }
        }
        assert_same(&base, &power(&moved), "constant added to one instrument")?;
    }
}
