//! Fast GLS sums: every trigonometric sum on the whole grid from type-1 non-uniform
//! FFTs, O(N w + M log M) for N points, M frequencies and a kernel of w points.
//!
//! The idea of evaluating the Lomb–Scargle sums on a regular grid by an FFT is Press &
//! Rybicki (1989, ApJ 338, 277); instead of their Lagrange extirpolation the points are
//! spread with the "exponential of semicircle" kernel
//! `φ(z) = exp(β (sqrt(1 − z²) − 1))`, `|z| ≤ 1`, of Barnett, Magland & af Klinteberg
//! (2019, SIAM J. Sci. Comput. 41, C479), on a fine grid [`UPSAMPLING`] = 1.5 times the
//! number of frequencies, with their width and shape for an upsampling σ below 2:
//! `w = ⌈ln(1/ε) / (π sqrt(1 − 1/σ))⌉` points (one more here as margin) and
//! `β = 0.97 π (1 − 1/(2σ)) w` (the factor 0.97 from memory of that paper; the accuracy
//! tests confirm the choice). The kernel's Fourier transform, divided out after the FFT,
//! is computed by Gauss–Legendre quadrature as in that paper. At σ = 1.25 the FFTs would
//! be a sixth smaller, but dividing out the kernel's transform, small at the band edge,
//! lifts the sums' rounding error to ~1e-11 (measured) whatever the width.
//!
//! The grid is cut into chunks of equal length whose fine grids (sizes `2^a 3^b`, the
//! fastest for rustfft) stay within a core's cache; each chunk runs through all its sums
//! and its power on one thread, chunks in parallel, so memory stays O(M) and results do
//! not depend on the thread count. For chunk frequencies `f = fc + k' df` (`fc` the
//! chunk's centre) every sum `Σ h_j exp(2πi f t_j)` is `Σ c_j exp(2πi k' x_j)` with
//! `c_j = h_j exp(2πi fc t_j)` and `x_j = frac(df t_j)`, the same for every chunk; the
//! times are days from the data's reference epoch, so the phases keep full precision at
//! full Julian dates.

use std::f64::consts::{PI, TAU};
use std::sync::Arc;

use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use rustfft::{Fft, FftPlanner};

use super::gls::{Prepared, Raw};
use super::{Grid, PeriodogramError};

/// Default relative accuracy of the fast sums (with respect to `Σ |h_j|`); at this value
/// the power agrees with the exact sums to about 1e-11 (tested to ≤ 1e-9).
pub const DEFAULT_TOLERANCE: f64 = 1e-12;
/// Tightest tolerance accepted: below it rounding in the FFT dominates.
pub const MIN_TOLERANCE: f64 = 1e-14;
/// Upsampling σ: fine-grid points per frequency, at least.
const UPSAMPLING: f64 = 1.5;
/// Largest fine grid of a chunk (complex values, 512 KiB) unless the points' kernels
/// cover more, so that spreading stays a small part of each chunk's work.
const CHUNK_FINE: usize = 1 << 15;
/// Values of the kernel's transform between restarts of their trigonometric recurrence.
const RESTART: usize = 1024;

/// Type-1 non-uniform FFTs of one chunk size and accuracy.
struct Plan {
    /// Output modes `L` (frequencies of a chunk).
    modes: usize,
    /// Fine grid size `n` (≥ σ L, factors 2 and 3 only).
    fine: usize,
    /// Kernel width, fine-grid points.
    width: usize,
    /// Kernel shape parameter β.
    beta: f64,
    /// `1/(n φ̂(k))` for `k = 0 ..= ⌊L/2⌋`.
    correction: Vec<f64>,
    fft: Arc<dyn Fft<f64>>,
}

/// Smallest integer ≥ `n` with no prime factor above 3 (fastest FFT sizes).
fn smooth_size(n: usize) -> usize {
    (n.max(1)..)
        .find(|&k| {
            let mut r = k;
            for p in [2, 3] {
                while r % p == 0 {
                    r /= p;
                }
            }
            r == 1
        })
        .expect("smooth numbers are unbounded")
}

