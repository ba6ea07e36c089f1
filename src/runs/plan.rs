//! Planning the next epochs: the Fisher-information forecast of each planet's K error after
//! more epochs, and the dates in a window where one more epoch shrinks it most.
//!
//! The Fisher matrix of the mean model (planets, offsets, trend, indicator terms) is
//! `F = Jᵀ W J`, `J` the derivatives of the model RV at each epoch with respect to θ
//! (central differences) and `W = 1/(σ² + s²)` with each instrument's fitted jitter `s`;
//! its inverse is the forecast covariance (Cramér–Rao bound, e.g. Gregory 2005, Bayesian
//! Logical Data Analysis, §11). New epochs get the instrument's median error. One more
//! epoch at time `t` changes `Var(K)` by the rank-one (Sherman–Morrison) update
//! `(c·j)² / (1/w + jᵀ C j)`, `c` the row of `C` for K and `j` the derivatives at `t`.
//! The mass error follows `σ_m/m = sqrt((σ_K/K)² + (2σ_M*/3M*)²)` (small planet).

use std::fmt::Write;

use nalgebra::{DMatrix, DVector};
use serde::Serialize;

use crate::data::RvSet;
use crate::fit::{Fit, Role};
use crate::report::figure::esc;

/// What to forecast.
#[derive(Clone, Debug, PartialEq)]
pub struct PlanRequest {
    /// Instrument of the new epochs (index into the data's instruments).
    pub instrument: usize,
    /// Number of new epochs, spread evenly over the window at the instrument's usual hour.
    pub epochs: usize,
    /// Window, days from the data's reference epoch.
    pub window_d: (f64, f64),
    /// Relative 1σ of the stellar mass (for the mass forecast; 0 when unknown).
    pub mstar_rel_err: f64,
}

/// Forecast for one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlanetForecast {
    /// Label.
    pub label: String,
    /// K, m/s.
    pub k_mps: f64,
    /// σ_K now (Fisher, same model), m/s.
    pub k_err_now_mps: f64,
    /// σ_K after the new epochs, m/s.
    pub k_err_after_mps: f64,
    /// K/σ_K after.
    pub k_over_sigma_after: f64,
    /// Relative mass error now.
    pub mass_rel_err_now: f64,
    /// Relative mass error after.
    pub mass_rel_err_after: f64,
}

/// One candidate date.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DateValue {
    /// Time, full BJD_TDB.
    pub bjd: f64,
    /// Fractional reduction of each planet's Var(K) from one epoch then (same order as
    /// the forecasts).
    pub var_k_reduction: Vec<f64>,
    /// Orbital phase of each planet (0 at conjunction).
    pub phase: Vec<f64>,
}

/// The plan.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Plan {
    /// Times of the new epochs assumed, full BJD_TDB.
    pub new_epochs_bjd: Vec<f64>,
    /// Error assumed for each new epoch (median of the instrument's), m/s.
    pub new_error_mps: f64,
    /// Forecast per planet.
    pub planets: Vec<PlanetForecast>,
    /// One candidate time per day of the window at the instrument's usual hour, with the
    /// value of one epoch then.
    pub dates: Vec<DateValue>,
}

/// Why no plan could be made.
#[derive(Debug, thiserror::Error)]
pub enum PlanError {
    /// The Fisher matrix is singular (a parameter the data cannot constrain).
    #[error("the Fisher matrix of the fit is singular: some parameter is not constrained")]
    Singular,
    /// Bad request.
    #[error("{0}")]
    Request(String),
}

/// Derivatives of the mean model with respect to the free mean-model parameters at `times`
/// (instrument `instrument`); columns in the order of `cols`.
fn jacobian(
    fit: &Fit,
    set: &RvSet,
    cols: &[usize],
    times: &[f64],
    instrument: &[usize],
) -> DMatrix<f64> {
    let scales = fit.layout.scales(set);
    let probe = RvSet {
        time_d: times.to_vec(),
        rv_mps: vec![0.0; times.len()],
        err_mps: vec![1.0; times.len()],
        instrument: instrument.to_vec(),
        origin: Vec::new(),
        indicators: set
            .indicators
            .iter()
            .map(|ind| crate::data::Indicator {
                name: ind.name.clone(),
                values: vec![f64::NAN; times.len()],
            })
            .collect(),
        ..set.clone()
    };
    let mut jac = DMatrix::zeros(times.len(), cols.len());
    for (c, &j) in cols.iter().enumerate() {
        let h = 1e-4 * scales[j];
        let mut up = fit.theta.clone();
        up[j] += h;
        let mut down = fit.theta.clone();
        down[j] -= h;
        let max_ecc = fit.options.max_ecc;
        let (Some(pu), Some(pd)) = (
            fit.layout.params(&up, max_ecc),
            fit.layout.params(&down, max_ecc),
        ) else {
            continue;
        };
        let (mu, md) = (pu.predict(&probe), pd.predict(&probe));
        for i in 0..times.len() {
            jac[(i, c)] = (mu[i] - md[i]) / (2.0 * h);
        }
    }
    jac
}

