//! Where an unbound candidate comes from: its original and future orbits (before and after the
//! planets), its arrival (radiant, v∞, Galactic velocity), which stars move like it, and its orbit in
//! the Galaxy, each with its spread over the fit's orbit samples.
//!
//! Values are those of the fitted orbit (the arrival of the samples' mean velocity when the fitted
//! orbit itself is bound before the planets); σ are the spreads of the orbit samples (the fit's
//! posterior samples where it kept them, draws from the covariance otherwise). Membership is averaged
//! over the samples that arrive from interstellar space.

pub mod flight;
pub mod kinematics;
pub mod sheet;

pub use flight::{Encounter, FlightEnd, Planet, fly};
pub use kinematics::{Ellipse, Membership, StellarPopulation, membership};
pub use sheet::{GALACTIC_RTOL, GalacticOrbit, Origin, Plausibility, origin_sheet};

use crate::fitting::population::PopulationModel;
use crate::fitting::population::model::VelocityComponent;
use crate::physics::galaxy::{MODEL_R0_KPC, MODEL_VC_KM_S, SolarFrame};

/// Candidates at or above this P(unbound) get an origin sheet in every output.
pub const MIN_PROBABILITY: f64 = 0.01;
/// Most orbit samples flown through the planets per candidate.
pub const MAX_SAMPLES: usize = 200;

/// How the sheet is made.
#[derive(Debug, Clone, PartialEq)]
pub struct OriginOptions {
    /// The Sun in the Galaxy: distances, circular speed and solar motion.
    pub frame: SolarFrame,
    /// The velocity ellipsoids and local fractions of thin disc, thick disc and halo (the population
    /// model's own, so there is one source of those numbers).
    pub components: Vec<VelocityComponent>,
    /// Orbit samples flown through the planets (at most `MAX_SAMPLES`).
    pub samples: usize,
    /// Of those, how many are also followed through the Galaxy.
    pub galactic_samples: usize,
    /// Length of the Galactic orbit (Gyr).
    pub galactic_gyr: f64,
    /// Distance from the barycentre (au) where the original and future orbits are read.
    pub stop_au: f64,
    /// Seed for the draws from a covariance.
    pub seed: u64,
    /// Make the sheet whatever P(unbound) is (the objects an observer names), not only from
    /// `MIN_PROBABILITY` up.
    pub any_probability: bool,
}

/// Height of the Sun above the Galactic plane (kpc; a commonly used value, from memory).
pub const DEFAULT_Z0_KPC: f64 = 0.0208;

impl OriginOptions {
    /// Defaults under a population model: its solar motion and ellipsoids; the Sun at the potential's
    /// own R₀ and circular speed.
    pub fn for_model(model: &PopulationModel) -> OriginOptions {
        let is = &model.file.interstellar;
        OriginOptions {
            frame: SolarFrame {
                r0_kpc: MODEL_R0_KPC,
                z0_kpc: DEFAULT_Z0_KPC,
                v_circ_km_s: MODEL_VC_KM_S,
                solar_motion_km_s: is.solar_motion_km_s,
            },
            components: is.component.clone(),
            // A batch pays for these on every candidate above the threshold (about 0.1 s of CPU
            // together); `origin --samples` asks for more.
            samples: 16,
            galactic_samples: 8,
            galactic_gyr: 3.0,
            stop_au: 250.0,
            seed: 0x0121_61A1,
            any_probability: false,
        }
    }
}
