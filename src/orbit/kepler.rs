//! Kepler's equation `M = E - e sin E`, solved for the eccentric anomaly `E` together
//! with `sin E` and `cos E`, without calls to library trigonometric functions.

use std::f64::consts::{FRAC_PI_2, PI, TAU};

#[cfg(target_arch = "x86_64")]
pub(in crate::orbit) mod wide;

/// Intervals of the eccentric-anomaly grid on [0, π] of a [`KeplerSolver`].
const INTERVALS: usize = 16;
/// Divisions of [0, π] in the table of sines and cosines: interval ends at even nodes,
/// interval midpoints at odd ones.
const DIVISIONS: usize = 2 * INTERVALS;
/// The low-order part of π (π − `PI`), for exact reductions in [`node_table`].
const PI_LO: f64 = 1.224_646_799_147_353_2e-16;
/// The low-order part of π/2.
const FRAC_PI_2_LO: f64 = 6.123_233_995_736_766e-17;
/// Corrections per solve before the bisection fallback.
const MAX_CORRECTIONS: usize = 40;
/// A correction `d` ends the solve when `e³ d⁴ ≤ FINAL_STEP_TOL (1 − e cos E)³`: the
/// error left after a quartically convergent step is about `(e/(1 − e cos E))³ d⁴`,
/// here below 1e-18 rad.
const FINAL_STEP_TOL: f64 = 1e-18;

/// `(x, sin x, cos x)` at the nodes `x = k π / DIVISIONS`, k = 0 … DIVISIONS, where `x` is
/// the rounded node angle and sin, cos are its own sine and cosine.
static NODES: [[f64; 3]; DIVISIONS + 1] = node_table();

/// Builds [`NODES`] at compile time: each angle is reduced exactly (Sterbenz) to
/// |y| ≤ π/4 with a two-part π, where the Taylor series converge fast and are summed
/// smallest term first.
const fn node_table() -> [[f64; 3]; DIVISIONS + 1] {
    let mut out = [[0.0; 3]; DIVISIONS + 1];
    let mut k = 0;
    while k <= DIVISIONS {
        let x = k as f64 * (PI / DIVISIONS as f64);
        let (s, c) = if 4 * k <= DIVISIONS {
            (taylor_sin(x), taylor_cos(x))
        } else if 4 * k <= 3 * DIVISIONS {
            // x = π/2 + y.
            let y = (x - FRAC_PI_2) - FRAC_PI_2_LO;
            (taylor_cos(y), -taylor_sin(y))
        } else {
            // x = π − y.
            let y = (PI - x) + PI_LO;
            (taylor_sin(y), -taylor_cos(y))
        };
        out[k] = [x, s, c];
        k += 1;
    }
    out
}

/// Taylor series of sin y to y^25 (|y| ≤ π/4: truncation below 1e-30).
const fn taylor_sin(y: f64) -> f64 {
    taylor_sum(y, 1)
}

/// Taylor series of cos y to y^24.
const fn taylor_cos(y: f64) -> f64 {
    taylor_sum(y, 0)
}

/// `Σ (−1)^n y^(2n+first) / (2n+first)!` for n = 0 … 12, smallest terms first.
const fn taylor_sum(y: f64, first: usize) -> f64 {
    let mut terms = [0.0; 13];
    let mut term = if first == 1 { y } else { 1.0 };
    let mut n = 0;
    while n < 13 {
        terms[n] = term;
        let a = (2 * n + first + 1) as f64;
        term = -term * y * y / (a * (a + 1.0));
        n += 1;
    }
    let mut sum = 0.0;
    while n > 0 {
        n -= 1;
        sum += terms[n];
    }
    sum
}

/// Taylor coefficients of `(x − sin x)/x³` in powers of x²: 1/3!, −1/5!, … , −1/13!.
const SIN_TAIL: [f64; 6] = [
    1.0 / 6.0,
    -1.0 / 120.0,
    1.0 / 5040.0,
    -1.0 / 362_880.0,
    1.0 / 39_916_800.0,
    -1.0 / 6_227_020_800.0,
];

