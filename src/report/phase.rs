//! Figures of the data against the model: each planet's phase-folded RV with its
//! Keplerian curve, binned points and residuals below; the residuals against time, one
//! panel per instrument; and, with an activity GP, the activity model against time.

use std::collections::BTreeMap;

use serde_json::Value;

use super::figure::{
    COLUMN_PT, GUIDE, INK, LABEL_PT, MODEL, MUTED, Marker, Panel, Scale, Svg, TICK_PT,
    padded_range, series,
};
use super::saved::{ActivityCurve, Points};
use crate::orbit::Orbit;

/// Plot-area margins of a one-column figure, pt.
const LEFT: f64 = 42.0;
const RIGHT: f64 = 8.0;
/// Phase bins of the binned points, per unit phase.
const BINS: usize = 10;
/// Points of the model curve.
const CURVE_POINTS: usize = 400;

/// A planet's orbit as stored in the `model` block of results.json.
#[derive(Clone, Debug, PartialEq)]
pub struct ModelPlanet {
    /// Label.
    pub label: String,
    /// The orbit, times in days from the conjunction.
    pub orbit: Orbit,
    /// Conjunction time, BJD_TDB.
    pub tc_bjd: f64,
}

impl ModelPlanet {
    /// Reads planet `v` of the `model` block; `None` when a field is missing or invalid.
    pub fn from_json(v: &Value) -> Option<ModelPlanet> {
        let f = |k: &str| v.get(k).and_then(Value::as_f64);
        let orbit = Orbit::new(
            f("period_d")?,
            f("k_mps")?,
            f("ecc")?,
            f("omega_deg")?.to_radians(),
            0.0,
        )
        .ok()?;
        Some(ModelPlanet {
            label: v.get("label")?.as_str()?.to_string(),
            orbit,
            tc_bjd: f("tc_bjd")?,
        })
    }

    /// Orbital phase of `t_bjd` from the conjunction, in [−0.5, 0.5).
    pub fn phase(&self, t_bjd: f64) -> f64 {
        let p = ((t_bjd - self.tc_bjd) / self.orbit.period_d()).rem_euclid(1.0);
        if p >= 0.5 { p - 1.0 } else { p }
    }
}

/// Jitter of each instrument from the `model` block (m/s; 0 where absent).
pub fn jitters(results: &Value) -> BTreeMap<String, f64> {
    results["model"]["instruments"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|i| Some((i["name"].as_str()?.to_string(), i["jitter_mps"].as_f64()?)))
        .collect()
}

/// Each instrument's activity amplitude factor from `results.json` (`scale.NAME` in the
/// activity block; instruments without one have factor 1).
pub fn activity_scales(results: &Value) -> BTreeMap<String, f64> {
    results["activity"]["parameters"]
        .as_object()
        .into_iter()
        .flatten()
        .filter_map(|(key, v)| {
            Some((
                key.strip_prefix("scale.")?.to_string(),
                v["value"].as_f64()?,
            ))
        })
        .collect()
}

/// Error bar of each point, m/s: its uncertainty and its instrument's jitter in
/// quadrature.
fn error_bars(points: &Points, jit: &BTreeMap<String, f64>) -> Vec<f64> {
    points
        .points
        .iter()
        .map(|p| {
            p.err_mps
                .hypot(jit.get(&p.instrument).copied().unwrap_or(0.0))
        })
        .collect()
}

/// Weighted means in phase bins: (phase centre, mean, its error) for bins with at least
/// two points.
fn binned(phase: &[f64], y: &[f64], err: &[f64]) -> Vec<(f64, f64, f64)> {
    let mut acc = vec![(0.0, 0.0, 0usize); BINS];
    for ((&p, &v), &e) in phase.iter().zip(y).zip(err) {
        let b = (((p + 0.5) * BINS as f64) as usize).min(BINS - 1);
        let w = 1.0 / (e * e);
        acc[b].0 += w * v;
        acc[b].1 += w;
        acc[b].2 += 1;
    }
    acc.iter()
        .enumerate()
        .filter(|(_, a)| a.2 >= 2)
        .map(|(b, a)| {
            (
                -0.5 + (b as f64 + 0.5) / BINS as f64,
                a.0 / a.1,
                a.1.sqrt().recip(),
            )
        })
        .collect()
}

