//! The mass–radius diagram (SVG): composition curves, lines of constant density,
//! solar-system planets for scale, and each planet's draws as a cloud with 1σ and 2σ
//! ellipses (Gaussian in log mass and log radius).

use std::fmt::Write;

use super::figure::{COLUMN_PT, INK, LABEL_PT, esc};
use crate::derive::composition::zeng_rocky_radius_rearth;
use crate::derive::constants::{G, GM_EARTH, R_EARTH, SOLAR_SYSTEM_PLANETS};
use crate::derive::density::bulk_density_gcc;
use crate::derive::relations::chen_kipping_radius;

/// Plot ranges: mass (M⊕) and radius (R⊕), both on log axes.
const MASS_RANGE: (f64, f64) = (0.3, 3000.0);
const RADIUS_RANGE: (f64, f64) = (0.5, 25.0);
/// Canvas and plot-area geometry, pt (one journal column, 3.5 in).
const WIDTH: f64 = COLUMN_PT;
const HEIGHT: f64 = 214.0;
const LEFT: f64 = 34.0;
const RIGHT: f64 = 8.0;
const TOP: f64 = 8.0;
const BOTTOM: f64 = 28.0;
/// Colours: a palette of our own, distinct in greyscale and for colour-blind readers
/// (blue–orange contrast, lightness steps, different dash patterns per curve).
const CURVE_ROCK: &str = "#7a4a14";
const CURVE_EARTHLIKE: &str = "#c07a2c";
const CURVE_FORECAST: &str = "#5a6f8a";
const ISO_DENSITY: &str = "#9a9a9a";
const PLANET: &str = "#1f5fa8";
/// Draws shown per planet cloud.
const CLOUD_POINTS: usize = 400;

/// A planet to draw: label and paired draws of mass (M⊕) and radius (R⊕).
pub struct PlanetCloud<'a> {
    /// Label.
    pub label: &'a str,
    /// Mass draws, M⊕.
    pub mass_mearth: &'a [f64],
    /// Radius draws, R⊕ (same length).
    pub radius_rearth: &'a [f64],
}

fn x_of(m: f64) -> f64 {
    let (lo, hi) = (MASS_RANGE.0.ln(), MASS_RANGE.1.ln());
    LEFT + (m.ln() - lo) / (hi - lo) * (WIDTH - LEFT - RIGHT)
}

fn y_of(r: f64) -> f64 {
    let (lo, hi) = (RADIUS_RANGE.0.ln(), RADIUS_RANGE.1.ln());
    HEIGHT - BOTTOM - (r.ln() - lo) / (hi - lo) * (HEIGHT - TOP - BOTTOM)
}

fn inside(m: f64, r: f64) -> bool {
    (MASS_RANGE.0..=MASS_RANGE.1).contains(&m) && (RADIUS_RANGE.0..=RADIUS_RANGE.1).contains(&r)
}

/// A polyline through the points of `curve` over the mass range, clipped to the plot.
fn polyline(
    svg: &mut String,
    curve: impl Fn(f64) -> f64,
    from: f64,
    to: f64,
    colour: &str,
    dash: &str,
    class: &str,
) {
    let pts: Vec<String> = (0..=200)
        .map(|k| from * (to / from).powf(k as f64 / 200.0))
        .map(|m| (m, curve(m)))
        .filter(|&(m, r)| inside(m, r))
        .map(|(m, r)| format!("{:.1},{:.1}", x_of(m), y_of(r)))
        .collect();
    let _ = writeln!(
        svg,
        r#"<polyline class="{class}" points="{}" fill="none" stroke="{colour}" stroke-width="0.9" stroke-dasharray="{dash}"/>"#,
        pts.join(" ")
    );
}

/// Mean and covariance of (ln M, ln R).
fn log_moments(m: &[f64], r: &[f64]) -> ([f64; 2], [[f64; 2]; 2]) {
    let pts: Vec<(f64, f64)> = m
        .iter()
        .zip(r)
        .filter(|(m, r)| **m > 0.0 && **r > 0.0)
        .map(|(m, r)| (m.ln(), r.ln()))
        .collect();
    let n = pts.len().max(1) as f64;
    let mx = pts.iter().map(|p| p.0).sum::<f64>() / n;
    let my = pts.iter().map(|p| p.1).sum::<f64>() / n;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for (x, y) in &pts {
        sxx += (x - mx) * (x - mx);
        sxy += (x - mx) * (y - my);
        syy += (y - my) * (y - my);
    }
    ([mx, my], [[sxx / n, sxy / n], [sxy / n, syy / n]])
}