/// Taylor coefficients of `(1 − cos x)/x²` in powers of x²: 1/2!, −1/4!, … , −1/12!.
const COS_TAIL: [f64; 6] = [
    1.0 / 2.0,
    -1.0 / 24.0,
    1.0 / 720.0,
    -1.0 / 40_320.0,
    1.0 / 3_628_800.0,
    -1.0 / 479_001_600.0,
];

/// `(δ − sin δ, 1 − cos δ)` by their Taylor series to δ^13 and δ^12: for |δ| ≤ π/16 the
/// truncation is below 1e-21 (and the relative error of δ − sin δ below 1e-19), so these
/// cancellation-free forms keep their precision as δ → 0. Coefficients are constants (no
/// division at run time), summed in Estrin's scheme (pairs, then x², then x⁴) for a short
/// dependency chain.
#[inline(always)]
fn small_angle(d: f64) -> (f64, f64) {
    let (p, q) = (SIN_TAIL, COS_TAIL);
    let x = d * d;
    let x2 = x * x;
    let sp = (p[0] + x * p[1]) + x2 * ((p[2] + x * p[3]) + x2 * (p[4] + x * p[5]));
    let sq = (q[0] + x * q[1]) + x2 * ((q[2] + x * q[3]) + x2 * (q[4] + x * q[5]));
    (d * x * sp, x * sq)
}

/// sin and cos of `node + d` from the node's `[x, sin x, cos x]`, for |d| ≤ π/32: the
/// series of sin d to d^9 and of cos d to d^8 leave errors below 3e-19 and 3e-17.
#[inline(always)]
fn sin_cos_near(node: &[f64; 3], d: f64) -> (f64, f64) {
    let (p, q) = (SIN_TAIL, COS_TAIL);
    let x = d * d;
    let x2 = x * x;
    let sin_d = d - d * x * ((p[0] + x * p[1]) + x2 * (p[2] + x * p[3]));
    let cos_d = 1.0 - x * ((q[0] + x * q[1]) + x2 * (q[2] + x * q[3]));
    (
        node[1] * cos_d + node[2] * sin_d,
        node[2] * cos_d - node[1] * sin_d,
    )
}

/// sin x and cos x for `x` in [0, π], from the nearest node of [`NODES`] (|δ| ≤ π/64),
/// to about one unit in the last place.
#[inline]
fn sin_cos_0_pi(x: f64) -> (f64, f64) {
    let k = ((x * (DIVISIONS as f64 / PI) + 0.5) as usize).min(DIVISIONS);
    let node = &NODES[k];
    sin_cos_near(node, x - node[0])
}

/// `x` rounded to the nearest integer (ties to even) without a library call: adding and
/// subtracting 1.5 × 2^52 leaves only the integer part for |x| < 2^51.
#[inline(always)]
fn round_nearest(x: f64) -> f64 {
    const SHIFT: f64 = 6_755_399_441_055_744.0;
    if x.abs() < 2_251_799_813_685_248.0 {
        (x + SHIFT) - SHIFT
    } else {
        x.round()
    }
}

/// Splits `M` into `base + sign * m` with `m` in [0, π] (base a multiple of 2π), without
/// branches.
#[inline(always)]
fn reduce(mean_anom: f64) -> (f64, f64, f64) {
    let base = round_nearest(mean_anom * (1.0 / TAU)) * TAU;
    let r = mean_anom - base; // in [-π, π] up to rounding
    (r.abs().min(PI), 1f64.copysign(r), base)
}

/// An eccentric anomaly with its sine and cosine.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Anomaly {
    /// Eccentric anomaly E, radians (same turn as the mean anomaly).
    pub ecc_anom: f64,
    /// sin E.
    pub sin: f64,
    /// cos E.
    pub cos: f64,
}

