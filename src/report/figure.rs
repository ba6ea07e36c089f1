//! The look shared by the report's figures: one journal column wide (3.5 in = 252 pt,
//! one SVG unit = 1 pt), fonts of 7–8 pt, a palette of our own and panels with ticked
//! axes. Figures are hand-written SVG: a handful of paths, markers and labels.

use std::fmt::Write as _;

/// Width of a one-column figure, pt (3.5 in).
pub const COLUMN_PT: f64 = 252.0;
/// Font of labels and tick numbers.
const FONT: &str = "DejaVu Sans, Helvetica, Arial, sans-serif";
/// Axis-label size, pt.
pub const LABEL_PT: f64 = 8.0;
/// Tick-number size, pt.
pub const TICK_PT: f64 = 7.0;
/// Text and frames.
pub const INK: &str = "#1a1a1a";
/// Light guide lines (zero lines, grid).
pub const GUIDE: &str = "#b8b8b8";
/// Model curves.
pub const MODEL: &str = "#101010";
/// Secondary curves (spectral window, false-alarm levels).
pub const MUTED: &str = "#7d6b91";
/// Highlights (candidate peaks).
pub const ACCENT: &str = "#c4581b";

/// Marker shapes, paired with colours in [`SERIES`] so that instruments stay apart in
/// greyscale and for readers with any colour-vision deficiency.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Marker {
    /// Filled circle.
    Circle,
    /// Filled square.
    Square,
    /// Filled triangle pointing up.
    Triangle,
    /// Filled diamond.
    Diamond,
    /// Open circle.
    Ring,
    /// Filled triangle pointing down.
    Wedge,
}

/// Series styles (instruments): colours of our own spread in lightness (navy, amber,
/// sea green, plum, slate, ochre) with distinct shapes.
pub const SERIES: [(&str, Marker); 6] = [
    ("#23407a", Marker::Circle),
    ("#e0952a", Marker::Square),
    ("#3c9a78", Marker::Triangle),
    ("#8e3b6e", Marker::Diamond),
    ("#5b6770", Marker::Ring),
    ("#b58a00", Marker::Wedge),
];

/// Style of series `i` (cycling).
pub fn series(i: usize) -> (&'static str, Marker) {
    SERIES[i % SERIES.len()]
}

/// Text escaped for XML content and attributes.
pub fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// An SVG document being written, sized in pt.
pub struct Svg {
    /// The markup so far.
    pub body: String,
}

impl Svg {
    /// A one-column figure `height` pt tall with a white background and a `<title>`.
    pub fn new(height: f64, title: &str) -> Svg {
        Svg::with_width(COLUMN_PT, height, title)
    }

    /// A figure `width` × `height` pt with a white background and a `<title>`.
    pub fn with_width(width: f64, height: f64, title: &str) -> Svg {
        let mut body = String::new();
        let _ = writeln!(
            body,
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="{width:.1}pt" height="{height:.1}pt" viewBox="0 0 {width:.1} {height:.1}" font-family="{FONT}" font-size="{TICK_PT}" fill="{INK}">"#
        );
        let _ = writeln!(body, "<title>{}</title>", esc(title));
        let _ = writeln!(
            body,
            r#"<rect width="{width:.1}" height="{height:.1}" fill="white"/>"#
        );
        Svg { body }
    }

    /// Text at (x, y) with an anchor (`start`, `middle`, `end`) and size (pt).
    pub fn text(&mut self, x: f64, y: f64, anchor: &str, size: f64, s: &str) {
        let _ = writeln!(
            self.body,
            r#"<text x="{x:.2}" y="{y:.2}" text-anchor="{anchor}" font-size="{size}">{}</text>"#,
            esc(s)
        );
    }

    /// Text of `size` pt rotated by −90° (a y-axis label) centred on (x, y).
    pub fn vertical_text(&mut self, x: f64, y: f64, size: f64, s: &str) {
        let _ = writeln!(
            self.body,
            r#"<text transform="translate({x:.2},{y:.2}) rotate(-90)" text-anchor="middle" font-size="{size}">{}</text>"#,
            esc(s)
        );
    }

