//! What is done to the data between reading and fitting, and the record of it: instrument
//! eras (separate offsets and jitters before and after a hardware change), transit windows
//! (points taken in transit flagged and, by default, left out), binning within a night
//! and outliers flagged against the fitted model. Every change lands in a [`DataLog`] that
//! results.json, the summary and `data_used.csv` show.
//!
//! Entry points: [`prepare`] (eras, transit windows, binning, in that order) and
//! [`flag_outliers`] (one round against a fit; the pipeline iterates it with the fit).

use serde::Serialize;

use crate::data::{Indicator, Origin, RvSet, median};
use crate::fit::{InstrumentEstimate, OffsetPrior, PlanetEstimate};
use crate::model::Params;

/// Median absolute deviation of a normal sample divided by its standard deviation's
/// estimate: σ ≈ 1.4826 MAD (common practice; 1/Φ⁻¹(3/4)).
const MAD_TO_SIGMA: f64 = 1.482_602_218_505_602;

/// An instrument whose hardware changed: one era per interval between the split times.
#[derive(Clone, Debug, PartialEq)]
pub struct Era {
    /// Instrument name as in the data.
    pub instrument: String,
    /// Times of the changes, full BJD_TDB, increasing.
    pub splits_bjd: Vec<f64>,
    /// Name of each era (one more than splits).
    pub names: Vec<String>,
}

/// A transiting planet's ephemeris and transit duration.
#[derive(Clone, Debug, PartialEq)]
pub struct TransitWindow {
    /// Planet label.
    pub label: String,
    /// Period, days.
    pub period_d: f64,
    /// Mid-transit time, full BJD_TDB.
    pub tc_bjd: f64,
    /// Total duration (first to fourth contact), days.
    pub duration_d: f64,
}

/// What [`prepare`] does.
#[derive(Clone, Debug, PartialEq)]
pub struct Preparation {
    /// Instrument eras.
    pub eras: Vec<Era>,
    /// Transit windows.
    pub windows: Vec<TransitWindow>,
    /// Leave points inside a transit window out of the fit (else they are only flagged).
    pub exclude_in_transit: bool,
    /// Combine the points of one instrument within this many days (e.g. 0.5 for a night).
    pub bin_window_d: Option<f64>,
}

/// A data point flagged by a preparation step.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Flagged {
    /// Input file name (without folder).
    pub file: String,
    /// 1-based line (text) or row (Parquet) in that file; for a binned point, its first.
    pub row: usize,
    /// Time, full BJD_TDB.
    pub time_d: f64,
    /// Instrument (era) name.
    pub instrument: String,
    /// Radial velocity, m/s.
    pub rv_mps: f64,
    /// Its error, m/s.
    pub err_mps: f64,
    /// Outliers: normalised residual `(z − median z)/(1.4826 MAD)`, where
    /// `z = r/√(σ² + s²)` (absent for in-transit points).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub residual_sigma: Option<f64>,
    /// In-transit points: label of the transiting planet.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub planet: Option<String>,
    /// Whether the point was left out of the fit.
    pub excluded: bool,
}

/// One instrument split into eras.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct EraSplit {
    /// Instrument name in the input.
    pub instrument: String,
    /// Times of the changes, full BJD_TDB.
    pub splits_bjd: Vec<f64>,
    /// Era names (separate offsets and jitters).
    pub names: Vec<String>,
    /// Points in each era.
    pub n_points: Vec<usize>,
}

/// Several points combined into one.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Bin {
    /// Instrument (era) name.
    pub instrument: String,
    /// Inverse-variance weighted time, full BJD_TDB.
    pub time_d: f64,
    /// Combined error `(Σ 1/σ²)^(−1/2)`, m/s.
    pub err_mps: f64,
    /// The points combined: `(file name, row)`.
    pub rows: Vec<(String, usize)>,
}