/// Solver of Kepler's equation for one eccentricity `0 ≤ e < 1`, accurate to a few units
/// in the last place of `E`.
///
/// # Method
/// The approach of Brandt et al. (2021, AJ 162, 186): a piecewise polynomial starter
/// tabulated per eccentricity, one high-order correction, and sin E, cos E without
/// library calls; the details below (grid, Hermite quintic, correction) are this
/// implementation's. The mean anomaly is reduced to `m` in [0, π] (the equation is odd and 2π-periodic in
/// `M`). [`KeplerSolver::new`] tabulates, at 17 eccentric anomalies `E_j = jπ/16`, the
/// mean anomalies `M_j = E_j − e sin E_j` and the derivatives `dE/dM = 1/(1 − e cos E)`,
/// `d²E/dM² = −e sin E/(1 − e cos E)³`, and fits in each interval `[M_j, M_{j+1}]` the
/// quintic Hermite polynomial of `E(M)` that matches value, first and second derivative at
/// both ends. A solve finds the interval by binary search, starts from the quintic, and
/// corrects it by the quartically convergent Householder step (one division)
/// `d = −f (6f′² − 3f f″)/(6f′³ − 6f f′ f″ + f² f‴)` on `f = E − e sin E − m`. One
/// correction suffices except for a small fraction of cases with e ≳ 0.9 near
/// periastron, which take more; every step is kept inside a shrinking bracket of the root (bisecting
/// when a step would leave it), with a bisection fallback.
///
/// sin E and cos E never call library trigonometry: they come from a compile-time table
/// of sines and cosines at the interval midpoints and Taylor series of the small offset,
/// and after the last correction from the angle-addition formulas with the step's series.
/// In the first interval (E ≤ π/16) the expansion is about 0 and `f`, `f′` are written
/// `(1 − e) E + e (E − sin E) − m` and `(1 − e) + e (1 − cos E)`, so they keep their
/// relative precision for e → 1 and small E.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct KeplerSolver {
    ecc: f64,
    /// Mean anomaly at each interval end, radians.
    m_nodes: [f64; INTERVALS + 1],
    /// `coef[i][j]`: in interval `j`, coefficient of `(M − M_j)^i` in `E ≈ Σ c_i (M − M_j)^i`,
    /// i = 0 … 5 (one row per power, so that the eight-lane path looks a power up in all
    /// intervals at once).
    coef: [[f64; INTERVALS]; 6],
}

impl KeplerSolver {
    /// The solver for eccentricity `ecc`.
    ///
    /// # Panics
    /// Debug builds assert `0 <= ecc < 1`; callers validate eccentricities when building
    /// an [`crate::orbit::Orbit`].
    pub fn new(ecc: f64) -> KeplerSolver {
        debug_assert!(
            (0.0..1.0).contains(&ecc),
            "eccentricity {ecc} outside [0, 1)"
        );
        let mut m_nodes = [0.0; INTERVALS + 1];
        let mut slope = [0.0; INTERVALS + 1];
        let mut curve = [0.0; INTERVALS + 1];
        for j in 0..=INTERVALS {
            let [x, s, c] = NODES[2 * j];
            m_nodes[j] = x - ecc * s;
            let inv = 1.0 / (1.0 - ecc * c);
            slope[j] = inv;
            curve[j] = -ecc * s * inv * inv * inv;
        }
        let mut coef = [[0.0; INTERVALS]; 6];
        for j in 0..INTERVALS {
            let (e0, e1) = (NODES[2 * j][0], NODES[2 * j + 2][0]);
            let h = m_nodes[j + 1] - m_nodes[j];
            let inv_h = 1.0 / h;
            // Mismatches at the far end of the quadratic Taylor polynomial from the near
            // end, scaled by h^0, h^1, h^2; the quintic terms b_i (M − M_j)^i / h^i remove
            // them (Hermite interpolation with value, slope and curvature at both ends).
            let d0 = e1 - (e0 + h * (slope[j] + 0.5 * h * curve[j]));
            let d1 = (slope[j + 1] - slope[j] - curve[j] * h) * h;
            let d2 = (curve[j + 1] - curve[j]) * h * h;
            let b3 = 10.0 * d0 - 4.0 * d1 + 0.5 * d2;
            let b4 = -15.0 * d0 + 7.0 * d1 - d2;
            let b5 = 6.0 * d0 - 3.0 * d1 + 0.5 * d2;
            let inv_h3 = inv_h * inv_h * inv_h;
            let c = [
                e0,
                slope[j],
                0.5 * curve[j],
                b3 * inv_h3,
                b4 * inv_h3 * inv_h,
                b5 * inv_h3 * inv_h * inv_h,
            ];
            for (row, value) in coef.iter_mut().zip(c) {
                row[j] = value;
            }
        }
        KeplerSolver { ecc, m_nodes, coef }
    }