/// Weights `1/(σ² + s²)`.
fn weights(errors: &[f64], instrument: &[usize], jitters: &[f64]) -> DVector<f64> {
    DVector::from_iterator(
        errors.len(),
        errors
            .iter()
            .zip(instrument)
            .map(|(e, &k)| 1.0 / (e * e + jitters[k] * jitters[k])),
    )
}

/// Forecasts `fit` of `set` after the new epochs of `req`.
///
/// # Errors
/// [`PlanError`] for an empty window, an unknown instrument or a singular Fisher matrix.
pub fn plan(fit: &Fit, set: &RvSet, req: &PlanRequest) -> Result<Plan, PlanError> {
    let (t0, t1) = req.window_d;
    if !(t1 > t0) || req.instrument >= set.n_instruments() {
        return Err(PlanError::Request(
            "the window must end after it starts and the instrument must be in the data".into(),
        ));
    }
    let roles = fit.layout.roles();
    let cols: Vec<usize> = (0..roles.len())
        .filter(|&j| !matches!(roles[j], Role::Jitter(_)))
        .collect();
    let jit = &fit.params.jitters_mps;
    let inst_idx: Vec<usize> = (0..set.len())
        .filter(|&i| set.instrument[i] == req.instrument)
        .collect();
    let mut errs: Vec<f64> = inst_idx.iter().map(|&i| set.err_mps[i]).collect();
    errs.sort_by(f64::total_cmp);
    let new_error = errs.get(errs.len() / 2).copied().unwrap_or(1.0);
    // The instrument's usual time of day: circular mean of the day fractions.
    let (s, c) = inst_idx.iter().fold((0.0, 0.0), |(s, c), &i| {
        let a = std::f64::consts::TAU * (set.time_d[i] + set.epoch_bjd).rem_euclid(1.0);
        (s + a.sin(), c + a.cos())
    });
    let hour = (s.atan2(c) / std::f64::consts::TAU).rem_euclid(1.0);
    let at_hour = |day: f64| (day + set.epoch_bjd).floor() + hour - set.epoch_bjd;

    let fisher = |times: &[f64], insts: &[usize], errors: &[f64]| {
        let j = jacobian(fit, set, &cols, times, insts);
        let w = weights(errors, insts, jit);
        j.transpose() * DMatrix::from_diagonal(&w) * &j
    };
    let f_now = fisher(&set.time_d, &set.instrument, &set.err_mps);
    let new_times: Vec<f64> = (0..req.epochs)
        .map(|k| at_hour(t0 + (t1 - t0) * (k as f64 + 0.5) / req.epochs.max(1) as f64))
        .collect();
    let new_inst = vec![req.instrument; req.epochs];
    let f_after = &f_now + fisher(&new_times, &new_inst, &vec![new_error; req.epochs]);
    let c_now = f_now.try_inverse().ok_or(PlanError::Singular)?;
    let c_after = f_after.try_inverse().ok_or(PlanError::Singular)?;

    let k_cols: Vec<usize> = (0..fit.planets.len())
        .map(|i| {
            let j = fit.layout.index(Role::K(i)).expect("K is always free");
            cols.iter()
                .position(|&c| c == j)
                .expect("K is a mean-model parameter")
        })
        .collect();
    let mstar = 2.0 / 3.0 * req.mstar_rel_err;
    let planets = fit
        .planets
        .iter()
        .zip(&k_cols)
        .map(|(p, &kc)| {
            let k = p.k_mps.value;
            let (now, after) = (c_now[(kc, kc)].sqrt(), c_after[(kc, kc)].sqrt());
            PlanetForecast {
                label: p.label.clone(),
                k_mps: k,
                k_err_now_mps: now,
                k_err_after_mps: after,
                k_over_sigma_after: k / after,
                mass_rel_err_now: (now / k).hypot(mstar),
                mass_rel_err_after: (after / k).hypot(mstar),
            }
        })
        .collect();

    let days: Vec<f64> = (0..)
        .map(|d| at_hour(t0 + d as f64))
        .take_while(|&t| t <= t1 + 1.0)
        .filter(|&t| t >= t0 && t <= t1)
        .collect();
    let jd = jacobian(fit, set, &cols, &days, &vec![req.instrument; days.len()]);
    let w = 1.0 / (new_error * new_error + jit[req.instrument].powi(2));
    let dates = days
        .iter()
        .enumerate()
        .map(|(r, &t)| {
            let j = jd.row(r).transpose();
            let cj = &c_now * &j;
            let denom = 1.0 / w + j.dot(&cj);
            let var_k_reduction = k_cols
                .iter()
                .map(|&kc| cj[kc] * cj[kc] / denom / c_now[(kc, kc)])
                .collect();
            let phase = fit
                .params
                .planets
                .iter()
                .map(|o| ((t - o.tc_d()) / o.period_d()).rem_euclid(1.0))
                .collect();
            DateValue {
                bjd: t + set.epoch_bjd,
                var_k_reduction,
                phase,
            }
        })
        .collect();
    Ok(Plan {
        new_epochs_bjd: new_times.iter().map(|t| t + set.epoch_bjd).collect(),
        new_error_mps: new_error,
        planets,
        dates,
    })
}