/// A row of legend entries for the instruments above a panel at height `y`.
fn instrument_legend(
    svg: &mut Svg,
    names: &[String],
    y: f64,
    extra: &[(Option<Marker>, &str, &str)],
) {
    let mut x = LEFT;
    for (i, name) in names.iter().enumerate() {
        let (colour, m) = series(i);
        svg.legend_entry(x, y, Some(m), colour, name);
        x += 16.0 + 4.2 * name.chars().count() as f64;
    }
    for (m, colour, text) in extra {
        svg.legend_entry(x, y, *m, colour, text);
        x += 16.0 + 4.2 * text.chars().count() as f64;
    }
}

/// Phase-folded RV of planet `planet` (index into the signal columns of `points`): the
/// data minus the model's other parts (other planets, offsets, trend) against phase
/// from conjunction, one marker per epoch with error bars (uncertainty and jitter in
/// quadrature), the Keplerian curve, weighted means in phase bins, and residuals below.
pub fn phase_svg(
    points: &Points,
    planet: &ModelPlanet,
    index: usize,
    jit: &BTreeMap<String, f64>,
) -> String {
    let names = points.instruments();
    let err = error_bars(points, jit);
    let phase: Vec<f64> = points
        .points
        .iter()
        .map(|p| planet.phase(p.time_bjd))
        .collect();
    let y: Vec<f64> = points
        .points
        .iter()
        .map(|p| p.residual_mps + p.signals_mps[index])
        .collect();
    let curve: Vec<(f64, f64)> = (0..=CURVE_POINTS)
        .map(|k| {
            let ph = -0.5 + k as f64 / CURVE_POINTS as f64;
            (ph, planet.orbit.rv(ph * planet.orbit.period_d()))
        })
        .collect();
    let bins = binned(&phase, &y, &err);
    let (lo, hi) = padded_range(
        y.iter()
            .zip(&err)
            .flat_map(|(v, e)| [v - e, v + e])
            .chain(curve.iter().map(|c| c.1)),
        0.05,
    );
    let resid: Vec<f64> = points.points.iter().map(|p| p.residual_mps).collect();
    let rmax = resid
        .iter()
        .zip(&err)
        .map(|(r, e)| r.abs() + e)
        .fold(1.0_f64, f64::max)
        * 1.08;
    let width = COLUMN_PT - LEFT - RIGHT;
    let top = Panel {
        left: LEFT,
        top: 16.0,
        width,
        height: 128.0,
        xs: Scale::Linear(-0.5, 0.5),
        ys: Scale::Linear(lo, hi),
    };
    let bottom = Panel {
        top: top.top + top.height,
        height: 46.0,
        ys: Scale::Linear(-rmax, rmax),
        ..top
    };
    let title = format!(
        "planet {}: RV folded on P = {:.6} d",
        planet.label,
        planet.orbit.period_d()
    );
    let mut svg = Svg::new(bottom.top + bottom.height + 26.0, &title);
    instrument_legend(
        &mut svg,
        &names,
        9.0,
        &[
            (Some(Marker::Ring), MODEL, "binned"),
            (None, MODEL, "model"),
        ],
    );
    svg.hline(&top, 0.0, GUIDE, "2 2", "zero");
    svg.hline(&bottom, 0.0, GUIDE, "2 2", "zero");
    let pts: Vec<(f64, f64)> = curve.iter().map(|&(x, v)| (top.x(x), top.y(v))).collect();
    svg.polyline(&pts, MODEL, 1.0, "model");
    for (k, p) in points.points.iter().enumerate() {
        let s = names.iter().position(|n| *n == p.instrument).unwrap_or(0);
        let (colour, m) = series(s);
        let bar = err[k] * top.height / (hi - lo);
        svg.marker(m, top.x(phase[k]), top.y(y[k]), 3.2, bar, colour, "epoch");
        let rbar = err[k] * bottom.height / (2.0 * rmax);
        svg.marker(
            m,
            bottom.x(phase[k]),
            bottom.y(resid[k]),
            3.2,
            rbar,
            colour,
            "residual",
        );
    }
    for &(x, v, e) in &bins {
        let bar = e * top.height / (hi - lo);
        svg.marker(Marker::Ring, top.x(x), top.y(v), 5.0, bar, INK, "bin");
    }
    top.axes(&mut svg, false, true);
    bottom.axes(&mut svg, true, true);
    svg.text(
        LEFT + 4.0,
        top.top + 10.0,
        "start",
        LABEL_PT,
        &format!(
            "planet {}, P = {:.4} d",
            planet.label,
            planet.orbit.period_d()
        ),
    );
    top.y_label(&mut svg, "RV [m/s]", 30.0);
    bottom.y_label(&mut svg, "O−C [m/s]", 30.0);
    bottom.x_label(&mut svg, "phase from conjunction");
    svg.finish()
}