    /// Eccentricity.
    pub fn ecc(&self) -> f64 {
        self.ecc
    }

    /// `E`, sin E and cos E for mean anomaly `mean_anom` (radians, any finite value;
    /// non-finite values give `E = M` and NaN sine and cosine). The usual path (one
    /// correction) has no data-dependent branch, so the processor overlaps consecutive
    /// solves.
    #[inline]
    pub fn solve(&self, mean_anom: f64) -> Anomaly {
        if !mean_anom.is_finite() {
            return Anomaly {
                ecc_anom: mean_anom,
                sin: f64::NAN,
                cos: f64::NAN,
            };
        }
        let (m, sign, base) = reduce(mean_anom);
        let (j, e0) = self.start(m);
        let c = self.correct(m, j, e0);
        let (e_anom, sin, cos) = if c.done {
            c.finish(e0)
        } else {
            self.refine(m, j, e0)
        };
        Anomaly {
            ecc_anom: base + sign * e_anom,
            sin: sign * sin,
            cos,
        }
    }

    /// [`KeplerSolver::solve`] for every mean anomaly of `mean_anom`, into `out`: the same
    /// results bit for bit, eight at a time on processors with AVX-512.
    ///
    /// # Panics
    /// If the two slices differ in length.
    pub fn solve_slice(&self, mean_anom: &[f64], out: &mut [Anomaly]) {
        assert_eq!(mean_anom.len(), out.len(), "one output per mean anomaly");
        #[cfg(target_arch = "x86_64")]
        if wide::available() {
            // SAFETY: the processor has AVX-512.
            unsafe { wide::solve_slice(self, mean_anom, out) };
            return;
        }
        for (a, &m) in out.iter_mut().zip(mean_anom) {
            *a = self.solve(m);
        }
    }

    /// Interval `j` of `m` in [0, π] (branch-free binary search: the comparisons are
    /// unpredictable) and the quintic starter, clamped to the interval.
    #[inline(always)]
    fn start(&self, m: f64) -> (usize, f64) {
        let mut j = 0;
        for step in [8, 4, 2, 1] {
            j += step * usize::from(m >= self.m_nodes[j + step]);
        }
        let c = &self.coef;
        let (c0, c1, c2, c3, c4, c5) = (c[0][j], c[1][j], c[2][j], c[3][j], c[4][j], c[5][j]);
        let x = m - self.m_nodes[j];
        let x2 = x * x;
        let e0 = (c0 + x * c1) + x2 * ((c2 + x * c3) + x2 * (c4 + x * c5));
        (j, e0.clamp(NODES[2 * j][0], NODES[2 * j + 2][0]))
    }

    /// The Householder correction at `e_anom` in interval `j` for `m` in [0, π].
    #[inline(always)]
    fn correct(&self, m: f64, j: usize, e_anom: f64) -> Correction {
        let e = self.ecc;
        // sin and cos about the interval's midpoint, or in the first interval about 0,
        // where the residual needs E − sin E and 1 − cos E without cancellation.
        let (s, c, f, f1) = if j == 0 {
            let (e_minus_sin, one_minus_cos) = small_angle(e_anom);
            let one_minus_e = 1.0 - e;
            (
                e_anom - e_minus_sin,
                1.0 - one_minus_cos,
                one_minus_e * e_anom + e * e_minus_sin - m,
                one_minus_e + e * one_minus_cos,
            )
        } else {
            let node = &NODES[2 * j + 1];
            let (s, c) = sin_cos_near(node, e_anom - node[0]);
            (s, c, e_anom - m - e * s, 1.0 - e * c)
        };
        let (f2, f3) = (e * s, e * c);
        let step = -f * (6.0 * f1 * f1 - 3.0 * f * f2)
            / (6.0 * f1 * f1 * f1 - 6.0 * f * f1 * f2 + f * f * f3);
        let step2 = step * step;
        Correction {
            step,
            sin: s,
            cos: c,
            residual: f,
            done: e * e * e * step2 * step2 <= FINAL_STEP_TOL * f1 * f1 * f1
                || step.abs() <= 4.0 * f64::EPSILON * e_anom,
        }
    }

