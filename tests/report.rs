//! The run report: `report.html` and its figures hold what they must (one marker per
//! epoch, one model curve per planet, labelled axes), the page is well-formed and
//! self-contained, and `heft render` rebuilds the same files from the saved results.

mod common;

use common::{heft, repo};

use std::fs;
use std::path::{Path, PathBuf};

use quick_xml::Reader;
use quick_xml::events::Event;
use serde_json::Value;

fn read(p: &Path) -> String {
    fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// Runs `target` into `dir/run` and returns the folder and results.json.
fn run(target: &str, dir: &Path) -> (PathBuf, Value) {
    let out_dir = dir.join("run");
    let out = heft(&["run", target, "--out", out_dir.to_str().unwrap()]);
    // 0, or 4 when the audit's verdict is not robust (the demo's is not).
    assert!(
        matches!(out.status.code(), Some(0) | Some(4)),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc = serde_json::from_str(&read(&out_dir.join("results.json"))).unwrap();
    (out_dir, doc)
}

fn count(text: &str, needle: &str) -> usize {
    text.matches(needle).count()
}

/// Well-formed (every element closed in order, attributes quoted: the XML 1.0 rules that
/// polyglot HTML5 follows), with a head, title and body, no element that loads anything
/// (script, link, img, iframe, object, embed) and no reference outside the page: links
/// only to `#fragments`, no `url(`, no `@import`, `http` only in namespace declarations.
/// Returns the number of `<figure>` elements and of `<svg>` elements inside them.
fn check_page(html: &str) -> (usize, usize) {
    assert!(html.starts_with("<!DOCTYPE html>"));
    let mut reader = Reader::from_str(html);
    reader.config_mut().check_end_names = true;
    let mut stack: Vec<String> = Vec::new();
    let (mut figures, mut svgs, mut seen) = (0, 0, Vec::new());
    loop {
        let ev = reader.read_event().unwrap_or_else(|e| {
            panic!(
                "report.html is not well-formed at byte {}: {e}",
                reader.buffer_position()
            )
        });
        let element = match &ev {
            Event::Start(e) | Event::Empty(e) => Some(e.clone()),
            Event::Eof => break,
            _ => None,
        };
        if let Some(e) = element {
            let name = String::from_utf8_lossy(e.name().as_ref()).into_owned();
            assert!(
                ![
                    "script", "link", "img", "iframe", "object", "embed", "image", "use"
                ]
                .contains(&name.as_str()),
                "<{name}> may load outside content"
            );
            for a in e.attributes() {
                let a = a.expect("attribute well-formed");
                let key = String::from_utf8_lossy(a.key.as_ref()).into_owned();
                let value = String::from_utf8_lossy(&a.value).into_owned();
                if key.ends_with("href") || key == "src" {
                    assert!(value.starts_with('#'), "{key}=\"{value}\" leaves the page");
                }
                if key == "xmlns" {
                    assert!(value.starts_with("http://www.w3.org/"), "{value}");
                } else {
                    assert!(!value.contains("http"), "{key}=\"{value}\"");
                }
            }
            if name == "figure" {
                figures += 1;
            }
            if name == "svg" && stack.iter().any(|s| s == "figure") {
                svgs += 1;
            }
            seen.push(name.clone());
            if matches!(ev, Event::Start(_)) {
                stack.push(name);
            }
        }
        if let Event::End(_) = ev {
            stack.pop();
        }
    }
    assert!(stack.is_empty(), "unclosed elements: {stack:?}");
    for required in ["html", "head", "title", "body", "style"] {
        assert!(seen.iter().any(|s| s == required), "no <{required}>");
    }
    assert!(!html.contains("url(") && !html.contains("@import"));
    assert_eq!(
        count(html, "http"),
        count(html, "xmlns=\"http://www.w3.org/"),
        "http only in namespace declarations"
    );
    (figures, svgs)
}

/// Axis labels with units and tick numbers on both axes.
fn has_axes(svg: &str, labels: &[&str]) {
    for l in labels {
        assert!(svg.contains(l), "axis label {l}");
    }
    assert!(count(svg, r#"class="xnum""#) >= 2, "x tick numbers");
    assert!(count(svg, r#"class="ynum""#) >= 2, "y tick numbers");
}

/// The demo target: periodograms, one phase plot per planet with one marker per epoch,
/// residuals per instrument, the mass–radius diagram, tables, and a valid page; `heft
/// render` rebuilds every file byte for byte.
#[test]
fn demo_report_holds_every_figure_and_rebuilds() {
    let dir = tempfile::tempdir().unwrap();
    let (run_dir, doc) = run(&repo("data-demo/ostrel-12.toml"), dir.path());
    let n_points = doc["data"]["n_points"].as_u64().unwrap() as usize;
    let planets: Vec<&str> = doc["planets"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["label"].as_str().unwrap())
        .collect();
    let instruments = doc["instruments"].as_array().unwrap().len();
    assert!(!planets.is_empty() && instruments == 3);

    // data_used.csv: one row per point read (those left out carry their reason in
    // `status`); residual = rv − model.
    let used = read(&run_dir.join("data_used.csv"));
    let n_read = doc["data"]["n_read"].as_u64().unwrap() as usize;
    assert_eq!(used.lines().count(), n_read + 1);
    let status_used = used
        .lines()
        .skip(1)
        .filter(|l| l.contains(",used,"))
        .count();
    assert_eq!(status_used, n_points);
    for line in used.lines().skip(1) {
        let f: Vec<f64> = line
            .split(',')
            .enumerate()
            .filter(|&(j, _)| j >= 3 && j != 8)
            .map(|(_, x)| x.parse().unwrap())
            .collect();
        assert!(
            (f[1] - f[3] - f[4]).abs() < 1e-9 * f[1].abs().max(1.0),
            "{line}"
        );
    }

    for label in &planets {
        let svg = read(&run_dir.join(format!("phase_{label}.svg")));
        assert_eq!(
            count(&svg, r#"class="epoch""#),
            n_points,
            "one marker per epoch"
        );
        assert_eq!(count(&svg, r#"class="residual""#), n_points);
        assert_eq!(count(&svg, r#"class="model""#), 1, "one model curve");
        assert!(count(&svg, r#"class="bin""#) >= 5, "binned points");
        assert_eq!(
            count(&svg, r#"class="frame""#),
            2,
            "data and residual panels"
        );
        has_axes(&svg, &["phase from conjunction", "RV [m/s]", "O−C [m/s]"]);
    }
    let resid = read(&run_dir.join("residuals_time.svg"));
    assert_eq!(count(&resid, r#"class="residual""#), n_points);
    assert_eq!(count(&resid, r#"class="frame""#), instruments);
    has_axes(&resid, &["time [BJD_TDB − 2450000]", "O−C [m/s]"]);

    let pg = read(&run_dir.join("periodogram.svg"));
    let columns = read(&run_dir.join("periodograms.csv"))
        .lines()
        .next()
        .unwrap()
        .split(',')
        .count()
        - 2;
    assert_eq!(
        count(&pg, r#"class="power""#),
        columns,
        "one curve per periodogram"
    );
    assert_eq!(count(&pg, r#"class="fap-level""#), 3);
    assert!(count(&pg, r#"class="candidate""#) >= 1);
    assert!(pg.contains("spectral window"));
    has_axes(&pg, &["period [d]", "power"]);

    let mr = read(&run_dir.join("mass_radius.svg"));
    assert_eq!(count(&mr, r#"class="contour""#), 2, "planet b has a radius");

    let tex = read(&run_dir.join("results_table.tex"));
    assert!(tex.contains("\\begin{tabular}") && tex.contains("$K$ & m\\,s$^{-1}$"));
    let md = read(&run_dir.join("results_table.md"));
    assert!(md.starts_with("| parameter | unit | planet "));

    let html = read(&run_dir.join("report.html"));
    let (figures, svgs) = check_page(&html);
    // Periodogram, phases, residuals, mass–radius, audit, and the corner plot when the
    // posterior was sampled (the demo target asks for it).
    let sampled = doc.get("posterior").is_some_and(|p| p.is_object());
    assert!(sampled, "the demo samples its posterior");
    let expected = 1 + planets.len() + 1 + 1 + 1 + 1;
    assert_eq!((figures, svgs), (expected, expected));
    let verdict = doc["audit"]["verdict"].as_str().unwrap();
    assert!(html.contains(&format!(
        "Verdict: <span class=\"verdict\">{verdict}</span>"
    )));
    let audit_fig = read(&run_dir.join("audit.svg"));
    let shown: usize = doc["audit"]["planets"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            let variants = p["variants"].as_array().unwrap();
            let subsets = p["jackknife"]["fits"].as_array().unwrap();
            variants.iter().filter(|v| v["planet"].is_object()).count()
                + subsets
                    .iter()
                    .filter(|j| j["kind"] != "epoch" && j["planet"].is_object())
                    .count()
        })
        .sum();
    assert_eq!(count(&audit_fig, r#"class="estimate""#), shown);
    assert!(html.contains("Sampler: <span class=\"verdict\">converged</span>"));
    for name in ["Quill", "Tarn", "Fennick"] {
        assert!(
            html.contains(&format!("<td>{name}</td>")),
            "inputs row {name}"
        );
    }

    // Rebuild from the saved files: the same bytes, nothing refitted.
    let report_files: Vec<PathBuf> = fs::read_dir(&run_dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| {
            let n = p.file_name().unwrap().to_string_lossy().into_owned();
            n.ends_with(".svg") || n.starts_with("results_table") || n == "report.html"
        })
        .collect();
    let before: Vec<String> = report_files.iter().map(|p| read(p)).collect();
    for p in &report_files {
        fs::remove_file(p).unwrap();
    }
    let results_before = read(&run_dir.join("results.json"));
    let out = heft(&["render", run_dir.to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(
        String::from_utf8_lossy(&out.stdout).lines().count(),
        report_files.len()
    );
    for (p, b) in report_files.iter().zip(&before) {
        assert_eq!(&read(p), b, "{} differs after render", p.display());
    }
    assert_eq!(read(&run_dir.join("results.json")), results_before);
    let json = heft(&["render", run_dir.to_str().unwrap(), "--json"]);
    let doc: Value = serde_json::from_slice(&json.stdout).unwrap();
    assert_eq!(doc["written"].as_array().unwrap().len(), report_files.len());
}

/// With posterior draws: the corner plot (one histogram per main parameter), the
/// sampler diagnostics, and an audit block rendered when results.json has one.
#[test]
fn sampled_report_has_corner_diagnostics_and_audit() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("t.toml");
    fs::write(
        &target,
        format!(
            "name = \"t\"\n[star]\nmass_msun = 1.0\nmass_err_msun = 0.05\n[[data]]\nfile = \"{}\"\n[settings]\ntrend = 0\nmax_signals = 1\nsample = true\ndraws = 2000\n",
            repo("tests/reference/twobody/one_planet.csv")
        ),
    )
    .unwrap();
    let (run_dir, doc) = run(target.to_str().unwrap(), dir.path());
    let corner = read(&run_dir.join("corner.svg"));
    assert_eq!(count(&corner, r#"class="hist""#), 4, "P, K, e, m sin i");
    assert_eq!(count(&corner, r#"class="pair""#), 6);
    assert!(corner.contains("K (b) [m/s]"));
    let html = read(&run_dir.join("report.html"));
    check_page(&html);
    assert!(html.contains("Sampler: <span class=\"verdict\">converged</span>"));
    let n_params = doc["diagnostics"]["parameters"].as_array().unwrap().len();
    assert!(n_params > 0);

    // The audit block is shown with its tables: per planet the alias candidates (when
    // tested) and the model variants, each with a header row.
    let verdict = doc["audit"]["verdict"].as_str().unwrap();
    assert!(html.contains(&format!("<span class=\"verdict\">{verdict}</span>")));
    let audit = &html[html.find("id=\"audit\"").unwrap()..html.find("id=\"diagnostics\"").unwrap()];
    let rows: usize = doc["audit"]["planets"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            let aliases = if p["aliases"]["tested"] == true {
                1 + p["aliases"]["candidates"].as_array().unwrap().len()
            } else {
                0
            };
            aliases + 1 + p["variants"].as_array().unwrap().len()
        })
        .sum();
    assert_eq!(count(audit, "<tr>"), rows);
    // Without an audit block, the page says so.
    let mut without = doc.clone();
    without.as_object_mut().unwrap().remove("audit");
    fs::write(
        run_dir.join("results.json"),
        serde_json::to_string_pretty(&without).unwrap(),
    )
    .unwrap();
    let out = heft(&["render", run_dir.to_str().unwrap()]);
    assert!(out.status.success());
    let html = read(&run_dir.join("report.html"));
    check_page(&html);
    assert!(html.contains("No audit in this run."));
}

/// A folder without results, or with a corrupt results.json or data table, is bad input:
/// exit 2 and a message naming the file and the problem.
#[test]
fn render_names_the_bad_file() {
    let dir = tempfile::tempdir().unwrap();
    let empty = dir.path().join("empty");
    fs::create_dir(&empty).unwrap();
    let out = heft(&["render", empty.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(err.contains("results.json"), "{err}");

    fs::write(empty.join("results.json"), "{\"schema\": ").unwrap();
    let out = heft(&["render", empty.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("results.json: not valid JSON"));

    fs::write(
        empty.join("results.json"),
        "{\"schema\": \"heft-results/1\"}",
    )
    .unwrap();
    fs::write(
        empty.join("data_used.csv"),
        "file,row,instrument,time_bjd,rv_mps,rv_err_mps,model_mps,residual_mps\na.csv,2,A,2460000.5,1.0,oops,0.5,0.5\n",
    )
    .unwrap();
    let out = heft(&["render", empty.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(
        err.contains("data_used.csv: line 2") && err.contains("rv_err_mps"),
        "{err}"
    );
    let out = heft(&["render", dir.path().join("nowhere").to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
}

/// With an activity GP (target file `settings.activity`): `activity_model.csv`, the
/// residuals in `data_used.csv` with the activity model removed (residual = rv − model −
/// activity), the activity figure (one marker per epoch, the model line and its ±1σ
/// lines) on the page, and `heft render` rebuilds it from the saved files.
#[test]
fn activity_report_shows_the_model_and_removes_it() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("active.toml");
    fs::write(
        &target,
        format!(
            "name = \"Invented active star\"\n[star]\nmass_msun = 0.8\nrotation_d = 6.1\n\
             [[data]]\nfile = \"{}\"\n[settings]\nactivity = \"oscillator\"\naudit = false\nmax_signals = 1\n",
            repo("tests/reference/gls_data.csv")
        ),
    )
    .unwrap();
    let (run_dir, doc) = run(target.to_str().unwrap(), dir.path());
    assert_eq!(doc["activity"]["model"], "oscillator");
    let n_points = doc["data"]["n_points"].as_u64().unwrap() as usize;
    let used = read(&run_dir.join("data_used.csv"));
    assert!(used.lines().next().unwrap().starts_with(
        "file,row,instrument,time_bjd,rv_mps,rv_err_mps,model_mps,residual_mps,status,\
         n_combined,activity_mps"
    ));
    // rv − model − residual − activity = 0 (columns 4, 6, 7 and 10).
    for line in used.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let num = |i: usize| f[i].parse::<f64>().unwrap();
        let (rv, model, residual, activity) = (num(4), num(6), num(7), num(10));
        assert!(
            (rv - model - residual - activity).abs() < 1e-9 * rv.abs().max(1.0),
            "{line}"
        );
    }
    let curve = read(&run_dir.join("activity_model.csv"));
    assert!(curve.starts_with("time_bjd,mean_mps,sd_mps\n"));
    let svg = read(&run_dir.join("activity.svg"));
    assert_eq!(count(&svg, r#"class="epoch""#), n_points);
    assert_eq!(count(&svg, r#"class="activity-model""#), 1);
    assert_eq!(count(&svg, r#"class="activity-band""#), 2);
    has_axes(&svg, &["RV − planets [m/s]"]);
    let html = read(&run_dir.join("report.html"));
    assert!(html.contains("activity model removed"));
    check_page(&html);
    fs::remove_file(run_dir.join("activity.svg")).unwrap();
    let out = heft(&["render", run_dir.to_str().unwrap()]);
    assert!(out.status.success());
    assert_eq!(read(&run_dir.join("activity.svg")), svg);
}
