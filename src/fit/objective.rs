//! The function the fit minimises: −ln L plus the Gaussian constraints of the planet
//! specs, a smooth penalty on eccentricities above the cap and, with an activity GP, its
//! rotation-period prior and hyperparameter bounds.

use crate::data::RvSet;

use super::joint::JointEntry;
use super::layout::{Layout, Role, white_variances};
use crate::gp::{Factor, Points, SCALE_BOUNDS, Solver, Term, log_wall};
use crate::model::DAYS_PER_YEAR;

/// Weight of the quadratic penalty `W (e − e_max)²` on eccentricities above the cap.
const ECC_PENALTY: f64 = 1e6;

/// −ln L(θ) + constraints + penalties, for one data set and layout.
#[derive(Clone, Copy)]
pub struct Objective<'a> {
    /// The data.
    pub set: &'a RvSet,
    /// Parameter layout.
    pub layout: &'a Layout,
    /// Largest eccentricity the model evaluates.
    pub max_ecc: f64,
}

impl Objective<'_> {
    /// Negative log-likelihood only (no constraints, no penalties); +∞ for invalid θ.
    pub fn neg_log_likelihood(&self, theta: &[f64]) -> f64 {
        -self.layout.log_likelihood(theta, self.max_ecc, self.set)
    }

    /// The minimised function; +∞ for invalid θ.
    pub fn value(&self, theta: &[f64]) -> f64 {
        let mut total = match &self.layout.activity {
            Some(a) => a.penalty(&self.layout.activity_values(theta)),
            None => 0.0,
        };
        let scales = self.layout.len() - self.layout.n_activity_scales();
        total += theta[scales..]
            .iter()
            .map(|x| log_wall(*x, SCALE_BOUNDS).0)
            .sum::<f64>();
        total += self.neg_log_likelihood(theta) + self.layout.offset_penalty(theta, None);
        for (i, spec) in self.layout.planets.iter().enumerate() {
            let [p, _, ec, es, tc] = self.layout.planet_elements(theta, i);
            let excess = ec.hypot(es) - self.max_ecc;
            if excess > 0.0 {
                total += ECC_PENALTY * excess * excess;
            }
            if let Some((mean, sd)) = spec.period_prior {
                total += 0.5 * ((p - mean) / sd).powi(2);
            }
            if let Some((mean, sd)) = spec.tc_prior {
                total += 0.5 * ((tc - mean) / sd).powi(2);
            }
        }
        if total.is_nan() { f64::INFINITY } else { total }
    }

    /// Gradient of [`Objective::value`]: analytic in the offsets, jitters, trend,
    /// constraints and penalty; for planet elements, `∂f/∂m_i` times forward differences of
    /// that planet's RV curve alone (steps `steps`), so one gradient costs about one
    /// likelihood evaluation per planet parameter rather than two full evaluations per
    /// parameter. With an activity GP, `∂f/∂m_i = −(K⁻¹r)_i` (Rasmussen & Williams 2006,
    /// eq. 5.9 with ∂K/∂m = 0); the jitters and hyperparameters are analytic for the
    /// quasi-periodic kernel ([`dense_gradient`]) and take central differences of the
    /// whole objective otherwise. With the joint model α and `W` are those of the stacked
    /// RV and indicator residuals (RV points first, [`crate::gp::JointPoints::gradient`]):
    /// all analytic. Zeros for invalid θ.
    pub fn gradient(&self, theta: &[f64], steps: &[f64]) -> Vec<f64> {
        let (layout, set) = (self.layout, self.set);
        let mut grad = vec![0.0; theta.len()];
        let Some(params) = layout.params(theta, self.max_ecc) else {
            return grad;
        };
        let n = set.len();
        let curves: Vec<Vec<f64>> = params
            .planets
            .iter()
            .map(|o| set.time_d.iter().map(|&t| o.rv(t)).collect())
            .collect();
        // ∂f/∂m_i = −∂f/∂r_i, and ∂f/∂s_k = Σ 2s ∂f/∂V over instrument k (for Gaussian
        // noise −r_i/V_i and Σ s (1/V − r²/V²)).
        let mut dfdm = vec![0.0; n];
        let mut dfds = vec![0.0; set.n_instruments()];
        let mut residuals = vec![0.0; n];
        for i in 0..n {
            let k = set.instrument[i];
            let t = set.time_d[i];
            let model: f64 = curves.iter().map(|c| c[i]).sum::<f64>()
                + params.offsets_mps[k]
                + params.trend_rv(t)
                + params.regressors_rv(set, i);
            let r = set.rv_mps[i] - model;
            let s = params.jitters_mps[k];
            let v = set.err_mps[i] * set.err_mps[i] + s * s;
            let (df_dr, df_dv2) = layout.noise.gradient_terms(r, v);
            dfdm[i] = -df_dr;
            dfds[k] += df_dv2;
            residuals[i] = r;
        }
        let kernel = layout.kernel(theta);
        let gp = kernel.is_some() || layout.joint.is_some();
        let mut hyper: Option<Vec<f64>> = None;
        let mut by_scale = vec![0.0; set.n_instruments()];
        let mut joint = None;
        if layout.joint.is_some() {
            let Some(Ok((kernel, stack))) = layout.joint_problem(theta, &params, set) else {
                return grad;
            };
            let Ok(g) = stack.points().gradient(&kernel, &stack.residual) else {
                return grad;
            };
            dfds.iter_mut().for_each(|d| *d = 0.0);
            for i in 0..n {
                dfdm[i] = -g.alpha[i];
                dfds[set.instrument[i]] += g.w_diag[i];
            }
            hyper = Some(self.hyper_gradient(theta, &g.latent));
            joint = Some(g);
        }
        let white_known = joint.is_some();
        if let Some(kernel) = &kernel {
            let white = white_variances(&params, set);
            let scale = layout.point_scales(theta, set);
            let points = Points {
                time_d: &set.time_d,
                white: &white,
                scale: &scale,
            };
            let Ok(factor) = points.factor(kernel, Solver::Auto) else {
                return grad;
            };
            let alpha = factor.solve(&residuals);
            for (d, a) in dfdm.iter_mut().zip(&alpha) {
                *d = -a;
            }
            if let (Factor::Dense(chol), [term @ Term::QuasiPeriodic { .. }]) =
                (&factor, kernel.terms.as_slice())
            {
                let dense = dense_gradient(chol, &alpha, term, &set.time_d, &scale);
                dfds.iter_mut().for_each(|d| *d = 0.0);
                for (i, w) in dense.w_diag.iter().enumerate() {
                    dfds[set.instrument[i]] += w;
                    by_scale[set.instrument[i]] += dense.scale[i];
                }
                hyper = Some(self.hyper_gradient(theta, &dense.hyper));
            }
        }
        let white_known = white_known || hyper.is_some();
        // Central differences with steps 100 × the forward ones (closer to the
        // cube root of the rounding error, in scaled units).
        let by_difference = |j: usize| {
            let h = 100.0 * steps[j];
            let mut x = theta.to_vec();
            x[j] = theta[j] + h;
            let up = self.value(&x);
            x[j] = theta[j] - h;
            (up - self.value(&x)) / (2.0 * h)
        };
        for (j, role) in layout.roles().into_iter().enumerate() {
            grad[j] = match role {
                Role::Offset(k) => (0..n)
                    .filter(|&i| set.instrument[i] == k)
                    .map(|i| dfdm[i])
                    .sum(),
                Role::Activity(q) if hyper.is_some() => hyper.as_ref().map_or(0.0, |h| h[q]),
                Role::Joint(q) => {
                    let (b, g) = (
                        layout.joint.as_ref().expect("joint roles have the model"),
                        joint.as_ref().expect("computed with the model"),
                    );
                    match b.entry(q) {
                        JointEntry::Coupling(c) => g.couplings[c],
                        JointEntry::Offset(h) => {
                            -g.alpha[b.group_points(set, h)].iter().sum::<f64>()
                        }
                        JointEntry::Jitter(h) => {
                            theta[j] * g.w_diag[b.group_points(set, h)].iter().sum::<f64>()
                        }
                    }
                }
                Role::Activity(_) => by_difference(j),
                Role::ActivityScale(k) if hyper.is_some() => {
                    let inside = (SCALE_BOUNDS.0.ln()..=SCALE_BOUNDS.1.ln()).contains(&theta[j]);
                    log_wall(theta[j], SCALE_BOUNDS).1 + if inside { by_scale[k] } else { 0.0 }
                }
                Role::ActivityScale(_) => by_difference(j),
                Role::Jitter(_) if gp && !white_known => by_difference(j),
                Role::Jitter(g) => {
                    theta[j]
                        * (0..set.n_instruments())
                            .filter(|&k| layout.jitter_of(k) == g)
                            .map(|k| dfds[k])
                            .sum::<f64>()
                }
                Role::Trend(p) => (0..n)
                    .map(|i| dfdm[i] * (set.time_d[i] / DAYS_PER_YEAR).powi(p as i32))
                    .sum(),
                Role::Regressor(r) => {
                    let (c, only) = layout.regressor_target(r);
                    (0..n)
                        .filter(|&i| only.is_none_or(|k| set.instrument[i] == k))
                        .map(|i| {
                            let x = set.indicators[c].values[i];
                            if x.is_finite() { dfdm[i] * x } else { 0.0 }
                        })
                        .sum()
                }
                _ => 0.0,
            };
        }
        let mut shifted = theta.to_vec();
        for (p, curve) in curves.iter().enumerate() {
            for j in layout.planet_range(p) {
                shifted[j] = theta[j] + steps[j];
                if let Some(o) = layout.orbit(&shifted, p, self.max_ecc) {
                    grad[j] = (0..n)
                        .map(|i| dfdm[i] * (o.rv(set.time_d[i]) - curve[i]))
                        .sum::<f64>()
                        / steps[j];
                }
                shifted[j] = theta[j];
            }
        }
        for (p, spec) in layout.planets.iter().enumerate() {
            let [period, _, ec, es, tc] = layout.planet_elements(theta, p);
            let excess = ec.hypot(es) - self.max_ecc;
            if excess > 0.0 {
                let e = ec.hypot(es);
                let scale = 2.0 * ECC_PENALTY * excess / e;
                if let Some(j) = layout.index(Role::ECosW(p)) {
                    grad[j] += scale * ec;
                    grad[j + 1] += scale * es;
                }
            }
            if let (Some((mean, sd)), Some(j)) = (spec.period_prior, layout.index(Role::Period(p)))
            {
                grad[j] += (period - mean) / (sd * sd);
            }
            if let (Some((mean, sd)), Some(j)) = (spec.tc_prior, layout.index(Role::Tc(p))) {
                grad[j] += (tc - mean) / (sd * sd);
            }
        }
        layout.offset_penalty(theta, Some(&mut grad));
        grad
    }
}

