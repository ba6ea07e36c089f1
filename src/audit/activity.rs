//! Planet or stellar activity? A planet keeps its amplitude and phase from season to
//! season and leaves the activity indicators alone; activity drifts in both and shows in
//! the indicators.
//!
//! - Per season (a gap longer than the setting separates seasons) the signal's sinusoid
//!   at the fitted period is refitted to the data with everything else removed (offsets
//!   free); the seasons' `(a, b)` are tested for one common value with
//!   `χ² = Σ (v_s − v̄)ᵀ C_s⁻¹ (v_s − v̄)`, `2(S − 1)` degrees of freedom.
//! - Pearson and Spearman rank correlation of each indicator (centred per instrument)
//!   with the RVs (offsets removed) and with the residuals of the full fit; two-sided
//!   p-values from Student's t with n − 2 degrees of freedom (for Spearman's ρ, Pearson's
//!   r of the ranks with tied values given their mean rank: Spearman 1904, Am. J. Psychol.
//!   15, 72; the t approximation as in scipy.stats.spearmanr).
//! - GLS periodogram of each indicator (one offset per instrument, equal weights) on the
//!   search grid: its highest power within `1/span` of the planet's frequency, with the
//!   Baluev FAP.
//! - The period against the stellar rotation period and its first two harmonics.

use serde::Serialize;
use statrs::function::beta::beta_reg;
use statrs::function::gamma::gamma_ur;

use super::AuditError;
use super::common::{Refitter, SineFit, centred_indicators, sine_fit};
use crate::data::RvSet;
use crate::gp::near_rotation;

/// An observing season.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Season {
    /// First time, days from the data's reference epoch.
    pub start_d: f64,
    /// Last time, days from the data's reference epoch.
    pub end_d: f64,
    /// Points in the season.
    pub n_points: usize,
    /// Index of the first point (the data are sorted by time).
    #[serde(skip)]
    pub first: usize,
}

impl Season {
    /// Indices of the season's points.
    pub fn indices(&self) -> std::ops::Range<usize> {
        self.first..self.first + self.n_points
    }
}

/// Seasons of `set`: runs of points without a gap longer than `gap_d` days.
pub fn seasons(set: &RvSet, gap_d: f64) -> Vec<Season> {
    let mut out: Vec<Season> = Vec::new();
    for (j, &t) in set.time_d.iter().enumerate() {
        match out.last_mut() {
            Some(s) if t - s.end_d <= gap_d => {
                s.end_d = t;
                s.n_points += 1;
            }
            _ => out.push(Season {
                start_d: t,
                end_d: t,
                n_points: 1,
                first: j,
            }),
        }
    }
    out
}

/// The signal in one season.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SeasonFit {
    /// Season number (0-based, as in the audit's `seasons`).
    pub season: usize,
    /// Points used.
    pub n_points: usize,
    /// Semi-amplitude of the sinusoid, m/s.
    pub k_mps: f64,
    /// Its 1σ, m/s.
    pub k_err_mps: f64,
    /// Phase `atan2(b, a)` of `K cos(2πft − φ)`, degrees.
    pub phase_deg: f64,
    /// Its 1σ, degrees.
    pub phase_err_deg: f64,
}

/// Correlation of an indicator with the RVs or the residuals.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Correlation {
    /// Indicator column.
    pub indicator: String,
    /// `rv` (offsets removed) or `residuals` (of the full fit).
    pub against: &'static str,
    /// Points with a value.
    pub n_points: usize,
    /// Pearson r.
    pub r: f64,
    /// Two-sided p-value of r = 0.
    pub p_value: f64,
    /// Spearman's rank correlation ρ.
    pub spearman_rho: f64,
    /// Two-sided p-value of ρ = 0.
    pub spearman_p_value: f64,
}

/// An indicator's periodogram near the planet's period.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct IndicatorPeak {
    /// Indicator column.
    pub indicator: String,
    /// Period of the highest power within 1/span of the planet's frequency, days.
    pub period_d: f64,
    /// That power.
    pub power: f64,
    /// Its Baluev FAP over the search range.
    pub fap: f64,
    /// Period of the indicator's strongest peak anywhere, days.
    pub strongest_period_d: f64,
}