/// The binning step.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Binning {
    /// Window, days.
    pub window_d: f64,
    /// How the combined values are formed.
    pub method: &'static str,
    /// Where the fitted jitter enters.
    pub jitter: &'static str,
    /// Points before binning.
    pub n_before: usize,
    /// Points after binning.
    pub n_after: usize,
    /// Every bin of more than one point.
    pub bins: Vec<Bin>,
    /// The same model fitted to the unbinned points, when asked for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unbinned_fit: Option<Comparison>,
}

/// A fit of the same model to other data, side by side with the run's own.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Comparison {
    /// Points fitted.
    pub n_points: usize,
    /// Planets (maximum likelihood, curvature errors).
    pub planets: Vec<PlanetEstimate>,
    /// Instruments.
    pub instruments: Vec<InstrumentEstimate>,
}

/// How outliers are treated.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum OutlierMode {
    /// Flag against the fit, leave out, refit, until none is flagged.
    #[default]
    Clip,
    /// Flag, keep, and fit under a Student-t likelihood.
    StudentT,
    /// Flag and keep under the Gaussian likelihood.
    Keep,
}

/// How outliers are looked for and treated.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OutlierPolicy {
    /// Treatment.
    pub mode: OutlierMode,
    /// Flag above this many robust standard deviations (default 5).
    pub threshold_sigma: f64,
    /// Degrees of freedom of the Student-t likelihood (default 4).
    pub dof: f64,
    /// Fit the degrees of freedom instead (the grid value of largest profile likelihood).
    pub fit_dof: bool,
}

/// Degrees of freedom tried when they are fitted: from Cauchy-like tails (1) to nearly
/// Gaussian (100).
pub const DOF_GRID: [f64; 10] = [1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 10.0, 20.0, 50.0, 100.0];

impl Default for OutlierPolicy {
    fn default() -> Self {
        OutlierPolicy {
            mode: OutlierMode::Clip,
            threshold_sigma: 5.0,
            dof: 4.0,
            fit_dof: false,
        }
    }
}

/// The outlier step.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct OutlierLog {
    /// Treatment.
    pub mode: OutlierMode,
    /// A point is flagged above this many robust standard deviations.
    pub threshold_sigma: f64,
    /// Degrees of freedom of the Student-t likelihood (mode `student-t`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dof: Option<f64>,
    /// When the degrees of freedom were fitted: `[ν, ln L]` of each grid value, the planets
    /// of the first fit held at their starting values for each refit.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub dof_profile: Vec<[f64; 2]>,
    /// Fits made (each round flags against the previous fit).
    pub rounds: usize,
}

/// Everything done to the data between reading and the final fit.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct DataLog {
    /// Points read.
    pub n_read: usize,
    /// Points in the final fit.
    pub n_fitted: usize,
    /// Instruments split into eras.
    pub eras: Vec<EraSplit>,
    /// Points inside a transit window.
    pub in_transit: Vec<Flagged>,
    /// Binning, when asked for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub binning: Option<Binning>,
    /// Outlier settings and rounds (the points are in [`DataLog::outliers`]).
    pub outlier_search: OutlierLog,
    /// Every point flagged as an outlier (in results.json at the top level, `outliers`).
    #[serde(skip)]
    pub outliers: Vec<Flagged>,
    /// The points read but not fitted (in-transit and clipped), for `data_used.csv`.
    #[serde(skip)]
    pub left_out: Vec<(RvSet, &'static str)>,
}

impl DataLog {
    /// The log of `n_read` points read and not changed yet.
    pub fn new(n_read: usize) -> DataLog {
        DataLog {
            n_read,
            n_fitted: n_read,
            ..DataLog::default()
        }
    }

    /// The fitted points with the clipped outliers put back (for the audit's Student-t
    /// comparison); `None` when nothing was clipped.
    pub fn before_clipping(&self, fitted: &RvSet) -> Option<RvSet> {
        let (clipped, _) = self.left_out.iter().find(|(_, why)| *why == OUTLIER)?;
        Some(concat(fitted, clipped))
    }
}