impl Objective<'_> {
    /// Gradient in the activity hyperparameters' logarithms: the likelihood part `g`
    /// ([`dense_gradient`], zero for a value outside its bounds, where the model uses the
    /// bound) plus central differences of the bounds' walls and the priors.
    fn hyper_gradient(&self, theta: &[f64], g: &[f64]) -> Vec<f64> {
        let a = self
            .layout
            .activity
            .as_ref()
            .expect("hyperparameters come with a GP");
        let ln: Vec<f64> = self
            .layout
            .activity_values(theta)
            .iter()
            .map(|v| v.ln())
            .collect();
        let penalty = |x: &[f64]| a.penalty(&x.iter().map(|v| v.exp()).collect::<Vec<f64>>());
        let walls = gradient(&penalty, &ln, &vec![1e-6; ln.len()]);
        ln.iter()
            .zip(&a.bounds)
            .enumerate()
            .map(|(q, (x, (lo, hi)))| {
                let inside = (lo.ln()..=hi.ln()).contains(x);
                walls[q] + if inside { g[q] } else { 0.0 }
            })
            .collect()
    }
}

/// With `W = K⁻¹ − ααᵀ` (α = K⁻¹r, K factorised by `chol`, one quasi-periodic `term` at
/// times `t` with per-point amplitude factors `s`): the diagonal of `W`,
/// `∂(−ln L)/∂K_ii = ½ W_ii`, `∂(−ln L)/∂ln θ_q = ½ Σ_ij W_ij ∂K_ij/∂ln θ_q` for
/// `θ = (h, λ, P, w)` (Rasmussen & Williams 2006, eq. 5.9), and the amplitude factors'
/// pieces ([`DenseGradient::scale`]).
fn dense_gradient(
    chol: &nalgebra::Cholesky<f64, nalgebra::Dyn>,
    alpha: &[f64],
    term: &Term,
    t: &[f64],
    s: &[f64],
) -> DenseGradient {
    let kinv = crate::gp::spd_inverse(chol);
    let at_zero = term.log_gradient(0.0).expect("a quasi-periodic term");
    let mut out = DenseGradient {
        w_diag: Vec::with_capacity(t.len()),
        hyper: [0.0; 4],
        scale: vec![0.0; t.len()],
    };
    for i in 0..t.len() {
        let wii = kinv[(i, i)] - alpha[i] * alpha[i];
        out.w_diag.push(wii);
        let ss = s[i] * s[i];
        for (g, d) in out.hyper.iter_mut().zip(at_zero) {
            *g += 0.5 * wii * d * ss;
        }
        // k = ½ ∂k/∂ln h.
        out.scale[i] += wii * 0.5 * at_zero[0] * ss;
        for j in 0..i {
            let w = (kinv[(i, j)] - alpha[i] * alpha[j]) * s[i] * s[j];
            let d = term
                .log_gradient(t[i] - t[j])
                .expect("a quasi-periodic term");
            for (g, d) in out.hyper.iter_mut().zip(d) {
                *g += w * d;
            }
            out.scale[i] += w * 0.5 * d[0];
            out.scale[j] += w * 0.5 * d[0];
        }
    }
    out
}