/// Figure of the plan (SVG): the value of one epoch on each date of the window, per
/// planet (fractional reduction of Var K), with the planned epochs marked.
pub fn plan_svg(plan: &Plan) -> String {
    const W: f64 = 480.0;
    const H: f64 = 260.0;
    const L: f64 = 56.0;
    const R: f64 = 14.0;
    const T: f64 = 16.0;
    const B: f64 = 40.0;
    /// Our own palette: blue, orange, dark grey, with dash patterns for greyscale.
    const LINES: [(&str, &str); 3] = [("#1f5fa8", ""), ("#c8621b", "6 3"), ("#444444", "2 2")];
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{W}" height="{H}" viewBox="0 0 {W} {H}" font-family="sans-serif" font-size="11"><rect width="100%" height="100%" fill="white"/>"#
    );
    let (Some(first), Some(last)) = (plan.dates.first(), plan.dates.last()) else {
        out.push_str("</svg>\n");
        return out;
    };
    let (x0, x1) = (first.bjd, last.bjd.max(first.bjd + 1.0));
    let ymax = plan
        .dates
        .iter()
        .flat_map(|d| d.var_k_reduction.iter().copied())
        .fold(0.0_f64, f64::max)
        .max(1e-6)
        * 1.1;
    let x = |t: f64| L + (t - x0) / (x1 - x0) * (W - L - R);
    let y = |v: f64| H - B - v / ymax * (H - T - B);
    let _ = writeln!(
        out,
        r##"<path d="M{L},{T} V{:.1} H{:.1}" fill="none" stroke="#222222"/>"##,
        H - B,
        W - R
    );
    for t in &plan.new_epochs_bjd {
        let _ = writeln!(
            out,
            r##"<line class="planned" x1="{0:.1}" x2="{0:.1}" y1="{1:.1}" y2="{2:.1}" stroke="#bbbbbb"/>"##,
            x(*t),
            H - B,
            H - B - 6.0
        );
    }
    for (p, forecast) in plan.planets.iter().enumerate() {
        let (colour, dash) = LINES[p % LINES.len()];
        let pts: Vec<String> = plan
            .dates
            .iter()
            .map(|d| format!("{:.1},{:.1}", x(d.bjd), y(d.var_k_reduction[p])))
            .collect();
        let _ = writeln!(
            out,
            r#"<polyline class="planet-curve" points="{}" fill="none" stroke="{colour}" stroke-dasharray="{dash}" stroke-width="1.5"/>"#,
            pts.join(" ")
        );
        let _ = writeln!(
            out,
            r#"<text x="{:.1}" y="{:.1}" fill="{colour}">{}</text>"#,
            W - R - 60.0,
            T + 12.0 + 13.0 * p as f64,
            esc(&format!("planet {}", forecast.label))
        );
    }
    let _ = writeln!(
        out,
        r##"<text x="{:.1}" y="{:.1}" text-anchor="middle" fill="#222222">BJD_TDB − {:.0}</text>"##,
        0.5 * (L + W - R),
        H - 8.0,
        x0.floor()
    );
    for k in 0..=4 {
        let t = x0 + (x1 - x0) * k as f64 / 4.0;
        let _ = writeln!(
            out,
            r##"<text x="{:.1}" y="{:.1}" text-anchor="middle" fill="#222222">{:.0}</text>"##,
            x(t),
            H - B + 14.0,
            t - x0.floor()
        );
    }
    let _ = writeln!(
        out,
        r##"<text transform="translate(14,{:.1}) rotate(-90)" text-anchor="middle" fill="#222222">Var(K) reduction from one epoch</text>"##,
        0.5 * (T + H - B)
    );
    let _ = writeln!(
        out,
        r##"<text x="{:.1}" y="{:.1}" text-anchor="end" fill="#222222">{:.3}</text>"##,
        L - 4.0,
        T + 4.0,
        ymax
    );
    out.push_str("</svg>\n");
    out
}
