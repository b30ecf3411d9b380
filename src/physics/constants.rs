//! Physical constants and unit conversions shared by the physics and fitting layers.

/// Gaussian gravitational constant k (AU^1.5 / day), IAU 1976 system.
pub const GAUSS_K: f64 = 0.017_202_098_95;
/// Heliocentric gravitational parameter μ☉ = k² (AU³/day²).
pub const MU_SUN: f64 = GAUSS_K * GAUSS_K;
/// Ratio of the total mass of the solar system to the Sun's (Sun + planets, used for barycentric elements).
/// Sum of the planetary mass ratios of the IAU 2009 system (common practice, value from memory: 1.00134).
pub const MU_BARY_OVER_SUN: f64 = 1.001_341_4;
/// Speed of light (AU/day), from c = 299 792 458 m/s and the IAU 2012 astronomical unit.
pub const C_AU_PER_DAY: f64 = 299_792_458.0 * 86_400.0 / AU_M;
/// Astronomical unit in metres (IAU 2012 Resolution B2).
pub const AU_M: f64 = 149_597_870_700.0;
/// Astronomical unit in kilometres.
pub const AU_KM: f64 = AU_M / 1000.0;
/// Seconds per day.
pub const DAY_S: f64 = 86_400.0;
/// Degrees to radians.
pub const DEG: f64 = std::f64::consts::PI / 180.0;
/// Arcseconds to radians.
pub const ARCSEC: f64 = DEG / 3600.0;
/// AU/day to km/s.
pub const AU_PER_DAY_TO_KM_S: f64 = AU_KM / DAY_S;
/// WGS84 equatorial radius (km).
pub const WGS84_A_KM: f64 = 6378.137;
/// WGS84 flattening.
pub const WGS84_F: f64 = 1.0 / 298.257_223_563;
/// Earth's mean angular velocity (rad/s), IERS Conventions 2010 §1.2.
pub const EARTH_OMEGA_RAD_S: f64 = 7.292_115e-5;
/// Julian date of J2000.0 (TT/TDB).
pub const J2000: f64 = 2_451_545.0;
