//! Earth's geocentre in the ICRF, heliocentric and barycentric, from the IAU SOFA `epv00` series (ported by
//! the `sofars` crate; ≤ ~10 km from JPL DE421 over 1990–2050, see tests/earth_vs_de421.rs).
//!
//! One `epv00` call costs tens of microseconds, far too much per observation inside a fit, so
//! [`crate::physics::observe::ObserverModel`] samples it at whole days and interpolates with
//! `hermite` polynomials (position and velocity at both nodes).

use super::V3;
use super::time::Jd2;
use thiserror::Error;

#[derive(Debug, Error, Clone, PartialEq)]
pub enum EphemerisError {
    #[error("Earth's ephemeris is valid for 1900–2100 only (asked for JD {0:.1})")]
    OutOfRange(f64),
}

/// Position (AU) and velocity (AU/day) of the geocentre, and of the Sun about the barycentre.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EarthState {
    pub helio_pos: V3,
    pub helio_vel: V3,
    pub bary_pos: V3,
    pub bary_vel: V3,
}

impl EarthState {
    /// Barycentric position of the Sun.
    pub fn sun_bary_pos(&self) -> V3 {
        self.bary_pos - self.helio_pos
    }
    /// Barycentric velocity of the Sun.
    pub fn sun_bary_vel(&self) -> V3 {
        self.bary_vel - self.helio_vel
    }
}

/// Earth's state at a TDB date, straight from the series.
pub fn earth_state(tdb: Jd2) -> Result<EarthState, EphemerisError> {
    let jd = tdb.value();
    covers(tdb)?;
    let (h, b) = sofars::eph::epv00(tdb.jd1, tdb.jd2).ok_or(EphemerisError::OutOfRange(jd))?;
    let v = |a: [f64; 3]| V3::new(a[0], a[1], a[2]);
    Ok(EarthState {
        helio_pos: v(h[0]),
        helio_vel: v(h[1]),
        bary_pos: v(b[0]),
        bary_vel: v(b[1]),
    })
}

/// Whether the Earth's ephemeris covers `tdb` (1900-01-01 to 2100-01-01), without computing it.
pub fn covers(tdb: Jd2) -> Result<(), EphemerisError> {
    let jd = tdb.value();
    if (2_415_020.5..=2_488_070.5).contains(&jd) {
        Ok(())
    } else {
        Err(EphemerisError::OutOfRange(jd))
    }
}

/// Cubic Hermite interpolation on [0, h] at fraction s; returns value and derivative.
pub(crate) fn hermite(s: f64, h: f64, p0: &V3, v0: &V3, p1: &V3, v1: &V3) -> (V3, V3) {
    let s2 = s * s;
    let s3 = s2 * s;
    let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
    let h10 = s3 - 2.0 * s2 + s;
    let h01 = -2.0 * s3 + 3.0 * s2;
    let h11 = s3 - s2;
    let d00 = (6.0 * s2 - 6.0 * s) / h;
    let d10 = 3.0 * s2 - 4.0 * s + 1.0;
    let d01 = (-6.0 * s2 + 6.0 * s) / h;
    let d11 = 3.0 * s2 - 2.0 * s;
    (
        h00 * p0 + h10 * h * v0 + h01 * p1 + h11 * h * v1,
        d00 * p0 + d10 * v0 + d01 * p1 + d11 * v1,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_outside_the_series_are_errors() {
        assert!(earth_state(Jd2::new(2_300_000.5, 0.0)).is_err());
    }
}
