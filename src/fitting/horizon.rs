//! Positions reported from below their site's horizon: the object cannot have been seen there, so
//! the site code (or the time) is wrong. Said as a caveat on the record, never a rejection: the
//! fit stands on what the file says.

use super::input::Tracklet;
use crate::physics::frames::{r3, unit_from_radec};
use crate::physics::observe::ObserverLocation;
use crate::physics::site::{celestial_to_intermediate, earth_rotation_angle};

/// How far below the geometric horizon a position may be before it is said (degrees): refraction
/// lifts the horizon by about half a degree and a high site sees below it (common practice, no
/// source).
pub const BELOW_HORIZON_DEG: f64 = -2.0;

/// The lowest altitude (degrees) of the tracklet's positions from ground sites, where it is below
/// `BELOW_HORIZON_DEG`, with how many positions are that low.
pub fn below_horizon(tr: &Tracklet) -> Option<(f64, usize)> {
    let first = tr.obs.first()?;
    // Precession and nutation move by arcseconds over a tracklet's days: once is enough here.
    let c2i = celestial_to_intermediate(first.time.tt);
    let alts: Vec<f64> = tr
        .obs
        .iter()
        .filter_map(|o| match &o.location {
            ObserverLocation::Ground(site) => {
                let t = r3(earth_rotation_angle(o.time.ut1)) * c2i * unit_from_radec(o.ra, o.dec);
                let (lat, lon) = site.geodetic_lat_lon();
                let up = crate::physics::V3::new(
                    lat.cos() * lon.cos(),
                    lat.cos() * lon.sin(),
                    lat.sin(),
                );
                Some(t.dot(&up).clamp(-1.0, 1.0).asin().to_degrees())
            }
            _ => None,
        })
        .filter(|a| *a < BELOW_HORIZON_DEG)
        .collect();
    let lowest = alts.iter().copied().reduce(f64::min)?;
    Some((lowest, alts.len()))
}

/// The caveat's words.
pub fn caveat((lowest, n): (f64, usize)) -> String {
    format!(
        "{n} position(s) below the horizon at their site (lowest {lowest:.0}°): a wrong site code or time?"
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::site::GroundPosition;
    use crate::physics::time::UtcTime;

    #[test]
    fn the_altitude_is_the_ephemeris_one_and_only_positions_below_the_horizon_are_said() {
        // A site at 30° S; the same instant, an object near the south celestial pole (always up)
        // and one near the north pole (never up).
        let site = GroundPosition::Geodetic {
            lat_deg: -30.0,
            lon_deg: 70.0,
            alt_m: 2000.0,
        };
        let t = UtcTime::parse("2027-02-24T03:00:00Z")
            .unwrap()
            .instant()
            .unwrap();
        let mut up = crate::testutil::observation(t, 120.0, -80.0);
        up.location = ObserverLocation::Ground(site);
        let mut down = up.clone();
        down.dec = 80.0_f64.to_radians();
        let tr = |obs| Tracklet::new("x".into(), "x".into(), obs);
        assert_eq!(below_horizon(&tr(vec![up.clone()])), None);
        let (lowest, n) = below_horizon(&tr(vec![up.clone(), down.clone()])).unwrap();
        assert_eq!(n, 1);
        // The same altitude as the ephemeris computes it (its own precession at the instant).
        let (alt, _) = crate::fitting::ephemeris::alt_az(
            &unit_from_radec(down.ra, down.dec),
            &site,
            &down.time,
        );
        assert!(
            (lowest - alt.to_degrees()).abs() < 1e-6,
            "{lowest} {}",
            alt.to_degrees()
        );
        assert!(caveat((lowest, n)).contains("1 position(s) below the horizon"));
    }
}
