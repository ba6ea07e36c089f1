//! heft weighs exoplanets from the reflex motion of their star.
//!
//! The pipeline runs in stages, each a module with one typed entry point:
//! [`data`] (RV tables → [`data::RvSet`]), [`periodogram`] (generalised Lomb–Scargle,
//! false-alarm probabilities, iterative signal search), [`orbit`] (Kepler's equation and
//! the Keplerian RV curve), [`model`] (planets + offsets + jitter + trend, likelihood),
//! [`fit`] (maximum likelihood), [`sample`] (posterior draws), [`derive`](mod@derive) (K → mass, radius, density) and [`report`]
//! (results.json and the printed summary). [`pipeline`] chains them for one target file.
//!
//! # Units and signs
//! - Radial velocities in m/s inside the library; positive = star receding.
//! - Times in days. Input times are full or offset Julian dates in a declared standard
//!   (default BJD_TDB); internally they count from one reference epoch near the middle of
//!   the data ([`data::RvSet::epoch_bjd`]) so that phases keep full precision.
//! - Frequencies in cycles per day.
//! - `omega` is the argument of periastron of the *star's* orbit; the RV model is
//!   `v = K [cos(nu + omega) + e cos omega] + offset + trend` and the conjunction (transit)
//!   time has `nu = pi/2 - omega`.
#![deny(missing_docs)]
// `!(x > 0.0)` is deliberate throughout: it rejects NaN along with non-positive values.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

pub mod audit;
mod contain;
pub mod data;
pub mod derive;
pub mod fit;
pub mod gp;
pub mod limits;
pub mod model;
pub mod orbit;
pub mod periodogram;
pub mod pipeline;
pub mod prep;
pub mod report;
pub mod runs;
pub mod sample;
pub mod summary;
pub mod target;