/// The ellipse of a 2-D Gaussian containing probability `p`, as SVG points.
fn ellipse_points(mean: [f64; 2], cov: [[f64; 2]; 2], p: f64) -> String {
    // Radius² of the probability-p contour of a 2-D Gaussian: −2 ln(1 − p).
    let k = (-2.0 * (1.0 - p).ln()).sqrt();
    let (a, b, c) = (cov[0][0], cov[0][1], cov[1][1]);
    let tr = 0.5 * (a + c);
    let det = (0.25 * (a - c).powi(2) + b * b).sqrt();
    let (l1, l2) = ((tr + det).max(0.0), (tr - det).max(0.0));
    let angle = 0.5 * (2.0 * b).atan2(a - c);
    (0..=72)
        .map(|i| {
            let t = i as f64 / 72.0 * std::f64::consts::TAU;
            let (u, v) = (k * l1.sqrt() * t.cos(), k * l2.sqrt() * t.sin());
            let x = mean[0] + u * angle.cos() - v * angle.sin();
            let y = mean[1] + u * angle.sin() + v * angle.cos();
            format!("{:.1},{:.1}", x_of(x.exp()), y_of(y.exp()))
        })
        .collect::<Vec<_>>()
        .join(" ")
}

/// Axis with log ticks at 1, 2, 5 × 10^k.
fn axes(svg: &mut String) {
    let (x0, x1, y0, y1) = (LEFT, WIDTH - RIGHT, TOP, HEIGHT - BOTTOM);
    let _ = writeln!(
        svg,
        r#"<rect x="{x0}" y="{y0}" width="{}" height="{}" fill="none" stroke="{INK}" stroke-width="0.6"/>"#,
        x1 - x0,
        y1 - y0
    );
    for e in -1..4 {
        for m in [1.0, 2.0, 5.0] {
            let v = m * 10f64.powi(e);
            if (MASS_RANGE.0..=MASS_RANGE.1).contains(&v) {
                let x = x_of(v);
                let _ = writeln!(
                    svg,
                    r#"<line x1="{x:.1}" y1="{y1}" x2="{x:.1}" y2="{:.1}" stroke="{INK}" stroke-width="0.5"/>"#,
                    y1 - 3.0
                );
                if m == 1.0 {
                    let _ = writeln!(
                        svg,
                        r#"<text x="{x:.1}" y="{:.1}" text-anchor="middle">{v}</text>"#,
                        y1 + 9.0
                    );
                }
            }
            if (RADIUS_RANGE.0..=RADIUS_RANGE.1).contains(&v) {
                let y = y_of(v);
                let _ = writeln!(
                    svg,
                    r#"<line x1="{x0}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="{INK}" stroke-width="0.5"/>"#,
                    x0 + 3.0
                );
                let _ = writeln!(
                    svg,
                    r#"<text x="{:.1}" y="{:.1}" text-anchor="end">{v}</text>"#,
                    x0 - 2.5,
                    y + 2.4
                );
            }
        }
    }
    let _ = writeln!(
        svg,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle" font-size="{LABEL_PT}">mass [Earth masses]</text>"#,
        0.5 * (x0 + x1),
        HEIGHT - 6.0
    );
    let _ = writeln!(
        svg,
        r#"<text transform="translate(10,{:.1}) rotate(-90)" text-anchor="middle" font-size="{LABEL_PT}">radius [Earth radii]</text>"#,
        0.5 * (y0 + y1)
    );
}

