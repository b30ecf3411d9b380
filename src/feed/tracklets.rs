//! From a file's bytes to tracklets: checks (size, text, format), parsing, site resolution and grouping
//! of observations by object.

use super::InputError;
use super::ades::{self, AdesRecord};
pub use super::merge::{dedupe, merge};
use super::sanitize::clean;
use super::sites::SiteTable;
use crate::fitting::input::{Observation, Tracklet};
use crate::physics::constants::{AU_KM, DEG};
use crate::physics::observe::ObserverLocation;
use std::collections::BTreeMap;

/// Limits on what one file may hold.
#[derive(Debug, Clone, Copy)]
pub struct Limits {
    pub max_bytes: u64,
    pub max_observations: usize,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_bytes: 64 * 1024 * 1024,
            max_observations: 200_000,
        }
    }
}

/// What a file gave: tracklets, and everything it could not take in.
#[derive(Debug, Default)]
pub struct FileIntake {
    pub tracklets: Vec<Tracklet>,
    pub errors: Vec<InputError>,
    /// The whole file was refused (errors then says why).
    pub rejected: bool,
}

fn whole_file(file: &str, reason: String) -> FileIntake {
    FileIntake {
        tracklets: Vec::new(),
        errors: vec![InputError {
            file: clean(file),
            line: 0,
            column: None,
            reason: clean(&reason),
        }],
        rejected: true,
    }
}

/// Read tracklets from the bytes of one file.
pub fn read_bytes(file: &str, bytes: &[u8], sites: &SiteTable, limits: &Limits) -> FileIntake {
    if bytes.len() as u64 > limits.max_bytes {
        return whole_file(
            file,
            format!(
                "{} bytes is over the {}-byte limit",
                bytes.len(),
                limits.max_bytes
            ),
        );
    }
    if bytes.is_empty() {
        return whole_file(file, "empty file".into());
    }
    if bytes.contains(&0) {
        return whole_file(file, "binary file (contains NUL bytes)".into());
    }
    let text = match std::str::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            return whole_file(
                file,
                format!(
                    "not UTF-8 text (invalid byte at offset {})",
                    e.valid_up_to()
                ),
            );
        }
    };
    let body = text.strip_prefix('\u{feff}').unwrap_or(text);
    // XML is read as a stream that stops at the observation limit itself; its line count says
    // nothing about the number of records.
    let xml = super::ades_xml::looks_like_xml(body);
    // Bound the work (and memory) before parsing: a file with more data lines than the observation
    // limit allows is refused from a count of its lines, without building a record for each.
    let data_lines = body
        .lines()
        .filter(|l| {
            let t = l.trim();
            !t.is_empty() && !t.starts_with('#')
        })
        .count();
    // A PSV record is one line; an 80-column observation may take two (a second line for a roving
    // or space-based observer's position).
    let psv = !xml && ades::looks_like_psv(body);
    let lines_per_record = if psv { 1 } else { 2 };
    if !xml
        && data_lines
            > limits
                .max_observations
                .saturating_mul(lines_per_record)
                .saturating_add(HEADER_ALLOWANCE)
    {
        return whole_file(
            file,
            format!(
                "{data_lines} data lines is over the {}-observation limit (refused before parsing)",
                limits.max_observations
            ),
        );
    }
    let (records, mut errors) = if xml {
        super::ades_xml::parse(file, body, limits.max_observations)
    } else if psv {
        ades::parse(file, body)
    } else if super::obs80::looks_like_obs80(body) {
        super::obs80::parse(file, body)
    } else if body
        .lines()
        .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
    {
        return whole_file(file, "no observations in file".into());
    } else {
        return whole_file(
            file,
            "format not recognised (neither ADES XML, an ADES PSV header line nor 80-column records)"
                .into(),
        );
    };
    if records.len() > limits.max_observations {
        return whole_file(
            file,
            format!(
                "{} observations is over the {}-observation limit",
                records.len(),
                limits.max_observations
            ),
        );
    }
    let rejected = records.is_empty();
    let mut groups: BTreeMap<String, Vec<Observation>> = BTreeMap::new();
    for r in records {
        match observation(file, &r, sites) {
            Ok(o) => groups.entry(r.object.clone()).or_default().push(o),
            Err(e) => errors.push(e),
        }
    }
    let tracklets = groups
        .into_iter()
        .map(|(object, obs)| Tracklet::new(object, clean(file), dedupe(obs)))
        .collect();
    FileIntake {
        tracklets,
        errors,
        rejected,
    }
}

