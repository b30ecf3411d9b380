//! One entry of a `[[site]]` table: where it puts its site (refusing places off the ground), and the
//! line a refused value stands on, so that it is reported with its line, as a syntax error is.

use crate::physics::site::GroundPosition;

pub(super) const LONGITUDE: &[&str] = &["longitude_deg", "longitude", "lon_deg"];
const LATITUDE: &[&str] = &["latitude_deg", "latitude", "lat_deg"];
const ALTITUDE: &[&str] = &[
    "altitude_m",
    "altitude",
    "height_m",
    "elevation_m",
    "alt_m",
    "elevation",
];
const PARALLAX: &[&str] = &[
    "rho_cos_phi",
    "rho_cos",
    "rhocosphi",
    "parallax_cos",
    "cos_phi",
    "rho_sin_phi",
    "rho_sin",
    "rhosinphi",
    "parallax_sin",
    "sin_phi",
];

/// Altitudes a site can have, metres: the band a roving observer's altitude is held to, from below the
/// lowest land to above the highest observing aircraft.
const ALTITUDE_M: std::ops::RangeInclusive<f64> =
    super::tracklets::MIN_ALT_M..=super::tracklets::MAX_ALT_M;
/// ρ = √((ρ cos φ′)² + (ρ sin φ′)²), Earth radii, of such a site: the polar radius is 0.99665 of the
/// equatorial, 20 km of altitude adds 0.0031.
pub(super) const RHO: std::ops::RangeInclusive<f64> = 0.995..=1.004;

/// Where an entry puts its site, or the keys at fault and why.
pub(super) fn position(
    lon_deg: f64,
    latitude_deg: Option<f64>,
    altitude_m: Option<f64>,
    (rho_cos_phi, rho_sin_phi): (Option<f64>, Option<f64>),
) -> Result<GroundPosition, (&'static [&'static str], String)> {
    match (latitude_deg, rho_cos_phi, rho_sin_phi) {
        (Some(lat), None, None) => {
            if !(-90.0..=90.0).contains(&lat) {
                return Err((LATITUDE, format!("latitude {lat} outside ±90°")));
            }
            let alt = altitude_m.unwrap_or(0.0);
            if !ALTITUDE_M.contains(&alt) {
                return Err((
                    ALTITUDE,
                    format!(
                        "altitude {alt} m outside {} to {} m",
                        ALTITUDE_M.start(),
                        ALTITUDE_M.end()
                    ),
                ));
            }
            Ok(GroundPosition::Geodetic {
                lon_deg,
                lat_deg: lat,
                alt_m: alt,
            })
        }
        (None, Some(c), Some(sn)) => {
            let rho = c.hypot(sn);
            if !RHO.contains(&rho) || c < 0.0 {
                return Err((
                    PARALLAX,
                    format!(
                        "parallax constants ({c}, {sn}) put the site {rho} Earth radii from the \
                         centre, not on the ground ({} to {})",
                        RHO.start(),
                        RHO.end()
                    ),
                ));
            }
            Ok(GroundPosition::Parallax {
                lon_deg,
                rho_cos_phi: c,
                rho_sin_phi: sn,
            })
        }
        _ => Err((
            LATITUDE,
            "give latitude_deg (and altitude_m), or rho_cos_phi and rho_sin_phi".into(),
        )),
    }
}

/// The line (from 1) of the `k`-th `[[site]]` entry's (from 0) first key among `names` (a key and
/// its aliases), else of the entry's header; 0 when the file holds no such header (an inline array).
pub fn line_of(text: &str, k: usize, names: &[&str]) -> usize {
    let lines: Vec<&str> = text.lines().collect();
    // `[[site]]`, also written `[[ site ]]`.
    let is_header = |line: &str| {
        let bare: String = line.chars().filter(|c| !c.is_whitespace()).collect();
        bare.starts_with("[[site]]")
    };
    let headers: Vec<usize> = (0..lines.len()).filter(|&i| is_header(lines[i])).collect();
    let Some(&start) = headers.get(k) else {
        return 0;
    };
    // The entry runs to the next table header.
    let end = (start + 1..lines.len())
        .find(|&i| lines[i].trim_start().starts_with('['))
        .unwrap_or(lines.len());
    let is_key = |line: &str| {
        let l = line.trim_start();
        names.iter().any(|n| {
            l.strip_prefix(n)
                .is_some_and(|rest| rest.trim_start().starts_with('='))
        })
    };
    (start + 1..end)
        .find(|&i| is_key(lines[i]))
        .unwrap_or(start)
        + 1
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "# sites\n[[site]]\ncode = \"A\"\nlatitude_deg = 10\n\n[[site]]\ncode = \"B\"\n\
                        lat_deg = 95\naltitude_m = 1e9\n";

    #[test]
    fn a_key_is_found_in_its_own_entry_by_any_of_its_names() {
        assert_eq!(line_of(TEXT, 0, &["latitude_deg", "lat_deg"]), 4);
        assert_eq!(line_of(TEXT, 1, &["latitude_deg", "lat_deg"]), 8);
        assert_eq!(line_of(TEXT, 1, &["altitude_m"]), 9);
        let spaced = "[[ site ]]\ncode = \"A\"\n[[site]] # second\ncode = \"B\"\n";
        assert_eq!(line_of(spaced, 1, &["code"]), 4);
    }

    #[test]
    fn a_missing_key_points_at_its_entry_and_a_missing_entry_at_no_line() {
        assert_eq!(line_of(TEXT, 0, &["altitude_m"]), 2);
        assert_eq!(line_of(TEXT, 2, &["code"]), 0);
        assert_eq!(line_of("site = [{ code = \"A\" }]", 0, &["code"]), 0);
    }
}