/// Status of a clipped outlier in `data_used.csv`.
pub const OUTLIER: &str = "outlier";
/// Status of an excluded in-transit point in `data_used.csv`.
pub const IN_TRANSIT: &str = "in-transit";

/// Why the preparation could not be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PrepError {
    /// An era or offset constraint names an instrument the data do not have.
    #[error("{key}: instrument '{name}' is not in the data (instruments: {have})")]
    UnknownInstrument {
        /// The target-file table, e.g. `era`.
        key: &'static str,
        /// The name given.
        name: String,
        /// The data's instruments.
        have: String,
    },
    /// Eras left an instrument era without points, or removed every point.
    #[error("{0}")]
    Empty(String),
}

/// File name (without folder) of point `i`'s origin.
fn file_name(set: &RvSet, o: Origin) -> String {
    set.files.get(o.file).map_or(String::new(), |f| {
        f.file_name()
            .map_or(String::new(), |n| n.to_string_lossy().into_owned())
    })
}

/// Point `i` of `set` as a flagged point.
fn flagged(set: &RvSet, i: usize, excluded: bool) -> Flagged {
    Flagged {
        file: file_name(set, set.origin[i]),
        row: set.origin[i].row,
        time_d: set.epoch_bjd + set.time_d[i],
        instrument: set.instruments[set.instrument[i]].clone(),
        rv_mps: set.rv_mps[i],
        err_mps: set.err_mps[i],
        residual_sigma: None,
        planet: None,
        excluded,
    }
}

/// The points of `a` followed by those of `b` (same instruments and epoch), sorted by time.
fn concat(a: &RvSet, b: &RvSet) -> RvSet {
    let mut all = a.clone();
    all.time_d.extend(&b.time_d);
    all.rv_mps.extend(&b.rv_mps);
    all.err_mps.extend(&b.err_mps);
    all.instrument.extend(&b.instrument);
    all.origin.extend(&b.origin);
    for (x, y) in all.indicators.iter_mut().zip(&b.indicators) {
        x.values.extend(&y.values);
    }
    let mut order: Vec<usize> = (0..all.len()).collect();
    order.sort_by(|&i, &j| all.time_d[i].total_cmp(&all.time_d[j]));
    all.select(&order)
}

/// Checks that every instrument an offset constraint names is in `set` (after the eras).
///
/// # Errors
/// [`PrepError::UnknownInstrument`] for the first one that is not.
pub fn check_offset_priors(set: &RvSet, priors: &[OffsetPrior]) -> Result<(), PrepError> {
    let unknown = priors
        .iter()
        .flat_map(|p| p.instruments.iter())
        .find(|n| !set.instruments.contains(n));
    match unknown {
        Some(name) => Err(PrepError::UnknownInstrument {
            key: "offset_prior",
            name: name.clone(),
            have: set.instruments.join(", "),
        }),
        None => Ok(()),
    }
}

/// Splits `set` into the points at `drop` and the rest.
fn split_off(set: &RvSet, drop: &[bool]) -> (RvSet, RvSet) {
    let (out, keep): (Vec<usize>, Vec<usize>) = (0..set.len()).partition(|&i| drop[i]);
    (set.select(&keep), set.select(&out))
}

