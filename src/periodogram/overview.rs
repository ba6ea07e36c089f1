//! Everything the periodogram stage reports for one data set on one grid: the RV
//! periodogram and its candidate peaks (Baluev and bootstrap FAP, aliases), the spectral
//! window and its peaks, and the periodograms of the activity indicators and of the
//! residuals after each fitted signal.

use std::fmt::Write as _;

use serde::Serialize;
use serde_json::{Value, json};

use super::{
    Alias, Grid, Method, Peak, Periodogram, PeriodogramError, WindowPeak, aliases, bootstrap,
    compute_with, spectral_window, window_peaks,
};
use crate::data::RvSet;
use crate::gp::near_rotation;

/// What [`overview`] computes.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OverviewSettings {
    /// How the sums are evaluated for the RV and indicator periodograms (bootstrap
    /// replicates always use [`Method::FAST`]: their sampling error is far above its
    /// 1e-11 difference from the exact sums).
    pub method: Method,
    /// Candidate peaks listed.
    pub peaks: usize,
    /// Window peaks listed (and used for aliases).
    pub window_peaks: usize,
    /// Bootstrap replicates (0: no bootstrap FAP).
    pub bootstrap: usize,
    /// Seed of the bootstrap.
    pub seed: u64,
    /// Stellar rotation period, days, when known: candidates near it or its harmonics
    /// are flagged (so are those near a significant indicator peak).
    pub rotation_d: Option<f64>,
}

impl Default for OverviewSettings {
    /// Exact sums, 5 peaks, 3 window peaks, no bootstrap, seed 1.
    fn default() -> Self {
        OverviewSettings {
            method: Method::Exact,
            peaks: 5,
            window_peaks: 3,
            bootstrap: 0,
            seed: 1,
            rotation_d: None,
        }
    }
}

/// A candidate peak with its false-alarm probabilities and aliases.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Candidate {
    /// The peak, with its Baluev (2008) FAP.
    #[serde(flatten)]
    pub peak: Peak,
    /// Bootstrap FAP, when a bootstrap was run.
    pub fap_bootstrap: Option<f64>,
    /// Its binomial standard error.
    pub fap_bootstrap_err: Option<f64>,
    /// Aliases through the window peaks, highest predicted power first.
    pub aliases: Vec<Alias>,
    /// Which stellar-activity period (the given rotation period or a significant
    /// indicator peak) or harmonic of it the peak is near, in words.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub near_rotation: Option<String>,
}

/// A further periodogram on the overview's grid.
#[derive(Clone, Debug, PartialEq)]
pub struct Panel {
    /// What it is the periodogram of (also its column name in the table).
    pub label: String,
    /// Power at each grid frequency.
    pub power: Vec<f64>,
}

/// The periodogram stage's results for one data set.
#[derive(Clone, Debug, PartialEq)]
pub struct Overview {
    /// GLS periodogram of the RVs.
    pub periodogram: Periodogram,
    /// Spectral window power `|W(f)|²` on the same grid.
    pub window: Vec<f64>,
    /// Strongest window peaks (searched up to at least 1.5 1/day).
    pub window_peaks: Vec<WindowPeak>,
    /// Highest peaks of the RV periodogram.
    pub candidates: Vec<Candidate>,
    /// Settings used.
    pub settings: OverviewSettings,
    /// Periodograms of the activity indicators.
    pub indicators: Vec<Panel>,
    /// Periodograms of the residuals after each fitted signal (added by the caller).
    pub residuals: Vec<Panel>,
}

/// Baluev FAP below which an indicator's strongest peak is taken as a stellar-activity
/// period for the candidates' rotation flags (0.1 %, the search's default threshold).
const INDICATOR_FAP: f64 = 1e-3;

