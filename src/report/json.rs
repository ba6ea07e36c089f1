//! `results.json`: the machine-readable result of an analysis (design.md conventions:
//! every estimated quantity is `{"value", "minus", "plus"}`, keys carry their unit).

use serde_json::{Value, json};

use crate::fit::Fit;
use crate::gp::Activity;
use crate::pipeline::Analysis;
use crate::sample::Posterior;

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

/// The `posterior` block: how the values were obtained from the draws.
fn posterior_block(p: &Posterior) -> Value {
    json!({
        "method": "affine-invariant ensemble sampler (Goodman & Weare 2010 stretch move)",
        "values": "median and 15.87/84.13 percentiles of the posterior draws",
        "mode_method": if p.modes.is_empty() {
            "the mode of the maximum-likelihood fit only; independent ensembles started from its curvature Gaussian"
        } else {
            "one set of ensembles per period mode (the maximum-likelihood fit and each alias within 10 in ln L), weighted by importance-sampled evidence; values from the most probable mode"
        },
        "modes": p.modes,
        "n_draws": p.theta.len(),
    })
}

/// The `model` block of results.json: the maximum-likelihood parameters the report's
/// curves are drawn with (planets with `period_d`, `k_mps`, `ecc`, `omega_deg`,
/// `tc_bjd`; instruments with `offset_mps`, `jitter_mps`; trend coefficients in
/// m/s/yr^k).
fn model_block(a: &Analysis) -> Value {
    let fit = &a.search.fit;
    let planets: Vec<Value> = fit
        .planets
        .iter()
        .zip(&fit.params.planets)
        .map(|(p, o)| {
            json!({
                "label": p.label,
                "period_d": o.period_d(),
                "k_mps": o.k_mps(),
                "ecc": o.ecc(),
                "omega_deg": o.omega_rad().to_degrees().rem_euclid(360.0),
                "tc_bjd": o.tc_d() + a.set.epoch_bjd,
            })
        })
        .collect();
    let instruments: Vec<Value> = a
        .set
        .instruments
        .iter()
        .enumerate()
        .map(|(k, name)| {
            json!({
                "name": name,
                "offset_mps": fit.params.offsets_mps[k],
                "jitter_mps": fit.params.jitters_mps[k],
            })
        })
        .collect();
    json!({
        "parameters": "maximum likelihood",
        "planets": planets,
        "instruments": instruments,
        "trend_coefficients": fit.params.trend,
    })
}

/// The `activity` block: the noise model, its rotation prior, the indicator it was
/// trained on with the trained priors, and its hyperparameters (from the draws with a
/// posterior, else the fit); `None` without a GP.
fn activity_block(analysis: &Analysis, post: Option<&Posterior>) -> Option<Value> {
    let fit = &analysis.search.fit;
    let a = fit.layout.activity.as_ref()?;
    let estimates = post.map_or(&fit.activity, |p| &p.activity);
    let mut parameters = serde_json::Map::new();
    for (key, s) in estimates {
        parameters.insert(key.clone(), json!(s));
    }
    let mut block = json!({
        "model": a.model,
        "rotation_prior_d": {"mean": a.rotation.0, "sd": a.rotation.1},
        "parameters": parameters,
    });
    if a.model == Activity::Joint
        && let Value::Object(map) = &mut block
    {
        let names: Vec<&str> = fit
            .options
            .joint_indicators
            .iter()
            .filter_map(|&c| analysis.set.indicators.get(c).map(|i| i.name.as_str()))
            .collect();
        map.insert("joint_indicators".into(), json!(names));
    }
    if let (Some(c), Value::Object(map)) = (fit.options.activity_indicator, &mut block) {
        let trained: serde_json::Map<String, Value> = a
            .model
            .keys()
            .iter()
            .zip(&a.trained)
            .filter_map(|(k, p)| p.map(|(m, sd)| (k.to_string(), json!({"mean": m, "sd": sd}))))
            .collect();
        map.insert(
            "trained_on".into(),
            json!(analysis.set.indicators.get(c).map(|i| i.name.clone())),
        );
        map.insert("trained_priors".into(), Value::Object(trained));
    }
    Some(block)
}

