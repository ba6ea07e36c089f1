//! Kepler's equation for eight mean anomalies at a time with AVX-512 (x86-64 processors
//! that have it, detected at run time).
//!
//! The same arithmetic as [`KeplerSolver::solve`], operation for operation (no fused
//! multiply–adds), so every lane gives the scalar solver's result bit for bit. Table
//! look-ups are two-register permutes (`vpermt2pd`: 16 entries, one instruction) instead
//! of loads; the rare lanes that need more than one correction (e ≳ 0.9 near periastron)
//! or have a non-finite mean anomaly are redone by the scalar solver.

use std::arch::x86_64::*;
use std::f64::consts::{PI, TAU};

use super::{
    Anomaly, COS_TAIL, DIVISIONS, FINAL_STEP_TOL, INTERVALS, KeplerSolver, NODES, SIN_TAIL,
};

/// Lanes per vector.
pub(super) const LANES: usize = 8;

/// Whether this processor has AVX-512 (checked once, then cached by the standard library).
pub(in crate::orbit) fn available() -> bool {
    is_x86_feature_detected!("avx512f")
}

/// Entry `k` of a node column for `k` = offset, offset + 2, … (16 entries).
const fn node_column(column: usize, offset: usize) -> [f64; INTERVALS] {
    let mut out = [0.0; INTERVALS];
    let mut j = 0;
    while j < INTERVALS {
        out[j] = NODES[2 * j + offset][column];
        j += 1;
    }
    out
}

/// Per interval: left end, right end, midpoint and the midpoint's sine and cosine.
static LEFT: [f64; INTERVALS] = node_column(0, 0);
static RIGHT: [f64; INTERVALS] = node_column(0, 2);
static MID: [[f64; INTERVALS]; 3] = [node_column(0, 1), node_column(1, 1), node_column(2, 1)];

const _: () = assert!(
    INTERVALS == 16 && DIVISIONS == 32,
    "two-register tables hold 16 entries"
);

/// A 16-entry table in two registers.
#[derive(Clone, Copy)]
struct Table([__m512d; 2]);

impl Table {
    #[inline]
    #[target_feature(enable = "avx512f")]
    fn load(values: &[f64; INTERVALS]) -> Table {
        // SAFETY: both halves are 8 in-bounds f64s; unaligned loads.
        unsafe {
            Table([
                _mm512_loadu_pd(values.as_ptr()),
                _mm512_loadu_pd(values.as_ptr().add(LANES)),
            ])
        }
    }

    /// Entry `index` (0 … 15 per lane).
    #[inline]
    #[target_feature(enable = "avx512f")]
    fn get(self, index: __m512i) -> __m512d {
        _mm512_permutex2var_pd(self.0[0], index, self.0[1])
    }
}

/// One solver's tables and the node tables, in registers.
pub(super) struct Tables {
    ecc: __m512d,
    m_nodes: Table,
    coef: [Table; 6],
    left: Table,
    right: Table,
    mid: [Table; 3],
}

impl Tables {
    /// The tables of `solver`.
    #[inline]
    #[target_feature(enable = "avx512f")]
    pub(super) fn new(solver: &KeplerSolver) -> Tables {
        let mut m_nodes = [0.0; INTERVALS];
        m_nodes.copy_from_slice(&solver.m_nodes[..INTERVALS]);
        Tables {
            ecc: _mm512_set1_pd(solver.ecc),
            m_nodes: Table::load(&m_nodes),
            coef: [0, 1, 2, 3, 4, 5].map(|i| Table::load(&solver.coef[i])),
            left: Table::load(&LEFT),
            right: Table::load(&RIGHT),
            mid: [0, 1, 2].map(|i| Table::load(&MID[i])),
        }
    }
}

#[inline(always)]
fn splat(x: f64) -> __m512d {
    // SAFETY: AVX-512 is enabled in every caller (all are `target_feature` functions).
    unsafe { _mm512_set1_pd(x) }
}

