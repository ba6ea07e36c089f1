//! The results table of a run, built from results.json, as LaTeX (plain `tabular`),
//! Markdown and HTML, every value rounded to its uncertainty.

use serde_json::Value;

use crate::summary::Summary;

/// Decimal places that leave two significant digits in `err` (> 0); negative values
/// round to tens, hundreds, …. An error that rounds up to the next power of ten keeps
/// two digits there (0.0996 → 0.10, not 0.100).
pub fn decimals_for(err: f64) -> i32 {
    let d = 1 - err.log10().floor() as i32;
    if (err * 10f64.powi(d)).round() >= 100.0 {
        d - 1
    } else {
        d
    }
}

/// `x` rounded to `decimals` places (negative: to tens, hundreds, …), printed without an
/// exponent and without a "-0".
pub fn fixed(x: f64, decimals: i32) -> String {
    let s = if decimals >= 0 {
        format!("{:.*}", decimals as usize, x)
    } else {
        let unit = 10f64.powi(-decimals);
        format!("{:.0}", (x / unit).round() * unit)
    };
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// A value with its errors rounded together: two significant digits in the smaller
/// non-zero error, the value and the other error to the same decimal place (common
/// practice).
#[derive(Clone, Debug, PartialEq)]
pub struct Rounded {
    /// The value.
    pub value: String,
    /// The lower error (value − lower bound).
    pub minus: String,
    /// The upper error.
    pub plus: String,
}

impl Rounded {
    /// Whether both errors print the same (shown as ±).
    pub fn symmetric(&self) -> bool {
        self.minus == self.plus
    }
}

/// Rounds a summary to its uncertainty; `None` when it has no positive finite error.
pub fn round_to_uncertainty(s: &Summary) -> Option<Rounded> {
    let err = [s.minus, s.plus]
        .into_iter()
        .filter(|e| *e > 0.0 && e.is_finite())
        .fold(f64::INFINITY, f64::min);
    if !err.is_finite() || !s.value.is_finite() {
        return None;
    }
    let d = decimals_for(err);
    Some(Rounded {
        value: fixed(s.value, d),
        minus: fixed(s.minus, d),
        plus: fixed(s.plus, d),
    })
}

/// `x` rounded to `digits` significant digits.
pub fn round_sig(x: f64, digits: i32) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(digits - 1 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}

/// `x` with `digits` significant digits, printed in the shortest form.
pub fn significant(x: f64, digits: i32) -> String {
    format!("{}", round_sig(x, digits))
}

/// A table cell.
#[derive(Clone, Debug, PartialEq)]
enum Cell {
    /// An estimate rounded to its uncertainty.
    Estimate(Rounded),
    /// An upper limit (95 %), two significant digits.
    Below(String),
    /// A number or text shown as is ("—" for nothing).
    Text(String),
}

/// Reads a `{value, minus, plus}` estimate into a cell (an upper limit where the
/// summary carries `upper95`).
fn cell(v: &Value) -> Cell {
    let f = |k: &str| v.get(k).and_then(Value::as_f64);
    if let Some(u) = f("upper95") {
        return Cell::Below(significant(u, 2));
    }
    match (f("value"), f("minus"), f("plus")) {
        (Some(value), Some(minus), Some(plus)) => {
            let s = Summary {
                value,
                minus,
                plus,
                upper95: None,
                upper99: None,
            };
            round_to_uncertainty(&s).map_or(Cell::Text(significant(value, 7)), Cell::Estimate)
        }
        _ => Cell::Text("—".into()),
    }
}

/// A unit in the plain (Unicode) and LaTeX forms.
type Unit = (&'static str, &'static str);

/// Rows of the planet table: results key, symbol (plain, LaTeX) and unit.
const PLANET_ROWS: [(&str, &str, &str, Unit); 10] = [
    ("period_d", "P", "$P$", ("d", "d")),
    ("k_mps", "K", "$K$", ("m/s", r"m\,s$^{-1}$")),
    ("ecc", "e", "$e$", ("", "")),
    ("omega_deg", "ω", r"$\omega$", ("deg", "deg")),
    (
        "tc_d",
        "Tc",
        r"$T_\mathrm{c}$",
        ("BJD_TDB", r"BJD$_\mathrm{TDB}$"),
    ),
    (
        "msini_mearth",
        "m sin i",
        r"$m \sin i$",
        ("M⊕", r"$M_\oplus$"),
    ),
    ("mass_mearth", "m", "$m$", ("M⊕", r"$M_\oplus$")),
    ("radius_rearth", "R", "$R$", ("R⊕", r"$R_\oplus$")),
    ("density_gcc", "ρ", r"$\rho$", ("g/cm³", r"g\,cm$^{-3}$")),
    ("a_au", "a", "$a$", ("au", "au")),
];

/// The results table: a header and rows of (symbol plain, symbol LaTeX, unit, cells).
#[derive(Clone, Debug, PartialEq)]
pub struct ResultsTable {
    header: Vec<String>,
    rows: Vec<(String, String, Unit, Vec<Cell>)>,
}

impl ResultsTable {
    /// Builds the table from results.json: one column per planet, rows for every
    /// quantity any planet has, then each instrument's offset and jitter and the trend
    /// (in the first planet column).
    pub fn from_results(results: &Value) -> ResultsTable {
        let planets: Vec<&Value> = results["planets"]
            .as_array()
            .into_iter()
            .flatten()
            .collect();
        let width = planets.len().max(1);
        let mut header: Vec<String> = planets
            .iter()
            .map(|p| format!("planet {}", p["label"].as_str().unwrap_or("?")))
            .collect();
        if header.is_empty() {
            header.push("value".into());
        }
        let mut rows = Vec::new();
        for (key, plain, latex, unit) in PLANET_ROWS {
            if planets.iter().any(|p| p.get(key).is_some()) {
                let cells = planets.iter().map(|p| cell(&p[key])).collect();
                rows.push((plain.to_string(), latex.to_string(), unit, cells));
            }
        }
        let mps = ("m/s", r"m\,s$^{-1}$");
        let padded = |c: Cell| {
            let mut v = vec![c];
            v.resize(width, Cell::Text(String::new()));
            v
        };
        for inst in results["instruments"].as_array().into_iter().flatten() {
            let name = inst["name"].as_str().unwrap_or("?");
            for (key, what) in [("offset_mps", "offset"), ("jitter_mps", "jitter")] {
                rows.push((
                    format!("{what} ({name})"),
                    format!("{what} ({})", latex_escape(name)),
                    mps,
                    padded(cell(&inst[key])),
                ));
            }
        }
        for (key, what, unit) in [
            (
                "trend_mps_per_yr",
                "linear trend",
                ("m/s/yr", r"m\,s$^{-1}$\,yr$^{-1}$"),
            ),
            (
                "curvature_mps_per_yr2",
                "quadratic trend",
                ("m/s/yr²", r"m\,s$^{-1}$\,yr$^{-2}$"),
            ),
        ] {
            if let Some(v) = results["trend"].get(key) {
                rows.push((what.into(), what.into(), unit, padded(cell(v))));
            }
        }
        ResultsTable { header, rows }
    }

    /// LaTeX: a plain `tabular` (no packages beyond LaTeX itself), asymmetric errors as
    /// super- and subscripts.
    pub fn latex(&self) -> String {
        let mut s = format!(
            "% Results table written by heft; values rounded to two significant digits of their error.\n\\begin{{tabular}}{{ll{}}}\n\\hline\nParameter & Unit & {} \\\\\n\\hline\n",
            "c".repeat(self.header.len()),
            self.header
                .iter()
                .map(|h| latex_escape(h))
                .collect::<Vec<_>>()
                .join(" & ")
        );
        for (_, sym, unit, cells) in &self.rows {
            let cells: Vec<String> = cells
                .iter()
                .map(|c| match c {
                    Cell::Estimate(r) if r.symmetric() => {
                        format!("${} \\pm {}$", r.value, r.minus)
                    }
                    Cell::Estimate(r) => {
                        format!("${}^{{+{}}}_{{-{}}}$", r.value, r.plus, r.minus)
                    }
                    Cell::Below(u) => format!("$<{u}$"),
                    Cell::Text(t) if t == "—" => "--".into(),
                    Cell::Text(t) => latex_escape(t),
                })
                .collect();
            s.push_str(&format!(
                "{sym} & {} & {} \\\\\n",
                unit.1,
                cells.join(" & ")
            ));
        }
        s.push_str("\\hline\n\\end{tabular}\n");
        s
    }

    /// Markdown (pipe table).
    pub fn markdown(&self) -> String {
        let mut s = format!(
            "| parameter | unit | {} |\n|---|---|{}\n",
            self.header
                .iter()
                .map(|h| md_escape(h))
                .collect::<Vec<_>>()
                .join(" | "),
            "---|".repeat(self.header.len())
        );
        for (sym, _, unit, cells) in &self.rows {
            let cells: Vec<String> = cells.iter().map(plain_cell).collect();
            s.push_str(&format!(
                "| {} | {} | {} |\n",
                md_escape(sym),
                unit.0,
                cells.join(" | ")
            ));
        }
        s
    }

    /// HTML `<table>` (errors as super- and subscripts).
    pub fn html(&self) -> String {
        use super::figure::esc;
        let mut s =
            String::from("<table class=\"results\">\n<thead><tr><th>parameter</th><th>unit</th>");
        for h in &self.header {
            s.push_str(&format!("<th>{}</th>", esc(h)));
        }
        s.push_str("</tr></thead>\n<tbody>\n");
        for (sym, _, unit, cells) in &self.rows {
            s.push_str(&format!(
                "<tr><td>{}</td><td>{}</td>",
                esc(sym),
                esc(unit.0)
            ));
            for c in cells {
                let inner = match c {
                    Cell::Estimate(r) if !r.symmetric() => format!(
                        "{}<span class=\"err\"><sup>+{}</sup><sub>−{}</sub></span>",
                        r.value, r.plus, r.minus
                    ),
                    other => esc(&plain_cell(other)),
                };
                s.push_str(&format!("<td>{inner}</td>"));
            }
            s.push_str("</tr>\n");
        }
        s.push_str("</tbody>\n</table>\n");
        s
    }
}

/// A cell as plain text: `v ± e`, `v +p/−m`, `< u`.
fn plain_cell(c: &Cell) -> String {
    match c {
        Cell::Estimate(r) if r.symmetric() => format!("{} ± {}", r.value, r.minus),
        Cell::Estimate(r) => format!("{} +{}/−{}", r.value, r.plus, r.minus),
        Cell::Below(u) => format!("< {u} (95 %)"),
        Cell::Text(t) => t.clone(),
    }
}

/// Text escaped for LaTeX.
fn latex_escape(s: &str) -> String {
    let mut out = String::new();
    for c in s.chars() {
        match c {
            '\\' => out.push_str(r"\textbackslash{}"),
            '&' | '%' | '$' | '#' | '_' | '{' | '}' => {
                out.push('\\');
                out.push(c);
            }
            '~' => out.push_str(r"\textasciitilde{}"),
            '^' => out.push_str(r"\textasciicircum{}"),
            _ => out.push(c),
        }
    }
    out
}

/// Text escaped for a Markdown table cell.
fn md_escape(s: &str) -> String {
    s.replace('|', r"\|")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rounded(value: f64, minus: f64, plus: f64) -> Rounded {
        round_to_uncertainty(&Summary {
            value,
            minus,
            plus,
            upper95: None,
            upper99: None,
        })
        .unwrap()
    }

    fn r(v: &str, m: &str, p: &str) -> Rounded {
        Rounded {
            value: v.into(),
            minus: m.into(),
            plus: p.into(),
        }
    }

    /// Worked examples of rounding to the uncertainty (common practice: two significant
    /// digits in the error, the value rounded to the same decimal place).
    #[test]
    fn rounds_values_to_their_errors() {
        assert_eq!(
            rounded(12.3456, 0.0234, 0.0234),
            r("12.346", "0.023", "0.023")
        );
        assert_eq!(rounded(1234.4, 56.0, 56.0), r("1234", "56", "56"));
        assert_eq!(
            rounded(123456.0, 5678.0, 5678.0),
            r("123500", "5700", "5700")
        );
        assert_eq!(
            rounded(0.0012346, 0.0000678, 0.0000678),
            r("0.001235", "0.000068", "0.000068")
        );
        // An error rounding up to a power of ten keeps two digits: 0.0996 → 0.10.
        assert_eq!(rounded(3.21456, 0.0996, 0.0996), r("3.21", "0.10", "0.10"));
        // Asymmetric: the smaller error sets the place.
        assert_eq!(
            rounded(9.87654, 0.0456, 0.123),
            r("9.877", "0.046", "0.123")
        );
        // A transit time in full BJD.
        assert_eq!(
            rounded(2460412.672412, 0.00055, 0.00055),
            r("2460412.67241", "0.00055", "0.00055")
        );
        assert_eq!(rounded(-0.0004, 0.02, 0.02).value, "0.000");
    }

    /// LaTeX and Markdown carry the same rounded numbers; LaTeX is a plain tabular.
    #[test]
    fn tables_in_latex_and_markdown() {
        let doc = serde_json::json!({
            "planets": [{"label": "b", "period_d": {"value": 11.816327, "minus": 3.5e-5, "plus": 3.5e-5},
                         "k_mps": {"value": 4.1234, "minus": 0.51, "plus": 0.62},
                         "mass_mearth": {"value": 2.0, "minus": 1.0, "plus": 1.5, "upper95": 4.567}}],
            "instruments": [{"name": "A_1", "offset_mps": {"value": -3.21, "minus": 0.4, "plus": 0.4},
                             "jitter_mps": {"value": 1.0, "minus": 0.3, "plus": 0.3}}],
            "trend": {"order": 0}
        });
        let t = ResultsTable::from_results(&doc);
        let tex = t.latex();
        assert!(tex.contains(r"\begin{tabular}{llc}") && tex.contains(r"\end{tabular}"));
        assert!(tex.contains("$11.816327 \\pm 0.000035$"), "{tex}");
        assert!(tex.contains("$4.12^{+0.62}_{-0.51}$"), "{tex}");
        assert!(
            tex.contains("$<4.6$") && tex.contains(r"offset (A\_1)"),
            "{tex}"
        );
        let md = t.markdown();
        assert!(md.contains("| K | m/s | 4.12 +0.62/−0.51 |"), "{md}");
        assert!(md.contains("| offset (A_1) | m/s | -3.21 ± 0.40 |"), "{md}");
        assert_eq!(md.lines().count(), 2 + 3 + 2);
    }
}
