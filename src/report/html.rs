//! `report.html`: one self-contained page (inline CSS and SVG; no scripts, fonts, images
//! or links to other files) with the inputs, figures, results table, audit and
//! diagnostics of a run. Written as well-formed XML (polyglot HTML5) so that any XML
//! parser can check it.

use std::fmt::Write as _;

use serde_json::Value;

use super::figure::esc;
use super::saved::SavedRun;
use super::table::{ResultsTable, significant};

/// Style sheet: readable type, figures at most one screen column wide, quiet tables. The
/// frame colour of figures (#d5cfe0) is what `scripts/check_report_png.py` looks for.
const STYLE: &str = "
body { font-family: 'DejaVu Sans', Helvetica, Arial, sans-serif; color: #1a1a1a;
       max-width: 60rem; margin: 1.5rem auto; padding: 0 1rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.2rem; border-bottom: 1px solid #c9c9c9; padding-bottom: 0.2rem; margin-top: 2rem; }
p.meta { color: #555555; margin-top: 0; }
nav a { margin-right: 0.8rem; color: #23407a; }
figure { margin: 1rem 1rem 1rem 0; display: inline-block; vertical-align: top; }
figure svg { display: block; width: 30rem; max-width: 100%; height: auto; border: 1px solid #d5cfe0; }
figure.wide svg { width: 56rem; }
figcaption { max-width: 30rem; font-size: 0.85rem; color: #333333; margin-top: 0.4rem; }
table { border-collapse: collapse; margin: 0.6rem 0; font-size: 0.9rem; }
th, td { padding: 0.2rem 0.7rem; text-align: left; border-bottom: 1px solid #e2e2e2; }
th { border-bottom: 1.5px solid #1a1a1a; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
span.err { display: inline-block; vertical-align: middle; font-size: 0.75em; line-height: 1.1; margin-left: 0.15em; }
span.err sup, span.err sub { display: block; vertical-align: baseline; position: static; }
.verdict { font-weight: bold; padding: 0.1rem 0.5rem; border: 1.5px solid #1a1a1a; }
.note { color: #555555; font-style: italic; }
ul.warnings li { margin-bottom: 0.2rem; }
";

/// A figure to place on the page.
pub struct PageFigure {
    /// Section id it belongs to.
    pub section: &'static str,
    /// File name it was saved under.
    pub file: String,
    /// The SVG document.
    pub svg: String,
    /// Caption.
    pub caption: String,
    /// Two journal columns wide rather than one.
    pub wide: bool,
}

/// Sections of the page, in order: (id, heading).
const SECTIONS: [(&str, &str); 9] = [
    ("inputs", "Target and inputs"),
    ("periodogram", "Periodograms"),
    ("orbits", "Orbits"),
    ("residuals", "Residuals"),
    ("posterior", "Posterior"),
    ("mass-radius", "Mass and radius"),
    ("results", "Results"),
    ("audit", "Audit"),
    ("diagnostics", "Diagnostics"),
];

/// A number from JSON formatted with `digits` significant digits ("—" when absent).
fn num(v: &Value, digits: i32) -> String {
    v.as_f64().map_or("—".into(), |x| significant(x, digits))
}

/// The inputs: one row per instrument with epochs, first and last time and span.
fn inputs(s: &mut String, run: &SavedRun) {
    let pts = &run.points.points;
    let _ = writeln!(
        s,
        "<table>\n<thead><tr><th>instrument</th><th>epochs</th><th>first [BJD_TDB]</th><th>last [BJD_TDB]</th><th>span [d]</th><th>median error [m/s]</th></tr></thead>\n<tbody>"
    );
    for name in run.points.instruments() {
        let mine: Vec<_> = pts.iter().filter(|p| p.instrument == name).collect();
        let first = mine
            .iter()
            .map(|p| p.time_bjd)
            .fold(f64::INFINITY, f64::min);
        let last = mine
            .iter()
            .map(|p| p.time_bjd)
            .fold(f64::NEG_INFINITY, f64::max);
        let mut errs: Vec<f64> = mine.iter().map(|p| p.err_mps).collect();
        errs.sort_by(f64::total_cmp);
        let _ = writeln!(
            s,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{first:.4}</td><td class=\"num\">{last:.4}</td><td class=\"num\">{:.1}</td><td class=\"num\">{:.2}</td></tr>",
            esc(&name),
            mine.len(),
            last - first,
            crate::summary::percentile_sorted(&errs, 50.0)
        );
    }
    let first = pts.first().map_or(0.0, |p| p.time_bjd);
    let last = pts.last().map_or(0.0, |p| p.time_bjd);
    let _ = writeln!(
        s,
        "<tr><th>all</th><th class=\"num\">{}</th><th class=\"num\">{first:.4}</th><th class=\"num\">{last:.4}</th><th class=\"num\">{:.1}</th><th></th></tr>\n</tbody>\n</table>",
        pts.len(),
        last - first
    );
    let files: Vec<String> = run.results["data"]["files"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|f| f.as_str().map(esc))
        .collect();
    if !files.is_empty() {
        let _ = writeln!(s, "<p>Files: {}.</p>", files.join(", "));
    }
}

/// A table of JSON objects: one column per (key, heading); numbers with 4 significant
/// digits, estimates as value only, lists joined.
fn object_table(s: &mut String, rows: &[Value], cols: &[(&str, &str)]) {
    s.push_str("<table>\n<thead><tr>");
    for (_, h) in cols {
        let _ = write!(s, "<th>{}</th>", esc(h));
    }
    s.push_str("</tr></thead>\n<tbody>\n");
    for r in rows {
        s.push_str("<tr>");
        for (k, _) in cols {
            let v = &r[*k];
            let text = match v {
                Value::Number(_) => num(v, 4),
                Value::String(t) => t.clone(),
                Value::Bool(b) => if *b { "yes" } else { "no" }.to_string(),
                Value::Object(o) if o.contains_key("value") => num(&o["value"], 4),
                Value::Null => "—".into(),
                other => other.to_string(),
            };
            let class = if matches!(v, Value::Number(_) | Value::Object(_)) {
                " class=\"num\""
            } else {
                ""
            };
            let _ = write!(s, "<td{class}>{}</td>", esc(&text));
        }
        s.push_str("</tr>\n");
    }
    s.push_str("</tbody>\n</table>\n");
}

/// The audit block of results.json, when the run has one: verdict and reasons, then per
/// planet its alias candidates and model variants, and the figure.
fn audit(s: &mut String, results: &Value, figs: &[PageFigure]) {
    let Some(a) = results.get("audit").filter(|a| a.is_object()) else {
        s.push_str("<p class=\"note\">No audit in this run.</p>\n");
        return;
    };
    let list = |v: &Value| v.as_array().cloned().unwrap_or_default();
    let items = |v: &Value| -> Vec<String> {
        list(v)
            .iter()
            .filter_map(|r| r.as_str().map(|r| format!("<li>{}</li>", esc(r))))
            .collect()
    };
    let verdict = a["verdict"].as_str().unwrap_or("unknown");
    let _ = writeln!(
        s,
        "<p>Verdict: <span class=\"verdict\">{}</span></p>",
        esc(verdict)
    );
    let reasons = items(&a["reasons"]);
    if !reasons.is_empty() {
        let _ = writeln!(s, "<ul>\n{}\n</ul>", reasons.join("\n"));
    }
    for pa in list(&a["planets"]) {
        let _ = writeln!(
            s,
            "<h3>Planet {}: {}</h3>",
            esc(pa["label"].as_str().unwrap_or("?")),
            esc(pa["verdict"].as_str().unwrap_or("?"))
        );
        let candidates = list(&pa["aliases"]["candidates"]);
        if pa["aliases"]["tested"].as_bool() == Some(true) && !candidates.is_empty() {
            let rows: Vec<Value> = candidates
                .iter()
                .map(|c| {
                    let mut row = c.clone();
                    row["simulation_top"] = c["simulation"]["top_fraction"].clone();
                    row
                })
                .collect();
            object_table(
                s,
                &rows,
                &[
                    ("relation", "alias"),
                    ("period_d", "period [d]"),
                    ("delta_lnl", "ΔlnL"),
                    ("delta_bic", "ΔBIC"),
                    ("k_mps", "K [m/s]"),
                    ("mass_mearth", "mass [M⊕]"),
                    ("simulation_top", "simulations matching"),
                ],
            );
        }
        let rows: Vec<Value> = list(&pa["variants"])
            .iter()
            .map(|v| {
                let mut row = v.clone();
                row["k_mps"] = v["planet"]["k_mps"].clone();
                row["mass_mearth"] = v["planet"]["mass_mearth"].clone();
                row["k_posterior"] = v["posterior"]["k_mps"].clone();
                row["mass_posterior"] = v["posterior"]["mass_mearth"].clone();
                row
            })
            .collect();
        if !rows.is_empty() {
            object_table(
                s,
                &rows,
                if rows.iter().any(|r| r["k_posterior"].is_object()) {
                    &[
                        ("name", "model variant"),
                        ("delta_bic", "ΔBIC"),
                        ("k_mps", "K [m/s]"),
                        ("mass_mearth", "mass [M⊕]"),
                        ("k_shift_sigma", "ΔK/σ"),
                        ("k_posterior", "K, posterior [m/s]"),
                        ("mass_posterior", "mass, posterior [M⊕]"),
                    ]
                } else {
                    &[
                        ("name", "model variant"),
                        ("delta_bic", "ΔBIC"),
                        ("k_mps", "K [m/s]"),
                        ("mass_mearth", "mass [M⊕]"),
                        ("k_shift_sigma", "ΔK/σ"),
                    ]
                },
            );
        }
    }
    figures(s, figs, "audit", "No audit figure.");
}

/// One paragraph of what was done to the data (results.json `data_changes`, `outliers`),
/// when the results file has it.
fn data_changes(s: &mut String, r: &Value) {
    let c = &r["data_changes"];
    if !c.is_object() {
        return;
    }
    let count = |v: &Value, excluded: bool| {
        v.as_array().map_or(0, |a| {
            a.iter()
                .filter(|p| p["excluded"].as_bool() == Some(excluded))
                .count()
        })
    };
    let mut parts = vec![format!(
        "{} points read, {} fitted",
        c["n_read"], r["data"]["n_points"]
    )];
    for e in c["eras"].as_array().into_iter().flatten() {
        let names: Vec<&str> = e["names"]
            .as_array()
            .into_iter()
            .flatten()
            .filter_map(Value::as_str)
            .collect();
        parts.push(format!(
            "{} split into eras {}",
            esc(e["instrument"].as_str().unwrap_or("")),
            esc(&names.join(", "))
        ));
    }
    let transit = &c["in_transit"];
    if transit.as_array().is_some_and(|a| !a.is_empty()) {
        parts.push(format!(
            "{} in transit left out, {} flagged and kept",
            count(transit, true),
            count(transit, false)
        ));
    }
    let b = &c["binning"];
    if b.is_object() {
        parts.push(format!(
            "binned {} → {} within {} d (jitter after binning)",
            b["n_before"], b["n_after"], b["window_d"]
        ));
    }
    let o = &c["outlier_search"];
    parts.push(format!(
        "outliers ({}, beyond {} robust σ): {} left out, {} kept",
        esc(o["mode"].as_str().unwrap_or("")),
        o["threshold_sigma"],
        count(&r["outliers"], true),
        count(&r["outliers"], false)
    ));
    let _ = writeln!(s, "<p>Data: {}.</p>", parts.join("; "));
}

/// The fit, sampler diagnostics, priors and warnings.
fn diagnostics(s: &mut String, r: &Value) {
    let fit = &r["fit"];
    let _ = writeln!(
        s,
        "<p>Fit: {}; ln L = {}, BIC = {}, AIC = {}, {} points, {} free parameters.</p>",
        esc(fit["method"].as_str().unwrap_or("—")),
        num(&fit["log_likelihood"], 6),
        num(&fit["bic"], 6),
        num(&fit["aic"], 6),
        fit["n_points"],
        fit["n_params"]
    );
    data_changes(s, r);
    match r.get("diagnostics").filter(|d| d.is_object()) {
        Some(d) => {
            let verdict = if d["converged"].as_bool() == Some(true) {
                "converged"
            } else {
                "NOT converged"
            };
            let _ = writeln!(
                s,
                "<p>Sampler: <span class=\"verdict\">{verdict}</span> — {}. {} ensembles × {} walkers, {} steps ({} burn-in), acceptance {}, max R̂ {} (bound {}), min ESS {}.</p>",
                esc(d["reason"].as_str().unwrap_or("")),
                d["ensembles"],
                d["walkers"],
                d["steps"],
                d["burn_in_steps"],
                num(&d["acceptance"], 2),
                num(&d["max_rhat"], 4),
                num(&d["rhat_bound"], 3),
                num(&d["min_ess"], 3)
            );
            if let Some(rows) = d["parameters"].as_array() {
                object_table(
                    s,
                    rows,
                    &[
                        ("name", "parameter"),
                        ("tau_steps", "τ [steps]"),
                        ("rhat", "R̂"),
                        ("ess", "ESS"),
                    ],
                );
            }
        }
        None => s.push_str(
            "<p class=\"note\">No posterior sampling in this run: uncertainties come from the curvature of the likelihood.</p>\n",
        ),
    }
    if let Some(modes) = r["posterior"]["modes"].as_array().filter(|m| !m.is_empty()) {
        s.push_str("<h3>Period modes</h3>\n");
        let rows: Vec<Value> = modes
            .iter()
            .map(|m| {
                let periods: Vec<String> = m["planets"]
                    .as_array()
                    .into_iter()
                    .flatten()
                    .map(|p| {
                        format!(
                            "{} {} d",
                            p["label"].as_str().unwrap_or("?"),
                            num(&p["period_d"]["value"], 7)
                        )
                    })
                    .collect();
                serde_json::json!({
                    "relation": m["relation"],
                    "periods": periods.join("; "),
                    "weight": m["weight"],
                    "ln_evidence": m["ln_evidence"],
                    "ln_evidence_err": m["ln_evidence_err"],
                    "converged": m["converged"],
                })
            })
            .collect();
        object_table(
            s,
            &rows,
            &[
                ("relation", "mode"),
                ("periods", "periods"),
                ("weight", "weight"),
                ("ln_evidence", "ln Z"),
                ("ln_evidence_err", "± ln Z"),
                ("converged", "converged"),
            ],
        );
    }
    if let Some(rows) = r["priors"].as_array().filter(|p| !p.is_empty()) {
        s.push_str("<h3>Priors and constraints</h3>\n");
        object_table(
            s,
            rows,
            &[
                ("parameter", "parameter"),
                ("kind", "kind"),
                ("detail", "detail"),
                ("source", "source"),
            ],
        );
    }
    let warnings: Vec<String> = r["warnings"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|w| w.as_str().map(|w| format!("<li>{}</li>", esc(w))))
        .collect();
    s.push_str("<h3>Warnings</h3>\n");
    if warnings.is_empty() {
        s.push_str("<p>None.</p>\n");
    } else {
        let _ = writeln!(s, "<ul class=\"warnings\">\n{}\n</ul>", warnings.join("\n"));
    }
}

/// Places the figures of `section`, or `absent` as a note when there are none.
fn figures(s: &mut String, figs: &[PageFigure], section: &str, absent: &str) {
    let mine: Vec<&PageFigure> = figs.iter().filter(|f| f.section == section).collect();
    if mine.is_empty() {
        let _ = writeln!(s, "<p class=\"note\">{}</p>", esc(absent));
    }
    for f in mine {
        let wide = if f.wide { " wide" } else { "" };
        let _ = writeln!(
            s,
            "<figure class=\"figure{wide}\" id=\"fig-{}\">\n{}<figcaption>{} <span class=\"note\">({})</span></figcaption>\n</figure>",
            esc(&f.file.replace('.', "-")),
            f.svg,
            esc(&f.caption),
            esc(&f.file)
        );
    }
}

/// The whole page.
pub fn report_html(run: &SavedRun, figs: &[PageFigure], table: &ResultsTable) -> String {
    let r = &run.results;
    let target = r["target"].as_str().unwrap_or("unnamed target");
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n<title>{} — heft report</title>\n<style>{STYLE}</style>\n</head>\n<body>",
        esc(target)
    );
    let _ = writeln!(
        s,
        "<h1>{}</h1>\n<p class=\"meta\">heft {} · schema {} · seed {} · reference epoch BJD_TDB {} · run folder {}</p>",
        esc(target),
        esc(r["software"]["version"].as_str().unwrap_or("?")),
        esc(r["schema"].as_str().unwrap_or("?")),
        r["seed"],
        r["epoch_bjd"],
        esc(&run
            .dir
            .file_name()
            .map_or(String::new(), |n| n.to_string_lossy().into_owned()))
    );
    s.push_str("<nav>");
    for (id, heading) in SECTIONS {
        let _ = write!(s, "<a href=\"#{id}\">{heading}</a>");
    }
    s.push_str("</nav>\n");
    for (id, heading) in SECTIONS {
        let _ = writeln!(s, "<section id=\"{id}\">\n<h2>{heading}</h2>");
        match id {
            "inputs" => inputs(&mut s, run),
            "periodogram" => figures(&mut s, figs, id, "No periodograms were saved in this run."),
            "orbits" => figures(&mut s, figs, id, "No planets were fitted."),
            "residuals" => figures(&mut s, figs, id, "No residuals."),
            "posterior" => figures(
                &mut s,
                figs,
                id,
                "No posterior draws in this run (sampling was off).",
            ),
            "mass-radius" => figures(
                &mut s,
                figs,
                id,
                "No planet has both a mass and a radius (a radius needs a transit).",
            ),
            "results" => {
                let _ = writeln!(
                    s,
                    "<p>Values: {}, rounded to two significant digits of their error; also saved as results_table.tex and results_table.md.</p>",
                    esc(r["posterior"]["values"]
                        .as_str()
                        .or(r["fit"]["uncertainties"].as_str())
                        .unwrap_or("estimates"))
                );
                s.push_str(&table.html());
            }
            "audit" => audit(&mut s, r, figs),
            _ => diagnostics(&mut s, r),
        }
        s.push_str("</section>\n");
    }
    s.push_str("</body>\n</html>\n");
    s
}