/// Eight solves: `(E, sin E, cos E)` and the mask of lanes to redo with the scalar
/// solver. Mirrors `reduce`, `KeplerSolver::start`, `KeplerSolver::correct` and
/// `Correction::finish` operation for operation.
#[inline]
#[target_feature(enable = "avx512f")]
pub(super) fn solve(t: &Tables, mean: __m512d) -> (__m512d, __m512d, __m512d, __mmask8) {
    let (add, sub, mul) = (_mm512_add_pd, _mm512_sub_pd, _mm512_mul_pd);
    let sign_bit = _mm512_set1_epi64(i64::MIN);
    let finite = _mm512_cmp_pd_mask::<_CMP_LT_OQ>(_mm512_abs_pd(mean), splat(f64::INFINITY));

    // reduce: m in [0, π], the sign and the whole turns.
    let turns = _mm512_roundscale_pd::<{ _MM_FROUND_TO_NEAREST_INT | _MM_FROUND_NO_EXC }>(mul(
        mean,
        splat(1.0 / TAU),
    ));
    // + 0: `round_nearest` gives +0 for −0.5 < x ≤ −0, the rounding instruction −0.
    let base = mul(add(turns, splat(0.0)), splat(TAU));
    let r = sub(mean, base);
    let m = _mm512_min_pd(_mm512_abs_pd(r), splat(PI));
    let sign = _mm512_castsi512_pd(_mm512_or_si512(
        _mm512_and_si512(_mm512_castpd_si512(r), sign_bit),
        _mm512_castpd_si512(splat(1.0)),
    ));

    // start: the interval by binary search, the quintic, the clamp.
    let mut j = _mm512_setzero_si512();
    for step in [8, 4, 2, 1] {
        let next = _mm512_add_epi64(j, _mm512_set1_epi64(step));
        let above = _mm512_cmp_pd_mask::<_CMP_GE_OQ>(m, t.m_nodes.get(next));
        j = _mm512_mask_mov_epi64(j, above, next);
    }
    let c = t.coef.map(|row| row.get(j));
    let x = sub(m, t.m_nodes.get(j));
    let x2 = mul(x, x);
    let e0 = add(
        add(c[0], mul(x, c[1])),
        mul(
            x2,
            add(add(c[2], mul(x, c[3])), mul(x2, add(c[4], mul(x, c[5])))),
        ),
    );
    let (lo, hi) = (t.left.get(j), t.right.get(j));
    let e0 = _mm512_mask_blend_pd(_mm512_cmp_pd_mask::<_CMP_LT_OQ>(e0, lo), e0, lo);
    let e0 = _mm512_mask_blend_pd(_mm512_cmp_pd_mask::<_CMP_GT_OQ>(e0, hi), e0, hi);

    // correct: about the interval's midpoint ...
    let e = t.ecc;
    let one = splat(1.0);
    let (p, q) = (SIN_TAIL, COS_TAIL);
    let d = sub(e0, t.mid[0].get(j));
    let (sm, cm) = (t.mid[1].get(j), t.mid[2].get(j));
    let xd = mul(d, d);
    let xd2 = mul(xd, xd);
    let sin_d = sub(
        d,
        mul(
            mul(d, xd),
            add(
                add(splat(p[0]), mul(xd, splat(p[1]))),
                mul(xd2, add(splat(p[2]), mul(xd, splat(p[3])))),
            ),
        ),
    );
    let cos_d = sub(
        one,
        mul(
            xd,
            add(
                add(splat(q[0]), mul(xd, splat(q[1]))),
                mul(xd2, add(splat(q[2]), mul(xd, splat(q[3])))),
            ),
        ),
    );
    let s_mid = add(mul(sm, cos_d), mul(cm, sin_d));
    let c_mid = sub(mul(cm, cos_d), mul(sm, sin_d));
    let f_mid = sub(sub(e0, m), mul(e, s_mid));
    let f1_mid = sub(one, mul(e, c_mid));
    // ... or, in the first interval, about 0 without cancellation.
    let x0 = mul(e0, e0);
    let x02 = mul(x0, x0);
    let sp = add(
        add(splat(p[0]), mul(x0, splat(p[1]))),
        mul(
            x02,
            add(
                add(splat(p[2]), mul(x0, splat(p[3]))),
                mul(x02, add(splat(p[4]), mul(x0, splat(p[5])))),
            ),
        ),
    );
    let sq = add(
        add(splat(q[0]), mul(x0, splat(q[1]))),
        mul(
            x02,
            add(
                add(splat(q[2]), mul(x0, splat(q[3]))),
                mul(x02, add(splat(q[4]), mul(x0, splat(q[5])))),
            ),
        ),
    );
    let e_minus_sin = mul(mul(e0, x0), sp);
    let one_minus_cos = mul(x0, sq);
    let one_minus_e = sub(one, e);
    let first = _mm512_cmpeq_epi64_mask(j, _mm512_setzero_si512());
    let s = _mm512_mask_blend_pd(first, s_mid, sub(e0, e_minus_sin));
    let c = _mm512_mask_blend_pd(first, c_mid, sub(one, one_minus_cos));
    let f = _mm512_mask_blend_pd(
        first,
        f_mid,
        sub(add(mul(one_minus_e, e0), mul(e, e_minus_sin)), m),
    );
    let f1 = _mm512_mask_blend_pd(first, f1_mid, add(one_minus_e, mul(e, one_minus_cos)));

    // The Householder step and its stopping test.
    let (f2, f3) = (mul(e, s), mul(e, c));
    let six_f1 = mul(splat(6.0), f1);
    let numerator = sub(mul(six_f1, f1), mul(mul(splat(3.0), f), f2));
    let denominator = add(
        sub(
            mul(mul(six_f1, f1), f1),
            mul(mul(mul(splat(6.0), f), f1), f2),
        ),
        mul(mul(f, f), f3),
    );
    let neg_f = _mm512_castsi512_pd(_mm512_xor_si512(_mm512_castpd_si512(f), sign_bit));
    let step = _mm512_div_pd(mul(neg_f, numerator), denominator);
    let step2 = mul(step, step);
    let small = _mm512_cmp_pd_mask::<_CMP_LE_OQ>(
        mul(mul(mul(mul(e, e), e), step2), step2),
        mul(mul(mul(splat(FINAL_STEP_TOL), f1), f1), f1),
    );
    let tiny =
        _mm512_cmp_pd_mask::<_CMP_LE_OQ>(_mm512_abs_pd(step), mul(splat(4.0 * f64::EPSILON), e0));
    let done = (small | tiny) & finite;

    // finish.
    let sin_step = sub(step, mul(mul(step, step2), splat(1.0 / 6.0)));
    let cos_step = sub(one, mul(splat(0.5), step2));
    let e_anom = add(e0, step);
    let sin = add(mul(s, cos_step), mul(c, sin_step));
    let cos = sub(mul(c, cos_step), mul(s, sin_step));
    (add(base, mul(sign, e_anom)), mul(sign, sin), cos, !done)
}