    /// A polyline through `pts` with a class for content checks.
    pub fn polyline(&mut self, pts: &[(f64, f64)], colour: &str, width: f64, class: &str) {
        let points: Vec<String> = pts.iter().map(|(x, y)| format!("{x:.2},{y:.2}")).collect();
        let _ = writeln!(
            self.body,
            r#"<polyline class="{class}" points="{}" fill="none" stroke="{colour}" stroke-width="{width}" stroke-linejoin="round"/>"#,
            points.join(" ")
        );
    }

    /// A horizontal line across a panel.
    pub fn hline(&mut self, p: &Panel, y: f64, colour: &str, dash: &str, class: &str) {
        let yy = p.y(y);
        let _ = writeln!(
            self.body,
            r#"<line class="{class}" x1="{:.2}" y1="{yy:.2}" x2="{:.2}" y2="{yy:.2}" stroke="{colour}" stroke-width="0.6" stroke-dasharray="{dash}"/>"#,
            p.left,
            p.left + p.width
        );
    }

    /// A marker of `size` pt centred on (x, y), with an optional vertical error bar of
    /// half-length `bar` pt.
    #[allow(clippy::too_many_arguments)]
    pub fn marker(
        &mut self,
        m: Marker,
        x: f64,
        y: f64,
        size: f64,
        bar: f64,
        colour: &str,
        class: &str,
    ) {
        let b = &mut self.body;
        let _ = write!(b, r#"<g class="{class}">"#);
        if bar > 0.0 {
            let _ = write!(
                b,
                r#"<line x1="{x:.2}" y1="{:.2}" x2="{x:.2}" y2="{:.2}" stroke="{colour}" stroke-width="0.5"/>"#,
                y - bar,
                y + bar
            );
        }
        let h = 0.5 * size;
        let fill = format!(r#"fill="{colour}" stroke="white" stroke-width="0.3""#);
        let _ = match m {
            Marker::Circle => write!(b, r#"<circle cx="{x:.2}" cy="{y:.2}" r="{h:.2}" {fill}/>"#),
            Marker::Ring => write!(
                b,
                r#"<circle cx="{x:.2}" cy="{y:.2}" r="{:.2}" fill="white" stroke="{colour}" stroke-width="0.8"/>"#,
                h * 0.9
            ),
            Marker::Square => write!(
                b,
                r#"<rect x="{:.2}" y="{:.2}" width="{:.2}" height="{:.2}" {fill}/>"#,
                x - 0.9 * h,
                y - 0.9 * h,
                1.8 * h,
                1.8 * h
            ),
            Marker::Triangle => write!(
                b,
                r#"<path d="M{x:.2} {:.2}L{:.2} {:.2}L{:.2} {:.2}Z" {fill}/>"#,
                y - 1.15 * h,
                x + 1.1 * h,
                y + 0.85 * h,
                x - 1.1 * h,
                y + 0.85 * h
            ),
            Marker::Wedge => write!(
                b,
                r#"<path d="M{x:.2} {:.2}L{:.2} {:.2}L{:.2} {:.2}Z" {fill}/>"#,
                y + 1.15 * h,
                x + 1.1 * h,
                y - 0.85 * h,
                x - 1.1 * h,
                y - 0.85 * h
            ),
            Marker::Diamond => write!(
                b,
                r#"<path d="M{x:.2} {:.2}L{:.2} {y:.2}L{x:.2} {:.2}L{:.2} {y:.2}Z" {fill}/>"#,
                y - 1.2 * h,
                x + 1.2 * h,
                y + 1.2 * h,
                x - 1.2 * h
            ),
        };
        b.push_str("</g>\n");
    }

    /// A legend entry: marker (or a line when `marker` is `None`) and its text.
    pub fn legend_entry(&mut self, x: f64, y: f64, marker: Option<Marker>, colour: &str, s: &str) {
        match marker {
            Some(m) => self.marker(m, x + 4.0, y - 2.4, 4.0, 0.0, colour, "legend"),
            None => {
                let _ = writeln!(
                    self.body,
                    r#"<line x1="{x:.2}" y1="{:.2}" x2="{:.2}" y2="{:.2}" stroke="{colour}" stroke-width="1"/>"#,
                    y - 2.4,
                    x + 9.0,
                    y - 2.4
                );
            }
        }
        self.text(x + 11.0, y, "start", TICK_PT, s);
    }

    /// The finished document.
    pub fn finish(mut self) -> String {
        self.body.push_str("</svg>\n");
        self.body
    }
}

/// How data values map onto a panel axis.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Scale {
    /// Linear from `lo` to `hi`.
    Linear(f64, f64),
    /// Logarithmic from `lo` to `hi` (both > 0).
    Log(f64, f64),
}

impl Scale {
    /// Position of `v` as a fraction of the axis (0 at `lo`, 1 at `hi`).
    fn frac(self, v: f64) -> f64 {
        match self {
            Scale::Linear(lo, hi) => (v - lo) / (hi - lo),
            Scale::Log(lo, hi) => (v.ln() - lo.ln()) / (hi.ln() - lo.ln()),
        }
    }

    /// Tick values with their labels (empty for unlabelled ticks): linear axes at 1-2-5
    /// steps, log axes at 1, 2, 5 × 10ᵏ with only the powers of ten labelled when the axis
    /// spans more than two decades.
    fn ticks(self, target: usize) -> Vec<(f64, String)> {
        match self {
            Scale::Linear(lo, hi) => {
                let (v, d) = linear_ticks(lo, hi, target);
                v.into_iter().map(|t| (t, tick_label(t, d))).collect()
            }
            Scale::Log(lo, hi) => {
                let sparse = hi / lo > 100.0;
                let mut v = Vec::new();
                for e in lo.log10().floor() as i32..=hi.log10().ceil() as i32 {
                    for m in [1.0, 2.0, 5.0] {
                        let t = m * 10f64.powi(e);
                        if t >= lo * (1.0 - 1e-9) && t <= hi * (1.0 + 1e-9) {
                            let label = if sparse && m != 1.0 {
                                String::new()
                            } else {
                                tick_label(t, (-e).max(0) as usize)
                            };
                            v.push((t, label));
                        }
                    }
                }
                v
            }
        }
    }
}

/// Ticks at 1, 2 or 5 × 10ᵏ steps, about `target` of them within [lo, hi], and the
/// decimals their step needs.
pub fn linear_ticks(lo: f64, hi: f64, target: usize) -> (Vec<f64>, usize) {
    let span = hi - lo;
    if !(span > 0.0) || !span.is_finite() {
        return (vec![lo], 0);
    }
    let raw = span / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| span / s <= target as f64 + 0.5)
        .unwrap_or(10.0 * mag);
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    let ticks = (first..=last).map(|k| k as f64 * step).collect();
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    (ticks, decimals)
}

/// `[min, max]` of the finite values widened by `pad` of the span on each side (a unit
/// range around a single value).
pub fn padded_range(values: impl IntoIterator<Item = f64>, pad: f64) -> (f64, f64) {
    let (lo, hi) = values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !(hi > lo) {
        let c = if lo.is_finite() { lo } else { 0.0 };
        return (c - 1.0, c + 1.0);
    }
    let d = pad * (hi - lo);
    (lo - d, hi + d)
}

/// A rectangular plot area with its scales.
#[derive(Clone, Copy, Debug)]
pub struct Panel {
    /// Left edge, pt.
    pub left: f64,
    /// Top edge, pt.
    pub top: f64,
    /// Width, pt.
    pub width: f64,
    /// Height, pt.
    pub height: f64,
    /// Horizontal scale.
    pub xs: Scale,
    /// Vertical scale.
    pub ys: Scale,
}

impl Panel {
    /// x position of data value `v`, pt.
    pub fn x(&self, v: f64) -> f64 {
        self.left + self.width * self.xs.frac(v)
    }