/// Applies the eras, transit windows and binning of `prep` to `set`, and records them.
///
/// # Errors
/// [`PrepError`] for an era of an unknown instrument, an era without points, or no point
/// left to fit.
pub fn prepare(set: &RvSet, prep: &Preparation) -> Result<(RvSet, DataLog), PrepError> {
    let mut log = DataLog::new(set.len());
    let mut set = split_eras(set, &prep.eras, &mut log)?;
    let drop: Vec<bool> = (0..set.len())
        .map(|i| {
            let t = set.epoch_bjd + set.time_d[i];
            let hit = prep.windows.iter().find(|w| {
                let phase = (t - w.tc_bjd) / w.period_d;
                (phase - phase.round()).abs() * w.period_d < 0.5 * w.duration_d
            });
            if let Some(w) = hit {
                let mut f = flagged(&set, i, prep.exclude_in_transit);
                f.planet = Some(w.label.clone());
                log.in_transit.push(f);
            }
            hit.is_some() && prep.exclude_in_transit
        })
        .collect();
    if drop.iter().any(|&d| d) {
        let (keep, out) = split_off(&set, &drop);
        log.left_out.push((out, IN_TRANSIT));
        set = keep;
    }
    if let Some(window) = prep.bin_window_d {
        let (binned, binning) = bin(&set, window);
        log.binning = Some(binning);
        set = binned;
    }
    if set.is_empty() {
        return Err(PrepError::Empty(
            "no data point is left after the transit windows".into(),
        ));
    }
    log.n_fitted = set.len();
    Ok((set, log))
}

/// Renames the points of each era's instrument after their era.
fn split_eras(set: &RvSet, eras: &[Era], log: &mut DataLog) -> Result<RvSet, PrepError> {
    let mut names: Vec<String> = Vec::new();
    // For each old instrument, the new index of each of its eras.
    let mut map: Vec<Vec<usize>> = Vec::new();
    for inst in &set.instruments {
        let first = names.len();
        match eras.iter().find(|e| &e.instrument == inst) {
            Some(e) => names.extend(e.names.iter().cloned()),
            None => names.push(inst.clone()),
        }
        map.push((first..names.len()).collect());
    }
    if let Some(e) = eras
        .iter()
        .find(|e| !set.instruments.contains(&e.instrument))
    {
        return Err(PrepError::UnknownInstrument {
            key: "era",
            name: e.instrument.clone(),
            have: set.instruments.join(", "),
        });
    }
    let mut out = set.clone();
    for i in 0..set.len() {
        let k = set.instrument[i];
        let t = set.epoch_bjd + set.time_d[i];
        let era = eras
            .iter()
            .find(|e| e.instrument == set.instruments[k])
            .map_or(0, |e| e.splits_bjd.iter().filter(|&&s| t >= s).count());
        out.instrument[i] = map[k][era];
    }
    out.instruments = names;
    for e in eras {
        let k = set.instruments.iter().position(|n| n == &e.instrument);
        let n_points: Vec<usize> = k.map_or(Vec::new(), |k| {
            map[k]
                .iter()
                .map(|&j| out.instrument.iter().filter(|&&x| x == j).count())
                .collect()
        });
        if let Some(p) = n_points.iter().position(|&n| n == 0) {
            return Err(PrepError::Empty(format!(
                "era '{}' of instrument '{}' has no data points",
                e.names[p], e.instrument
            )));
        }
        log.eras.push(EraSplit {
            instrument: e.instrument.clone(),
            splits_bjd: e.splits_bjd.clone(),
            names: e.names.clone(),
            n_points,
        });
    }
    Ok(out)
}

