//! Time standards of input files: scale (BJD_TDB, HJD, JD) and a day offset.

use std::fmt;
use std::str::FromStr;

/// The time scale a file's times are given in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TimeScale {
    /// Barycentric Julian date in TDB (the default and the internal scale).
    BjdTdb,
    /// Heliocentric Julian date.
    Hjd,
    /// Geocentric Julian date (UTC).
    Jd,
}

/// A declared time standard: scale plus the constant subtracted from the full Julian date
/// (0 for full dates, 2 400 000.5 for MJD, 2 400 000 for RJD, or any stated offset).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TimeStandard {
    /// Time scale.
    pub scale: TimeScale,
    /// Days subtracted from the full Julian date in the file's values.
    pub offset_d: f64,
}

impl Default for TimeStandard {
    fn default() -> Self {
        TimeStandard {
            scale: TimeScale::BjdTdb,
            offset_d: 0.0,
        }
    }
}

impl TimeStandard {
    /// Full Julian date (in this standard's scale) of a value as written in the file.
    pub fn full_jd(&self, value: f64) -> f64 {
        value + self.offset_d
    }
}

impl fmt::Display for TimeStandard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let scale = match self.scale {
            TimeScale::BjdTdb => "BJD_TDB",
            TimeScale::Hjd => "HJD",
            TimeScale::Jd => "JD",
        };
        if self.offset_d == 0.0 {
            write!(f, "{scale}")
        } else if self.scale == TimeScale::Jd && self.offset_d == 2_400_000.5 {
            write!(f, "MJD")
        } else if self.scale == TimeScale::Jd && self.offset_d == 2_400_000.0 {
            write!(f, "RJD")
        } else {
            write!(f, "{scale}-{}", self.offset_d)
        }
    }
}

/// Why a time-standard name was not understood.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error(
    "unknown time standard '{0}': use BJD_TDB, BJD, HJD, JD, MJD, RJD, or one of them with an offset such as BJD-2450000"
)]
pub struct TimeStandardError(pub String);

impl FromStr for TimeStandard {
    type Err = TimeStandardError;

    /// Parses `BJD_TDB`, `BJD` (taken as BJD_TDB), `HJD`, `JD`, `MJD` (JD − 2 400 000.5),
    /// `RJD` (JD − 2 400 000), and any of the first four followed by `-` and an offset in
    /// days, spaces and underscores in the number allowed (`BJD - 2 450 000`).
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let err = || TimeStandardError(s.to_string());
        let compact: String = s.chars().filter(|c| !c.is_whitespace()).collect();
        let upper = compact.to_ascii_uppercase();
        let (name, offset) = match upper.split_once('-') {
            Some((name, num)) => {
                let num: String = num.chars().filter(|&c| c != '_').collect();
                let value: f64 = num.parse().map_err(|_| err())?;
                if !value.is_finite() || value < 0.0 {
                    return Err(err());
                }
                (name.to_string(), value)
            }
            None => (upper.clone(), 0.0),
        };
        let (scale, base) = match name.as_str() {
            "BJD_TDB" | "BJD" | "BJDTDB" => (TimeScale::BjdTdb, 0.0),
            "HJD" => (TimeScale::Hjd, 0.0),
            "JD" => (TimeScale::Jd, 0.0),
            "MJD" => (TimeScale::Jd, 2_400_000.5),
            "RJD" => (TimeScale::Jd, 2_400_000.0),
            _ => return Err(err()),
        };
        if base != 0.0 && offset != 0.0 {
            return Err(err());
        }
        Ok(TimeStandard {
            scale,
            offset_d: base + offset,
        })
    }
}