    /// y position of data value `v`, pt.
    pub fn y(&self, v: f64) -> f64 {
        self.top + self.height * (1.0 - self.ys.frac(v))
    }

    /// Whether (x, y) in data values lies inside the panel.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        let (fx, fy) = (self.xs.frac(x), self.ys.frac(y));
        (0.0..=1.0).contains(&fx) && (0.0..=1.0).contains(&fy)
    }

    /// Frame, inward ticks on all four sides, tick numbers below (when `x_numbers`) and
    /// left (when `y_numbers`).
    pub fn axes(&self, svg: &mut Svg, x_numbers: bool, y_numbers: bool) {
        let b = &mut svg.body;
        let (l, t, r, bt) = (
            self.left,
            self.top,
            self.left + self.width,
            self.top + self.height,
        );
        let _ = writeln!(
            b,
            r#"<rect class="frame" x="{l:.2}" y="{t:.2}" width="{:.2}" height="{:.2}" fill="none" stroke="{INK}" stroke-width="0.6"/>"#,
            self.width, self.height
        );
        for (v, label) in self.xs.ticks(if self.width < 100.0 { 3 } else { 5 }) {
            let x = self.x(v);
            let _ = writeln!(
                b,
                r#"<path class="xtick" d="M{x:.2} {bt:.2}v-3M{x:.2} {t:.2}v3" stroke="{INK}" stroke-width="0.5"/>"#
            );
            if x_numbers && !label.is_empty() {
                let _ = writeln!(
                    b,
                    r#"<text class="xnum" x="{x:.2}" y="{:.2}" text-anchor="middle">{label}</text>"#,
                    bt + 9.0
                );
            }
        }
        let target = if self.height < 100.0 { 3 } else { 5 };
        for (v, label) in self.ys.ticks(target) {
            let y = self.y(v);
            let _ = writeln!(
                b,
                r#"<path class="ytick" d="M{l:.2} {y:.2}h3M{r:.2} {y:.2}h-3" stroke="{INK}" stroke-width="0.5"/>"#
            );
            if y_numbers && !label.is_empty() {
                let _ = writeln!(
                    b,
                    r#"<text class="ynum" x="{:.2}" y="{:.2}" text-anchor="end">{label}</text>"#,
                    l - 2.5,
                    y + 2.4
                );
            }
        }
    }