/// A round BJD (a multiple of 10 000 days) below every time of `points`, and the padded
/// range of the times counted from it.
fn time_axis(points: &Points) -> (f64, (f64, f64)) {
    let t0 = points
        .points
        .iter()
        .map(|p| p.time_bjd)
        .fold(f64::INFINITY, f64::min);
    let offset = (t0 / 1e4).floor() * 1e4;
    let range = padded_range(points.points.iter().map(|p| p.time_bjd - offset), 0.03);
    (offset, range)
}

/// The activity model against time: the data minus planets, offsets and trend (one
/// marker per epoch, error bars from uncertainty and jitter in quadrature; each divided by
/// its instrument's activity amplitude factor in `scales`), the activity GP's conditional
/// mean at the first instrument's amplitude (line) and its ±1σ band (dashed lines).
pub fn activity_svg(
    points: &Points,
    curve: &ActivityCurve,
    jit: &BTreeMap<String, f64>,
    scales: &BTreeMap<String, f64>,
) -> String {
    let names = points.instruments();
    let factor: Vec<f64> = points
        .points
        .iter()
        .map(|p| scales.get(&p.instrument).copied().unwrap_or(1.0))
        .collect();
    let err: Vec<f64> = error_bars(points, jit)
        .iter()
        .zip(&factor)
        .map(|(e, f)| e / f)
        .collect();
    let (offset, (tlo, thi)) = time_axis(points);
    let y: Vec<f64> = points
        .points
        .iter()
        .zip(&factor)
        .map(|(p, f)| (p.residual_mps + p.activity_mps) / f)
        .collect();
    let shown: Vec<&[f64; 3]> = curve
        .iter()
        .filter(|c| (tlo..=thi).contains(&(c[0] - offset)))
        .collect();
    let (lo, hi) = padded_range(
        y.iter()
            .zip(&err)
            .flat_map(|(v, e)| [v - e, v + e])
            .chain(shown.iter().flat_map(|c| [c[1] - c[2], c[1] + c[2]])),
        0.05,
    );
    let panel = Panel {
        left: LEFT,
        top: 16.0,
        width: COLUMN_PT - LEFT - RIGHT,
        height: 128.0,
        xs: Scale::Linear(tlo, thi),
        ys: Scale::Linear(lo, hi),
    };
    let mut svg = Svg::new(
        panel.top + panel.height + 26.0,
        "activity model against time",
    );
    instrument_legend(
        &mut svg,
        &names,
        9.0,
        &[(None, MODEL, "activity model"), (None, MUTED, "±1σ")],
    );
    svg.hline(&panel, 0.0, GUIDE, "2 2", "zero");
    let line = |k: usize| -> Vec<(f64, f64)> {
        shown
            .iter()
            .map(|c| {
                (
                    panel.x(c[0] - offset),
                    panel.y(c[1] + (k as f64 - 1.0) * c[2]),
                )
            })
            .collect()
    };
    svg.polyline(&line(0), MUTED, 0.6, "activity-band");
    svg.polyline(&line(2), MUTED, 0.6, "activity-band");
    svg.polyline(&line(1), MODEL, 1.0, "activity-model");
    for (k, p) in points.points.iter().enumerate() {
        let s = names.iter().position(|n| *n == p.instrument).unwrap_or(0);
        let (colour, m) = series(s);
        let bar = err[k] * panel.height / (hi - lo);
        svg.marker(
            m,
            panel.x(p.time_bjd - offset),
            panel.y(y[k]),
            3.2,
            bar,
            colour,
            "epoch",
        );
    }
    panel.axes(&mut svg, true, true);
    panel.y_label(&mut svg, "RV − planets [m/s]", 30.0);
    panel.x_label(&mut svg, &format!("time [BJD_TDB − {offset:.0}]"));
    svg.finish()
}

