//! SVG figure of an [`Overview`]: power against period on a log axis with false-alarm
//! levels, candidate and alias peaks marked; the window, residual and indicator
//! periodograms in panels below on the same period axis.
//!
//! Written by hand: the figure is a handful of paths and labels, and the Rust plotting
//! crates bring font-rendering dependencies (for text measurement) that this does not
//! need; SVG text is laid out by the viewer.

use std::fmt::Write as _;

use super::{Grid, Overview, Periodogram};

const WIDTH: f64 = 900.0;
const LEFT: f64 = 70.0;
const RIGHT: f64 = 20.0;
const TOP: f64 = 40.0;
const MAIN_HEIGHT: f64 = 280.0;
const PANEL_HEIGHT: f64 = 110.0;
const GAP: f64 = 28.0;
const BOTTOM: f64 = 50.0;
/// False-alarm levels drawn, with their dash patterns.
const FAP_LEVELS: [(f64, &str); 3] = [(0.1, "2,3"), (0.01, "6,3"), (0.001, "10,3,2,3")];
const INK: &str = "#22313f";
const CURVE: &str = "#0d6e6e";
const MUTED: &str = "#7a6a9a";
const ACCENT: &str = "#c0392b";

/// Maps a period (days) to x and a power in [0, 1] to y within one panel.
struct Axes {
    log_pmin: f64,
    log_pmax: f64,
    top: f64,
    height: f64,
}

impl Axes {
    fn x(&self, period: f64) -> f64 {
        LEFT + (WIDTH - LEFT - RIGHT) * (period.log10() - self.log_pmin)
            / (self.log_pmax - self.log_pmin)
    }

    /// Power axis from 0 to 1 in every panel, so panels compare at a glance.
    fn y(&self, power: f64) -> f64 {
        self.top + self.height * (1.0 - power.clamp(0.0, 1.0))
    }
}

/// Escapes text for SVG.
fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