/// Merge tracklets of the same object (from several files) into one, duplicates removed. The merged
/// tracklet's source lists the files it came from, separated by "; ", in order of first appearance.
/// Lines beyond the observation limit (twice it for 80-column files, whose records may take two
/// lines) plus this many header lines mean a file is refused before it is parsed.
const HEADER_ALLOWANCE: usize = 1000;

/// Apparent magnitudes a position can carry: from brighter than any comet or close flyby has been to
/// fainter than any telescope reaches (common practice, no source). Outside, the number is a unit or
/// a typing mistake, and it would decide the object's size, and through the population, its P.
pub const APPARENT_MAG: std::ops::RangeInclusive<f64> = -15.0..=35.0;
/// Roving observers: altitudes accepted (m), from below the lowest land to above the highest
/// observing aircraft (common practice, no source).
pub const MIN_ALT_M: f64 = -500.0;
pub const MAX_ALT_M: f64 = 20_000.0;
/// Space-based observers given about the geocentre: outside the Earth and within 10 million km
/// (well beyond the Sun–Earth L2 point; farther spacecraft are given about the Sun).
pub const MIN_GEOCENTRIC_KM: f64 = 6_300.0;
pub const MAX_GEOCENTRIC_KM: f64 = 1.0e7;
/// Observers given about the Sun (au).
pub const MIN_HELIOCENTRIC_AU: f64 = 0.05;
pub const MAX_HELIOCENTRIC_AU: f64 = 100.0;
/// Reported position uncertainties accepted (arcsec): below the best astrometry by far and above a
/// degree nothing is a position any more. The fit also floors σ at 0.1″.
pub const MIN_RMS_ARCSEC: f64 = 1e-3;
pub const MAX_RMS_ARCSEC: f64 = 3600.0;

