//! Figure of the audit (SVG): each planet's mass (K where no star was given) under every
//! model variant and jackknife subset, with 1σ bars and the baseline's 1σ band; drawn
//! from the `audit` block of results.json.

use std::fmt::Write;

use serde_json::Value;

use super::figure::esc;
use crate::summary::Summary;

/// Geometry, px (one journal column at 96 dpi wide).
const WIDTH: f64 = 480.0;
const LABEL_W: f64 = 210.0;
const RIGHT: f64 = 14.0;
const ROW: f64 = 17.0;
const PANEL_TOP: f64 = 26.0;
const AXIS_H: f64 = 34.0;
/// Colours of our own: black for the baseline, dark blue for competitive variants, mid
/// grey for the others and subsets (distinct in greyscale by fill: solid against hollow).
const INK: &str = "#222222";
const MAIN: &str = "#1f5fa8";
const MUTED: &str = "#8c8c8c";
const BAND: &str = "#dfe8f3";

/// How a row is drawn.
#[derive(Clone, Copy, PartialEq)]
enum Style {
    /// The fit under audit: solid black.
    Baseline,
    /// A competitive variant: solid blue.
    Competitive,
    /// Other variants and jackknife subsets: hollow grey.
    Other,
}

/// One row of a panel.
struct Row {
    label: String,
    value: Summary,
    style: Style,
}

/// A `{value, minus, plus}` object of the results file.
fn estimate(v: &Value) -> Option<Summary> {
    let value = v["value"].as_f64()?;
    Some(Summary {
        minus: v["minus"].as_f64().unwrap_or(0.0),
        plus: v["plus"].as_f64().unwrap_or(0.0),
        ..Summary::exact(value)
    })
}

/// The quantity plotted for a planet's values: mass when known, else K.
fn quantity(p: &Value) -> Option<Summary> {
    estimate(&p["mass_mearth"]).or_else(|| estimate(&p["k_mps"]))
}

/// "Nice" tick step for a span.
fn tick_step(span: f64) -> f64 {
    let raw = span / 5.0;
    let mag = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag)
}