/// Planet-or-activity checks of one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Activity {
    /// The signal season by season.
    pub seasons: Vec<SeasonFit>,
    /// p-value of one amplitude and phase for all seasons (absent with fewer than two).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub season_p: Option<f64>,
    /// Correlations with each indicator.
    pub correlations: Vec<Correlation>,
    /// Each indicator's periodogram near the period.
    pub indicator_peaks: Vec<IndicatorPeak>,
    /// Which rotation harmonic the period is near, in words, if any.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub near_rotation: Option<String>,
}

/// Runs the checks for base planet `i`.
///
/// # Errors
/// [`AuditError`] when an indicator periodogram cannot be computed.
pub fn activity(refit: &Refitter, i: usize, seasons: &[Season]) -> Result<Activity, AuditError> {
    let jit = refit.jitters();
    let period = refit.base.planets[i].period_d.value;
    let f = 1.0 / period;
    let residual = refit.residual_without(i);
    let sines: Vec<(usize, usize, SineFit)> = seasons
        .iter()
        .enumerate()
        .filter_map(|(s, season)| {
            let idx: Vec<usize> = season.indices().collect();
            sine_fit(&residual.select(&idx), jit, f).map(|sf| (s, idx.len(), sf))
        })
        .collect();
    let fits: Vec<SeasonFit> = sines
        .iter()
        .filter_map(|&(season, n_points, sf)| {
            let k = sf.amplitude();
            let [[caa, cab], [_, cbb]] = sf.cov;
            let grad_quad =
                |ga: f64, gb: f64| (ga * ga * caa + 2.0 * ga * gb * cab + gb * gb * cbb).sqrt();
            let fit = SeasonFit {
                season,
                n_points,
                k_mps: k,
                k_err_mps: grad_quad(sf.a / k, sf.b / k),
                phase_deg: sf.phase().to_degrees(),
                phase_err_deg: grad_quad(-sf.b / (k * k), sf.a / (k * k)).to_degrees(),
            };
            (fit.k_err_mps.is_finite() && fit.phase_err_deg.is_finite()).then_some(fit)
        })
        .collect();
    let season_p = season_consistency(sines.iter().map(|x| &x.2));
    let correlations = correlations(refit);
    let indicator_peaks = indicator_peaks(refit, f)?;
    let near_rotation = refit
        .settings
        .rotation_d
        .and_then(|(p_rot, _)| near_rotation(period, p_rot));
    Ok(Activity {
        seasons: fits,
        season_p,
        correlations,
        indicator_peaks,
        near_rotation,
    })
}

/// p-value of one common `(a, b)` for the seasons' sinusoid fits.
fn season_consistency<'s>(sines: impl Iterator<Item = &'s SineFit>) -> Option<f64> {
    let fits: Vec<([f64; 2], [[f64; 2]; 2])> = sines
        .filter_map(|sf| sf.precision().map(|w| ([sf.a, sf.b], w)))
        .collect();
    if fits.len() < 2 {
        return None;
    }
    // Weighted mean v̄ = (Σ W_s)⁻¹ Σ W_s v_s with W_s = C_s⁻¹.
    let mut w = [[0.0; 2]; 2];
    let mut wv = [0.0; 2];
    for (v, ws) in &fits {
        for r in 0..2 {
            for c in 0..2 {
                w[r][c] += ws[r][c];
            }
            wv[r] += ws[r][0] * v[0] + ws[r][1] * v[1];
        }
    }
    let det = w[0][0] * w[1][1] - w[0][1] * w[1][0];
    let mean = [
        (w[1][1] * wv[0] - w[0][1] * wv[1]) / det,
        (w[0][0] * wv[1] - w[1][0] * wv[0]) / det,
    ];
    let chi2: f64 = fits
        .iter()
        .map(|(v, ws)| {
            let d = [v[0] - mean[0], v[1] - mean[1]];
            ws[0][0] * d[0] * d[0] + 2.0 * ws[0][1] * d[0] * d[1] + ws[1][1] * d[1] * d[1]
        })
        .sum();
    let dof = 2.0 * (fits.len() - 1) as f64;
    Some(chi2_survival(chi2, dof))
}