/// Gauss–Legendre nodes and weights on [0, 1] (`q` nodes, Newton on the Legendre
/// recurrence from the usual cosine start).
fn gauss_legendre(q: usize) -> (Vec<f64>, Vec<f64>) {
    let mut nodes = Vec::with_capacity(q);
    let mut weights = Vec::with_capacity(q);
    for i in 0..q {
        let mut x = (PI * (i as f64 + 0.75) / (q as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            let (mut p0, mut p1) = (1.0, x);
            for j in 2..=q {
                let jf = j as f64;
                let p2 = ((2.0 * jf - 1.0) * x * p1 - (jf - 1.0) * p0) / jf;
                p0 = p1;
                p1 = p2;
            }
            dp = q as f64 * (x * p1 - p0) / (x * x - 1.0);
            let dx = p1 / dp;
            x -= dx;
            if dx.abs() < 1e-16 {
                break;
            }
        }
        nodes.push(0.5 * (x + 1.0));
        weights.push(1.0 / ((1.0 - x * x) * dp * dp));
    }
    (nodes, weights)
}

/// Kernel width (fine-grid points) for relative accuracy `tolerance`: the formula of
/// Barnett et al. (2019) plus one point of margin.
fn kernel_width(tolerance: f64) -> usize {
    ((1.0 / tolerance).ln() / (PI * (1.0 - 1.0 / UPSAMPLING).sqrt())).ceil() as usize + 1
}

/// Per-thread buffers: the fine grid with `width` points of wrap-around, FFT scratch,
/// and the deconvolved sums of one chunk.
struct Work {
    fine: Vec<Complex64>,
    scratch: Vec<Complex64>,
    out: Vec<Complex64>,
}

/// Where each point's kernel starts on the fine grid, and its `width` values.
struct Spread {
    start: Vec<usize>,
    kernel: Vec<f64>,
}

impl Plan {
    /// Plan for a grid of `m` frequencies and `n_points` points.
    fn new(m: usize, n_points: usize, tolerance: f64) -> Plan {
        let limit = CHUNK_FINE.max(smooth_size(n_points * kernel_width(tolerance)));
        Plan::with_limit(m, limit, tolerance)
    }

    /// Plan whose chunks have fine grids of at most `limit` points (unless one chunk of
    /// a single frequency needs more).
    fn with_limit(m: usize, limit: usize, tolerance: f64) -> Plan {
        let width = kernel_width(tolerance).max(2);
        let beta = 0.97 * PI * (1.0 - 0.5 / UPSAMPLING) * width as f64;
        let per_chunk = ((limit as f64 / UPSAMPLING) as usize).max(1);
        let modes = m.div_ceil(m.div_ceil(per_chunk));
        let fine = smooth_size(((UPSAMPLING * modes as f64).ceil() as usize).max(2 * width));
        let fft = FftPlanner::new().plan_fft_inverse(fine);
        // n φ̂(k) = w ∫_0^1 φ(z) cos(π k w z / n) dz for the kernel scaled to w points.
        let (z, g) = gauss_legendre(2 * width + 10);
        let amp: Vec<f64> = z
            .iter()
            .zip(&g)
            .map(|(&z, &g)| width as f64 * g * (beta * ((1.0 - z * z).sqrt() - 1.0)).exp())
            .collect();
        let theta: Vec<f64> = z
            .iter()
            .map(|&z| PI * width as f64 * z / fine as f64)
            .collect();
        let step: Vec<(f64, f64)> = theta.iter().map(|th| th.sin_cos()).collect();
        let mut correction = vec![0.0; modes / 2 + 1];
        correction
            .par_chunks_mut(RESTART)
            .enumerate()
            .for_each(|(b, block)| {
                let mut rot: Vec<(f64, f64)> = theta
                    .iter()
                    .map(|&th| ((b * RESTART) as f64 * th).sin_cos())
                    .collect();
                for v in block.iter_mut() {
                    let mut sum = 0.0;
                    for ((s, c), (&a, &(sd, cd))) in rot.iter_mut().zip(amp.iter().zip(&step)) {
                        sum += a * *c;
                        (*s, *c) = (*s * cd + *c * sd, *c * cd - *s * sd);
                    }
                    *v = 1.0 / sum;
                }
            });
        Plan {
            modes,
            fine,
            width,
            beta,
            correction,
            fft,
        }
    }

    fn work(&self) -> Work {
        let zero = Complex64::new(0.0, 0.0);
        Work {
            fine: vec![zero; self.fine + self.width],
            scratch: vec![zero; self.fft.get_inplace_scratch_len()],
            out: vec![zero; self.modes],
        }
    }

    /// Kernel positions and values for points at `x = frac(step · t)` cycles.
    fn spread(&self, time: &[f64], step: f64) -> Spread {
        let n = self.fine as f64;
        let half = 0.5 * self.width as f64;
        let mut start = Vec::with_capacity(time.len());
        let mut kernel = Vec::with_capacity(time.len() * self.width);
        for &t in time {
            let u = step * t;
            let pos = (u - u.floor()) * n;
            let first = (pos - half).ceil();
            start.push((first as i64).rem_euclid(self.fine as i64) as usize);
            kernel.extend((0..self.width).map(|q| {
                let z = (first + q as f64 - pos) / half;
                (self.beta * ((1.0 - z * z).max(0.0).sqrt() - 1.0)).exp()
            }));
        }
        Spread { start, kernel }
    }

    /// `Σ_j c_j exp(2πi k' x_j)` over `points` `(j, c_j)` into `work.out[k]`,
    /// `k' = k − ⌊L/2⌋`, `k = 0 .. L`.
    fn transform(
        &self,
        spread: &Spread,
        points: impl Iterator<Item = (usize, Complex64)>,
        work: &mut Work,
    ) {
        let (n, w) = (self.fine, self.width);
        work.fine.fill(Complex64::new(0.0, 0.0));
        for (j, c) in points {
            let s = spread.start[j];
            let kernel = &spread.kernel[j * w..(j + 1) * w];
            for (v, &k) in work.fine[s..s + w].iter_mut().zip(kernel) {
                *v += c * k;
            }
        }
        let (grid, wrap) = work.fine.split_at_mut(n);
        for (v, u) in grid.iter_mut().zip(wrap.iter()) {
            *v += u;
        }
        self.fft.process_with_scratch(grid, &mut work.scratch);
        let centre = self.modes / 2;
        let values = grid[n - centre..]
            .iter()
            .chain(&grid[..self.modes - centre]);
        let corr = (self.correction[1..=centre].iter().rev()).chain(&self.correction);
        for (o, (v, c)) in work.out.iter_mut().zip(values.zip(corr)) {
            *o = v * c;
        }
    }
}

/// What the chunks of one evaluation share.
struct Chunks<'a> {
    plan: Plan,
    grid: &'a Grid,
    time: &'a [f64],
    /// Kernels at `x = frac(df t)`.
    single: Spread,
}