/// The whole results document. With posterior draws, planets, instruments and trend come
/// from the draws, and `posterior` and `diagnostics` are added.
pub fn results_json(a: &Analysis) -> Value {
    let fit = &a.search.fit;
    let post = a.posterior.as_ref();
    let estimates = post.map_or(&fit.planets, |p| &p.planets);
    let planets: Vec<Value> = estimates
        .iter()
        .zip(a.derived.iter().zip(&a.profiles))
        .enumerate()
        .map(|(i, (p, (d, profile)))| {
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
            if let Value::Object(map) = &mut v {
                if let Some(s) = a.signals.get(i) {
                    map.insert("significance".into(), json!(s));
                }
                if let Some(det) = post.and_then(|p| p.detections.get(i)) {
                    map.insert("detection".into(), json!(det));
                }
            }
            v
        })
        .collect();
    let trend_names = ["trend_mps_per_yr", "curvature_mps_per_yr2"];
    let mut trend = serde_json::Map::new();
    trend.insert("order".into(), json!(fit.options.trend));
    trend.insert("reference_bjd".into(), json!(a.set.epoch_bjd));
    for (name, s) in trend_names
        .iter()
        .zip(post.map_or(&fit.trend, |p| &p.trend))
    {
        trend.insert((*name).into(), json!(s));
    }
    let search: Vec<Value> = a
        .search
        .steps
        .iter()
        .filter_map(|s| {
            s.peak.map(|p| {
                let mut v = json!({"period_d": p.period, "power": p.power, "fap": p.fap, "accepted": s.accepted});
                if let Value::Object(map) = &mut v {
                    if let Some(d) = s.activity_delta_bic {
                        map.insert("activity_delta_bic".into(), json!(d));
                    }
                    if !s.activity_rejected.is_empty() {
                        let rejected: Vec<Value> = s
                            .activity_rejected
                            .iter()
                            .map(|(p, d)| json!({"period_d": p, "delta_bic": d}))
                            .collect();
                        map.insert("activity_rejected".into(), json!(rejected));
                    }
                }
                v
            })
        })
        .collect();
    let indicator_terms: Vec<Value> = fit
        .regressors
        .iter()
        .enumerate()
        .filter_map(|(j, s)| {
            let at = fit.layout.index(crate::fit::Role::Regressor(j))?;
            Some(json!({"parameter": fit.names[at], "coefficient": s}))
        })
        .collect();
    let mut warnings = a.set.warnings.clone();
    warnings.extend(fit.warnings.iter().cloned());
    if let Some(p) = post {
        warnings.extend(p.warnings.iter().cloned());
        if !p.chains.diagnostics.converged {
            warnings.push(format!("the sampler {}", p.chains.diagnostics.reason));
        }
    }
    let mut doc = json!({
        "schema": SCHEMA,
        "software": {"name": "heft", "version": env!("CARGO_PKG_VERSION")},
        "target": a.name,
        "seed": a.seed,
        "draws": a.draws,
        "epoch_bjd": a.set.epoch_bjd,
        "data": {
            "n_read": a.data_log.n_read,
            "n_points": a.set.len(),
            "baseline_d": a.set.baseline_d(),
            "files": a.set.files.iter().map(|f| f.display().to_string()).collect::<Vec<_>>(),
        },
        "planets": planets,
        "instruments": post.map_or(&fit.instruments, |p| &p.instruments),
        "trend": trend,
        "indicator_terms": indicator_terms,
        "fit": fit_block(fit),
        "model": model_block(a),
        "search": search,
        "system": a.system,
        "priors": a.priors,
        "data_changes": a.data_log,
        "outliers": a.data_log.outliers,
        "warnings": warnings,
    });
    if let (Some(p), Value::Object(map)) = (post, &mut doc) {
        map.insert("posterior".into(), posterior_block(p));
        map.insert("diagnostics".into(), json!(p.chains.diagnostics));
    }
    if let (Some(audit), Value::Object(map)) = (&a.audit, &mut doc) {
        map.insert("audit".into(), json!(audit));
    }
    if let (Some(budget), Value::Object(map)) = (&a.budget, &mut doc) {
        map.insert("time_budget".into(), json!(budget));
    }
    if let (Some(block), Value::Object(map)) = (activity_block(a, post), &mut doc) {
        map.insert("activity".into(), block);
    }
    if let (Some(from), Value::Object(map)) = (&a.warm_from, &mut doc) {
        map.insert(
            "warm_start".into(),
            json!({
                "from_run": from,
                "signals": a.search.warm_started,
                "fit_s": a.search.fit_s,
                "starts_spared": a.search.starts_spared,
                "estimated_saving_s": a.search.saved_s,
            }),
        );
    }
    doc
}

/// The output of `heft audit --json`: the results document with the audit's `verdict`
/// and its alias candidates at the top level (design.md contract): `aliases` lists every
/// candidate of every audited planet (the claimed periods included), each with its
/// `planet`, `period_d`, `delta_lnl` = ln L(alias) − ln L(claimed) and `k_mps`.
pub fn audit_json(a: &Analysis) -> Value {
    let mut doc = results_json(a);
    if let (Some(audit), Value::Object(map)) = (&a.audit, &mut doc) {
        let aliases: Vec<Value> = audit
            .planets
            .iter()
            .flat_map(|pa| {
                pa.aliases.candidates.iter().map(move |c| {
                    let mut v = json!(c);
                    if let Value::Object(m) = &mut v {
                        m.insert("planet".into(), json!(pa.label));
                        m.insert("claimed_period_d".into(), json!(pa.claimed_period_d));
                    }
                    v
                })
            })
            .collect();
        map.insert("verdict".into(), json!(audit.verdict));
        map.insert("aliases".into(), Value::Array(aliases));
    }
    doc
}
