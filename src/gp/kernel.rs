//! Covariance kernels of the stellar-activity noise model: the quasi-periodic kernel, the
//! stochastically driven damped simple harmonic oscillator, and sums of them.

use super::GpError;

/// One covariance term; a [`Kernel`] is a sum of them. Every amplitude is the term's
/// standard deviation at zero lag (`k(0) = amplitude²`), in m/s.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Term {
    /// Quasi-periodic kernel
    /// `k(τ) = h² exp(−sin²(πτ/P) / (2w²) − τ² / (2λ²))`
    /// (Haywood et al. 2014, MNRAS 443, 2517; in this form Rajpaul et al. 2015,
    /// MNRAS 452, 2269, eq. 4): `h` amplitude (m/s), `λ` evolution timescale of active
    /// regions (days), `P` rotation period (days), `w` smoothness (dimensionless; the
    /// inverse of the harmonic complexity: small `w` puts power into many harmonics of
    /// `1/P`).
    QuasiPeriodic {
        /// `h`, m/s.
        amplitude_mps: f64,
        /// `λ`, days.
        evolution_d: f64,
        /// `P`, days.
        period_d: f64,
        /// `w`, dimensionless.
        smoothness: f64,
    },
    /// Stochastically driven, damped simple harmonic oscillator (Foreman-Mackey et al.
    /// 2017, AJ 154, 220, eqs. 19–20) with power spectrum
    /// `S(ω) = √(2/π) S₀ω₀⁴ / ((ω² − ω₀²)² + ω₀²ω²/Q²)`, parametrised by its standard
    /// deviation `σ = √(S₀ω₀Q)` (m/s), its undamped period `P = 2π/ω₀` (days) and its
    /// quality factor `Q > 1/2` (underdamped, so that it has a period; the amplitude
    /// decays in `2Q/ω₀ = QP/π` days). For `Q > 1/2`,
    /// `k(τ) = σ² e^{−ω₀τ/(2Q)} [cos(ηω₀τ) + sin(ηω₀τ)/(2ηQ)]`, `η = √(1 − 1/(4Q²))`.
    Oscillator {
        /// `σ`, m/s.
        amplitude_mps: f64,
        /// `P = 2π/ω₀`, days.
        period_d: f64,
        /// `Q`, dimensionless, > 1/2.
        quality: f64,
    },
}

/// Coefficients `(a, b, c, d)` of a term `k(τ) = e^{−cτ} [a cos(dτ) + b sin(dτ)]`, τ ≥ 0
/// (the form the semiseparable solver of Foreman-Mackey et al. 2017, eq. 7, works with).
pub type ExpTerm = [f64; 4];

