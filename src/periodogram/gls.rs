//! Exact GLS sums, evaluated block by block with trigonometric recurrences.
//!
//! Within a block of [`BLOCK`] frequencies, `cos`/`sin` of `2π f t_i` advance by one
//! rotation per step; each block restarts from exactly computed values so rounding
//! cannot accumulate beyond a block (≈ `BLOCK` × 1e-16 in each sum).

use std::f64::consts::TAU;

use super::{Grid, PeriodogramError};
use crate::data::RvSet;

/// Frequencies per block (and per parallel task).
pub const BLOCK: usize = 512;

/// Data prepared once per periodogram: normalised weights, RVs centred on each
/// instrument's weighted mean, instrument weight fractions.
pub(super) struct Prepared<'a> {
    pub(super) time: &'a [f64],
    pub(super) inst: &'a [usize],
    pub(super) w: Vec<f64>,
    pub(super) wy: Vec<f64>,
    yy: f64,
    pub(super) inst_weight: Vec<f64>,
    pub(super) inst_mean: Vec<f64>,
}

/// Weighted sums at one frequency, centred per instrument (notation of Zechmeister &
/// Kürster 2009, eqs. 5–15, extended to one mean per instrument).
struct Sums {
    yy: f64,
    yc: f64,
    ys: f64,
    cc: f64,
    ss: f64,
    cs: f64,
}

/// When `D = CC SS − CS²` is below this fraction of `CC SS`, the centred cosine and sine
/// columns are parallel to rounding (two distinct epochs; even sampling at a multiple of
/// its rate) and the 2 × 2 solve would return rounding noise: the fit then uses the
/// larger column alone, the limit of the exact fit as `D → 0`.
const PARALLEL: f64 = 1e-9;

impl Sums {
    fn det(&self) -> f64 {
        self.cc * self.ss - self.cs * self.cs
    }

    /// Whether the cosine and sine columns can be told apart (see [`PARALLEL`]).
    fn independent(&self) -> bool {
        self.det() > PARALLEL * self.cc * self.ss
    }

    /// `p = (SS YC² + CC YS² − 2 CS YC YS)/(YY D)`, clamped to [0, 1] against rounding;
    /// with parallel columns, `YC²/(YY CC)` or `YS²/(YY SS)` of the larger one.
    #[inline]
    fn power(&self) -> f64 {
        if !(self.yy > 0.0) {
            return 0.0;
        }
        let p = if self.independent() {
            let num = self.ss * self.yc * self.yc + self.cc * self.ys * self.ys
                - 2.0 * self.cs * self.yc * self.ys;
            num / (self.yy * self.det())
        } else if self.cc >= self.ss && self.cc > 0.0 {
            self.yc * self.yc / (self.yy * self.cc)
        } else if self.ss > 0.0 {
            self.ys * self.ys / (self.yy * self.ss)
        } else {
            0.0
        };
        p.clamp(0.0, 1.0)
    }

    /// Coefficients of `a cos + b sin`: `a = (YC SS − YS CS)/D`, `b = (YS CC − YC CS)/D`;
    /// with parallel columns, the larger one's alone.
    fn coefficients(&self) -> (f64, f64) {
        if self.independent() {
            let d = self.det();
            (
                (self.yc * self.ss - self.ys * self.cs) / d,
                (self.ys * self.cc - self.yc * self.cs) / d,
            )
        } else if self.cc >= self.ss && self.cc > 0.0 {
            (self.yc / self.cc, 0.0)
        } else if self.ss > 0.0 {
            (0.0, self.ys / self.ss)
        } else {
            (0.0, 0.0)
        }
    }
}

/// Raw accumulators for a run of `len` consecutive grid frequencies: `Σ w y' cos`,
/// `Σ w y' sin`, `Σ w cos²`, `Σ w cos sin` (y' centred per instrument, Σ w = 1).
pub(super) struct Raw {
    pub(super) yc: Vec<f64>,
    pub(super) ys: Vec<f64>,
    pub(super) cc: Vec<f64>,
    pub(super) cs: Vec<f64>,
    /// `SS`: `Σ w sin²` about the instruments' means, set by `Prepared::centre` (which
    /// centres `cc` and `cs` likewise).
    ss: Vec<f64>,
    /// Per instrument `k`: Σ w cos at `c_k[k * len + j]`, likewise `s_k`.
    pub(super) c_k: Vec<f64>,
    pub(super) s_k: Vec<f64>,
}