/// The diagram as a standalone SVG document.
pub fn mass_radius_svg(planets: &[PlanetCloud]) -> String {
    let mut svg = String::new();
    let _ = writeln!(
        svg,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}pt" height="{HEIGHT}pt" viewBox="0 0 {WIDTH} {HEIGHT}" font-family="DejaVu Sans, Helvetica, Arial, sans-serif" font-size="7" fill="{INK}">"#
    );
    let _ = writeln!(
        svg,
        r#"<rect width="{WIDTH}" height="{HEIGHT}" fill="white"/>"#
    );
    axes(&mut svg);
    // Constant-density lines: R = (M/ρ̃)^(1/3) with ρ̃ the density in Earth units.
    let rho_earth = bulk_density_gcc(1.0, 1.0);
    for rho in [0.1, 0.3, 1.0, 5.5] {
        let scale = rho / rho_earth;
        polyline(
            &mut svg,
            |m| (m / scale).cbrt(),
            MASS_RANGE.0,
            MASS_RANGE.1,
            ISO_DENSITY,
            "2 3",
            "iso-density",
        );
        // Label where the line enters the plot on the left.
        let m_label = MASS_RANGE.0 * 1.15;
        let r_label = (m_label / scale).cbrt();
        if inside(m_label, r_label) {
            let _ = writeln!(
                svg,
                r#"<text x="{:.1}" y="{:.1}" fill="{ISO_DENSITY}" font-size="5.5">{rho} g/cm³</text>"#,
                x_of(m_label),
                y_of(r_label) - 2.5
            );
        }
    }
    polyline(
        &mut svg,
        |m| zeng_rocky_radius_rearth(m, 0.0),
        0.5,
        20.0,
        CURVE_ROCK,
        "",
        "curve",
    );
    polyline(
        &mut svg,
        |m| zeng_rocky_radius_rearth(m, 0.325),
        0.5,
        20.0,
        CURVE_EARTHLIKE,
        "6 3",
        "curve",
    );
    polyline(
        &mut svg,
        |m| chen_kipping_radius(m).0,
        MASS_RANGE.0,
        MASS_RANGE.1,
        CURVE_FORECAST,
        "1 0",
        "curve",
    );
    for (name, kg, km) in SOLAR_SYSTEM_PLANETS {
        let (m, r) = (kg * G / GM_EARTH, km * 1e3 / R_EARTH);
        let (x, y) = (x_of(m), y_of(r));
        // Uranus and Neptune sit close together: label the lighter one on the left.
        let (tx, anchor) = if name == "Uranus" {
            (x - 4.0, "end")
        } else {
            (x + 3.5, "start")
        };
        let _ = writeln!(
            svg,
            r#"<rect class="solar-system" x="{:.1}" y="{:.1}" width="4" height="4" fill="none" stroke="{INK}" stroke-width="0.6"/><text x="{tx:.1}" y="{:.1}" font-size="6" text-anchor="{anchor}">{name}</text>"#,
            x - 2.0,
            y - 2.0,
            y + 7.5
        );
    }
    for p in planets {
        let n = p.mass_mearth.len().min(p.radius_rearth.len());
        let step = (n / CLOUD_POINTS).max(1);
        for j in (0..n).step_by(step) {
            let (m, r) = (p.mass_mearth[j], p.radius_rearth[j]);
            if inside(m, r) {
                let _ = writeln!(
                    svg,
                    r#"<circle class="draw" cx="{:.1}" cy="{:.1}" r="0.7" fill="{PLANET}" fill-opacity="0.3"/>"#,
                    x_of(m),
                    y_of(r)
                );
            }
        }
        let (mean, cov) = log_moments(&p.mass_mearth[..n], &p.radius_rearth[..n]);
        for (prob, width) in [(0.3935, 1.1), (0.8647, 0.7)] {
            let _ = writeln!(
                svg,
                r#"<polygon class="contour" points="{}" fill="none" stroke="{PLANET}" stroke-width="{width}"/>"#,
                ellipse_points(mean, cov, prob)
            );
        }
        let _ = writeln!(
            svg,
            r#"<text x="{:.1}" y="{:.1}" fill="{PLANET}" font-weight="bold">{}</text>"#,
            x_of(mean[0].exp()) + 5.0,
            y_of(mean[1].exp()) - 5.0,
            esc(p.label)
        );
    }
    // Legend.
    let lx = LEFT + 5.0;
    for (i, (colour, dash, text)) in [
        (CURVE_ROCK, "", "rock (Zeng et al. 2016)"),
        (CURVE_EARTHLIKE, "6 3", "Earth-like (Zeng et al. 2016)"),
        (CURVE_FORECAST, "1 0", "mean relation (Chen & Kipping 2017)"),
    ]
    .iter()
    .enumerate()
    {
        let y = TOP + 8.0 + 8.0 * i as f64;
        let _ = writeln!(
            svg,
            r#"<line x1="{lx}" y1="{y}" x2="{}" y2="{y}" stroke="{colour}" stroke-width="0.9" stroke-dasharray="{dash}"/><text x="{}" y="{}" font-size="6">{}</text>"#,
            lx + 14.0,
            lx + 17.0,
            y + 2.0,
            esc(text)
        );
    }
    svg.push_str("</svg>\n");
    svg
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The figure holds the curves, the five solar-system planets, one cloud point per
    /// shown draw and two contours per planet.
    #[test]
    fn diagram_has_its_content() {
        let m: Vec<f64> = (0..1000).map(|i| 10.0 + 0.002 * i as f64).collect();
        let r: Vec<f64> = (0..1000).map(|i| 5.0 + 0.001 * (i % 7) as f64).collect();
        let svg = mass_radius_svg(&[PlanetCloud {
            label: "b",
            mass_mearth: &m,
            radius_rearth: &r,
        }]);
        assert_eq!(svg.matches(r#"class="solar-system""#).count(), 5);
        assert_eq!(svg.matches(r#"class="contour""#).count(), 2);
        assert_eq!(svg.matches(r#"class="draw""#).count(), 500);
        assert_eq!(svg.matches(r#"class="curve""#).count(), 3);
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert!(!svg.contains(" & "), "unescaped ampersand");
    }
}