    /// A label centred below the panel.
    pub fn x_label(&self, svg: &mut Svg, s: &str) {
        svg.text(
            self.left + 0.5 * self.width,
            self.top + self.height + 20.0,
            "middle",
            LABEL_PT,
            s,
        );
    }

    /// A label rotated left of the panel, `offset` pt from its edge.
    pub fn y_label(&self, svg: &mut Svg, s: &str, offset: f64) {
        svg.vertical_text(
            self.left - offset,
            self.top + 0.5 * self.height,
            LABEL_PT,
            s,
        );
    }
}

/// A tick number with `decimals` decimals, "−" for negatives, no "-0".
fn tick_label(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    let s = if s.trim_start_matches(['-', '0', '.']).is_empty() {
        s.trim_start_matches('-').to_string()
    } else {
        s
    };
    s.replace('-', "−")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Ticks at 1-2-5 steps (common practice for plot axes).
    #[test]
    fn ticks_fall_on_round_numbers() {
        assert_eq!(
            linear_ticks(-0.5, 0.5, 5),
            (vec![-0.4, -0.2, 0.0, 0.2, 0.4], 1)
        );
        assert_eq!(
            linear_ticks(3.0, 97.0, 5),
            (vec![20.0, 40.0, 60.0, 80.0], 0)
        );
        assert_eq!(tick_label(-0.0, 1), "0.0");
        assert_eq!(tick_label(-2.0, 0), "−2");
    }
}
