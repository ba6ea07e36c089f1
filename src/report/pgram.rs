//! The report's periodogram figure from the saved periodograms: GLS power against period
//! (log axis) with false-alarm levels and the candidate peaks and their aliases, then the
//! spectral window, residual and indicator periodograms in panels below on the same
//! period axis.

use std::fmt::Write as _;

use serde_json::{Value, json};

use super::figure::{ACCENT, COLUMN_PT, INK, MODEL, MUTED, Panel, Scale, Svg, TICK_PT, esc};
use super::saved::{SavedPeriodograms, parse_periodogram_table};
use crate::periodogram::{Overview, power_at_fap};

/// False-alarm probabilities whose power levels are recorded and drawn.
const FAP_LEVELS: [f64; 3] = [0.1, 0.01, 0.001];

const LEFT: f64 = 34.0;
const RIGHT: f64 = 8.0;
const MAIN_H: f64 = 92.0;
const SUB_H: f64 = 36.0;
const GAP: f64 = 5.0;
/// Dash patterns of the false-alarm levels, most probable first.
const FAP_DASH: [&str; 3] = ["1.5 1.5", "4 2", "6 2 1.5 2"];

/// Min–max envelope of `power` per half-point column of the panel, as a path (the grid
/// runs monotonically in period, so equal columns are adjacent).
fn envelope(p: &Panel, period: &[f64], power: &[f64]) -> String {
    let mut cols: Vec<(i64, f64, f64)> = Vec::new();
    for (&per, &pw) in period.iter().zip(power) {
        if !(per > 0.0) || !pw.is_finite() {
            continue;
        }
        let col = (p.x(per) * 2.0).round() as i64;
        match cols.last_mut() {
            Some(c) if c.0 == col => {
                c.1 = c.1.min(pw);
                c.2 = c.2.max(pw);
            }
            _ => cols.push((col, pw, pw)),
        }
    }
    cols.sort_by_key(|c| c.0);
    let mut d = String::new();
    for (i, (c, lo, hi)) in cols.iter().enumerate() {
        let x = *c as f64 / 2.0;
        let _ = write!(
            d,
            "{}{x:.1} {:.2}",
            if i == 0 { 'M' } else { 'L' },
            p.y(*hi)
        );
        if hi > lo {
            let _ = write!(d, "L{x:.1} {:.2}", p.y(*lo));
        }
    }
    d
}

/// Draws one periodogram panel with its curve and label.
fn curve(svg: &mut Svg, p: &Panel, period: &[f64], power: &[f64], colour: &str, label: &str) {
    let _ = writeln!(
        svg.body,
        r#"<path class="power" d="{}" fill="none" stroke="{colour}" stroke-width="0.6"/>"#,
        envelope(p, period, power)
    );
    svg.text(p.left + p.width - 3.0, p.top + 8.0, "end", TICK_PT, label);
}

/// The peaks, window peaks and aliases of `ov` ([`Overview::to_json`]) with
/// `fap_levels`: the power at which the Baluev FAP equals 10 %, 1 % and 0.1 %.
pub fn periodogram_meta(ov: &Overview) -> Value {
    let mut meta = ov.to_json();
    meta["fap_levels"] = FAP_LEVELS
        .iter()
        .map(|&fap| json!({"fap": fap, "power": power_at_fap(&ov.periodogram, fap)}))
        .collect();
    meta
}

/// The figure of an overview computed in this process (as `heft periodogram --plot`
/// draws it); the same drawing as a run's saved periodograms.
pub fn overview_svg(ov: &Overview, title: &str) -> Option<String> {
    let (period_d, columns) = parse_periodogram_table(&ov.table()).ok()?;
    let saved = SavedPeriodograms {
        period_d,
        columns,
        meta: periodogram_meta(ov),
    };
    periodogram_svg(&saved, title)
}

