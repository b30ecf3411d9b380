//! Which force model a fit used, as a type: the fit record carries it (printed as before, "two-body" or
//! "sun-planets-moon"), and the fitted orbit — state, epoch and force model — is what the ephemeris
//! and the follow-up predictor take.

use super::perturb::{Dynamics, NBody, TwoBody};
use super::result::FitResult;
use crate::physics::S6;
use crate::physics::time::Jd2;
use std::fmt;

/// A fitted orbit: the heliocentric state at its epoch (TDB) under its force model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FittedOrbit {
    pub state: S6,
    pub epoch: Jd2,
    pub model: ForceModel,
}

impl FittedOrbit {
    /// The orbit of a fit; None when the fit has no state.
    pub fn of(fit: &FitResult) -> Option<FittedOrbit> {
        Some(FittedOrbit {
            state: S6::from_column_slice(&fit.state?),
            epoch: Jd2::new(fit.epoch_jd_tdb?, 0.0),
            model: fit.dynamics,
        })
    }

    /// The dynamics that propagate it.
    pub fn dynamics(&self) -> Box<dyn Dynamics> {
        self.model.dynamics()
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ForceModel {
    /// Keplerian motion about the Sun.
    #[default]
    TwoBody,
    /// The Sun, the planets and the Moon, integrated.
    SunPlanetsMoon,
}

impl ForceModel {
    pub fn as_str(self) -> &'static str {
        match self {
            ForceModel::TwoBody => "two-body",
            ForceModel::SunPlanetsMoon => "sun-planets-moon",
        }
    }

    /// The dynamics that propagate a state under this model.
    pub fn dynamics(self) -> Box<dyn Dynamics> {
        match self {
            ForceModel::TwoBody => Box::new(TwoBody),
            ForceModel::SunPlanetsMoon => Box::new(NBody::new()),
        }
    }
}

impl fmt::Display for ForceModel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_model_prints_and_serialises_as_before_and_its_dynamics_say_so() {
        for m in [ForceModel::TwoBody, ForceModel::SunPlanetsMoon] {
            assert_eq!(
                serde_json::to_value(m).unwrap(),
                serde_json::Value::from(m.as_str())
            );
            assert_eq!(m.dynamics().model(), m);
        }
        assert_eq!(ForceModel::SunPlanetsMoon.to_string(), "sun-planets-moon");
    }
}