    /// Corrections from `e_anom` in interval `j` until one is final, each kept inside a
    /// shrinking bracket of the root (bisecting when a step would leave it); bisection
    /// if that fails. The rare path: e ≳ 0.9 near periastron.
    #[cold]
    #[inline(never)]
    fn refine(&self, m: f64, j: usize, mut e_anom: f64) -> (f64, f64, f64) {
        let (mut lo, mut hi) = (NODES[2 * j][0], NODES[2 * j + 2][0]);
        for _ in 0..MAX_CORRECTIONS {
            let c = self.correct(m, j, e_anom);
            if c.done {
                return c.finish(e_anom);
            }
            if c.residual > 0.0 {
                hi = e_anom;
            } else {
                lo = e_anom;
            }
            let next = e_anom + c.step;
            e_anom = if next > lo && next < hi {
                next
            } else {
                0.5 * (lo + hi)
            };
        }
        let root = eccentric_anomaly_bisection(m, self.ecc);
        let (s, c) = sin_cos_0_pi(root);
        (root, s, c)
    }
}

/// One Householder correction of an eccentric anomaly.
#[derive(Clone, Copy)]
struct Correction {
    /// The step, radians.
    step: f64,
    /// sin and cos of the anomaly before the step.
    sin: f64,
    cos: f64,
    /// `E − e sin E − m` before the step.
    residual: f64,
    /// The step leaves an error below rounding: no further correction needed.
    done: bool,
}

impl Correction {
    /// `(E + step, sin, cos)` by the angle-addition formulas with the step's series.
    #[inline(always)]
    fn finish(&self, e_anom: f64) -> (f64, f64, f64) {
        let (step, s, c) = (self.step, self.sin, self.cos);
        let step2 = step * step;
        let sin_step = step - step * step2 * (1.0 / 6.0);
        let cos_step = 1.0 - 0.5 * step2;
        (
            e_anom + step,
            s * cos_step + c * sin_step,
            c * cos_step - s * sin_step,
        )
    }
}

/// Eccentric anomaly `E` (radians) for mean anomaly `mean_anom` (radians, any value) and
/// eccentricity `0 <= ecc < 1`, by [`KeplerSolver`]. Builds the solver's table on each
/// call: for many mean anomalies at one eccentricity, build one [`KeplerSolver`].
pub fn eccentric_anomaly(mean_anom: f64, ecc: f64) -> f64 {
    KeplerSolver::new(ecc).solve(mean_anom).ecc_anom
}

/// `E - e sin E - M`, written as `(1 - e) E + e (E - sin E) - M` so that it keeps its
/// relative precision for `e → 1` and small `E`, where the plain form cancels.
fn residual(ecc_anom: f64, ecc: f64, mean_anom: f64) -> f64 {
    (1.0 - ecc) * ecc_anom + ecc * e_minus_sin_e(ecc_anom) - mean_anom
}

/// `x - sin x` without cancellation for small `x` (Taylor series below |x| = 0.25, whose
/// truncation error after the x^13 term is below 1e-17 relative), else with the
/// library's sine: the bisection reference shares no code with [`KeplerSolver`].
fn e_minus_sin_e(x: f64) -> f64 {
    if x.abs() >= 0.25 {
        return x - x.sin();
    }
    // x^3/3! - x^5/5! + ... - x^13/13!, Horner form in x^2.
    let x2 = x * x;
    let sum = SIN_TAIL.iter().rev().fold(0.0, |acc, c| acc * x2 + c);
    x * x2 * sum
}

/// Eccentric anomaly by bisection on [`residual`]: slow (about 60 halvings) but cannot
/// fail because `E - e sin E` is monotonic; the reference in tests, and the fallback.
pub fn eccentric_anomaly_bisection(mean_anom: f64, ecc: f64) -> f64 {
    if ecc == 0.0 || !mean_anom.is_finite() {
        return mean_anom;
    }
    let (m, sign, base) = reduce(mean_anom);
    // For M in [0, π] the root lies in [M, min(M + e, π)].
    let (mut lo, mut hi) = (m, (m + ecc).min(PI));
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if residual(mid, ecc, m) > 0.0 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    let root = if residual(hi, ecc, m).abs() < residual(lo, ecc, m).abs() {
        hi
    } else {
        lo
    };
    base + sign * root
}

