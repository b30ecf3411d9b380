//! The fitting layer: from the observations of one candidate to an orbit, its uncertainty and the
//! hyperbolicity score. Depends on the physics layer only; no I/O.

pub mod batch;
pub mod covariance;
pub mod ephemeris;
pub mod fit;
pub mod gauss;
pub mod input;
pub mod lsq;
pub mod perturb;
pub mod quality;
pub mod ranging;
pub mod sampling;
pub mod significance;
pub mod stats;