/// The audit figure, drawn from the `audit` block of a results file (so a saved run can be
/// redrawn without refitting).
pub fn audit_svg(audit: &Value) -> String {
    let list = |v: &Value| v.as_array().cloned().unwrap_or_default();
    let mut panels = Vec::new();
    for pa in list(&audit["planets"]) {
        let mut rows: Vec<Row> = Vec::new();
        for (k, v) in list(&pa["variants"]).iter().enumerate() {
            if let Some(value) = quantity(&v["planet"]) {
                rows.push(Row {
                    label: v["name"].as_str().unwrap_or("?").to_string(),
                    value,
                    style: if k == 0 {
                        Style::Baseline
                    } else if v["competitive"].as_bool() == Some(true) {
                        Style::Competitive
                    } else {
                        Style::Other
                    },
                });
            }
        }
        for j in list(&pa["jackknife"]["fits"]) {
            if j["kind"] == "epoch" {
                continue;
            }
            if let Some(value) = quantity(&j["planet"]) {
                rows.push(Row {
                    label: j["description"].as_str().unwrap_or("?").to_string(),
                    value,
                    style: Style::Other,
                });
            }
        }
        let is_mass = list(&pa["variants"])
            .first()
            .is_some_and(|v| v["planet"]["mass_mearth"].is_object());
        let label = pa["label"].as_str().unwrap_or("?").to_string();
        let verdict = pa["verdict"].as_str().unwrap_or("?").to_string();
        panels.push((label, verdict, rows, is_mass));
    }
    let height: f64 = panels
        .iter()
        .map(|(_, _, rows, _)| PANEL_TOP + ROW * rows.len() as f64 + AXIS_H)
        .sum::<f64>()
        + 22.0;
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height:.0}" viewBox="0 0 {WIDTH} {height:.0}" font-family="sans-serif" font-size="11">"#
    );
    let _ = writeln!(out, r#"<rect width="100%" height="100%" fill="white"/>"#);
    let mut top = 0.0;
    for (label, verdict, rows, is_mass) in &panels {
        let lo = rows
            .iter()
            .map(|r| r.value.value - r.value.minus)
            .fold(f64::INFINITY, f64::min)
            .min(0.0);
        let hi = rows
            .iter()
            .map(|r| r.value.value + r.value.plus)
            .fold(f64::NEG_INFINITY, f64::max);
        let hi = if hi > lo { hi * 1.05 } else { lo + 1.0 };
        let x = |v: f64| LABEL_W + (v - lo) / (hi - lo) * (WIDTH - LABEL_W - RIGHT);
        let unit = if *is_mass { "mass (M⊕)" } else { "K (m/s)" };
        let _ = writeln!(
            out,
            r#"<text x="8" y="{:.1}" font-weight="bold" fill="{INK}">planet {} — {}: {}</text>"#,
            top + 16.0,
            esc(label),
            unit,
            esc(verdict)
        );
        let body_top = top + PANEL_TOP;
        let body_h = ROW * rows.len() as f64;
        if let Some(b) = rows.first() {
            let (x0, x1) = (
                x(b.value.value - b.value.minus),
                x(b.value.value + b.value.plus),
            );
            let _ = writeln!(
                out,
                r#"<rect class="baseline-band" x="{x0:.1}" y="{body_top:.1}" width="{:.1}" height="{body_h:.1}" fill="{BAND}"/>"#,
                (x1 - x0).max(0.5)
            );
        }
        for (k, r) in rows.iter().enumerate() {
            let y = body_top + ROW * (k as f64 + 0.5);
            let colour = match r.style {
                Style::Baseline => INK,
                Style::Competitive => MAIN,
                Style::Other => MUTED,
            };
            let fill = if r.style == Style::Other {
                "white"
            } else {
                colour
            };
            let _ = writeln!(
                out,
                r#"<text x="{:.1}" y="{:.1}" text-anchor="end" fill="{INK}">{}</text>"#,
                LABEL_W - 6.0,
                y + 4.0,
                esc(&r.label)
            );
            let _ = writeln!(
                out,
                r#"<line class="error-bar" x1="{:.1}" x2="{:.1}" y1="{y:.1}" y2="{y:.1}" stroke="{colour}" stroke-width="1.5"/>"#,
                x(r.value.value - r.value.minus),
                x(r.value.value + r.value.plus)
            );
            let _ = writeln!(
                out,
                r#"<circle class="estimate" cx="{:.1}" cy="{y:.1}" r="3.5" fill="{fill}" stroke="{colour}" stroke-width="1.5"/>"#,
                x(r.value.value)
            );
        }
        let axis_y = body_top + body_h + 4.0;
        let _ = writeln!(
            out,
            r#"<line x1="{LABEL_W}" x2="{:.1}" y1="{axis_y:.1}" y2="{axis_y:.1}" stroke="{INK}"/>"#,
            WIDTH - RIGHT
        );
        let step = tick_step(hi - lo);
        let mut t = (lo / step).ceil() * step;
        while t <= hi + 1e-9 * step {
            let _ = writeln!(
                out,
                r#"<line x1="{0:.1}" x2="{0:.1}" y1="{axis_y:.1}" y2="{1:.1}" stroke="{INK}"/><text x="{0:.1}" y="{2:.1}" text-anchor="middle" fill="{INK}">{3}</text>"#,
                x(t),
                axis_y + 4.0,
                axis_y + 16.0,
                (t * 1e6).round() / 1e6
            );
            t += step;
        }
        let _ = writeln!(
            out,
            r#"<text x="{:.1}" y="{:.1}" text-anchor="middle" fill="{INK}">{unit}</text>"#,
            0.5 * (LABEL_W + WIDTH - RIGHT),
            axis_y + 29.0
        );
        top = axis_y + AXIS_H - 4.0;
    }
    let _ = writeln!(
        out,
        r#"<text x="8" y="{:.1}" fill="{INK}" font-size="10">● baseline (black) and competitive variants, within the ΔBIC limit of the best (blue); ○ other variants and subsets; band: baseline ±1σ</text>"#,
        height - 6.0
    );
    out.push_str("</svg>\n");
    out
}