/// Combines the points of each instrument that fall within `window_d` days of the first
/// point of their group: RV, time and indicators are inverse-variance weighted means, the
/// error is `(Σ 1/σ²)^(−1/2)` (σ/√n for n equal errors; common practice). The jitter is
/// fitted afterwards and added to the combined error.
pub fn bin(set: &RvSet, window_d: f64) -> (RvSet, Binning) {
    let mut groups: Vec<Vec<usize>> = Vec::new();
    let mut open: Vec<Option<usize>> = vec![None; set.n_instruments()];
    for i in 0..set.len() {
        let k = set.instrument[i];
        match open[k] {
            Some(g) if set.time_d[i] - set.time_d[groups[g][0]] < window_d => groups[g].push(i),
            _ => {
                open[k] = Some(groups.len());
                groups.push(vec![i]);
            }
        }
    }
    let mean = |values: &[f64], g: &[usize]| -> f64 {
        let (mut sw, mut swx) = (0.0, 0.0);
        for &i in g.iter().filter(|&&i| values[i].is_finite()) {
            let w = set.err_mps[i].powi(-2);
            sw += w;
            swx += w * values[i];
        }
        if sw > 0.0 { swx / sw } else { f64::NAN }
    };
    let combined_err = |g: &[usize]| -> f64 {
        g.iter()
            .map(|&i| set.err_mps[i].powi(-2))
            .sum::<f64>()
            .powf(-0.5)
    };
    let mut out = RvSet {
        time_d: groups.iter().map(|g| mean(&set.time_d, g)).collect(),
        rv_mps: groups.iter().map(|g| mean(&set.rv_mps, g)).collect(),
        err_mps: groups.iter().map(|g| combined_err(g)).collect(),
        instrument: groups.iter().map(|g| set.instrument[g[0]]).collect(),
        origin: groups.iter().map(|g| set.origin[g[0]]).collect(),
        indicators: set
            .indicators
            .iter()
            .map(|ind| Indicator {
                name: ind.name.clone(),
                values: groups.iter().map(|g| mean(&ind.values, g)).collect(),
            })
            .collect(),
        ..set.clone()
    };
    let mut order: Vec<usize> = (0..out.len()).collect();
    order.sort_by(|&a, &b| out.time_d[a].total_cmp(&out.time_d[b]));
    out = out.select(&order);
    let bins = order
        .iter()
        .map(|&g| &groups[g])
        .filter(|members| members.len() > 1)
        .map(|members| Bin {
            instrument: set.instruments[set.instrument[members[0]]].clone(),
            time_d: set.epoch_bjd + mean(&set.time_d, members),
            err_mps: combined_err(members),
            rows: members
                .iter()
                .map(|&i| (file_name(set, set.origin[i]), set.origin[i].row))
                .collect(),
        })
        .collect();
    let binning = Binning {
        window_d,
        method: "inverse-variance weighted mean of RV, time and indicators; error (Σ 1/σ²)^(-1/2)",
        jitter: "fitted after binning: added in quadrature to each binned error",
        n_before: set.len(),
        n_after: out.len(),
        bins,
        unbinned_fit: None,
    };
    (out, binning)
}

/// One round of outlier flagging: the points whose normalised residual
/// `z = r/√(σ² + s²)` under `params` lies more than `threshold` robust standard deviations
/// (1.4826 × the median absolute deviation of z) from the median z, with that distance in
/// robust standard deviations (signed). Nothing is flagged when the deviation is zero.
pub fn flag_outliers(set: &RvSet, params: &Params, threshold: f64) -> Vec<(usize, f64)> {
    let r = params.residuals(set);
    let z: Vec<f64> = (0..set.len())
        .map(|i| r[i] / set.err_mps[i].hypot(params.jitters_mps[set.instrument[i]]))
        .collect();
    let med = median(&z);
    let scale = MAD_TO_SIGMA * median(&z.iter().map(|x| (x - med).abs()).collect::<Vec<_>>());
    if !(scale > 0.0) {
        return Vec::new();
    }
    z.iter()
        .enumerate()
        .map(|(i, x)| (i, (x - med) / scale))
        .filter(|(_, s)| s.abs() > threshold)
        .collect()
}

