//! What changed between two runs, read from their `results.json` documents (so runs made
//! by older versions compare too).

use std::fmt::Write;

use serde::Serialize;
use serde_json::Value;

/// Two planets are the same signal when their periods differ by less than this fraction.
const SAME_PERIOD: f64 = 0.02;
/// Quantities compared for each planet, in order of preference within each group.
const COMPARED: [&[&str]; 4] = [
    &["period_d"],
    &["k_mps"],
    &["mass_mearth", "msini_mearth"],
    &["density_gcc"],
];

/// One quantity before and after.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct QuantityChange {
    /// JSON key, e.g. `k_mps`.
    pub key: String,
    /// Value before, if the earlier run had it.
    pub before: Option<f64>,
    /// Value after.
    pub after: Option<f64>,
    /// (after − before) in units of the earlier run's 1σ.
    pub shift_sigma: Option<f64>,
}

/// One signal across the two runs.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlanetChange {
    /// Label in the earlier run.
    pub label_before: Option<String>,
    /// Label in the later run.
    pub label_after: Option<String>,
    /// `kept`, `appeared` or `vanished`.
    pub status: &'static str,
    /// Compared quantities.
    pub quantities: Vec<QuantityChange>,
    /// False-alarm probability of the signal's periodogram peak before and after.
    pub fap: (Option<f64>, Option<f64>),
}

/// Epochs of one instrument before and after.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct EpochCount {
    /// Instrument.
    pub instrument: String,
    /// Points before (0 when absent).
    pub before: u64,
    /// Points after.
    pub after: u64,
}

/// Differences between two runs.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Changes {
    /// Earlier run (folder name).
    pub before: String,
    /// Later run.
    pub after: String,
    /// Epochs per instrument.
    pub epochs: Vec<EpochCount>,
    /// Signals.
    pub planets: Vec<PlanetChange>,
    /// Audit verdict before and after, where the runs have one.
    pub verdict: (Option<String>, Option<String>),
}

fn value_of(v: &Value) -> Option<f64> {
    v.get("value").and_then(Value::as_f64)
}

fn sigma_of(v: &Value) -> Option<f64> {
    let (m, p) = (v.get("minus")?.as_f64()?, v.get("plus")?.as_f64()?);
    let s = 0.5 * (m + p);
    (s > 0.0).then_some(s)
}

fn planets(doc: &Value) -> Vec<&Value> {
    doc["planets"]
        .as_array()
        .map(|a| a.iter().collect())
        .unwrap_or_default()
}

fn period(p: &Value) -> Option<f64> {
    value_of(&p["period_d"])
}

/// FAP of the accepted search peak nearest this period.
fn fap_for(doc: &Value, period_d: f64) -> Option<f64> {
    doc["search"]
        .as_array()?
        .iter()
        .filter(|s| s["accepted"].as_bool() == Some(true))
        .filter_map(|s| Some((s["period_d"].as_f64()?, s["fap"].as_f64()?)))
        .filter(|(p, _)| (p - period_d).abs() < SAME_PERIOD * period_d)
        .map(|(_, f)| f)
        .next()
}

fn quantities(before: Option<&Value>, after: Option<&Value>) -> Vec<QuantityChange> {
    COMPARED
        .iter()
        .filter_map(|keys| {
            let pick = |p: Option<&Value>| {
                keys.iter().find_map(|k| {
                    p.and_then(|p| p.get(*k))
                        .filter(|v| !v.is_null())
                        .map(|v| (*k, v.clone()))
                })
            };
            let (b, a) = (pick(before), pick(after));
            let key = a.as_ref().or(b.as_ref())?.0;
            let (bv, av) = (
                b.as_ref().and_then(|x| value_of(&x.1)),
                a.as_ref().and_then(|x| value_of(&x.1)),
            );
            let shift = match (bv, av, b.as_ref().and_then(|x| sigma_of(&x.1))) {
                (Some(bv), Some(av), Some(s)) => Some((av - bv) / s),
                _ => None,
            };
            Some(QuantityChange {
                key: key.to_string(),
                before: bv,
                after: av,
                shift_sigma: shift,
            })
        })
        .collect()
}

fn label(p: &Value) -> Option<String> {
    p["label"].as_str().map(str::to_string)
}

