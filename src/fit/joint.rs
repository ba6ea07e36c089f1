//! The joint activity model inside a fit ([`crate::gp::Activity::Joint`]): the RV
//! residuals and one or more activity-indicator series stacked into one GP problem, each
//! series a combination `a G + b G′` of one latent quasi-periodic process `G` and its
//! derivative (Rajpaul et al. 2015, MNRAS 452, 2269; [`crate::gp::JointKernel`]).
//!
//! Its block of θ ([`crate::fit::Role::Joint`]) holds, in order: the couplings
//! `(a, b)` of the RV (m/s, m/s·d) and of each indicator (indicator unit, unit·d); one
//! offset per indicator and instrument (indicator unit); one jitter per indicator and
//! instrument (indicator unit; the likelihood uses its absolute value). The indicators
//! carry no uncertainties of their own: each point gets a token error of
//! [`TOKEN_ERROR_FRACTION`] of its column's spread, beside the fitted jitter.

use crate::data::RvSet;
use crate::gp::{Coupling, GpError, JointKernel, JointPoints, Term};
use crate::model::Params;

/// Token error of an indicator point as a fraction of its column's standard deviation (a
/// choice of heft's: small beside any real scatter, which the fitted jitter takes, but
/// large enough to keep the stacked covariance well conditioned).
pub const TOKEN_ERROR_FRACTION: f64 = 0.05;

/// What the joint block of θ is and where the indicator points sit.
#[derive(Clone, Debug, PartialEq)]
pub struct JointLayout {
    /// Indicator columns (indices into the data's indicators) fitted with the RVs.
    pub columns: Vec<usize>,
    /// Token error of each column's points, in its unit.
    pub token_err: Vec<f64>,
    /// `(position in columns, instrument)` of each indicator group, which has its own
    /// offset and jitter: every pair with at least one value in the data.
    pub groups: Vec<(usize, usize)>,
    /// Starting value of each block entry.
    pub start: Vec<f64>,
    /// Natural scale of each block entry (for the optimiser).
    pub scale: Vec<f64>,
    /// Bounds of each entry's default sampling prior (uniform).
    pub prior_bounds: Vec<(f64, f64)>,
    /// The coupling (block index) whose sign is held positive in reported values and in
    /// the sampler ([`JointLayout::canonical`]); the first indicator's level until a fit
    /// picks the one farthest from zero relative to its scale
    /// ([`JointLayout::pick_sign_reference`]).
    pub sign_reference: usize,
    /// Name of each entry, e.g. `coupling.rv.level_mps`, `coupling.rv.slope_mps_d` (m/s × d),
    /// `coupling.width.slope_d` (the indicator's unit × d), `indicator_offset.width.Quill`.
    pub names: Vec<String>,
}

/// One entry of the joint block.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum JointEntry {
    /// Coupling `c` (`2s` the level, `2s + 1` the slope of series `s`, 0 = RV).
    Coupling(usize),
    /// Offset of group `g`.
    Offset(usize),
    /// Jitter of group `g`.
    Jitter(usize),
}

/// A stacked joint problem: every point's time (days), series (0 = RV, 1 + position in
/// `columns` = indicator), white variance and residual, RV points first in data order.
#[derive(Clone, Debug, Default)]
pub struct Stack {
    /// Times, days from the reference epoch.
    pub time_d: Vec<f64>,
    /// Series of each point.
    pub series: Vec<usize>,
    /// White variance of each point, in its series' unit squared.
    pub white: Vec<f64>,
    /// Residual of each point, in its series' unit.
    pub residual: Vec<f64>,
}

impl Stack {
    /// The points as a [`JointPoints`] problem.
    pub fn points(&self) -> JointPoints<'_> {
        JointPoints {
            time_d: &self.time_d,
            series: &self.series,
            white: &self.white,
        }
    }
}

/// Mean and standard deviation of `v`.
fn mean_sd(v: &[f64]) -> (f64, f64) {
    let n = v.len().max(1) as f64;
    let mean = v.iter().sum::<f64>() / n;
    let sd = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n).sqrt();
    (mean, sd)
}