impl Term {
    /// Checks that every value is finite and positive (and `Q > 1/2`).
    ///
    /// # Errors
    /// [`GpError::Parameter`] naming the value at fault.
    pub fn check(&self) -> Result<(), GpError> {
        let bad = |name: &str, v: f64| GpError::Parameter(format!("{name} = {v}"));
        let positive = |name: &str, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err(bad(name, v))
            }
        };
        match *self {
            Term::QuasiPeriodic {
                amplitude_mps,
                evolution_d,
                period_d,
                smoothness,
            } => {
                positive("amplitude_mps", amplitude_mps)?;
                positive("evolution_d", evolution_d)?;
                positive("period_d", period_d)?;
                positive("smoothness", smoothness)
            }
            Term::Oscillator {
                amplitude_mps,
                period_d,
                quality,
            } => {
                positive("amplitude_mps", amplitude_mps)?;
                positive("period_d", period_d)?;
                if quality.is_finite() && quality > 0.5 {
                    Ok(())
                } else {
                    Err(GpError::Parameter(format!(
                        "quality = {quality} (the oscillator needs Q > 1/2)"
                    )))
                }
            }
        }
    }

    /// Covariance at lag `tau_d` (days, either sign), m²/s².
    pub fn covariance(&self, tau_d: f64) -> f64 {
        match *self {
            Term::QuasiPeriodic { .. } => {
                self.quasi_periodic_lag(tau_d)
                    .expect("a quasi-periodic term")
                    .k
            }
            Term::Oscillator { .. } => {
                let [a, b, c, d] = self.exp_term().expect("oscillators are exponential sums");
                let tau = tau_d.abs();
                let (s, co) = (d * tau).sin_cos();
                (-c * tau).exp() * (a * co + b * s)
            }
        }
    }

    /// Derivatives of the quasi-periodic covariance at lag `tau_d` with respect to the
    /// natural logarithms of `(h, λ, P, w)`, m²/s² (from differentiating the formula of
    /// [`Term::QuasiPeriodic`]: `2k`, `k τ²/λ²`, `k πτ sin(2πτ/P)/(2w²P)`,
    /// `k sin²(πτ/P)/w²`); `None` for other terms.
    pub fn log_gradient(&self, tau_d: f64) -> Option<[f64; 4]> {
        let QuasiPeriodicLag {
            k, x, s, c, l2, w2, ..
        } = self.quasi_periodic_lag(tau_d)?;
        Some([
            2.0 * k,
            k * tau_d * tau_d / l2,
            k * x * s * c / w2,
            k * s * s / w2,
        ])
    }

    /// The quasi-periodic covariance and its first and second derivatives with respect to
    /// the lag, `[k, dk/dτ, d²k/dτ²]` at `tau_d` (days) in m²/s², m²/s²/d and m²/s²/d²;
    /// `None` for other terms. With `x = πτ/P` and `k = h² eᶠ`, differentiating the formula
    /// of [`Term::QuasiPeriodic`] gives `f′ = −π sin(2x)/(2w²P) − τ/λ²`,
    /// `f″ = −π² cos(2x)/(w²P²) − 1/λ²`, `k′ = k f′`, `k″ = k (f′² + f″)`.
    ///
    /// One `sin_cos` and one `exp` per lag: `sin 2x = 2 sin x cos x`,
    /// `cos 2x = 1 − 2 sin²x`.
    pub fn lag_derivatives(&self, tau_d: f64) -> Option<[f64; 3]> {
        let lag = self.quasi_periodic_lag(tau_d)?;
        let (k, f1, f2) = (lag.k, lag.f1(), lag.f2());
        Some([k, k * f1, k * (f1 * f1 + f2)])
    }

    /// Derivatives of [`Term::lag_derivatives`] `[k, k′, k″]` with respect to the natural
    /// logarithms of the evolution timescale λ, the smoothness w and the period P (in that
    /// order) at lag `tau_d` (days); `None` for other terms. With `k = h² eᶠ`,
    /// `∂k/∂θ = k f_θ`, `∂k′/∂θ = k (f_θ f′ + f′_θ)`,
    /// `∂k″/∂θ = k (f_θ (f′² + f″) + 2 f′ f′_θ + f″_θ)`, and with `s, c = sin x, cos x`:
    /// `f_lnλ = τ²/λ²`, `f′_lnλ = 2τ/λ²`, `f″_lnλ = 2/λ²`; `f_lnw = s²/w²`,
    /// `f′_lnw = 2π s c/(w²P)`, `f″_lnw = 2(π/P)² (1 − 2s²)/w²`; `f_lnP = x s c/w²`,
    /// `f′_lnP = π [s c + x (c² − s²)]/(w²P)`,
    /// `f″_lnP = 2(π/P)² [(1 − 2s²) − 2 x s c]/w²`.
    pub fn lag_derivative_gradients(&self, tau_d: f64) -> Option<[[f64; 3]; 3]> {
        let lag = self.quasi_periodic_lag(tau_d)?;
        let QuasiPeriodicLag {
            k,
            x,
            s,
            c,
            l2,
            w2,
            period_d,
            ..
        } = lag;
        let (f1, f2) = (lag.f1(), lag.f2());
        let pi = std::f64::consts::PI;
        let q = (pi / period_d).powi(2);
        let partials = [
            [tau_d * tau_d / l2, 2.0 * tau_d / l2, 2.0 / l2],
            [
                s * s / w2,
                2.0 * pi * s * c / (w2 * period_d),
                2.0 * q * (1.0 - 2.0 * s * s) / w2,
            ],
            [
                x * s * c / w2,
                pi * (s * c + x * (c * c - s * s)) / (w2 * period_d),
                2.0 * q * ((1.0 - 2.0 * s * s) - 2.0 * x * s * c) / w2,
            ],
        ];
        Some(partials.map(|[f, g1, g2]| {
            [
                k * f,
                k * (f * f1 + g1),
                k * (f * (f1 * f1 + f2) + 2.0 * f1 * g1 + g2),
            ]
        }))
    }

    /// The pieces of a quasi-periodic term at lag `tau_d` (days) that its derivatives
    /// share; `None` for other terms.
    fn quasi_periodic_lag(&self, tau_d: f64) -> Option<QuasiPeriodicLag> {
        let Term::QuasiPeriodic {
            amplitude_mps,
            evolution_d,
            period_d,
            smoothness,
        } = *self
        else {
            return None;
        };
        let (l2, w2) = (evolution_d * evolution_d, smoothness * smoothness);
        let x = std::f64::consts::PI * tau_d / period_d;
        let (s, c) = x.sin_cos();
        Some(QuasiPeriodicLag {
            tau: tau_d,
            k: amplitude_mps * amplitude_mps * (-0.5 * (s * s / w2 + tau_d * tau_d / l2)).exp(),
            x,
            s,
            c,
            l2,
            w2,
            period_d,
        })
    }

    /// The term as `e^{−cτ} [a cos(dτ) + b sin(dτ)]` (Foreman-Mackey et al. 2017, eq. 23
    /// for `Q > 1/2`), or `None` for a term of another form.
    pub fn exp_term(&self) -> Option<ExpTerm> {
        match *self {
            Term::QuasiPeriodic { .. } => None,
            Term::Oscillator {
                amplitude_mps,
                period_d,
                quality,
            } => {
                let w0 = std::f64::consts::TAU / period_d;
                let root = (4.0 * quality * quality - 1.0).sqrt();
                let var = amplitude_mps * amplitude_mps;
                Some([
                    var,
                    var / root,
                    0.5 * w0 / quality,
                    0.5 * w0 * root / quality,
                ])
            }
        }
    }
}