/// The pieces of the likelihood gradient of [`dense_gradient`].
struct DenseGradient {
    /// Diagonal of `W`.
    w_diag: Vec<f64>,
    /// `∂(−ln L)/∂ln θ_q`, `θ = (h, λ, P, w)`.
    hyper: [f64; 4],
    /// `Σ_j W_ij K^GP_ij` of each point: `∂(−ln L)/∂ln s_k` is its sum over the points of
    /// instrument `k` (`K^GP_ij = s_i s_j k(t_i − t_j)`).
    scale: Vec<f64>,
}

/// Central-difference gradient of `f` at `x` with steps `h`.
pub fn gradient(f: &dyn Fn(&[f64]) -> f64, x: &[f64], h: &[f64]) -> Vec<f64> {
    let mut xp = x.to_vec();
    (0..x.len())
        .map(|i| {
            xp[i] = x[i] + h[i];
            let up = f(&xp);
            xp[i] = x[i] - h[i];
            let down = f(&xp);
            xp[i] = x[i];
            (up - down) / (2.0 * h[i])
        })
        .collect()
}

/// Central-difference Hessian of `f` at `x` with steps `h`.
pub fn hessian(f: &dyn Fn(&[f64]) -> f64, x: &[f64], h: &[f64]) -> nalgebra::DMatrix<f64> {
    let n = x.len();
    let f0 = f(x);
    let mut m = nalgebra::DMatrix::zeros(n, n);
    let mut xp = x.to_vec();
    let eval = |xp: &mut Vec<f64>, moves: &[(usize, f64)]| {
        for &(i, d) in moves {
            xp[i] += d;
        }
        let v = f(xp);
        for &(i, d) in moves {
            xp[i] -= d;
        }
        v
    };
    for i in 0..n {
        let up = eval(&mut xp, &[(i, h[i])]);
        let down = eval(&mut xp, &[(i, -h[i])]);
        m[(i, i)] = (up - 2.0 * f0 + down) / (h[i] * h[i]);
        for j in 0..i {
            let pp = eval(&mut xp, &[(i, h[i]), (j, h[j])]);
            let pm = eval(&mut xp, &[(i, h[i]), (j, -h[j])]);
            let mp = eval(&mut xp, &[(i, -h[i]), (j, h[j])]);
            let mm = eval(&mut xp, &[(i, -h[i]), (j, -h[j])]);
            let v = (pp - pm - mp + mm) / (4.0 * h[i] * h[j]);
            m[(i, j)] = v;
            m[(j, i)] = v;
        }
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::RvSet;

    /// The mixed analytic/forward-difference gradient against central differences of the
    /// objective itself, on an eccentric two-planet, two-instrument model with trend and
    /// constraints, without and with an activity GP.
    #[test]
    fn gradient_matches_central_differences() {
        use crate::fit::layout::PlanetSpec;
        use crate::gp::{Activity, ActivityLayout};
        use crate::target::OrbitShape;
        let n = 60;
        let t: Vec<f64> = (0..n)
            .map(|i| -200.0 + 7.3 * i as f64 + (i as f64).sin())
            .collect();
        let rv: Vec<f64> = t
            .iter()
            .map(|t| 10.0 * (t / 5.1).sin() + 0.02 * t)
            .collect();
        let err: Vec<f64> = (0..n).map(|i| 1.0 + 0.1 * (i % 4) as f64).collect();
        let inst: Vec<usize> = (0..n).map(|i| i % 2).collect();
        let mut set = RvSet::from_columns("g", 0.0, t, rv, err, inst, vec!["a".into(), "b".into()]);
        set.indicators.push(crate::data::Indicator {
            name: "width".into(),
            values: (0..n)
                .map(|i| {
                    if i % 9 == 4 {
                        f64::NAN
                    } else {
                        (i as f64 * 0.7).cos()
                    }
                })
                .collect(),
        });
        let spec = |p: f64, label: &str| PlanetSpec {
            period_d: p,
            fix_period: false,
            k_mps: 8.0,
            tc_d: 1.0,
            ecc_vector: (0.2, -0.1),
            period_prior: Some((p, 0.01)),
            tc_prior: Some((1.2, 0.5)),
            label: label.into(),
        };
        let base = Layout::new(
            vec![spec(32.0, "b"), spec(11.0, "c")],
            OrbitShape::Eccentric,
            2,
            2,
        );
        let constraint = crate::fit::OffsetPrior {
            instruments: ["a".into(), "b".into()],
            mean_mps: 0.4,
            sd_mps: 0.3,
        };
        // Gaussian; Student-t residuals with an offset constraint and an indicator term
        // per instrument; the Gaussian model with a quasi-periodic activity GP (dense
        // solver: `−K⁻¹r` for the mean model, the analytic jitter and hyperparameter
        // gradient, and the rotation prior, started off its mean).
        let robust = base
            .clone()
            .with_noise(crate::model::Noise::StudentT { dof: 3.5 })
            .with_offset_priors(&[constraint], &set.instruments)
            .with_regressors(1)
            .with_regressors_per_instrument(true);
        let activity = ActivityLayout::new(Activity::QuasiPeriodic, (12.0, 1.0), 4.0, 200.0);
        let with_gp = base.clone().with_activity(activity);
        // The joint model of the RVs and the indicator (Rajpaul et al. 2015): analytic
        // couplings, indicator offsets and jitters, the others by differences.
        let joint = base
            .clone()
            .with_activity(ActivityLayout::new(
                Activity::Joint,
                (12.0, 1.0),
                4.0,
                200.0,
            ))
            .with_joint(crate::fit::JointLayout::new(&set, &[0], 4.0, 12.0));
        // Per-instrument amplitudes: the second instrument's factor analytic with the
        // quasi-periodic kernel, by differences with the oscillators.
        let scaled = with_gp.clone().with_activity_per_instrument();
        let oscillator = ActivityLayout::new(Activity::Oscillator, (12.0, 1.0), 4.0, 200.0);
        let shared = base.clone().with_activity(oscillator.clone());
        let oscillators = shared.clone().with_activity_per_instrument();
        for layout in [base, robust, with_gp, joint, scaled, shared, oscillators] {
            let mut theta = layout.initial(&[0.5, -0.3], &[1.1, 0.7], &[0.3, -0.05]);
            let m = theta.len();
            if layout.n_regressors() == 2 {
                theta[m - 2..].copy_from_slice(&[0.8, -1.3]);
            }
            if layout.activity.is_some() {
                theta[layout.activity_range().start + Activity::ROTATION] = 12.6_f64.ln();
            }
            if layout.n_activity_scales() == 1 {
                theta[m - 1] = 1.4_f64.ln();
            }
            let b = layout.joint_range();
            if !b.is_empty() {
                // Slopes, the indicator's offsets and jitters away from their starts.
                for (q, v) in [(1, 2.0), (3, -1.5), (4, 0.2), (5, -0.1), (6, 0.3)] {
                    theta[b.start + q] += v;
                }
            }
            let obj = Objective {
                set: &set,
                layout: &layout,
                max_ecc: 0.95,
            };
            let scale = layout.scales(&set);
            // Forward steps of 1e-6 scales: at 1e-7 their rounding error (ε|r|/h summed
            // with α) reaches 1e-4 in the planet period with the oscillators.
            let fwd: Vec<f64> = scale.iter().map(|s| 1e-6 * s).collect();
            let central: Vec<f64> = scale.iter().map(|s| 1e-4 * s).collect();
            let g = obj.gradient(&theta, &fwd);
            let reference = gradient(&|x: &[f64]| obj.value(x), &theta, &central);
            for (j, (a, b)) in g.iter().zip(&reference).enumerate() {
                assert!(
                    (a - b).abs() <= 1e-4 * b.abs().max(1.0),
                    "{:?}, activity {:?}, {} scales: θ[{j}]: {a} vs {b}",
                    layout.noise,
                    layout.activity.as_ref().map(|a| a.model),
                    layout.n_activity_scales()
                );
            }
        }
    }

    #[test]
    fn finite_differences_of_a_quadratic_are_exact() {
        // f = x0² + 3 x0 x1 + 2 x1²: gradient (2x0 + 3x1, 3x0 + 4x1), Hessian [[2,3],[3,4]].
        let f = |x: &[f64]| x[0] * x[0] + 3.0 * x[0] * x[1] + 2.0 * x[1] * x[1];
        let g = gradient(&f, &[1.0, -2.0], &[1e-3, 1e-3]);
        assert!((g[0] + 4.0).abs() < 1e-8 && (g[1] + 5.0).abs() < 1e-8);
        let h = hessian(&f, &[1.0, -2.0], &[1e-3, 1e-3]);
        assert!((h[(0, 0)] - 2.0).abs() < 1e-5 && (h[(0, 1)] - 3.0).abs() < 1e-5);
        assert!((h[(1, 1)] - 4.0).abs() < 1e-5);
    }
}
