//! Ground sites: geodetic (WGS84) or parallax-constant positions in the terrestrial frame, rotated to the
//! GCRS with the Earth rotation angle and the IAU 2006/2000A celestial-to-intermediate matrix
//! (SOFA `era00` and `c2i06a` through `sofars`). Polar motion is ignored (≤ 15 m at the surface) and
//! UT1 = UTC (|DUT1| < 0.9 s, ≤ 0.4 km); both are below what a single astrometric position resolves
//! beyond 0.01 AU.
//!
//! `c2i06a` is expensive (the full nutation series) but moves by milliarcseconds per hour, so the
//! observer model samples it once a day and interpolates linearly (< 1 m at the surface).

use super::constants::{AU_KM, WGS84_A_KM, WGS84_F};
use super::frames::r3;
use super::time::Jd2;
use super::{M3, V3};

/// Where a ground site is, in one of the two forms the trade publishes.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum GroundPosition {
    /// WGS84 geodetic longitude (east positive) and latitude in degrees, height in metres.
    Geodetic {
        lon_deg: f64,
        lat_deg: f64,
        alt_m: f64,
    },
    /// Longitude (east positive, degrees) and parallax constants ρ·cos φ′, ρ·sin φ′ in Earth radii.
    Parallax {
        lon_deg: f64,
        rho_cos_phi: f64,
        rho_sin_phi: f64,
    },
}

impl GroundPosition {
    /// Terrestrial (ITRS) position in km.
    pub fn itrs_km(&self) -> V3 {
        match *self {
            GroundPosition::Geodetic {
                lon_deg,
                lat_deg,
                alt_m,
            } => {
                let (sl, cl) = lon_deg.to_radians().sin_cos();
                let (sp, cp) = lat_deg.to_radians().sin_cos();
                let e2 = WGS84_F * (2.0 - WGS84_F);
                let n = WGS84_A_KM / (1.0 - e2 * sp * sp).sqrt();
                let h = alt_m / 1000.0;
                V3::new(
                    (n + h) * cp * cl,
                    (n + h) * cp * sl,
                    (n * (1.0 - e2) + h) * sp,
                )
            }
            GroundPosition::Parallax {
                lon_deg,
                rho_cos_phi,
                rho_sin_phi,
            } => {
                let (sl, cl) = lon_deg.to_radians().sin_cos();
                V3::new(
                    WGS84_A_KM * rho_cos_phi * cl,
                    WGS84_A_KM * rho_cos_phi * sl,
                    WGS84_A_KM * rho_sin_phi,
                )
            }
        }
    }

    /// Geodetic latitude and longitude (radians) for the horizon frame (altitude, azimuth).
    pub fn geodetic_lat_lon(&self) -> (f64, f64) {
        match *self {
            GroundPosition::Geodetic {
                lon_deg, lat_deg, ..
            } => (lat_deg.to_radians(), lon_deg.to_radians()),
            GroundPosition::Parallax { lon_deg, .. } => {
                let x = self.itrs_km();
                let e2 = WGS84_F * (2.0 - WGS84_F);
                // One Bowring-style step is ample for pointing (geodetic vs geocentric ≤ 0.2°).
                let p = x.xy().norm();
                let lat = (x.z / (p * (1.0 - e2))).atan();
                (lat, lon_deg.to_radians())
            }
        }
    }
}

/// Earth rotation angle (radians) at a UT1 date (IAU 2000, SOFA `era00`).
pub fn earth_rotation_angle(ut1: Jd2) -> f64 {
    sofars::erst::era00(ut1.jd1, ut1.jd2)
}

/// Greenwich mean sidereal time (radians), IAU 2006 (SOFA `gmst06`).
pub fn gmst(ut1: Jd2, tt: Jd2) -> f64 {
    sofars::erst::gmst06(ut1.jd1, ut1.jd2, tt.jd1, tt.jd2)
}

/// Greenwich apparent sidereal time (radians), IAU 2006/2000A (SOFA `gst06a`).
pub fn gast(ut1: Jd2, tt: Jd2) -> f64 {
    sofars::erst::gst06a(ut1.jd1, ut1.jd2, tt.jd1, tt.jd2)
}

/// Celestial-to-intermediate matrix (IAU 2006/2000A, CIO based) at a TT date.
pub fn celestial_to_intermediate(tt: Jd2) -> M3 {
    let m = sofars::pnp::c2i06a(tt.jd1, tt.jd2);
    M3::new(
        m[0][0], m[0][1], m[0][2], m[1][0], m[1][1], m[1][2], m[2][0], m[2][1], m[2][2],
    )
}

/// Rate of the Earth rotation angle (rad per UT1 day), IERS Conventions 2010 eq. 5.15.
const ERA_RATE: f64 = std::f64::consts::TAU * 1.002_737_811_911_354_5;

/// Geocentric GCRS position (AU) and velocity (AU/day) of a terrestrial point given in km.
pub fn site_gcrs(itrs_km: &V3, ut1: Jd2, c2i: &M3) -> (V3, V3) {
    let era = earth_rotation_angle(ut1);
    let cirs = r3(era).transpose() * itrs_km;
    let vel = V3::new(-ERA_RATE * cirs.y, ERA_RATE * cirs.x, 0.0);
    let to_gcrs = c2i.transpose();
    (to_gcrs * cirs / AU_KM, to_gcrs * vel / AU_KM)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parallax_constants_of_a_geodetic_site_give_the_same_vector() {
        let g = GroundPosition::Geodetic {
            lon_deg: 250.0,
            lat_deg: -31.5,
            alt_m: 2200.0,
        };
        let x = g.itrs_km();
        let p = GroundPosition::Parallax {
            lon_deg: 250.0,
            rho_cos_phi: x.xy().norm() / WGS84_A_KM,
            rho_sin_phi: x.z / WGS84_A_KM,
        };
        assert!((p.itrs_km() - x).norm() < 1e-9);
        let (lat, _) = p.geodetic_lat_lon();
        assert!((lat.to_degrees() + 31.5).abs() < 0.01);
    }
}
