//! Ground sites: geodetic (WGS84) or parallax-constant positions in the terrestrial frame, rotated to the
//! GCRS with the Earth rotation angle and the IAU 2006/2000A celestial-to-intermediate matrix
//! (SOFA `era00` and `c2i06a` through `sofars`). Polar motion is ignored (≤ 15 m at the surface) and
//! UT1 = UTC (|DUT1| < 0.9 s, ≤ 0.4 km); both are below what a single astrometric position resolves
//! beyond 0.01 AU.
//!
//! `c2i06a` is expensive (the full nutation series), but it moves by milliarcseconds per hour, so
//! [`OrientationTable`] samples it on a half-day grid and interpolates linearly (≪ 1 m at the surface).

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

/// The celestial-to-intermediate matrix sampled on a grid of TT dates.
#[derive(Debug, Clone)]
pub struct OrientationTable {
    start: f64,
    step: f64,
    mats: Vec<M3>,
}

impl OrientationTable {
    pub const STEP: f64 = 0.5;

    /// A table covering `[from, to]` (TT JD), with a spare node at each end.
    pub fn new(from: f64, to: f64) -> OrientationTable {
        let step = Self::STEP;
        let start = (from / step).floor() * step - step;
        let n = (((to - start) / step).ceil() as usize).max(1) + 2;
        let mats = (0..n)
            .map(|k| celestial_to_intermediate(Jd2::new(start, k as f64 * step)))
            .collect();
        OrientationTable { start, step, mats }
    }

    /// Interpolated matrix; computed directly outside the table.
    pub fn c2i(&self, tt: Jd2) -> M3 {
        let x = ((tt.jd1 - self.start) + tt.jd2) / self.step;
        let k = x.floor();
        if !(k >= 0.0 && (k as usize) + 1 < self.mats.len()) {
            return celestial_to_intermediate(tt);
        }
        let i = k as usize;
        let s = x - k;
        self.mats[i] * (1.0 - s) + self.mats[i + 1] * s
    }
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

    #[test]
    fn interpolated_orientation_moves_a_site_by_under_a_metre() {
        let t0 = 2_461_200.5;
        let table = OrientationTable::new(t0, t0 + 3.0);
        let site = V3::new(-1500.0, -5000.0, 3300.0);
        for k in 0..30 {
            let tt = Jd2::new(t0, 0.0137 + k as f64 * 0.1);
            let (a, _) = site_gcrs(&site, tt, &table.c2i(tt));
            let (b, _) = site_gcrs(&site, tt, &celestial_to_intermediate(tt));
            assert!((a - b).norm() * AU_KM < 1e-3, "k={k}");
        }
    }
}
