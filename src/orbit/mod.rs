//! Kepler's equation and the Keplerian radial-velocity curve.
//!
//! Conventions (design.md): `omega` is the argument of periastron of the star's orbit,
//! `v = K [cos(nu + omega) + e cos omega]`, positive = receding, and the conjunction time
//! `Tc` (planet between star and observer) has `nu = pi/2 - omega`.

mod kepler;
mod keplerian;

pub use kepler::{
    Anomaly, KeplerSolver, eccentric_anomaly, eccentric_anomaly_bisection, true_anomaly,
};
pub use keplerian::{Orbit, OrbitError, periastron_from_conjunction};
