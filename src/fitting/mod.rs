//! The fitting layer: from the observations of one candidate to an orbit, its uncertainty and the
//! hyperbolicity score. Depends on the physics layer only; no I/O.

pub mod batch;
pub mod conditions;
pub mod covariance;
pub mod ephemeris;
pub mod fit;
pub mod followup;
pub mod forcemodel;
pub mod gauss;
pub mod input;
pub mod kinds;
pub mod leaveout;
pub mod linear;
pub mod lsq;
pub mod nextnight;
pub mod obsid;
pub mod onenight;
pub mod origin;
pub mod perturb;
pub mod plan;
pub mod planeval;
pub mod population;
pub mod posterior;
pub mod profile;
pub mod profilequad;
pub mod quality;
pub mod rangescan;
pub mod ranging;
pub mod result;
pub mod sampling;
pub mod search;
pub mod shortarc;
pub mod significance;
pub mod spreads;
pub mod stats;
pub mod twonight;