impl Raw {
    /// Accumulators for `len` frequencies and `n_inst` instruments, all zero.
    pub(super) fn zeros(len: usize, n_inst: usize) -> Raw {
        Raw {
            yc: vec![0.0; len],
            ys: vec![0.0; len],
            cc: vec![0.0; len],
            cs: vec![0.0; len],
            ss: vec![0.0; len],
            c_k: vec![0.0; n_inst * len],
            s_k: vec![0.0; n_inst * len],
        }
    }
}

impl<'a> Prepared<'a> {
    pub(super) fn new(set: &'a RvSet, jitters_mps: &[f64]) -> Result<Self, PeriodogramError> {
        let n_inst = set.n_instruments();
        let need = n_inst + 2;
        if set.len() < need.max(3) {
            return Err(PeriodogramError::TooFewPoints {
                need: need.max(3),
                got: set.len(),
            });
        }
        if set.baseline_d() <= 0.0 {
            return Err(PeriodogramError::ZeroBaseline);
        }
        let jit = |k: usize| jitters_mps.get(k).copied().unwrap_or(0.0);
        let raw_w: Vec<f64> = (0..set.len())
            .map(|i| {
                let s = jit(set.instrument[i]);
                1.0 / (set.err_mps[i] * set.err_mps[i] + s * s)
            })
            .collect();
        let total: f64 = raw_w.iter().sum();
        let w: Vec<f64> = raw_w.iter().map(|x| x / total).collect();
        let mut inst_weight = vec![0.0; n_inst];
        let mut inst_mean = vec![0.0; n_inst];
        for i in 0..set.len() {
            inst_weight[set.instrument[i]] += w[i];
            inst_mean[set.instrument[i]] += w[i] * set.rv_mps[i];
        }
        for k in 0..n_inst {
            if inst_weight[k] > 0.0 {
                inst_mean[k] /= inst_weight[k];
            }
        }
        let centred: Vec<f64> = (0..set.len())
            .map(|i| set.rv_mps[i] - inst_mean[set.instrument[i]])
            .collect();
        let wy: Vec<f64> = w.iter().zip(&centred).map(|(w, y)| w * y).collect();
        let yy = wy.iter().zip(&centred).map(|(wy, y)| wy * y).sum();
        Ok(Prepared {
            time: &set.time_d,
            inst: &set.instrument,
            w,
            wy,
            yy,
            inst_weight,
            inst_mean,
        })
    }

    /// `sqrt(4 π D_t)` with `D_t` the weighted (population) variance of the times.
    pub(super) fn t_eff_d(&self) -> f64 {
        let mean: f64 = self.w.iter().zip(self.time).map(|(w, t)| w * t).sum();
        let var: f64 = self
            .w
            .iter()
            .zip(self.time)
            .map(|(w, t)| w * (t - mean) * (t - mean))
            .sum();
        (4.0 * std::f64::consts::PI * var).sqrt()
    }

    fn accumulate(&self, f0: f64, df: f64, len: usize) -> Raw {
        let mut r = Raw::zeros(len, self.inst_weight.len());
        for i in 0..self.time.len() {
            let t = self.time[i];
            let (w, wy) = (self.w[i], self.wy[i]);
            let (mut s, mut c) = (TAU * f0 * t).sin_cos();
            let (sd, cd) = (TAU * df * t).sin_cos();
            let ck = &mut r.c_k[self.inst[i] * len..(self.inst[i] + 1) * len];
            let sk = &mut r.s_k[self.inst[i] * len..(self.inst[i] + 1) * len];
            for j in 0..len {
                let wc = w * c;
                r.yc[j] += wy * c;
                r.ys[j] += wy * s;
                r.cc[j] += wc * c;
                r.cs[j] += wc * s;
                ck[j] += wc;
                sk[j] += w * s;
                let c_next = c * cd - s * sd;
                s = s * cd + c * sd;
                c = c_next;
            }
        }
        r
    }