/// True anomaly (radians) from eccentric anomaly: `nu = 2 atan2(sqrt(1+e) sin(E/2),
/// sqrt(1-e) cos(E/2))`.
pub fn true_anomaly(ecc_anom: f64, ecc: f64) -> f64 {
    let (s, c) = (0.5 * ecc_anom).sin_cos();
    2.0 * ((1.0 + ecc).sqrt() * s).atan2((1.0 - ecc).sqrt() * c)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Meeus, Astronomical Algorithms (2nd ed.), Example 30.a and the sample-results table
    /// quoted in references.md §4 (rows tagged [V]).
    #[test]
    fn meeus_worked_examples() {
        let cases = [
            (0.1, 5.0_f64.to_radians(), 5.554589_f64.to_radians(), 1e-6),
            (0.99, 1.0_f64.to_radians(), 24.725822_f64.to_radians(), 1e-6),
            (0.99, 0.2, 1.066997365282, 1e-12),
            (0.99, 2.0_f64.to_radians(), 32.361007_f64.to_radians(), 1e-6),
            (
                0.99,
                33.0_f64.to_radians(),
                89.722155_f64.to_radians(),
                1e-6,
            ),
            (
                0.75,
                70.0_f64.to_radians(),
                110.302_f64.to_radians(),
                1e-3_f64.to_radians(),
            ),
            (0.5, 5.0_f64.to_radians(), 9.950063_f64.to_radians(), 1e-6),
            (0.9, 5.0_f64.to_radians(), 33.344447_f64.to_radians(), 1e-6),
        ];
        for (e, m, expect, tol) in cases {
            let got = eccentric_anomaly(m, e);
            assert!((got - expect).abs() < tol, "e={e} M={m}: {got} vs {expect}");
        }
        // True anomalies of the same table, degrees ([V] rows of references.md §4).
        let nu = true_anomaly(eccentric_anomaly(5.0_f64.to_radians(), 0.1), 0.1);
        assert!((nu.to_degrees() - 6.139762).abs() < 1e-5);
        let nu = true_anomaly(eccentric_anomaly(0.2, 0.99), 0.99);
        assert!((nu.to_degrees() - 166.311977).abs() < 1e-5);
    }

    /// Eccentricities of the exactness checks: a grid to 0.99, then towards e → 1.
    fn eccentricities() -> Vec<f64> {
        let mut es: Vec<f64> = (0..100).map(|i| i as f64 / 100.0).collect();
        es.extend([0.995, 0.999, 0.9999, 0.99999, 0.999_999, 0.999_999_9]);
        es
    }

    /// Mean anomalies of the exactness checks: a dense grid over several turns, and
    /// values within 1e-12 … 1e-2 of 0 and π (where the equation is stiffest or E sits
    /// at a table end), of both signs.
    fn mean_anomalies() -> Vec<f64> {
        let mut ms: Vec<f64> = (-400..=400).map(|i| i as f64 * 0.0197).collect();
        for p in 2..=12 {
            let h = 10f64.powi(-p);
            ms.extend([h, -h, PI - h, PI + h, -PI + h, TAU + h]);
        }
        ms
    }

    /// The solver against bisection over a dense grid of M and e up to 0.9999999: E to
    /// 1e-14 rad, and (for |M| ≤ π, where E is not offset by whole turns, which would
    /// round it) its sine and cosine against the library's sin and cos of that E to 1e-15.
    #[test]
    fn agrees_with_bisection_to_1e_14() {
        let (mut worst, mut worst_trig) = (0.0_f64, 0.0_f64);
        for e in eccentricities() {
            let solver = KeplerSolver::new(e);
            for m in mean_anomalies() {
                let a = solver.solve(m);
                let slow = eccentric_anomaly_bisection(m, e);
                worst = worst.max((a.ecc_anom - slow).abs());
                if m.abs() <= PI {
                    let (s, c) = a.ecc_anom.sin_cos();
                    worst_trig = worst_trig.max((a.sin - s).abs()).max((a.cos - c).abs());
                }
            }
        }
        println!("worst |E − E_bisection| {worst:.2e}, worst sin/cos {worst_trig:.2e}");
        assert!(worst <= 1e-14, "worst difference {worst}");
        assert!(worst_trig <= 1e-15, "worst sin/cos difference {worst_trig}");
    }

    /// The slice solver (eight lanes on processors with AVX-512) gives the scalar
    /// solver's E, sin E and cos E bit for bit, over the grid of the bisection check
    /// (lengths not a multiple of 8 included), non-finite mean anomalies too.
    #[test]
    fn slice_solver_matches_the_scalar_solver_bit_for_bit() {
        let mut ms = mean_anomalies();
        ms.extend([f64::NAN, f64::INFINITY, -f64::INFINITY, 1e300, -0.0, 0.0]);
        for e in eccentricities() {
            let solver = KeplerSolver::new(e);
            for n in [ms.len(), ms.len() - 3] {
                let mut out = vec![solver.solve(0.0); n];
                solver.solve_slice(&ms[..n], &mut out);
                for (a, &m) in out.iter().zip(&ms) {
                    let b = solver.solve(m);
                    let same =
                        |x: f64, y: f64| x.to_bits() == y.to_bits() || (x.is_nan() && y.is_nan());
                    assert!(
                        same(a.ecc_anom, b.ecc_anom) && same(a.sin, b.sin) && same(a.cos, b.cos),
                        "e={e} M={m}: {a:?} vs {b:?}"
                    );
                }
            }
        }
    }

    /// Every table end: m exactly at M_j, where the search and the bracket meet.
    #[test]
    fn exact_at_table_nodes() {
        for &e in &[0.1, 0.5, 0.9, 0.999] {
            let solver = KeplerSolver::new(e);
            for &mj in &solver.m_nodes {
                for m in [mj, mj.next_up(), mj.next_down()] {
                    if !(0.0..=PI).contains(&m) {
                        continue;
                    }
                    let got = solver.solve(m).ecc_anom;
                    let slow = eccentric_anomaly_bisection(m, e);
                    assert!((got - slow).abs() <= 1e-14, "e={e} M={m}: {got} vs {slow}");
                }
            }
        }
    }

    /// The compile-time table of sines and cosines against the library's (std, which
    /// calls the platform's libm) to 2 units in the last place of 1.
    #[test]
    fn node_table_matches_library_trigonometry() {
        for [x, s, c] in NODES {
            let (ls, lc) = x.sin_cos();
            assert!((s - ls).abs() <= 2.0 * f64::EPSILON, "sin {x}: {s} vs {ls}");
            assert!((c - lc).abs() <= 2.0 * f64::EPSILON, "cos {x}: {c} vs {lc}");
        }
        for i in 0..=2000 {
            let x = PI * i as f64 / 2000.0;
            let (s, c) = sin_cos_0_pi(x);
            assert!((s - x.sin()).abs() <= 2.0 * f64::EPSILON, "sin {x}");
            assert!((c - x.cos()).abs() <= 2.0 * f64::EPSILON, "cos {x}");
        }
    }

    #[test]
    fn round_trip_mean_anomaly() {
        for &e in &[0.0, 0.3, 0.7, 0.95, 0.9999] {
            for k in 0..50 {
                let m = -7.0 + 0.29 * k as f64;
                let big_e = eccentric_anomaly(m, e);
                let back = big_e - e * big_e.sin();
                assert!((back - m).abs() < 1e-13, "e={e} M={m}: back {back}");
            }
        }
    }

    #[test]
    fn tiny_mean_anomaly_near_parabolic() {
        let (m, e) = (1e-9, 0.999_999);
        let big_e = eccentric_anomaly(m, e);
        let rel = residual(big_e, e, m).abs() / m;
        assert!(rel < 1e-12, "relative residual {rel}");
    }

    #[test]
    fn non_finite_mean_anomaly_passes_through() {
        let a = KeplerSolver::new(0.3).solve(f64::NAN);
        assert!(a.ecc_anom.is_nan() && a.sin.is_nan());
        assert_eq!(
            eccentric_anomaly(f64::INFINITY, 0.3),
            f64::INFINITY,
            "infinite M is returned as given"
        );
    }
}
