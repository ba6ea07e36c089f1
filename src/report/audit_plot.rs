//! Figure of the audit (SVG): each planet's mass (K where no star was given) under every
//! model variant and jackknife subset, with 1σ bars and the baseline's 1σ band; drawn
//! from the `audit` block of results.json.

use std::fmt::Write;

use serde_json::Value;

use super::figure::{
    COLUMN_PT, INK, LABEL_PT, MUTED, SERIES, Svg, esc, linear_ticks, padded_range,
};
use crate::summary::Summary;

/// Geometry, pt: one journal column wide ([`COLUMN_PT`]), labels at the left.
const LABEL_W: f64 = 128.0;
const RIGHT: f64 = 8.0;
const ROW: f64 = 9.5;
const PANEL_TOP: f64 = 16.0;
const AXIS_H: f64 = 24.0;
/// Competitive variants in the series' first colour (navy), the others in the report's
/// muted colour and hollow, the audited fit in ink: distinct in greyscale by fill.
const MAIN: &str = SERIES[0].0;
/// The audited fit's 1σ band.
const BAND: &str = "#e4e9f2";

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
        + 12.0;
    let mut svg = Svg::new(height, "Mass under each model variant and data subset");
    let out = &mut svg.body;
    let mut top = 0.0;
    for (label, verdict, rows, is_mass) in &panels {
        let (lo, hi) = padded_range(
            rows.iter()
                .flat_map(|r| [r.value.value - r.value.minus, r.value.value + r.value.plus]),
            0.06,
        );
        let x = |v: f64| LABEL_W + (v - lo) / (hi - lo) * (COLUMN_PT - LABEL_W - RIGHT);
        let unit = if *is_mass { "mass (M⊕)" } else { "K (m/s)" };
        let _ = writeln!(
            out,
            r#"<text x="4" y="{:.1}" font-size="{LABEL_PT}" font-weight="bold">planet {} — {}: {}</text>"#,
            top + 11.0,
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
                r#"<text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"#,
                LABEL_W - 4.0,
                y + 2.4,
                esc(&r.label)
            );
            let _ = writeln!(
                out,
                r#"<line class="error-bar" x1="{:.1}" x2="{:.1}" y1="{y:.1}" y2="{y:.1}" stroke="{colour}" stroke-width="0.8"/>"#,
                x(r.value.value - r.value.minus),
                x(r.value.value + r.value.plus)
            );
            let _ = writeln!(
                out,
                r#"<circle class="estimate" cx="{:.1}" cy="{y:.1}" r="2.2" fill="{fill}" stroke="{colour}" stroke-width="0.8"/>"#,
                x(r.value.value)
            );
        }
        let axis_y = body_top + body_h + 4.0;
        let _ = writeln!(
            out,
            r#"<line x1="{LABEL_W}" x2="{:.1}" y1="{axis_y:.1}" y2="{axis_y:.1}" stroke="{INK}" stroke-width="0.6"/>"#,
            COLUMN_PT - RIGHT
        );
        let (ticks, decimals) = linear_ticks(lo, hi, 5);
        for t in ticks {
            let _ = writeln!(
                out,
                r#"<line x1="{0:.1}" x2="{0:.1}" y1="{axis_y:.1}" y2="{1:.1}" stroke="{INK}" stroke-width="0.6"/><text x="{0:.1}" y="{2:.1}" text-anchor="middle">{3:.4$}</text>"#,
                x(t),
                axis_y + 2.5,
                axis_y + 9.5,
                t,
                decimals
            );
        }
        let _ = writeln!(
            out,
            r#"<text x="{:.1}" y="{:.1}" text-anchor="middle" font-size="{LABEL_PT}">{unit}</text>"#,
            0.5 * (LABEL_W + COLUMN_PT - RIGHT),
            axis_y + 19.0
        );
        top = axis_y + AXIS_H - 2.0;
    }
    let _ = writeln!(
        out,
        r#"<text x="4" y="{:.1}" font-size="6">filled: audited (black), competitive (blue); open: others; band: audited ±1σ</text>"#,
        height - 4.0
    );
    svg.finish()
}