    /// Takes each instrument's weighted mean out of `CC` and `CS`, and sets `SS`
    /// (`Σ w = 1`), at the first `m` of the `len` frequencies of `r`.
    fn centre(&self, r: &mut Raw, len: usize, m: usize) {
        for (ss, cc) in r.ss[..m].iter_mut().zip(&r.cc) {
            *ss = 1.0 - cc;
        }
        for (k, &wk) in self.inst_weight.iter().enumerate() {
            if wk > 0.0 {
                let c_k = &r.c_k[k * len..k * len + m];
                let s_k = &r.s_k[k * len..k * len + m];
                let sums = r.cc.iter_mut().zip(r.ss.iter_mut()).zip(r.cs.iter_mut());
                for (((cc, ss), cs), (&c, &s)) in sums.zip(c_k.iter().zip(s_k)) {
                    *cc -= c * c / wk;
                    *ss -= s * s / wk;
                    *cs -= c * s / wk;
                }
            }
        }
    }

    /// The sums at frequency `j` of `r`, once centred.
    fn sums(&self, r: &Raw, j: usize) -> Sums {
        Sums {
            yy: self.yy,
            yc: r.yc[j],
            ys: r.ys[j],
            cc: r.cc[j],
            ss: r.ss[j],
            cs: r.cs[j],
        }
    }

    /// Power at grid frequencies `start .. start + out.len()`.
    pub(super) fn block(&self, grid: &Grid, start: usize, out: &mut [f64]) {
        let len = out.len();
        let mut raw = self.accumulate(grid.frequency(start), grid.df, len);
        self.powers(&mut raw, len, out);
    }

    /// Power from accumulators `raw` (of `len` frequencies) at the first `out.len()`.
    pub(super) fn powers(&self, raw: &mut Raw, len: usize, out: &mut [f64]) {
        self.centre(raw, len, out.len());
        let y = raw.yc.iter().zip(&raw.ys);
        let t = raw.cc.iter().zip(&raw.ss).zip(&raw.cs);
        for (p, ((&yc, &ys), ((&cc, &ss), &cs))) in out.iter_mut().zip(y.zip(t)) {
            let yy = self.yy;
            *p = Sums {
                yy,
                yc,
                ys,
                cc,
                ss,
                cs,
            }
            .power();
        }
    }
}

/// Best-fitting sinusoid at one frequency, with one offset per instrument:
/// `rv ≈ offset[k] + a cos(2π f t) + b sin(2π f t)`.
#[derive(Clone, Debug, PartialEq)]
pub struct Sinusoid {
    /// Frequency, 1/day.
    pub frequency: f64,
    /// Cosine coefficient `a`, m/s.
    pub cos_mps: f64,
    /// Sine coefficient `b`, m/s.
    pub sin_mps: f64,
    /// Offset of each instrument, m/s.
    pub offsets_mps: Vec<f64>,
    /// GLS power at this frequency.
    pub power: f64,
}

impl Sinusoid {
    /// Semi-amplitude `sqrt(a² + b²)`, m/s.
    pub fn amplitude_mps(&self) -> f64 {
        self.cos_mps.hypot(self.sin_mps)
    }

    /// Conjunction time (days, in `[0, P)` of the data's time frame) of the circular
    /// orbit this sinusoid describes: `v = -K sin(2π (t − Tc)/P)` gives
    /// `2π f Tc = atan2(a, −b)`.
    pub fn conjunction_d(&self) -> f64 {
        let phase = self.cos_mps.atan2(-self.sin_mps).rem_euclid(TAU);
        phase / (TAU * self.frequency)
    }
}

/// The GLS sinusoid fit at frequency `f` (1/day), weights `1/(σ² + s²)`.
///
/// # Errors
/// As [`super::compute`].
pub fn sinusoid_at(set: &RvSet, jitters_mps: &[f64], f: f64) -> Result<Sinusoid, PeriodogramError> {
    let prep = Prepared::new(set, jitters_mps)?;
    let mut raw = prep.accumulate(f, 0.0, 1);
    prep.centre(&mut raw, 1, 1);
    let sums = prep.sums(&raw, 0);
    let (a, b) = sums.coefficients();
    let offsets_mps = prep
        .inst_weight
        .iter()
        .enumerate()
        .map(|(k, &wk)| {
            if wk > 0.0 {
                prep.inst_mean[k] - (a * raw.c_k[k] + b * raw.s_k[k]) / wk
            } else {
                0.0
            }
        })
        .collect();
    Ok(Sinusoid {
        frequency: f,
        cos_mps: a,
        sin_mps: b,
        offsets_mps,
        power: sums.power(),
    })
}