/// A quasi-periodic term evaluated at one lag τ (one `sin_cos` and one `exp`).
#[derive(Clone, Copy)]
struct QuasiPeriodicLag {
    /// `τ`, days.
    tau: f64,
    /// `k(τ)`, m²/s².
    k: f64,
    /// `x = πτ/P`, radians.
    x: f64,
    /// `sin x`.
    s: f64,
    /// `cos x`.
    c: f64,
    /// `λ²`, d².
    l2: f64,
    /// `w²`.
    w2: f64,
    /// `P`, days.
    period_d: f64,
}

impl QuasiPeriodicLag {
    /// `f′ = d ln k/dτ = −π sin(2x)/(2w²P) − τ/λ²`, 1/d (`sin 2x = 2 sin x cos x`).
    fn f1(&self) -> f64 {
        -std::f64::consts::PI * self.s * self.c / (self.w2 * self.period_d) - self.tau / self.l2
    }

    /// `f″ = −π² cos(2x)/(w²P²) − 1/λ²`, 1/d² (`cos 2x = 1 − 2 sin²x`).
    fn f2(&self) -> f64 {
        -(std::f64::consts::PI / self.period_d).powi(2) * (1.0 - 2.0 * self.s * self.s) / self.w2
            - 1.0 / self.l2
    }
}

/// A sum of covariance terms.
#[derive(Clone, Debug, PartialEq)]
pub struct Kernel {
    /// The terms.
    pub terms: Vec<Term>,
}

impl Kernel {
    /// Covariance at lag `tau_d` (days), m²/s².
    pub fn covariance(&self, tau_d: f64) -> f64 {
        self.terms.iter().map(|t| t.covariance(tau_d)).sum()
    }

    /// Every term's exponential-sum form, when all terms have one (so the semiseparable
    /// solver applies).
    pub fn exp_terms(&self) -> Option<Vec<ExpTerm>> {
        self.terms.iter().map(Term::exp_term).collect()
    }