/// `P(χ²_dof > x)` = Q(dof/2, x/2), the regularised upper incomplete gamma function
/// (Abramowitz & Stegun 1964, 26.4.19).
pub fn chi2_survival(x: f64, dof: f64) -> f64 {
    if x <= 0.0 {
        1.0
    } else {
        gamma_ur(0.5 * dof, 0.5 * x)
    }
}

/// Two-sided p-value of Student's t with `nu` degrees of freedom,
/// `I_{ν/(ν+t²)}(ν/2, 1/2)` (Abramowitz & Stegun 1964, 26.7.1 with 26.5.27).
pub fn student_t_two_sided(t: f64, nu: f64) -> f64 {
    beta_reg(0.5 * nu, 0.5, nu / (nu + t * t))
}

/// The pairs of `x` and `y` where both are finite.
fn finite_pairs(x: &[f64], y: &[f64]) -> (Vec<f64>, Vec<f64>) {
    x.iter()
        .zip(y)
        .filter(|(a, b)| a.is_finite() && b.is_finite())
        .map(|(a, b)| (*a, *b))
        .unzip()
}

/// Pearson r of `x` and `y` over the points where both are finite, with its two-sided
/// p-value: `(n, r, p)`; `None` for fewer than 4 points or a constant column.
pub fn pearson(x: &[f64], y: &[f64]) -> Option<(usize, f64, f64)> {
    let (x, y) = finite_pairs(x, y);
    let n = x.len();
    if n < 4 {
        return None;
    }
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(&y) {
        sxy += (a - mx) * (b - my);
        sxx += (a - mx).powi(2);
        syy += (b - my).powi(2);
    }
    if !(sxx > 0.0 && syy > 0.0) {
        return None;
    }
    let r = (sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0);
    let nu = (n - 2) as f64;
    let t = r * (nu / (1.0 - r * r).max(1e-300)).sqrt();
    Some((n, r, student_t_two_sided(t, nu)))
}

/// 1-based ranks of `v`, tied values sharing their mean rank.
fn ranks(v: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..v.len()).collect();
    order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut out = vec![0.0; v.len()];
    let mut start = 0;
    while start < order.len() {
        let mut end = start + 1;
        while end < order.len() && v[order[end]] == v[order[start]] {
            end += 1;
        }
        let mean_rank = 0.5 * (start + end + 1) as f64;
        for &j in &order[start..end] {
            out[j] = mean_rank;
        }
        start = end;
    }
    out
}

/// Spearman's ρ of `x` and `y` over the points where both are finite (Pearson r of the
/// ranks), with its two-sided p-value from Student's t: `(n, ρ, p)`.
pub fn spearman(x: &[f64], y: &[f64]) -> Option<(usize, f64, f64)> {
    let (x, y) = finite_pairs(x, y);
    pearson(&ranks(&x), &ranks(&y))
}

/// Correlations of each indicator with the RVs and the residuals of the base fit.
fn correlations(refit: &Refitter) -> Vec<Correlation> {
    let set = refit.set;
    let p = &refit.base.params;
    let rv: Vec<f64> = (0..set.len())
        .map(|j| set.rv_mps[j] - p.offsets_mps[set.instrument[j]])
        .collect();
    let residuals = p.residuals(set);
    let mut out = Vec::new();
    for ind in centred_indicators(set).indicators {
        for (against, y) in [("rv", &rv), ("residuals", &residuals)] {
            if let (Some((n_points, r, p_value)), Some((_, rho, p_rho))) =
                (pearson(&ind.values, y), spearman(&ind.values, y))
            {
                out.push(Correlation {
                    indicator: ind.name.clone(),
                    against,
                    n_points,
                    r,
                    p_value,
                    spearman_rho: rho,
                    spearman_p_value: p_rho,
                });
            }
        }
    }
    out
}