/// The figure titled `title`; `None` when the table has no `power` column or no periods.
pub fn periodogram_svg(pg: &SavedPeriodograms, title: &str) -> Option<String> {
    let power = &pg.columns.iter().find(|c| c.0 == "power")?.1;
    let (pmin, pmax) = pg
        .period_d
        .iter()
        .filter(|p| p.is_finite() && **p > 0.0)
        .fold((f64::INFINITY, 0.0_f64), |(a, b), &p| (a.min(p), b.max(p)));
    if !(pmax > pmin) {
        return None;
    }
    let levels: Vec<(f64, f64)> = pg.meta["fap_levels"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|l| Some((l["fap"].as_f64()?, l["power"].as_f64()?)))
        .collect();
    let top_power = power
        .iter()
        .copied()
        .chain(levels.iter().map(|l| l.1))
        .fold(0.0_f64, f64::max);
    let others: Vec<&(String, Vec<f64>)> = pg.columns.iter().filter(|c| c.0 != "power").collect();
    let height = 8.0 + MAIN_H + others.len() as f64 * (SUB_H + GAP) + 28.0;
    let mut svg = Svg::new(height, title);
    let xs = Scale::Log(pmin, pmax);
    let main = Panel {
        left: LEFT,
        top: 8.0,
        width: COLUMN_PT - LEFT - RIGHT,
        height: MAIN_H,
        xs,
        ys: Scale::Linear(0.0, (1.1 * top_power).clamp(0.05, 1.0)),
    };
    curve(&mut svg, &main, &pg.period_d, power, MODEL, "GLS power");
    // False-alarm levels, with a key under the panel label.
    for (i, (fap, level)) in levels.iter().enumerate() {
        let dash = FAP_DASH[i % FAP_DASH.len()];
        svg.hline(&main, *level, MUTED, dash, "fap-level");
        let (x, y) = (
            main.left + main.width - 52.0,
            main.top + 17.0 + 8.0 * i as f64,
        );
        let _ = writeln!(
            svg.body,
            r#"<line x1="{x:.2}" y1="{:.2}" x2="{:.2}" y2="{:.2}" stroke="{MUTED}" stroke-width="0.6" stroke-dasharray="{dash}"/>"#,
            y - 2.2,
            x + 12.0,
            y - 2.2
        );
        svg.text(x + 15.0, y, "start", 6.0, &format!("FAP {} %", fap * 100.0));
    }
    for (i, peak) in pg.meta["peaks"]
        .as_array()
        .into_iter()
        .flatten()
        .enumerate()
    {
        let (Some(per), Some(pw)) = (peak["period"].as_f64(), peak["power"].as_f64()) else {
            continue;
        };
        let (x, y) = (main.x(per), main.y(pw));
        let _ = writeln!(
            svg.body,
            r#"<path class="candidate" d="M{x:.2} {:.2}l-2.5 -4.5h5z" fill="{ACCENT}"><title>{}</title></path>"#,
            y - 1.0,
            esc(&format!("{per:.4} d"))
        );
        if i == 0 {
            for a in peak["aliases"].as_array().into_iter().flatten() {
                let (Some(ap), Some(apw)) = (a["period"].as_f64(), a["predicted_power"].as_f64())
                else {
                    continue;
                };
                if main.contains(ap, apw) {
                    let _ = writeln!(
                        svg.body,
                        r#"<circle class="alias" cx="{:.2}" cy="{:.2}" r="2" fill="none" stroke="{ACCENT}" stroke-width="0.6"/>"#,
                        main.x(ap),
                        main.y(apw)
                    );
                }
            }
        }
    }
    main.axes(&mut svg, others.is_empty(), true);
    main.y_label(&mut svg, "power", 24.0);
    let mut last = main;
    for (k, (label, values)) in others.iter().enumerate() {
        let top = values
            .iter()
            .copied()
            .filter(|v| v.is_finite())
            .fold(0.0_f64, f64::max);
        let p = Panel {
            top: main.top + MAIN_H + GAP + k as f64 * (SUB_H + GAP),
            height: SUB_H,
            ys: Scale::Linear(0.0, if top > 0.0 { 1.15 * top } else { 1.0 }),
            ..main
        };
        let (colour, name) = if label == "window" {
            (MUTED, "spectral window".to_string())
        } else {
            (INK, label.clone())
        };
        curve(&mut svg, &p, &pg.period_d, values, colour, &name);
        p.axes(&mut svg, k + 1 == others.len(), true);
        last = p;
    }
    last.x_label(&mut svg, "period [d]");
    Some(svg.finish())
}