/// Residuals against time, one stacked panel per instrument (same time axis), one
/// marker per epoch with error bars (uncertainty and jitter in quadrature); each panel
/// names its instrument and residual rms.
pub fn residuals_time_svg(points: &Points, jit: &BTreeMap<String, f64>) -> String {
    let names = points.instruments();
    let err = error_bars(points, jit);
    let (offset, (tlo, thi)) = time_axis(points);
    let panel_h = 46.0;
    let gap = 12.0;
    let height = names.len() as f64 * (panel_h + gap) + 26.0;
    let mut svg = Svg::new(height, "residuals against time");
    for (s, name) in names.iter().enumerate() {
        let idx: Vec<usize> = (0..points.points.len())
            .filter(|&k| points.points[k].instrument == *name)
            .collect();
        let rmax = idx
            .iter()
            .map(|&k| points.points[k].residual_mps.abs() + err[k])
            .fold(1.0_f64, f64::max)
            * 1.1;
        let panel = Panel {
            left: LEFT,
            top: gap + s as f64 * (panel_h + gap),
            width: COLUMN_PT - LEFT - RIGHT,
            height: panel_h,
            xs: Scale::Linear(tlo, thi),
            ys: Scale::Linear(-rmax, rmax),
        };
        svg.hline(&panel, 0.0, GUIDE, "2 2", "zero");
        let (colour, m) = series(s);
        for &k in &idx {
            let p = &points.points[k];
            let bar = err[k] * panel.height / (2.0 * rmax);
            svg.marker(
                m,
                panel.x(p.time_bjd - offset),
                panel.y(p.residual_mps),
                3.2,
                bar,
                colour,
                "residual",
            );
        }
        panel.axes(&mut svg, s + 1 == names.len(), true);
        let rms = (idx
            .iter()
            .map(|&k| points.points[k].residual_mps.powi(2))
            .sum::<f64>()
            / idx.len().max(1) as f64)
            .sqrt();
        svg.text(
            LEFT,
            panel.top - 3.0,
            "start",
            TICK_PT,
            &format!("{name}: {} epochs, rms {rms:.2} m/s", idx.len()),
        );
        if s + 1 == names.len() {
            panel.x_label(&mut svg, &format!("time [BJD_TDB − {offset:.0}]"));
        }
    }
    svg.vertical_text(
        10.0,
        0.5 * (gap + names.len() as f64 * (panel_h + gap)),
        LABEL_PT,
        "O−C [m/s]",
    );
    svg.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Weighted mean of a bin: Σwᵢyᵢ/Σwᵢ with error (Σwᵢ)^(−1/2), wᵢ = σᵢ⁻² (common
    /// practice, inverse-variance weighting).
    #[test]
    fn bins_are_inverse_variance_means() {
        let b = binned(&[0.01, 0.02, 0.3], &[1.0, 4.0, 9.0], &[1.0, 2.0, 1.0]);
        assert_eq!(b.len(), 1, "a lone point makes no bin");
        let (x, v, e) = b[0];
        assert!((x - 0.05).abs() < 1e-12);
        assert!((v - (1.0 + 4.0 * 0.25) / 1.25).abs() < 1e-12);
        assert!((e - 1.25f64.sqrt().recip()).abs() < 1e-12);
    }

    /// Phase 0 at the conjunction, ±0.5 half a period away.
    #[test]
    fn phase_counts_from_conjunction() {
        let p = ModelPlanet {
            label: "b".into(),
            orbit: Orbit::new(10.0, 5.0, 0.0, 0.0, 0.0).unwrap(),
            tc_bjd: 2_460_000.0,
        };
        assert!((p.phase(2_460_000.0 + 30.0)).abs() < 1e-12);
        assert!((p.phase(2_460_000.0 + 2.5) - 0.25).abs() < 1e-12);
        assert!((p.phase(2_460_000.0 - 2.5) + 0.25).abs() < 1e-12);
        assert!((p.phase(2_460_000.0 + 5.0) + 0.5).abs() < 1e-12);
    }
}