impl JointLayout {
    /// The joint block for indicator `columns` of `set`, with RV scatter `rv_sd_mps`
    /// (about the instruments' means) and rotation period `rotation_d` (days).
    ///
    /// Starts: the RV level at 0.7 × the RV scatter and each indicator's level at 0.7 × its
    /// spread, slopes 0 (the activity signal starts as a shared plain quasi-periodic
    /// process), offsets at each group's mean, jitters at a third of its scatter.
    /// Sampling priors: levels uniform within ±10 × the series' scatter, slopes within ±10
    /// × the scatter × the rotation period (G′ ~ G·2π/P), offsets over the group's range
    /// widened by the column's full range on each side, jitters from 0 to the larger of the
    /// column's range and 10 token errors.
    pub fn new(set: &RvSet, columns: &[usize], rv_sd_mps: f64, rotation_d: f64) -> JointLayout {
        let mut out = JointLayout {
            columns: columns.to_vec(),
            token_err: Vec::new(),
            groups: Vec::new(),
            start: Vec::new(),
            scale: Vec::new(),
            prior_bounds: Vec::new(),
            sign_reference: 2,
            names: Vec::new(),
        };
        let rv_sd = rv_sd_mps.max(1e-3);
        let mut couplings = vec![("rv".to_string(), "_mps", rv_sd)];
        for &c in columns {
            let spread = set.indicator_spread(c);
            out.token_err.push(TOKEN_ERROR_FRACTION * spread);
            couplings.push((set.indicators[c].name.clone(), "", spread));
        }
        for (name, unit, sd) in &couplings {
            for (what, scale) in [("level", 1.0), ("slope", rotation_d)] {
                let bound = 10.0 * sd * scale;
                out.start.push(if what == "level" { 0.7 * sd } else { 0.0 });
                out.scale.push(0.1 * sd * scale);
                out.prior_bounds.push((-bound, bound));
                let suffix = if what == "level" {
                    unit.to_string()
                } else {
                    format!("{unit}_d")
                };
                out.names.push(format!("coupling.{name}.{what}{suffix}"));
            }
        }
        let mut offsets = Vec::new();
        let mut jitters = Vec::new();
        for (j, &c) in columns.iter().enumerate() {
            let ind = &set.indicators[c];
            let (lo, hi) = ind
                .values
                .iter()
                .filter(|x| x.is_finite())
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                    (a.min(x), b.max(x))
                });
            let range = (hi - lo).max(out.token_err[j]);
            for (k, inst) in set.instruments.iter().enumerate() {
                let v: Vec<f64> = (0..set.len())
                    .filter(|&i| set.instrument[i] == k && ind.values[i].is_finite())
                    .map(|i| ind.values[i])
                    .collect();
                if v.is_empty() {
                    continue;
                }
                out.groups.push((j, k));
                let (mean, sd) = mean_sd(&v);
                let glo = v.iter().copied().fold(f64::INFINITY, f64::min);
                let ghi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                let token = out.token_err[j];
                offsets.push((
                    mean,
                    0.1 * sd.max(token),
                    (glo - range, ghi + range),
                    format!("indicator_offset.{}.{inst}", ind.name),
                ));
                jitters.push((
                    (sd / 3.0).max(token),
                    0.1 * sd.max(token),
                    (0.0, range.max(10.0 * token)),
                    format!("indicator_jitter.{}.{inst}", ind.name),
                ));
            }
        }
        for (start, scale, bounds, name) in offsets.into_iter().chain(jitters) {
            out.start.push(start);
            out.scale.push(scale);
            out.prior_bounds.push(bounds);
            out.names.push(name);
        }
        out
    }

    /// Number of θ entries of the block.
    pub fn len(&self) -> usize {
        self.start.len()
    }

    /// True when the block is empty (never: the RV coupling is always there).
    pub fn is_empty(&self) -> bool {
        self.start.is_empty()
    }

    /// Number of coupling entries (two per series).
    fn n_couplings(&self) -> usize {
        2 * (1 + self.columns.len())
    }

    /// Makes the coupling farthest from zero in units of its scale (at the block values
    /// `block`) the sign reference, so that the sampler's half of the mirror-symmetric
    /// posterior (that coupling ≥ 0) stays away from the plane where the halves meet.
    pub fn pick_sign_reference(&mut self, block: &[f64]) {
        self.sign_reference = (0..self.n_couplings())
            .max_by(|&a, &b| {
                (block[a] / self.scale[a])
                    .abs()
                    .total_cmp(&(block[b] / self.scale[b]).abs())
            })
            .unwrap_or(2);
    }

    /// What block entry `q` is.
    pub fn entry(&self, q: usize) -> JointEntry {
        let (c, g) = (self.n_couplings(), self.groups.len());
        if q < c {
            JointEntry::Coupling(q)
        } else if q < c + g {
            JointEntry::Offset(q - c)
        } else {
            JointEntry::Jitter(q - c - g)
        }
    }

    /// The equivalent block that is reported: every coupling's sign flipped when the
    /// [`JointLayout::sign_reference`] coupling is negative (`G → −G` leaves the likelihood
    /// unchanged) and jitters as absolute values.
    pub fn canonical(&self, block: &mut [f64]) {
        let n = self.n_couplings();
        if block.get(self.sign_reference).is_some_and(|a| *a < 0.0) {
            block[..n].iter_mut().for_each(|x| *x = -*x);
        }
        let jitters = n + self.groups.len();
        block[jitters..].iter_mut().for_each(|x| *x = x.abs());
    }

    /// The joint kernel of `block` with latent term `latent`.
    ///
    /// # Errors
    /// [`GpError::Parameter`] for non-finite couplings or an invalid latent term.
    pub fn kernel(&self, block: &[f64], latent: Term) -> Result<JointKernel, GpError> {
        let couplings = block[..self.n_couplings()]
            .chunks(2)
            .map(|c| Coupling {
                level: c[0],
                slope: c[1],
            })
            .collect();
        JointKernel::new(latent, couplings)
    }

    /// The stacked problem of `set` under `params` and `block`: the RV points with their
    /// residuals and white variances `rv_white`, then every indicator value that belongs to
    /// a group (residual = value − the group's offset, white = token² + jitter²).
    pub fn stack(&self, block: &[f64], params: &Params, rv_white: Vec<f64>, set: &RvSet) -> Stack {
        let mut s = Stack {
            time_d: set.time_d.clone(),
            series: vec![0; set.len()],
            white: rv_white,
            residual: params.residuals(set),
        };
        let (offsets, jitters) = block[self.n_couplings()..].split_at(self.groups.len());
        for (g, &(j, k)) in self.groups.iter().enumerate() {
            let values = &set.indicators[self.columns[j]].values;
            let white = self.token_err[j].powi(2) + jitters[g].powi(2);
            for i in (0..set.len()).filter(|&i| set.instrument[i] == k) {
                if values[i].is_finite() {
                    s.time_d.push(set.time_d[i]);
                    s.series.push(1 + j);
                    s.white.push(white);
                    s.residual.push(values[i] - offsets[g]);
                }
            }
        }
        s
    }

    /// Index of the stacked points of group `g` in a [`Stack`] of `set`.
    pub fn group_points(&self, set: &RvSet, g: usize) -> std::ops::Range<usize> {
        let mut at = set.len();
        for (h, &(j, k)) in self.groups.iter().enumerate() {
            let values = &set.indicators[self.columns[j]].values;
            let n = (0..set.len())
                .filter(|&i| set.instrument[i] == k && values[i].is_finite())
                .count();
            if h == g {
                return at..at + n;
            }
            at += n;
        }
        at..at
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::Indicator;

    fn set() -> RvSet {
        let n = 8;
        let mut s = RvSet::from_columns(
            "joint",
            2_460_000.0,
            (0..n).map(|i| i as f64 * 1.7).collect(),
            (0..n).map(|i| (i as f64).sin()).collect(),
            vec![1.0; n],
            vec![0, 1, 0, 1, 0, 1, 0, 1],
            vec!["A".into(), "B".into()],
        );
        s.indicators = vec![Indicator {
            name: "width".into(),
            values: vec![1.0, f64::NAN, 2.0, f64::NAN, 3.0, f64::NAN, 2.5, f64::NAN],
        }];
        s
    }

    /// Groups exist only where an instrument has indicator values; the block's entries,
    /// names and the stacked points line up.
    #[test]
    fn block_layout_and_stack() {
        let s = set();
        let j = JointLayout::new(&s, &[0], 2.0, 10.0);
        assert_eq!(j.groups, vec![(0, 0)]);
        assert_eq!(
            j.names,
            vec![
                "coupling.rv.level_mps",
                "coupling.rv.slope_mps_d",
                "coupling.width.level",
                "coupling.width.slope_d",
                "indicator_offset.width.A",
                "indicator_jitter.width.A",
            ]
        );
        assert_eq!(j.entry(5), JointEntry::Jitter(0));
        assert_eq!(j.entry(4), JointEntry::Offset(0));
        assert_eq!(j.entry(3), JointEntry::Coupling(3));
        let params = Params {
            planets: vec![],
            offsets_mps: vec![0.0, 0.0],
            jitters_mps: vec![0.0, 0.0],
            trend: vec![],
            regressors: vec![],
            regressors_per_instrument: false,
            noise: crate::model::Noise::Gaussian,
        };
        let st = j.stack(&j.start, &params, vec![1.0; s.len()], &s);
        assert_eq!(st.time_d.len(), s.len() + 4);
        assert_eq!(j.group_points(&s, 0), 8..12);
        assert_eq!(&st.series[8..], &[1, 1, 1, 1]);
        let mean = 8.5 / 4.0;
        assert!((st.residual[9] - (2.0 - mean)).abs() < 1e-12);
        let mut block = j.start.clone();
        block[2] = -1.0;
        block[0] = 3.0;
        j.canonical(&mut block);
        assert_eq!((block[0], block[2]), (-3.0, 1.0));
    }
}
