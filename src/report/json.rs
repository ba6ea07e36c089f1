//! `results.json`: the machine-readable result of an analysis (design.md conventions:
//! every estimated quantity is `{"value", "minus", "plus"}`, keys carry their unit).

use serde_json::{Value, json};

use crate::fit::Fit;
use crate::pipeline::Analysis;

/// Schema tag of every results file.
pub const SCHEMA: &str = "heft-results/1";

/// The `fit` block: likelihood and information criteria.
fn fit_block(fit: &Fit) -> Value {
    json!({
        "method": "maximum likelihood (L-BFGS, several starts)",
        "uncertainties": "curvature of the likelihood at the optimum (inverse Hessian)",
        "log_likelihood": fit.log_likelihood,
        "bic": fit.bic(),
        "aic": fit.aic(),
        "n_points": fit.n_points,
        "n_params": fit.n_params,
        "orbit": fit.options.shape,
    })
}

/// The whole results document.
pub fn results_json(a: &Analysis) -> Value {
    let fit = &a.search.fit;
    let planets: Vec<Value> = fit
        .planets
        .iter()
        .zip(a.derived.iter().zip(&a.profiles))
        .map(|(p, (d, profile))| {
            let mut v = serde_json::to_value(p).unwrap_or(Value::Null);
            for extra in [
                d.as_ref().map(serde_json::to_value),
                profile.as_ref().map(serde_json::to_value),
            ]
            .into_iter()
            .flatten()
            {
                if let (Value::Object(map), Ok(Value::Object(extra))) = (&mut v, extra) {
                    map.extend(extra);
                }
            }
            v
        })
        .collect();
    let trend_names = ["trend_mps_per_yr", "curvature_mps_per_yr2"];
    let mut trend = serde_json::Map::new();
    trend.insert("order".into(), json!(fit.options.trend));
    trend.insert("reference_bjd".into(), json!(a.set.epoch_bjd));
    for (name, s) in trend_names.iter().zip(&fit.trend) {
        trend.insert((*name).into(), json!(s));
    }
    let search: Vec<Value> = a
        .search
        .steps
        .iter()
        .filter_map(|s| {
            s.peak.map(|p| {
                json!({"period_d": p.period, "power": p.power, "fap": p.fap, "accepted": s.accepted})
            })
        })
        .collect();
    let mut warnings = a.set.warnings.clone();
    warnings.extend(fit.warnings.iter().cloned());
    json!({
        "schema": SCHEMA,
        "software": {"name": "heft", "version": env!("CARGO_PKG_VERSION")},
        "target": a.name,
        "seed": a.seed,
        "draws": a.draws,
        "epoch_bjd": a.set.epoch_bjd,
        "data": {
            "n_points": a.set.len(),
            "baseline_d": a.set.baseline_d(),
            "files": a.set.files.iter().map(|f| f.display().to_string()).collect::<Vec<_>>(),
        },
        "planets": planets,
        "instruments": fit.instruments,
        "trend": trend,
        "fit": fit_block(fit),
        "search": search,
        "system": a.system,
        "priors": a.priors,
        "warnings": warnings,
    })
}