impl<'a> Chunks<'a> {
    fn new(grid: &'a Grid, time: &'a [f64], tolerance: f64) -> Chunks<'a> {
        let plan = Plan::new(grid.n, time.len(), tolerance);
        Chunks::with_plan(plan, grid, time)
    }

    fn with_plan(plan: Plan, grid: &'a Grid, time: &'a [f64]) -> Chunks<'a> {
        let single = plan.spread(time, grid.df);
        Chunks {
            plan,
            grid,
            time,
            single,
        }
    }

    /// `exp(2πi fc t_j)` with `fc` the centre of the chunk starting at grid index `first`.
    fn phases(&self, first: usize) -> Vec<Complex64> {
        let fc = self.grid.frequency(first + self.plan.modes / 2);
        self.time
            .iter()
            .map(|&t| {
                let v = fc * t;
                let (s, c) = (TAU * (v - v.round())).sin_cos();
                Complex64::new(c, s)
            })
            .collect()
    }

    /// `Σ_j h_j exp(2πi f_k t_j)` at every grid frequency.
    fn exp_sums(&self, h: &[f64]) -> Vec<Complex64> {
        let mut out = vec![Complex64::new(0.0, 0.0); self.grid.n];
        out.par_chunks_mut(self.plan.modes)
            .enumerate()
            .for_each_init(
                || self.plan.work(),
                |work, (b, out)| {
                    let phase = self.phases(b * self.plan.modes);
                    let points = phase.iter().zip(h).map(|(p, &h)| p * h).enumerate();
                    self.plan.transform(&self.single, points, work);
                    out.copy_from_slice(&work.out[..out.len()]);
                },
            );
        out
    }
}

/// `Σ_j h_j exp(2πi f_k t_j)` at every grid frequency, to [`DEFAULT_TOLERANCE`].
pub(super) fn exp_sums(time: &[f64], h: &[f64], grid: &Grid) -> Vec<Complex64> {
    Chunks::new(grid, time, DEFAULT_TOLERANCE).exp_sums(h)
}