/// Each indicator's periodogram near frequency `f`.
fn indicator_peaks(refit: &Refitter, f: f64) -> Result<Vec<IndicatorPeak>, AuditError> {
    let set = refit.set;
    let span = set.baseline_d();
    let mut out = Vec::new();
    for ind in &set.indicators {
        let idx: Vec<usize> = (0..set.len())
            .filter(|&j| ind.values[j].is_finite())
            .collect();
        if idx.len() < 5 {
            continue;
        }
        let mut sub = set.select(&idx);
        sub.rv_mps = idx.iter().map(|&j| ind.values[j]).collect();
        sub.err_mps = vec![1.0; idx.len()];
        let pg = crate::periodogram::compute_with(
            &sub,
            &[],
            &refit.grid,
            crate::periodogram::Method::FAST,
        )?;
        let grid = &pg.grid;
        let near = (0..grid.n)
            .filter(|&j| (grid.frequency(j) - f).abs() <= 1.0 / span)
            .max_by(|&a, &b| pg.power[a].total_cmp(&pg.power[b]));
        let strongest = pg.peaks(1, 0.0).first().map_or(f64::NAN, |p| p.period);
        if let Some(j) = near {
            out.push(IndicatorPeak {
                indicator: ind.name.clone(),
                period_d: 1.0 / grid.frequency(j),
                power: pg.power[j],
                fap: pg.fap(pg.power[j]),
                strongest_period_d: strongest,
            });
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check values from standard tables (Abramowitz & Stegun 1964, tables 26.7 and 26.8;
    /// also scipy.stats): P(χ²₂ > 5.991) = 0.05, P(χ²₁₀ > 18.307) = 0.05; two-sided
    /// Student t: t = 2.228 with 10 dof gives p = 0.05, t = 1.96 with ν → ∞ about 0.05.
    #[test]
    fn tail_probabilities_match_tables() {
        assert!((chi2_survival(5.991_46, 2.0) - 0.05).abs() < 1e-5);
        assert!((chi2_survival(18.307_04, 10.0) - 0.05).abs() < 1e-5);
        assert!((student_t_two_sided(2.228_14, 10.0) - 0.05).abs() < 1e-5);
        assert!((student_t_two_sided(1.959_96, 1e7) - 0.05).abs() < 1e-5);
    }

    /// Pearson and Spearman correlations and p-values against scipy.stats.pearsonr and
    /// spearmanr (fixture written by tests/reference/make_correlation_fixture.py, versions
    /// recorded in it), including tied values.
    #[test]
    fn correlations_match_scipy() {
        let doc: serde_json::Value =
            serde_json::from_str(include_str!("../../tests/reference/correlations.json")).unwrap();
        for set in doc["sets"].as_array().unwrap() {
            let col = |k: &str| -> Vec<f64> {
                set[k]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|v| v.as_f64().unwrap())
                    .collect()
            };
            let (x, y) = (col("x"), col("y"));
            let num = |k: &str| set[k].as_f64().unwrap();
            let (_, r, p) = pearson(&x, &y).unwrap();
            let (_, rho, p_rho) = spearman(&x, &y).unwrap();
            let name = set["name"].as_str().unwrap();
            assert!((r - num("pearson_r")).abs() < 1e-12, "{name}: r {r}");
            assert!(
                (rho - num("spearman_rho")).abs() < 1e-12,
                "{name}: rho {rho}"
            );
            for (got, want) in [(p, num("pearson_p")), (p_rho, num("spearman_p"))] {
                assert!(
                    (got - want).abs() <= 1e-9 * want.max(1e-300) + 1e-15,
                    "{name}: p {got} vs {want}"
                );
            }
        }
    }

    #[test]
    fn rotation_harmonics() {
        assert!(near_rotation(12.1, 24.0).unwrap().starts_with("half"));
        assert!(
            near_rotation(24.5, 24.0)
                .unwrap()
                .starts_with("the rotation")
        );
        assert!(near_rotation(17.0, 24.0).is_none());
    }
}