/// Computes the periodogram, window, candidates (peaks at least `1/span` apart, each
/// flagged when near the rotation period, a significant indicator peak or their first two
/// harmonics) and indicator periodograms of `set` on `grid`.
///
/// Indicator columns are unweighted (they carry no uncertainties) with one offset per
/// instrument; points where an indicator is missing are left out, and an indicator with
/// too few points for a periodogram is skipped.
///
/// # Errors
/// As [`compute_with`] and [`bootstrap`].
pub fn overview(
    set: &RvSet,
    jitters_mps: &[f64],
    grid: &Grid,
    settings: &OverviewSettings,
) -> Result<Overview, PeriodogramError> {
    let periodogram = compute_with(set, jitters_mps, grid, settings.method)?;
    let window = spectral_window(set, jitters_mps, grid)?;
    let wpeaks = window_peaks(set, jitters_mps, grid.fmax(), settings.window_peaks)?;
    let boot = match settings.bootstrap {
        0 => None,
        n => Some(bootstrap(
            set,
            jitters_mps,
            grid,
            Method::FAST,
            n,
            settings.seed,
        )?),
    };
    let mut indicators = Vec::new();
    let mut activity_periods: Vec<(f64, String)> = settings
        .rotation_d
        .map(|p| (p, "given".to_string()))
        .into_iter()
        .collect();
    for (c, ind) in set.indicators.iter().enumerate() {
        match compute_with(&set.indicator_series(c, 1.0), &[], grid, settings.method) {
            Ok(pg) => {
                if let Some(top) = pg.peaks(1, 0.0).first()
                    && top.fap < INDICATOR_FAP
                {
                    activity_periods.push((
                        top.period,
                        format!("strongest peak of indicator {}", ind.name),
                    ));
                }
                indicators.push(Panel {
                    label: format!("indicator {}", ind.name),
                    power: pg.power,
                });
            }
            Err(PeriodogramError::TooFewPoints { .. } | PeriodogramError::ZeroBaseline) => {}
            Err(e) => return Err(e),
        }
    }
    let mut candidates = Vec::new();
    for peak in periodogram.peaks(settings.peaks, 1.0 / set.baseline_d()) {
        let (fap, err) = match &boot {
            Some(b) => {
                let (p, e) = b.fap(peak.power);
                (Some(p), Some(e))
            }
            None => (None, None),
        };
        candidates.push(Candidate {
            peak,
            fap_bootstrap: fap,
            fap_bootstrap_err: err,
            aliases: aliases(set, jitters_mps, peak.frequency, &wpeaks)?,
            near_rotation: activity_periods.iter().find_map(|(p, source)| {
                near_rotation(peak.period, *p).map(|w| format!("{w}: {source}"))
            }),
        });
    }
    Ok(Overview {
        periodogram,
        window,
        window_peaks: wpeaks,
        candidates,
        settings: *settings,
        indicators,
        residuals: Vec::new(),
    })
}

impl Overview {
    /// Adds the periodogram of residuals `pg` under `label`.
    ///
    /// # Errors
    /// [`PeriodogramError::Range`] when `pg` is on another grid.
    pub fn add_residuals(&mut self, label: &str, pg: &Periodogram) -> Result<(), PeriodogramError> {
        if pg.grid != self.periodogram.grid {
            return Err(PeriodogramError::Range(format!(
                "residual periodogram '{label}' is on another grid than the overview"
            )));
        }
        self.residuals.push(Panel {
            label: label.to_string(),
            power: pg.power.clone(),
        });
        Ok(())
    }

    /// The peaks, window peaks and aliases as JSON.
    pub fn to_json(&self) -> Value {
        let g = &self.periodogram.grid;
        json!({
            "grid": {"fmin": g.fmin, "fmax": g.fmax(), "n": g.n, "df": g.df},
            "method": self.settings.method,
            "fap_method": "Baluev 2008, for the grid's fmax",
            "bootstrap_replicates": self.settings.bootstrap,
            "seed": self.settings.seed,
            "peaks": self.candidates,
            "window_peaks": self.window_peaks,
        })
    }

    /// Table `frequency,period,power,window`, then one column per residual and indicator
    /// periodogram (named by its label).
    pub fn table(&self) -> String {
        let mut cols: Vec<(&str, &[f64])> =
            vec![("power", &self.periodogram.power), ("window", &self.window)];
        for p in self.residuals.iter().chain(&self.indicators) {
            cols.push((&p.label, &p.power));
        }
        table_csv(&self.periodogram.grid, &cols)
    }
}

/// CSV table `frequency,period,<name>...` of columns on `grid` (frequency in 1/day,
/// period in days, full precision).
pub fn table_csv(grid: &Grid, columns: &[(&str, &[f64])]) -> String {
    let mut text = String::with_capacity((40 + 24 * columns.len()) * grid.n);
    text.push_str("frequency,period");
    for (name, _) in columns {
        text.push(',');
        text.push_str(&name.replace([',', '"', '\n'], " "));
    }
    text.push('\n');
    for j in 0..grid.n {
        let f = grid.frequency(j);
        let _ = write!(text, "{f:.12e},{:.12e}", 1.0 / f);
        for (_, v) in columns {
            let _ = write!(text, ",{:.15e}", v[j]);
        }
        text.push('\n');
    }
    text
}