/// GLS power at every grid frequency into `power`, the sums to relative accuracy
/// `tolerance`.
///
/// # Errors
/// [`PeriodogramError::Tolerance`] outside [`MIN_TOLERANCE`, 0.1].
pub(super) fn powers(
    prep: &Prepared,
    grid: &Grid,
    tolerance: f64,
    power: &mut [f64],
) -> Result<(), PeriodogramError> {
    if !(MIN_TOLERANCE..=0.1).contains(&tolerance) {
        return Err(PeriodogramError::Tolerance(tolerance));
    }
    let chunks = Chunks::new(grid, prep.time, tolerance);
    let double = chunks.plan.spread(prep.time, 2.0 * grid.df);
    let n_inst = prep.inst_weight.len();
    let mut members = vec![Vec::new(); n_inst];
    for (j, &k) in prep.inst.iter().enumerate() {
        members[k].push(j);
    }
    let len = chunks.plan.modes;
    power.par_chunks_mut(len).enumerate().for_each_init(
        || (chunks.plan.work(), Raw::zeros(len, n_inst)),
        |(work, raw), (b, out)| {
            let plan = &chunks.plan;
            let phase = chunks.phases(b * len);
            let points = phase.iter().zip(&prep.wy).map(|(p, &h)| p * h).enumerate();
            plan.transform(&chunks.single, points, work);
            for (j, z) in work.out.iter().enumerate() {
                (raw.yc[j], raw.ys[j]) = (z.re, z.im);
            }
            for (k, idx) in members.iter().enumerate() {
                let points = idx.iter().map(|&j| (j, phase[j] * prep.w[j]));
                plan.transform(&chunks.single, points, work);
                for (j, z) in work.out.iter().enumerate() {
                    (raw.c_k[k * len + j], raw.s_k[k * len + j]) = (z.re, z.im);
                }
            }
            let points = phase
                .iter()
                .zip(&prep.w)
                .map(|(p, &h)| p * p * h)
                .enumerate();
            plan.transform(&double, points, work);
            // Σ w cos² = (Σ w + Σ w cos 2θ)/2 and Σ w cos sin = Σ w sin 2θ / 2, with Σ w = 1.
            for (j, z) in work.out.iter().enumerate() {
                (raw.cc[j], raw.cs[j]) = (0.5 * (1.0 + z.re), 0.5 * z.im);
            }
            prep.powers(raw, len, out);
        },
    );
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn smooth_sizes() {
        assert_eq!(smooth_size(7), 8);
        assert_eq!(smooth_size(65_536), 65_536);
        // 2^6 3^9 = 1 259 712.
        assert_eq!(smooth_size(1_250_000), 1_259_712);
    }

    /// Gauss–Legendre with 5 nodes integrates x⁹ exactly: ∫_0^1 x⁹ = 0.1 (exactness to
    /// degree 2q − 1, any quadrature handbook).
    #[test]
    fn quadrature_is_exact_to_degree_2q_minus_1() {
        let (x, w) = gauss_legendre(5);
        let s: f64 = x.iter().zip(&w).map(|(x, w)| w * x.powi(9)).sum();
        assert!((s - 0.1).abs() < 1e-15, "{s}");
        assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-15);
    }

    /// Chunked sums against direct sums, at the default tolerance, on grids of one chunk
    /// and of many (fine grids limited to 64 points), with points wrapping around the
    /// periodic fine grid.
    #[test]
    fn chunked_sums_match_direct_sums() {
        let time: Vec<f64> = (0..50)
            .map(|j| 3000.0 * (j as f64 * 0.618_034).fract() - 1500.0)
            .collect();
        let h: Vec<f64> = (0..50).map(|j| (j as f64).sin()).collect();
        let norm: f64 = h.iter().map(|h| h.abs()).sum();
        for (m, limit) in [
            (1, 64),
            (2, 64),
            (7, 64),
            (101, 1 << 16),
            (101, 64),
            (500, 64),
        ] {
            let grid = if m == 1 {
                Grid::new(0.3, 0.3, 1).unwrap()
            } else {
                Grid::new(0.01, 0.5, m).unwrap()
            };
            let chunks =
                Chunks::with_plan(Plan::with_limit(m, limit, DEFAULT_TOLERANCE), &grid, &time);
            let got = chunks.exp_sums(&h);
            for (k, g) in got.iter().enumerate() {
                let f = grid.frequency(k);
                let want: Complex64 = time
                    .iter()
                    .zip(&h)
                    .map(|(&t, &h)| h * Complex64::from_polar(1.0, TAU * f * t))
                    .sum();
                assert!(
                    (g - want).norm() < 2e-12 * norm,
                    "M = {m}, limit {limit}, k = {k}: {g} vs {want}"
                );
            }
        }
    }
}