/// Records the points `flags` of `set` (from [`flag_outliers`]) in `log`; when `clip`,
/// returns `set` without them (and keeps them for `data_used.csv`).
pub fn record_outliers(
    set: &RvSet,
    flags: &[(usize, f64)],
    clip: bool,
    log: &mut DataLog,
) -> RvSet {
    let mut drop = vec![false; set.len()];
    for &(i, s) in flags {
        let mut f = flagged(set, i, clip);
        f.residual_sigma = Some(s);
        log.outliers.push(f);
        drop[i] = true;
    }
    log.outliers.sort_by(|a, b| a.time_d.total_cmp(&b.time_d));
    if !clip || flags.is_empty() {
        return set.clone();
    }
    let (keep, out) = split_off(set, &drop);
    match log.left_out.iter_mut().find(|(_, why)| *why == OUTLIER) {
        Some((before, _)) => *before = concat(before, &out),
        None => log.left_out.push((out, OUTLIER)),
    }
    log.n_fitted = keep.len();
    keep
}

#[cfg(test)]
mod tests {
    use super::*;

    fn set(times: &[f64], errs: &[f64], inst: &[usize]) -> RvSet {
        let n = times.len();
        RvSet::from_columns(
            "t.csv",
            2_460_000.0,
            times.to_vec(),
            (0..n).map(|i| i as f64).collect(),
            errs.to_vec(),
            inst.to_vec(),
            vec!["a".into(), "b".into()],
        )
    }

    /// n equal errors σ in one night combine to σ/√n (common practice: the error of an
    /// inverse-variance weighted mean, e.g. Taylor, An Introduction to Error Analysis,
    /// 2nd ed., eq. 7.12); unequal ones to (Σ 1/σ²)^(−1/2).
    #[test]
    fn combined_error_of_a_night() {
        let s = set(
            &[0.0, 0.1, 0.2, 0.3, 5.0, 5.1, 5.2],
            &[2.0, 2.0, 2.0, 2.0, 1.0, 2.0, 3.0],
            &[0, 0, 0, 0, 0, 0, 1],
        );
        let (b, log) = bin(&s, 0.5);
        assert_eq!(b.len(), 3);
        assert!((b.err_mps[0] - 2.0 / 4f64.sqrt()).abs() < 1e-12);
        assert!((b.rv_mps[0] - 1.5).abs() < 1e-12);
        let expect = (1.0 + 0.25f64).powf(-0.5);
        assert!((b.err_mps[1] - expect).abs() < 1e-12);
        // Weighted mean (4·4 + 1·5)/5 of RVs 4 and 5 with weights 1 and 1/4.
        assert!((b.rv_mps[1] - (4.0 + 0.25 * 5.0) / 1.25).abs() < 1e-12);
        // Instrument b's point stays alone.
        assert_eq!(b.err_mps[2], 3.0);
        assert_eq!(log.bins.len(), 2);
        assert_eq!(log.bins[0].rows.len(), 4);
    }

    #[test]
    fn eras_and_transit_windows() {
        let s = set(&[0.0, 1.0, 2.0, 3.0], &[1.0; 4], &[0, 0, 0, 1]);
        let prep = Preparation {
            eras: vec![Era {
                instrument: "a".into(),
                splits_bjd: vec![2_460_001.5],
                names: vec!["a-1".into(), "a-2".into()],
            }],
            windows: vec![TransitWindow {
                label: "b".into(),
                period_d: 10.0,
                tc_bjd: 2_460_000.0 + 20.95,
                duration_d: 0.2,
            }],
            exclude_in_transit: true,
            bin_window_d: None,
        };
        let (out, log) = prepare(&s, &prep).expect("prepared");
        assert_eq!(out.instruments, ["a-1", "a-2", "b"]);
        assert_eq!(log.in_transit.len(), 1);
        assert_eq!(log.in_transit[0].time_d, 2_460_001.0);
        assert_eq!(out.len(), 3);
        assert_eq!(log.eras[0].n_points, [2, 1]);
        let bad = Preparation {
            eras: vec![Era {
                instrument: "c".into(),
                ..prep.eras[0].clone()
            }],
            ..prep
        };
        let e = prepare(&s, &bad).unwrap_err();
        assert_eq!(
            e.to_string(),
            "era: instrument 'c' is not in the data (instruments: a, b)"
        );
    }
}