/// The power at which the Baluev FAP of `pg` equals `level` (bisection; FAP falls with
/// power).
pub fn power_at_fap(pg: &Periodogram, level: f64) -> f64 {
    let (mut lo, mut hi) = (0.0, 1.0);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if pg.fap(mid) > level {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// One panel: frame, curve (min–max envelope per pixel column, so a million
/// frequencies make a small file), label.
fn panel(out: &mut String, ax: &Axes, grid: &Grid, power: &[f64], colour: &str, label: &str) {
    let _ = write!(
        out,
        r#"<rect x="{LEFT}" y="{:.1}" width="{:.1}" height="{:.1}" fill="white" stroke="{INK}" stroke-width="0.8"/>"#,
        ax.top,
        WIDTH - LEFT - RIGHT,
        ax.height
    );
    let mut cols: Vec<(i64, f64, f64)> = Vec::new();
    for (j, &p) in power.iter().enumerate() {
        let f = grid.frequency(j);
        if !(f > 0.0) {
            continue;
        }
        let col = ax.x(1.0 / f).round() as i64;
        match cols.last_mut() {
            Some(last) if last.0 == col => {
                last.1 = last.1.min(p);
                last.2 = last.2.max(p);
            }
            _ => cols.push((col, p, p)),
        }
    }
    let mut d = String::new();
    for (i, (x, lo, hi)) in cols.iter().enumerate() {
        let op = if i == 0 { 'M' } else { 'L' };
        let _ = write!(d, "{op}{x} {:.1}", ax.y(*hi));
        if hi > lo {
            let _ = write!(d, "L{x} {:.1}", ax.y(*lo));
        }
    }
    let _ = write!(
        out,
        r#"<path d="{d}" fill="none" stroke="{colour}" stroke-width="1" stroke-linejoin="round"/><text x="{:.1}" y="{:.1}" font-size="12" text-anchor="end" fill="{INK}">{}</text>"#,
        WIDTH - RIGHT - 6.0,
        ax.top + 14.0,
        esc(label)
    );
    for p in [0.0, 0.5, 1.0] {
        let _ = write!(
            out,
            r#"<text x="{:.1}" y="{:.1}" font-size="10" text-anchor="end" fill="{INK}">{p:.1}</text>"#,
            LEFT - 5.0,
            ax.y(p) + 3.5
        );
    }
}

/// Vertical grid lines and labels at 1, 2, 5 × 10ⁿ days.
fn period_ticks(out: &mut String, ax: &Axes, bottom: f64) {
    let first = ax.log_pmin.floor() as i32;
    let last = ax.log_pmax.ceil() as i32;
    for e in first..=last {
        for m in [1.0, 2.0, 5.0] {
            let p = m * 10f64.powi(e);
            let lp = p.log10();
            if lp < ax.log_pmin || lp > ax.log_pmax {
                continue;
            }
            let x = ax.x(p);
            let _ = write!(
                out,
                r##"<line x1="{x:.1}" y1="{:.1}" x2="{x:.1}" y2="{bottom:.1}" stroke="#d8dde3" stroke-width="0.6"/>"##,
                ax.top
            );
            let _ = write!(
                out,
                r#"<text x="{x:.1}" y="{:.1}" font-size="10" text-anchor="middle" fill="{INK}">{p}</text>"#,
                bottom + 14.0
            );
        }
    }
}

/// The figure as an SVG document (a title line, then the panels).
pub fn svg(ov: &Overview, title: &str) -> String {
    let pg = &ov.periodogram;
    let g = &pg.grid;
    let fmin = if g.fmin > 0.0 { g.fmin } else { g.fmin + g.df };
    let (pmin, pmax) = (1.0 / g.fmax(), 1.0 / fmin);
    let (log_pmin, log_pmax) = if pmax > pmin * 1.0001 {
        (pmin.log10(), pmax.log10())
    } else {
        (pmin.log10() - 0.1, pmin.log10() + 0.1)
    };
    let mut panels: Vec<(&str, &[f64], &str)> = vec![("spectral window", &ov.window, MUTED)];
    for p in ov.residuals.iter().chain(&ov.indicators) {
        panels.push((&p.label, &p.power, CURVE));
    }
    let height = TOP + MAIN_HEIGHT + panels.len() as f64 * (GAP + PANEL_HEIGHT) + BOTTOM;
    let mut out = String::new();
    let _ = write!(
        out,
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height:.0}" viewBox="0 0 {WIDTH} {height:.0}" font-family="Helvetica, Arial, sans-serif"><rect width="100%" height="100%" fill="#f7f8fa"/><text x="{LEFT}" y="24" font-size="15" fill="{INK}">{}</text>"##,
        esc(title)
    );
    let main = Axes {
        log_pmin,
        log_pmax,
        top: TOP,
        height: MAIN_HEIGHT,
    };
    let bottom_of_all = height - BOTTOM;
    let frame = Axes {
        log_pmin,
        log_pmax,
        top: TOP,
        height: bottom_of_all - TOP,
    };
    period_ticks(&mut out, &frame, bottom_of_all);
    panel(&mut out, &main, g, &pg.power, CURVE, "GLS power");
    for (i, (level, dash)) in FAP_LEVELS.into_iter().enumerate() {
        let y = main.y(power_at_fap(pg, level));
        let _ = write!(
            out,
            r#"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="{ACCENT}" stroke-width="0.9" stroke-dasharray="{dash}"/><text x="{:.1}" y="{:.1}" font-size="10" text-anchor="end" fill="{ACCENT}">FAP {}%</text>"#,
            WIDTH - RIGHT,
            WIDTH - RIGHT - 4.0 - 60.0 * i as f64,
            y - 3.0,
            level * 100.0
        );
    }
    for (i, c) in ov.candidates.iter().enumerate() {
        let (x, y) = (main.x(c.peak.period), main.y(c.peak.power));
        let _ = write!(
            out,
            r#"<path d="M{x:.1} {:.1}l-4 -7h8z" fill="{ACCENT}"/><text x="{x:.1}" y="{:.1}" font-size="10" text-anchor="middle" fill="{INK}">{:.4} d</text>"#,
            y - 2.0,
            y - 11.0,
            c.peak.period
        );
        if i == 0 {
            // Aliases of the highest peak: open circles at the predicted power.
            for a in &c.aliases {
                if a.period.log10() < log_pmin || a.period.log10() > log_pmax {
                    continue;
                }
                let _ = write!(
                    out,
                    r#"<circle cx="{:.1}" cy="{:.1}" r="3.5" fill="none" stroke="{MUTED}" stroke-width="1.2"><title>alias {:.4} d (m = {} × {:.5} 1/d)</title></circle>"#,
                    main.x(a.period),
                    main.y(a.predicted_power),
                    a.period,
                    a.order,
                    a.window_frequency
                );
            }
        }
    }
    let mut top = TOP + MAIN_HEIGHT + GAP;
    for (label, power, colour) in panels {
        let ax = Axes {
            log_pmin,
            log_pmax,
            top,
            height: PANEL_HEIGHT,
        };
        panel(&mut out, &ax, g, power, colour, label);
        top += PANEL_HEIGHT + GAP;
    }
    let _ = write!(
        out,
        r#"<text x="{:.1}" y="{:.1}" font-size="12" text-anchor="middle" fill="{INK}">period [d]</text><text x="16" y="{:.1}" font-size="12" text-anchor="middle" fill="{INK}" transform="rotate(-90 16 {:.1})">power</text></svg>"#,
        0.5 * (LEFT + WIDTH - RIGHT),
        height - 12.0,
        TOP + 0.5 * MAIN_HEIGHT,
        TOP + 0.5 * MAIN_HEIGHT
    );
    out.push('\n');
    out
}
