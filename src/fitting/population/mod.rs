//! The population model: what real objects exist, where, how fast and how large, as the one prior
//! under every P(unbound). The model is data (`default.toml`, compiled in; `--population FILE`
//! replaces it); `density` evaluates it at a trial orbit.

pub mod density;
mod laws;
pub mod model;

pub use density::{Density, PopulationModel, incoming_velocity, log_sum_exp};
pub use model::{ModelError, ModelFile};
