//! Corner-style figure of the posterior draws of each planet's main parameters (period,
//! semi-amplitude, eccentricity and m sin i): histograms on the diagonal, pairs of
//! draws below it. Axes span the 0.5–99.5 percentiles.

use std::fmt::Write as _;

use super::figure::{COLUMN_PT, INK, LABEL_PT, Panel, Scale, Svg, series};

/// Parameters shown, as (column suffix, symbol, unit).
const SHOWN: [(&str, &str, &str); 4] = [
    ("period_d", "P", "d"),
    ("k_mps", "K", "m/s"),
    ("ecc", "e", ""),
    ("msini_mearth", "m sin i", "M⊕"),
];
/// Most draws drawn in a scatter panel.
const MAX_POINTS: usize = 1200;
/// Histogram bins.
const BINS: usize = 24;
/// Margin left of and below the cells, pt.
const MARGIN: f64 = 40.0;

/// The columns of `draws` the figure shows, in planet order, with their axis labels;
/// constant columns (fixed parameters) are left out. A column whose spread is under 1 %
/// of its size (a period known from transits) is shown relative to a round value named in
/// its label, so that tick numbers stay short.
pub fn corner_columns(draws: &[(String, Vec<f64>)]) -> Vec<(String, Vec<f64>)> {
    let mut out = Vec::new();
    for (name, _) in draws.iter().filter(|(n, _)| n.ends_with(".period_d")) {
        let label = name.trim_end_matches(".period_d");
        for (suffix, symbol, unit) in SHOWN {
            let key = format!("{label}.{suffix}");
            let Some((_, v)) = draws.iter().find(|(n, _)| *n == key) else {
                continue;
            };
            if v.is_empty() || v.iter().filter(|x| x.is_finite()).all(|&x| x == v[0]) {
                continue;
            }
            let (lo, hi) = range(v);
            let mid = 0.5 * (lo + hi);
            let mut text = format!("{symbol} ({label})");
            let mut values = v.clone();
            let place = (hi - lo).log10().floor() as i32;
            if hi - lo < 0.01 * mid.abs() {
                let offset = (mid / 10f64.powi(place)).round() * 10f64.powi(place);
                text.push_str(&format!(" − {offset:.*}", (-place).max(0) as usize));
                values.iter_mut().for_each(|x| *x -= offset);
            }
            // A spread under 0.01 is shown in units of 10^place, so ticks read 1, 2, ….
            let unit = if place < -2 {
                values.iter_mut().for_each(|x| *x *= 10f64.powi(-place));
                format!("10{} {unit}", superscript(place))
                    .trim_end()
                    .to_string()
            } else {
                unit.to_string()
            };
            if !unit.is_empty() {
                text.push_str(&format!(" [{unit}]"));
            }
            out.push((text, values));
        }
    }
    out
}

/// `n` in superscript digits (e.g. ⁻⁴).
fn superscript(n: i32) -> String {
    n.to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            d => ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'][d as usize - '0' as usize],
        })
        .collect()
}

/// 0.5 and 99.5 percentiles of the finite values (a unit range around a constant).
fn range(v: &[f64]) -> (f64, f64) {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    s.sort_by(f64::total_cmp);
    if s.is_empty() {
        return (0.0, 1.0);
    }
    let lo = crate::summary::percentile_sorted(&s, 0.5);
    let hi = crate::summary::percentile_sorted(&s, 99.5);
    if hi > lo {
        (lo, hi)
    } else {
        (lo - 0.5, hi + 0.5)
    }
}