/// [`KeplerSolver::solve`] for every mean anomaly of `mean_anom`, into `out`.
///
/// # Safety
/// The processor must have AVX-512 ([`available`]).
#[target_feature(enable = "avx512f")]
pub(super) unsafe fn solve_slice(solver: &KeplerSolver, mean_anom: &[f64], out: &mut [Anomaly]) {
    let tables = Tables::new(solver);
    let chunks = mean_anom.chunks_exact(LANES);
    let rest = chunks.remainder().len();
    for (ms, dest) in chunks.zip(out.chunks_exact_mut(LANES)) {
        // SAFETY: `ms` holds LANES values.
        let (e_anom, sin, cos, redo) = solve(&tables, unsafe { _mm512_loadu_pd(ms.as_ptr()) });
        let mut lanes = [[0.0; LANES]; 3];
        for (lane, v) in lanes.iter_mut().zip([e_anom, sin, cos]) {
            // SAFETY: `lane` holds LANES values.
            unsafe { _mm512_storeu_pd(lane.as_mut_ptr(), v) };
        }
        for (k, a) in dest.iter_mut().enumerate() {
            *a = if redo & (1 << k) != 0 {
                solver.solve(ms[k])
            } else {
                Anomaly {
                    ecc_anom: lanes[0][k],
                    sin: lanes[1][k],
                    cos: lanes[2][k],
                }
            };
        }
    }
    let n = mean_anom.len();
    for (a, &m) in out[n - rest..].iter_mut().zip(&mean_anom[n - rest..]) {
        *a = solver.solve(m);
    }
}

/// Constants of a Keplerian RV curve (see `Orbit::rv`): time of periastron (days), 1/P
/// (1/day), K cos ω, K √(1 − e²) sin ω and K e cos ω (m/s).
pub(in crate::orbit) struct Curve {
    pub(in crate::orbit) tp_d: f64,
    pub(in crate::orbit) inv_period: f64,
    pub(in crate::orbit) k_cos_w: f64,
    pub(in crate::orbit) k_root_sin_w: f64,
    pub(in crate::orbit) k_e_cos_w: f64,
}

/// Adds the curve's RV at each time of `t_d` to `out`, as `Orbit::rv` computes it
/// (same operations, same results), eight times at a time; `scalar` gives the RV at one
/// time for lanes the scalar solver must redo and for the last `len % 8` times.
///
/// # Safety
/// The processor must have AVX-512 ([`available`]).
#[target_feature(enable = "avx512f")]
pub(in crate::orbit) unsafe fn add_rv(
    solver: &KeplerSolver,
    curve: &Curve,
    t_d: &[f64],
    out: &mut [f64],
    scalar: impl Fn(f64) -> f64,
) {
    let (add, sub, mul) = (_mm512_add_pd, _mm512_sub_pd, _mm512_mul_pd);
    let tables = Tables::new(solver);
    let chunks = t_d.chunks_exact(LANES);
    let rest = chunks.remainder().len();
    for (ts, dest) in chunks.zip(out.chunks_exact_mut(LANES)) {
        // SAFETY: `ts` and `dest` hold LANES values each.
        let (time, sum) = unsafe { (_mm512_loadu_pd(ts.as_ptr()), _mm512_loadu_pd(dest.as_ptr())) };
        let mean = mul(
            mul(splat(TAU), sub(time, splat(curve.tp_d))),
            splat(curve.inv_period),
        );
        let (_, sin, cos, redo) = solve(&tables, mean);
        let rv = add(
            _mm512_div_pd(
                sub(
                    mul(splat(curve.k_cos_w), sub(cos, tables.ecc)),
                    mul(splat(curve.k_root_sin_w), sin),
                ),
                sub(splat(1.0), mul(tables.ecc, cos)),
            ),
            splat(curve.k_e_cos_w),
        );
        // SAFETY: as above. Lanes to redo keep their sum and get the scalar RV.
        unsafe { _mm512_storeu_pd(dest.as_mut_ptr(), _mm512_mask_add_pd(sum, !redo, sum, rv)) };
        if redo != 0 {
            for (k, (v, &t)) in dest.iter_mut().zip(ts).enumerate() {
                if redo & (1 << k) != 0 {
                    *v += scalar(t);
                }
            }
        }
    }
    let n = t_d.len();
    for (v, &t) in out[n - rest..].iter_mut().zip(&t_d[n - rest..]) {
        *v += scalar(t);
    }
}
