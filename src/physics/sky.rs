//! The sky around a pointing: the Moon's geocentric position and illuminated fraction, twilight
//! limits and airmass. Pure functions; the Moon comes from the SOFA `moon98` series (through `sofars`,
//! a few arcseconds from a numerical ephemeris, ample for a distance from the Moon).

use super::V3;
use super::constants::DEG;
use super::time::Jd2;

/// How dark the sky must be: the Sun's altitude limit of each of the usual twilights.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Twilight {
    /// Sun below −6°.
    Civil,
    /// Sun below −12° (the default: faint moving objects are measurable from here on).
    #[default]
    Nautical,
    /// Sun below −18°.
    Astronomical,
}

impl Twilight {
    /// Highest Sun altitude (degrees) still counted as dark enough.
    pub fn sun_limit_deg(self) -> f64 {
        match self {
            Twilight::Civil => -6.0,
            Twilight::Nautical => -12.0,
            Twilight::Astronomical => -18.0,
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Twilight::Civil => "civil",
            Twilight::Nautical => "nautical",
            Twilight::Astronomical => "astronomical",
        }
    }
}

/// A twilight name that is none of civil, nautical, astronomical.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("'{0}' is not a twilight (civil, nautical or astronomical)")]
pub struct TwilightError(pub String);

impl std::str::FromStr for Twilight {
    type Err = TwilightError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "civil" => Ok(Twilight::Civil),
            "nautical" => Ok(Twilight::Nautical),
            "astronomical" => Ok(Twilight::Astronomical),
            _ => Err(TwilightError(s.to_string())),
        }
    }
}

impl std::fmt::Display for Twilight {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Geocentric position of the Moon (AU, GCRS axes) at a TT date.
pub fn moon_geocentric(tt: Jd2) -> V3 {
    let pv = sofars::eph::moon98(tt.jd1, tt.jd2);
    V3::new(pv[0][0], pv[0][1], pv[0][2])
}

/// Illuminated fraction of the Moon's disc seen by an observer, from the observer-to-Moon and
/// observer-to-Sun vectors: (1 + cos i)/2 with i the Sun–Moon–observer angle.
pub fn illuminated_fraction(moon_from_obs: &V3, sun_from_obs: &V3) -> f64 {
    let to_sun = sun_from_obs - moon_from_obs;
    let to_obs = -moon_from_obs;
    let cos_i = to_sun.dot(&to_obs) / (to_sun.norm() * to_obs.norm());
    0.5 * (1.0 + cos_i.clamp(-1.0, 1.0))
}

/// Airmass at a geometric altitude (degrees), by the Kasten–Young airmass formula
/// X = 1 / [sin h + 0.50572 (h + 6.07995°)^−1.6364]; `None` at or below the horizon.
pub fn airmass(alt_deg: f64) -> Option<f64> {
    if !(alt_deg > 0.0 && alt_deg <= 90.0) {
        return None;
    }
    Some(1.0 / ((alt_deg * DEG).sin() + 0.50572 * (alt_deg + 6.07995).powf(-1.6364)))
}

/// Angle between two directions (degrees).
pub fn separation_deg(a: &V3, b: &V3) -> f64 {
    a.angle(b) / DEG
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn airmass_is_one_at_the_zenith_and_grows_toward_the_horizon() {
        let z = airmass(90.0).unwrap();
        assert!((z - 1.0).abs() < 1e-3, "{z}");
        let mut last = z;
        for alt in [60.0, 30.0, 15.0, 5.0, 1.0] {
            let x = airmass(alt).unwrap();
            assert!(x > last, "{alt}: {x}");
            last = x;
        }
        // Near the zenith it approaches the plane-parallel sec z.
        let sec = 1.0 / (70.0 * DEG).sin();
        assert!((airmass(70.0).unwrap() - sec).abs() < 2e-3);
        assert!(airmass(0.0).is_none() && airmass(-5.0).is_none());
    }

    #[test]
    fn a_moon_opposite_the_sun_is_full_and_one_beside_it_is_new() {
        let sun = V3::new(1.0, 0.0, 0.0);
        assert!(illuminated_fraction(&V3::new(-0.0026, 0.0, 0.0), &sun) > 0.999);
        assert!(illuminated_fraction(&V3::new(0.0026, 0.0, 0.0), &sun) < 0.001);
        let quarter = illuminated_fraction(&V3::new(0.0, 0.0026, 0.0), &sun);
        assert!((quarter - 0.5).abs() < 0.01, "{quarter}");
    }

    #[test]
    fn twilight_names_read_back() {
        for t in [Twilight::Civil, Twilight::Nautical, Twilight::Astronomical] {
            assert_eq!(t.name().parse::<Twilight>().unwrap(), t);
        }
        assert!("dusk".parse::<Twilight>().is_err());
    }
}