/// The figure; `None` when fewer than one parameter varies. One column wide up to
/// three parameters, two columns (504 pt) beyond.
pub fn corner_svg(draws: &[(String, Vec<f64>)]) -> Option<String> {
    let cols = corner_columns(draws);
    let n = cols.len();
    if n == 0 {
        return None;
    }
    let width = if n <= 3 { COLUMN_PT } else { 2.0 * COLUMN_PT };
    let cell = (width - MARGIN - 6.0) / n as f64;
    let size = width;
    let mut svg = Svg::with_width(size, size, "posterior draws of the main parameters");
    let ranges: Vec<(f64, f64)> = cols.iter().map(|c| range(&c.1)).collect();
    let len = cols[0].1.len();
    let stride = len.div_ceil(MAX_POINTS).max(1);
    let (colour, _) = series(0);
    let inner = cell - 4.0;
    for i in 0..n {
        let top = 6.0 + cell * i as f64;
        for j in 0..=i {
            let left = MARGIN + cell * j as f64;
            let mut p = Panel {
                left,
                top,
                width: inner,
                height: inner,
                xs: Scale::Linear(ranges[j].0, ranges[j].1),
                ys: Scale::Linear(ranges[i].0, ranges[i].1),
            };
            if i == j {
                let (lo, hi) = ranges[i];
                let mut counts = [0usize; BINS];
                for &v in &cols[i].1 {
                    if v >= lo && v <= hi {
                        let b = (((v - lo) / (hi - lo)) * BINS as f64) as usize;
                        counts[b.min(BINS - 1)] += 1;
                    }
                }
                let most = counts.iter().copied().max().unwrap_or(1).max(1) as f64;
                p.ys = Scale::Linear(0.0, 1.08 * most);
                let mut d = format!("M{:.2} {:.2}", p.x(lo), p.y(0.0));
                for (b, &c) in counts.iter().enumerate() {
                    let x0 = lo + (hi - lo) * b as f64 / BINS as f64;
                    let x1 = lo + (hi - lo) * (b + 1) as f64 / BINS as f64;
                    let y = p.y(c as f64);
                    let _ = write!(d, "L{:.2} {y:.2}L{:.2} {y:.2}", p.x(x0), p.x(x1));
                }
                let _ = write!(d, "L{:.2} {:.2}Z", p.x(hi), p.y(0.0));
                let _ = writeln!(
                    svg.body,
                    r#"<path class="hist" d="{d}" fill="{colour}" fill-opacity="0.25" stroke="{colour}" stroke-width="0.7"/>"#
                );
                p.axes(&mut svg, i + 1 == n, false);
            } else {
                let _ = writeln!(svg.body, r#"<g class="pair">"#);
                for k in (0..len).step_by(stride) {
                    let (x, y) = (cols[j].1[k], cols[i].1[k]);
                    if p.contains(x, y) {
                        let _ = writeln!(
                            svg.body,
                            r#"<circle cx="{:.2}" cy="{:.2}" r="0.5" fill="{INK}" fill-opacity="0.3"/>"#,
                            p.x(x),
                            p.y(y)
                        );
                    }
                }
                svg.body.push_str("</g>\n");
                p.axes(&mut svg, i + 1 == n, j == 0);
            }
            if i + 1 == n {
                svg.text(
                    left + 0.5 * inner,
                    top + inner + 18.0,
                    "middle",
                    LABEL_PT - 2.0,
                    &cols[j].0,
                );
            }
            if j == 0 && i > 0 {
                svg.vertical_text(left - 28.0, top + 0.5 * inner, LABEL_PT - 2.0, &cols[i].0);
            }
        }
    }
    Some(svg.finish())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// One histogram per varying parameter and one pair panel per pair below the
    /// diagonal; a fixed period is left out.
    #[test]
    fn corner_has_a_panel_per_parameter_and_pair() {
        let v = |a: f64| {
            (0..500)
                .map(|i| a + (i as f64 * 0.37).sin())
                .collect::<Vec<_>>()
        };
        let draws = vec![
            ("b.period_d".to_string(), vec![3.0; 500]),
            ("b.k_mps".to_string(), v(5.0)),
            (
                "b.ecc".to_string(),
                v(0.3).iter().map(|x| x.abs() / 2.0).collect(),
            ),
            ("b.msini_mearth".to_string(), v(12.0)),
            ("offset_mps.A".to_string(), v(1.0)),
        ];
        let svg = corner_svg(&draws).unwrap();
        assert_eq!(svg.matches(r#"class="hist""#).count(), 3);
        assert_eq!(svg.matches(r#"class="pair""#).count(), 3);
        assert!(svg.contains("K (b) [m/s]") && !svg.contains("P (b)"));
        // A narrow column is shown relative to a round value.
        let narrow = vec![(
            "c.period_d".to_string(),
            (0..100).map(|i| 47.3712 + 1e-4 * i as f64).collect(),
        )];
        let cols = corner_columns(&narrow);
        assert_eq!(cols[0].0, "P (c) − 47.376 [10⁻³ d]");
        assert!(cols[0].1.iter().all(|x| x.abs() < 10.0));
    }
}
