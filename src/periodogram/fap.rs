//! Analytic false-alarm probability of a GLS peak (Baluev 2008, MNRAS 385, 1279).

use statrs::function::gamma::ln_gamma;

/// Baluev (2008) "alias-free" false-alarm probability (his eq. 6) of normalised power `z`
/// over frequencies up to `fmax` (1/day), for `n_points` points, `n_offsets` fitted
/// offsets (the base model) and effective time span `t_eff_d = sqrt(4 π D_t)` days:
///
/// ```text
/// N_H = N − n_offsets,  N_K = N_H − 2
/// FAP_single = (1 − z)^(N_K/2)
/// τ = γ(N_H) · fmax · T_eff · (1 − z)^((N_K − 1)/2) · sqrt(N_H z / 2)
/// γ(n) = sqrt(2/n) Γ(n/2)/Γ((n − 1)/2)
/// FAP = 1 − (1 − FAP_single) e^(−τ)
/// ```
///
/// With one offset this is the standard-normalisation formula (checked against
/// references.md §2). Returns a value in [0, 1]; 1 when there are too few points.
pub fn baluev_fap(z: f64, n_points: usize, n_offsets: usize, fmax: f64, t_eff_d: f64) -> f64 {
    if n_points < n_offsets + 4 || !(z > 0.0) {
        return 1.0;
    }
    let z = z.min(1.0);
    let n_h = (n_points - n_offsets) as f64;
    let n_k = n_h - 2.0;
    let fap_single = (1.0 - z).powf(0.5 * n_k);
    let gamma = (2.0 / n_h).sqrt() * (ln_gamma(0.5 * n_h) - ln_gamma(0.5 * (n_h - 1.0))).exp();
    let tau = gamma * fmax * t_eff_d * (1.0 - z).powf(0.5 * (n_k - 1.0)) * (0.5 * n_h * z).sqrt();
    (-(-tau).exp_m1() + fap_single * (-tau).exp()).clamp(0.0, 1.0)
}

/// The power at which the Baluev FAP of `pg` equals `level` (bisection; FAP falls with
/// power).
pub fn power_at_fap(pg: &super::Periodogram, level: f64) -> f64 {
    let (mut lo, mut hi) = (0.0, 1.0);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if pg.fap(mid) > level {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// references.md §2 check table ([C], identical to astropy 8.0.2): t = 0..99,
    /// σ = 1, fmax = 0.5 → T_eff = 102.327554.
    #[test]
    fn baluev_table() {
        let t: Vec<f64> = (0..100).map(f64::from).collect();
        let mean = t.iter().sum::<f64>() / 100.0;
        let var = t.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / 100.0;
        let t_eff = (4.0 * std::f64::consts::PI * var).sqrt();
        assert!((t_eff - 102.327554).abs() < 1e-6);
        for (z, expect) in [(0.10, 0.5155930), (0.19, 6.320295e-3), (0.30, 7.212251e-6)] {
            let got = baluev_fap(z, 100, 1, 0.5, t_eff);
            assert!(
                ((got - expect) / expect).abs() < 1e-6,
                "z={z}: {got} vs {expect}"
            );
        }
    }
}