/// Compares two results documents (`before` older).
pub fn compare(before_name: &str, before: &Value, after_name: &str, after: &Value) -> Changes {
    let count = |doc: &Value| -> Vec<(String, u64)> {
        doc["instruments"]
            .as_array()
            .map(|a| {
                a.iter()
                    .filter_map(|i| {
                        Some((i["name"].as_str()?.to_string(), i["n_points"].as_u64()?))
                    })
                    .collect()
            })
            .unwrap_or_default()
    };
    let (cb, ca) = (count(before), count(after));
    let mut names: Vec<String> = Vec::new();
    for (n, _) in cb.iter().chain(&ca) {
        if !names.contains(n) {
            names.push(n.clone());
        }
    }
    let epochs = names
        .into_iter()
        .map(|n| {
            let get = |c: &[(String, u64)]| c.iter().find(|(m, _)| *m == n).map_or(0, |x| x.1);
            EpochCount {
                before: get(&cb),
                after: get(&ca),
                instrument: n,
            }
        })
        .collect();

    let (pb, pa) = (planets(before), planets(after));
    let mut used = vec![false; pb.len()];
    let mut out = Vec::new();
    for a in &pa {
        let pa_period = period(a).unwrap_or(f64::NAN);
        let matched = pb
            .iter()
            .enumerate()
            .filter(|(j, b)| {
                !used[*j]
                    && period(b).is_some_and(|p| (p - pa_period).abs() < SAME_PERIOD * pa_period)
            })
            .min_by(|x, y| {
                let d = |b: &Value| (period(b).unwrap_or(f64::INFINITY) - pa_period).abs();
                d(x.1).total_cmp(&d(y.1))
            })
            .map(|(j, _)| j);
        if let Some(j) = matched {
            used[j] = true;
        }
        let b = matched.map(|j| pb[j]);
        out.push(PlanetChange {
            label_before: b.and_then(label),
            label_after: label(a),
            status: if b.is_some() { "kept" } else { "appeared" },
            quantities: quantities(b, Some(a)),
            fap: (
                b.and_then(period).and_then(|p| fap_for(before, p)),
                fap_for(after, pa_period),
            ),
        });
    }
    for (_, b) in pb.iter().enumerate().filter(|(j, _)| !used[*j]) {
        out.push(PlanetChange {
            label_before: label(b),
            label_after: None,
            status: "vanished",
            quantities: quantities(Some(b), None),
            fap: (period(b).and_then(|p| fap_for(before, p)), None),
        });
    }
    let verdict = |doc: &Value| doc["audit"]["verdict"].as_str().map(str::to_string);
    Changes {
        before: before_name.to_string(),
        after: after_name.to_string(),
        epochs,
        planets: out,
        verdict: (verdict(before), verdict(after)),
    }
}

fn num(v: Option<f64>) -> String {
    v.map_or("—".into(), |x| format!("{x:.6}"))
}

/// The changes as a readable table.
pub fn changes_text(c: &Changes) -> String {
    let mut s = format!(
        "changes from run {} to run {}\n\nepochs:\n",
        c.before, c.after
    );
    for e in &c.epochs {
        let _ = writeln!(
            s,
            "  {:<16} {:>5} → {:<5} ({:+})",
            e.instrument,
            e.before,
            e.after,
            e.after as i64 - e.before as i64
        );
    }
    let _ = writeln!(s, "\nsignals:");
    for p in &c.planets {
        let name = p
            .label_after
            .as_ref()
            .or(p.label_before.as_ref())
            .map_or("?", String::as_str);
        let _ = writeln!(s, "  {name}: {}", p.status);
        for q in &p.quantities {
            let shift = q
                .shift_sigma
                .map_or(String::new(), |z| format!("  shift {z:+.2} σ"));
            let _ = writeln!(
                s,
                "    {:<14} {:>16} → {:<16}{shift}",
                q.key,
                num(q.before),
                num(q.after)
            );
        }
        if p.fap.0.is_some() || p.fap.1.is_some() {
            let f = |x: Option<f64>| x.map_or("—".into(), |v| format!("{v:.2e}"));
            let _ = writeln!(
                s,
                "    {:<14} {:>16} → {:<16}",
                "FAP",
                f(p.fap.0),
                f(p.fap.1)
            );
        }
    }
    if c.verdict.0 != c.verdict.1 {
        let _ = writeln!(s, "\naudit verdict: {:?} → {:?}", c.verdict.0, c.verdict.1);
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn est(v: f64, s: f64) -> Value {
        json!({"value": v, "minus": s, "plus": s})
    }

    #[test]
    fn matches_signals_by_period_and_reports_shifts() {
        let before = json!({
            "instruments": [{"name": "A", "n_points": 40}],
            "planets": [
                {"label": "b", "period_d": est(10.0, 0.01), "k_mps": est(5.0, 0.5)},
                {"label": "c", "period_d": est(40.0, 0.1), "k_mps": est(3.0, 1.0)}
            ],
            "search": [{"period_d": 10.0, "fap": 1e-6, "accepted": true}]
        });
        let after = json!({
            "instruments": [{"name": "A", "n_points": 40}, {"name": "B", "n_points": 12}],
            "planets": [
                {"label": "b", "period_d": est(10.01, 0.005), "k_mps": est(6.0, 0.4)},
                {"label": "c", "period_d": est(3.1, 0.001), "k_mps": est(2.0, 0.3)}
            ],
            "search": [{"period_d": 10.01, "fap": 1e-9, "accepted": true}]
        });
        let c = compare("r1", &before, "r2", &after);
        assert_eq!(c.epochs.len(), 2);
        assert_eq!((c.epochs[1].before, c.epochs[1].after), (0, 12));
        let b = &c.planets[0];
        assert_eq!(b.status, "kept");
        let k = b.quantities.iter().find(|q| q.key == "k_mps").unwrap();
        assert!((k.shift_sigma.unwrap() - 2.0).abs() < 1e-12);
        assert_eq!(b.fap, (Some(1e-6), Some(1e-9)));
        assert_eq!(c.planets[1].status, "appeared");
        assert_eq!(c.planets[2].status, "vanished");
        assert!(changes_text(&c).contains("vanished"));
    }
}
