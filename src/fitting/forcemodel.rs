//! Which force model a fit used, as a type: the fit record carries it (printed as before, "two-body" or
//! "sun-planets-moon") and the ephemeris and follow-up take their dynamics from it directly.

use super::perturb::{Dynamics, NBody, TwoBody};
use std::fmt;

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
