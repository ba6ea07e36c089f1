//! Jackknife: refits without each instrument, each observing season, and a seeded sample
//! of single epochs.
//!
//! A subset's K is compared with the full fit's by the Hausman (1978, Econometrica 46,
//! 1251) statistic for nested efficient estimators, `z = ΔK / sqrt(σ_sub² − σ_full²)`
//! (the difference's variance floored at (0.1 σ_full)²); a subset is flagged when |z|
//! exceeds the setting. A single epoch whose removal moves K by more than σ_K(full) has
//! undue influence.

use rand::seq::index::sample;
use rayon::prelude::*;
use serde::Serialize;

use super::PlanetValues;
use super::activity::Season;
use super::common::{Refitter, Stream, rng};
use crate::data::RvSet;
use crate::fit::{Fit, fit};

/// One refit on a subset, as seen by one planet.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct JackknifeFit {
    /// `instrument`, `season` or `epoch`.
    pub kind: &'static str,
    /// What was dropped, e.g. `Quill`, `season 2`, `quill.csv:17`.
    pub dropped: String,
    /// The same in words: `without instrument Quill`, `without season 2`,
    /// `without epoch quill.csv:17`.
    pub description: String,
    /// Points left.
    pub n_points: usize,
    /// The planet in the refit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub planet: Option<PlanetValues>,
    /// Hausman z of the change in K (instrument and season) or ΔK/σ_K (epoch).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub k_shift_sigma: Option<f64>,
    /// Flagged as changing K beyond the setting (subsets) or unduly (epochs).
    pub flagged: bool,
}

/// The jackknife of one planet.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct Jackknife {
    /// Every refit.
    pub fits: Vec<JackknifeFit>,
    /// Lowest and highest K over the instrument and season refits, m/s.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub k_range_mps: Option<(f64, f64)>,
    /// Lowest and highest mass over them, Earth masses.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_range_mearth: Option<(f64, f64)>,
    /// Subsets that could not be refitted, with the reason.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
}

/// `set` without instrument `k`, the remaining instruments renumbered.
fn without_instrument(set: &RvSet, k: usize) -> RvSet {
    let idx: Vec<usize> = (0..set.len()).filter(|&j| set.instrument[j] != k).collect();
    let mut sub = set.select(&idx);
    sub.instruments.remove(k);
    for q in &mut sub.instrument {
        if *q > k {
            *q -= 1;
        }
    }
    sub
}

/// Refits on every subset and tabulates them for each base planet (same order).
pub fn jackknife(refit: &Refitter, seasons: &[Season]) -> Vec<Jackknife> {
    let set = refit.set;
    let mut subsets: Vec<(&'static str, String, RvSet)> = Vec::new();
    if set.n_instruments() > 1 {
        for (k, name) in set.instruments.iter().enumerate() {
            subsets.push(("instrument", name.clone(), without_instrument(set, k)));
        }
    }
    if seasons.len() > 1 {
        for (s, season) in seasons.iter().enumerate() {
            let idx: Vec<usize> = (0..set.len())
                .filter(|j| !season.indices().contains(j))
                .collect();
            subsets.push(("season", format!("season {s}"), set.select(&idx)));
        }
    }
    let n_epochs = refit.settings.jackknife_epochs.min(set.len());
    let mut r = rng(refit.settings.seed, Stream::Jackknife, 0);
    let mut chosen = sample(&mut r, set.len(), n_epochs).into_vec();
    chosen.sort_unstable();
    for j in chosen {
        let idx: Vec<usize> = (0..set.len()).filter(|&q| q != j).collect();
        let o = set.origin[j];
        let file = set.files[o.file].file_name().map_or_else(
            || set.files[o.file].display().to_string(),
            |f| f.to_string_lossy().into_owned(),
        );
        subsets.push(("epoch", format!("{file}:{}", o.row), set.select(&idx)));
    }
    let specs = refit.specs();
    let opts = refit.options();
    let fits: Vec<Result<Fit, String>> = subsets
        .par_iter()
        .map(|(_, _, sub)| fit(sub, &specs, &opts).map_err(|e| e.to_string()))
        .collect();
    (0..refit.base.planets.len())
        .map(|i| {
            let k0 = refit.base.planets[i].k_mps;
            let mut notes = Vec::new();
            let mut table = Vec::new();
            for ((kind, dropped, sub), f) in subsets.iter().zip(&fits) {
                let f = match f {
                    Ok(f) => f,
                    Err(e) => {
                        notes.push(format!("without {dropped}: {e}"));
                        continue;
                    }
                };
                let planet = refit.values(f, i);
                let k_shift_sigma = planet.as_ref().map(|p| {
                    let dk = p.k_mps.value - k0.value;
                    if *kind == "epoch" {
                        dk / k0.plus.max(1e-12)
                    } else {
                        let var =
                            (p.k_mps.plus.powi(2) - k0.plus.powi(2)).max((0.1 * k0.plus).powi(2));
                        dk / var.sqrt().max(1e-12)
                    }
                });
                let limit = if *kind == "epoch" {
                    1.0
                } else {
                    refit.settings.jackknife_sigma
                };
                let description = match *kind {
                    "season" => format!("without {dropped}"),
                    kind => format!("without {kind} {dropped}"),
                };
                table.push(JackknifeFit {
                    kind,
                    dropped: dropped.clone(),
                    description,
                    n_points: sub.len(),
                    flagged: k_shift_sigma.is_some_and(|z| z.abs() > limit),
                    planet,
                    k_shift_sigma,
                });
            }
            let groups: Vec<&PlanetValues> = table
                .iter()
                .filter(|t| t.kind != "epoch")
                .filter_map(|t| t.planet.as_ref())
                .collect();
            let range = |v: Vec<f64>| {
                (!v.is_empty()).then(|| {
                    v.iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
                            (lo.min(*x), hi.max(*x))
                        })
                })
            };
            Jackknife {
                k_range_mps: range(groups.iter().map(|p| p.k_mps.value).collect()),
                mass_range_mearth: range(
                    groups
                        .iter()
                        .filter_map(|p| p.mass_mearth.map(|m| m.value))
                        .collect(),
                ),
                fits: table,
                notes,
            }
        })
        .collect()
}