fn observation(file: &str, r: &AdesRecord, sites: &SiteTable) -> Result<Observation, InputError> {
    let err = |column: &str, reason: String| InputError {
        file: clean(file),
        line: r.line,
        column: Some(column.into()),
        reason: clean(&reason),
    };
    for (name, v) in [("rmsRA", r.rms_ra), ("rmsDec", r.rms_dec)] {
        if let Some(x) = v
            && !(MIN_RMS_ARCSEC..=MAX_RMS_ARCSEC).contains(&x)
        {
            return Err(err(
                name,
                format!("{x}\" is outside the accepted {MIN_RMS_ARCSEC}..{MAX_RMS_ARCSEC}\""),
            ));
        }
    }
    let time = r
        .time
        .instant()
        .map_err(|e| err("obsTime", e.to_string()))?;
    // Past the Earth model's dates no observer position exists: the line is refused here, not the
    // whole tracklet when it is fitted (one such line once failed eleven good ones).
    if let Err(e) = crate::physics::earth::covers(time.tdb) {
        return Err(err("obsTime", e.to_string()));
    }
    let location = match &r.observer_pos {
        // A roving observer: the ground point is given on the record itself.
        Some((sys, ctr, p)) if sys == "WGS84" => {
            if *ctr != 399 {
                return Err(err(
                    "ctr",
                    format!("{ctr}: a WGS84 position is on the Earth (ctr 399)"),
                ));
            }
            if !(-360.0..=360.0).contains(&p[0]) {
                return Err(err("pos1", format!("longitude {} is not an angle", p[0])));
            }
            if !(-90.0..=90.0).contains(&p[1]) {
                return Err(err("pos2", format!("latitude {} is outside ±90°", p[1])));
            }
            if !(MIN_ALT_M..=MAX_ALT_M).contains(&p[2]) {
                return Err(err(
                    "pos3",
                    format!(
                        "altitude {} m is outside {MIN_ALT_M}..{MAX_ALT_M} m (a ground or airborne observer)",
                        p[2]
                    ),
                ));
            }
            ObserverLocation::Ground(crate::physics::site::GroundPosition::Geodetic {
                lon_deg: p[0],
                lat_deg: p[1],
                alt_m: p[2],
            })
        }
        Some((sys, ctr, p)) => {
            let scale = match sys.as_str() {
                "ICRF_KM" => 1.0,
                "ICRF_AU" => AU_KM,
                other => {
                    return Err(err(
                        "sys",
                        format!("'{other}' is not supported (use ICRF_KM or ICRF_AU)"),
                    ));
                }
            };
            let dist_km = (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]).sqrt() * scale;
            match ctr {
                399 if !(MIN_GEOCENTRIC_KM..=MAX_GEOCENTRIC_KM).contains(&dist_km) => {
                    return Err(err(
                        "pos1",
                        format!(
                            "a geocentric observer {dist_km:.0} km from the geocentre is outside \
                             {MIN_GEOCENTRIC_KM:.0}..{MAX_GEOCENTRIC_KM:.0} km (farther ones are given \
                             about the Sun, ctr 10)"
                        ),
                    ));
                }
                10 if !(MIN_HELIOCENTRIC_AU..=MAX_HELIOCENTRIC_AU).contains(&(dist_km / AU_KM)) => {
                    return Err(err(
                        "pos1",
                        format!(
                            "a heliocentric observer at {:.4} au is outside \
                             {MIN_HELIOCENTRIC_AU}..{MAX_HELIOCENTRIC_AU} au",
                            dist_km / AU_KM
                        ),
                    ));
                }
                399 => ObserverLocation::Geocentric {
                    pos_km: [p[0] * scale, p[1] * scale, p[2] * scale],
                },
                10 => ObserverLocation::Heliocentric {
                    pos_au: [
                        p[0] * scale / AU_KM,
                        p[1] * scale / AU_KM,
                        p[2] * scale / AU_KM,
                    ],
                },
                other => {
                    return Err(err(
                        "ctr",
                        format!("centre {other} is not supported (399 or 10)"),
                    ));
                }
            }
        }
        None => match sites.get(&r.stn) {
            Some(s) => ObserverLocation::Ground(s.position),
            None if sites.off_ground(&r.stn) => {
                return Err(err(
                    "stn",
                    format!(
                        "site code '{}' has no parallax constants in the site-code table (an \
                         observer off the ground): the line must carry the observer's position",
                        r.stn
                    ),
                ));
            }
            None => {
                return Err(err(
                    "stn",
                    format!(
                        "unknown site code '{}' (give --sites or --site-codes)",
                        r.stn
                    ),
                ));
            }
        },
    };
    Ok(Observation {
        time,
        ra: r.ra_deg * DEG,
        dec: r.dec_deg * DEG,
        sigma_ra_arcsec: r.rms_ra,
        sigma_dec_arcsec: r.rms_dec,
        correlation: r.rms_corr,
        site_code: r.stn.clone(),
        location,
        mag: r.mag,
        band: r.band.clone(),
        origin: format!("{}:{}", clean(file), r.line),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_observation_reported_in_two_precisions_is_kept_once() {
        use crate::physics::time::UtcTime;
        let at = |s: &str| UtcTime::parse(s).unwrap().instant().unwrap();
        let fine = crate::testutil::observation(
            at("2027-02-24T03:08:38.816Z"),
            136.671_939_3,
            -60.445_191_9,
        );
        // The same exposure as an 80-column record keeps: the time to 10⁻⁵ day, RA to 1 ms of time.
        let coarse =
            crate::testutil::observation(at("2027-02-24T03:08:38.400Z"), 136.671_946, -60.445_19);
        // The report that states its uncertainty stands, whichever came first.
        let mut stated = coarse.clone();
        stated.sigma_ra_arcsec = Some(0.2);
        stated.sigma_dec_arcsec = Some(0.2);
        for pair in [
            vec![fine.clone(), stated.clone()],
            vec![stated.clone(), fine.clone()],
        ] {
            let one = dedupe(pair);
            assert_eq!(one.len(), 1);
            assert_eq!(one[0].sigma_ra_arcsec, Some(0.2));
        }
        let mut elsewhere = coarse.clone();
        elsewhere.site_code = "TV2".into();
        let later = crate::testutil::observation(
            at("2027-02-24T03:08:40.000Z"),
            136.671_939_3,
            -60.445_191_9,
        );
        let moved =
            crate::testutil::observation(at("2027-02-24T03:08:38.600Z"), 136.672_5, -60.445_191_9);
        let kept = dedupe(vec![coarse.clone(), fine.clone()]);
        assert_eq!(kept.len(), 1);
        // Whatever order the reports came in, the same one stands.
        let again = dedupe(vec![fine, coarse]);
        assert_eq!(again.len(), 1);
        assert_eq!(kept[0].time.tt, again[0].time.tt);
        // Another site, a second later, or 1″ away: another observation.
        for other in [elsewhere, later, moved] {
            assert_eq!(dedupe(vec![kept[0].clone(), other]).len(), 2);
        }
    }

    const A: &str = "trkSub|stn|obsTime|ra|dec\nqk0f3ra|TV1|2027-02-26T03:00:00Z|120.5|10.25\nqk0f3ra|TV1|2027-02-26T03:30:00Z|120.51|10.26\n";
    /// The second position again (from a partner's file), and one at the same time from another site.
    const B: &str = "trkSub|stn|obsTime|ra|dec\nqk0f3ra|TV1|2027-02-26T03:30:00Z|120.51|10.26\nqk0f3ra|TV2|2027-02-26T03:30:00Z|120.52|10.26\n";

    #[test]
    fn an_observation_reported_twice_is_kept_once_and_another_sites_is_kept() {
        let sites = SiteTable::builtin();
        let mut all = read_bytes("a.psv", A.as_bytes(), &sites, &Limits::default()).tracklets;
        all.extend(read_bytes("b.psv", B.as_bytes(), &sites, &Limits::default()).tracklets);
        let merged = merge(all);
        assert_eq!(merged.len(), 1);
        let t = &merged[0];
        assert_eq!(t.obs.len(), 3, "{:?}", t.obs);
        assert_eq!(t.source, "a.psv; b.psv");
        // In time order.
        assert!(
            t.obs
                .windows(2)
                .all(|w| w[0].time.tt.minus(w[1].time.tt) <= 0.0)
        );
    }

    /// Regression: a roving observer's WGS84 point about the Moon (ctr 301), or at a longitude of
    /// 10¹⁴°, was fitted as a point on the Earth.
    #[test]
    fn a_roving_observer_is_on_the_earth_at_a_longitude_that_is_an_angle() {
        let head = "trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\n";
        let row = "qk0f3ra|247|2027-02-26T03:00:00Z|120.5|10.25|WGS84";
        let read = |rest: &str| {
            let text = format!("{head}{row}|{rest}\n");
            read_bytes(
                "r.psv",
                text.as_bytes(),
                &SiteTable::builtin(),
                &Limits::default(),
            )
        };
        assert!(read("399|10.5|45|300").errors.is_empty());
        for (rest, column) in [("301|10.5|45|300", "ctr"), ("399|1e14|45|300", "pos1")] {
            let got = read(rest);
            assert!(got.tracklets.is_empty(), "{rest}");
            assert_eq!(
                got.errors[0].column.as_deref(),
                Some(column),
                "{rest}: {:?}",
                got.errors
            );
        }
    }
}