    /// Checks every term (see [`Term::check`]).
    ///
    /// # Errors
    /// [`GpError::Parameter`] for the first invalid value.
    pub fn check(&self) -> Result<(), GpError> {
        self.terms.iter().try_for_each(Term::check)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The oscillator's spectral density integrates to its variance: k(0) = S₀ω₀Q
    /// (Foreman-Mackey et al. 2017, eq. 20 at τ = 0), and the exponential-sum form equals
    /// the closed form of eq. 20 away from zero lag.
    #[test]
    fn oscillator_closed_form() {
        let (sigma, period, q) = (2.5_f64, 13.0_f64, 3.2_f64);
        let term = Term::Oscillator {
            amplitude_mps: sigma,
            period_d: period,
            quality: q,
        };
        assert!((term.covariance(0.0) - sigma * sigma).abs() < 1e-12);
        let w0 = std::f64::consts::TAU / period;
        let s0 = sigma * sigma / (w0 * q);
        let eta = (1.0 - 1.0 / (4.0 * q * q)).sqrt();
        for tau in [0.3, 5.0, 17.0, -40.0] {
            let t = f64::abs(tau);
            let closed = s0
                * w0
                * q
                * (-w0 * t / (2.0 * q)).exp()
                * ((eta * w0 * t).cos() + (eta * w0 * t).sin() / (2.0 * eta * q));
            assert!((term.covariance(tau) - closed).abs() < 1e-12, "{tau}");
        }
    }

    /// The analytic log-parameter derivatives of the quasi-periodic kernel against central
    /// differences of the covariance itself.
    #[test]
    fn quasi_periodic_log_gradient() {
        let params = [2.5_f64, 30.0, 11.0, 0.6];
        let term = |p: &[f64; 4]| Term::QuasiPeriodic {
            amplitude_mps: p[0],
            evolution_d: p[1],
            period_d: p[2],
            smoothness: p[3],
        };
        for tau in [0.0, 1.7, -6.2, 23.0] {
            let g = term(&params).log_gradient(tau).unwrap();
            for q in 0..4 {
                let h = 1e-6_f64;
                let mut up = params;
                up[q] *= h.exp();
                let mut down = params;
                down[q] *= (-h).exp();
                let fd = (term(&up).covariance(tau) - term(&down).covariance(tau)) / (2.0 * h);
                assert!((g[q] - fd).abs() < 1e-7 * fd.abs().max(1.0), "{tau} {q}");
            }
        }
    }

    /// The analytic lag derivatives of the quasi-periodic kernel against central
    /// differences of the covariance (first and second derivative) and of the analytic
    /// first derivative (second), including zero lag where `k′ = 0` and `k″ = −h²(π²/(w²P²) +
    /// 1/λ²)` (the formula at τ = 0).
    #[test]
    fn quasi_periodic_lag_derivatives() {
        let (h, lam, p, w) = (2.5_f64, 30.0_f64, 11.0_f64, 0.6_f64);
        let term = Term::QuasiPeriodic {
            amplitude_mps: h,
            evolution_d: lam,
            period_d: p,
            smoothness: w,
        };
        let step = 1e-5;
        for tau in [0.0, 0.4, 1.7, -6.2, 23.0, -41.3] {
            let [k, d1, d2] = term.lag_derivatives(tau).unwrap();
            assert_eq!(k, term.covariance(tau));
            let fd1 = (term.covariance(tau + step) - term.covariance(tau - step)) / (2.0 * step);
            let slope = |t: f64| term.lag_derivatives(t).unwrap()[1];
            let fd2 = (slope(tau + step) - slope(tau - step)) / (2.0 * step);
            assert!((d1 - fd1).abs() < 1e-7 * h * h, "{tau}: {d1} vs {fd1}");
            assert!((d2 - fd2).abs() < 1e-7 * h * h, "{tau}: {d2} vs {fd2}");
            let wide = 1e-4;
            let second = (term.covariance(tau + wide) - 2.0 * k + term.covariance(tau - wide))
                / (wide * wide);
            assert!(
                (d2 - second).abs() < 1e-6 * h * h,
                "{tau}: {d2} vs {second}"
            );
        }
        let [_, d1, d2] = term.lag_derivatives(0.0).unwrap();
        let pi = std::f64::consts::PI;
        assert_eq!(d1, 0.0);
        let expected = -h * h * (pi * pi / (w * w * p * p) + 1.0 / (lam * lam));
        assert!((d2 - expected).abs() < 1e-12 * expected.abs());
        let osc = Term::Oscillator {
            amplitude_mps: 1.0,
            period_d: 5.0,
            quality: 2.0,
        };
        assert_eq!(osc.lag_derivatives(1.0), None);
    }

    /// The hyperparameter derivatives of `[k, k′, k″]` against central differences of
    /// the analytic lag derivatives in ln λ, ln w and ln P.
    #[test]
    fn quasi_periodic_lag_derivative_gradients() {
        let params = [30.0_f64, 0.6, 11.0];
        let term = |p: &[f64; 3]| Term::QuasiPeriodic {
            amplitude_mps: 1.7,
            evolution_d: p[0],
            smoothness: p[1],
            period_d: p[2],
        };
        for tau in [0.0, 0.4, 1.7, -6.2, 23.0, -41.3] {
            let g = term(&params).lag_derivative_gradients(tau).unwrap();
            for q in 0..3 {
                let h = 1e-6_f64;
                let (mut up, mut down) = (params, params);
                up[q] *= h.exp();
                down[q] *= (-h).exp();
                let (a, b) = (
                    term(&up).lag_derivatives(tau).unwrap(),
                    term(&down).lag_derivatives(tau).unwrap(),
                );
                for d in 0..3 {
                    let fd = (a[d] - b[d]) / (2.0 * h);
                    assert!(
                        (g[q][d] - fd).abs() < 1e-7 * fd.abs().max(1.0),
                        "τ {tau}, parameter {q}, derivative {d}: {} vs {fd}",
                        g[q][d]
                    );
                }
            }
        }
    }

    /// The quasi-periodic kernel is periodic in the limit λ → ∞ and equals h² at whole
    /// periods then (definition, Rajpaul et al. 2015, eq. 4).
    #[test]
    fn quasi_periodic_limits() {
        let term = Term::QuasiPeriodic {
            amplitude_mps: 3.0,
            evolution_d: 1e12,
            period_d: 7.0,
            smoothness: 0.4,
        };
        assert!((term.covariance(14.0) - 9.0).abs() < 1e-9);
        let half = (-0.5 / (0.4_f64 * 0.4)).exp() * 9.0;
        assert!((term.covariance(3.5) - half).abs() < 1e-9);
        assert!(
            Term::Oscillator {
                amplitude_mps: 1.0,
                period_d: 1.0,
                quality: 0.5
            }
            .check()
            .is_err()
        );
    }
}
