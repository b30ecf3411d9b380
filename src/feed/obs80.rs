//! The trade's fixed-column 80-character optical astrometry record: one line per position (columns 1–12
//! the designation, 15 the observation type, 16–32 the UTC date with fractional day, 33–44 RA as
//! hh mm ss.ss, 45–56 Dec as sdd mm ss.s, 66–71 magnitude and band, 78–80 the site code), with a second
//! line for satellite-based observers (type `S`/`s`: geocentric position in km or AU) and for roving
//! observers (type `V`/`v`: longitude, latitude, altitude).

use super::InputError;
use super::ades::AdesRecord;
use super::sanitize::clean;
use crate::physics::time::UtcTime;

/// Whether text looks like 80-column records (a date in columns 16–32 of the first data line).
pub fn looks_like_obs80(text: &str) -> bool {
    text.lines()
        .map(|l| l.trim_end_matches('\r'))
        .find(|l| !l.trim().is_empty())
        .is_some_and(|l| {
            let c: Vec<char> = l.chars().collect();
            c.len() >= 56
                && c[15..19].iter().all(|d| d.is_ascii_digit())
                && c[19] == ' '
                && c[22] == ' '
        })
}

fn field(c: &[char], from: usize, to: usize) -> String {
    // 1-based inclusive columns, as the format is documented.
    c.iter()
        .skip(from - 1)
        .take(to + 1 - from)
        .collect::<String>()
}

fn sexagesimal(text: &str, hours: bool) -> Option<f64> {
    let t = text.trim();
    let (sign, body) = match t.chars().next()? {
        '-' => (-1.0, &t[1..]),
        '+' => (1.0, &t[1..]),
        _ => (1.0, t),
    };
    let parts: Vec<&str> = body.split_whitespace().collect();
    if parts.is_empty() || parts.len() > 3 {
        return None;
    }
    let mut v = 0.0;
    let mut scale = 1.0;
    for (k, p) in parts.iter().enumerate() {
        let x: f64 = p.parse().ok()?;
        // Minutes and seconds run below 60 (an RA of 20 75 06.82 is no position).
        if !x.is_finite() || x < 0.0 || (k > 0 && x >= 60.0) {
            return None;
        }
        v += x * scale;
        scale /= 60.0;
    }
    Some(sign * v * if hours { 15.0 } else { 1.0 })
}

/// Parse 80-column records.
pub fn parse(file: &str, text: &str) -> (Vec<AdesRecord>, Vec<InputError>) {
    let file = clean(file);
    let mut good: Vec<AdesRecord> = Vec::new();
    let mut bad = Vec::new();
    let err = |line: usize, column: &str, reason: String| InputError {
        file: file.clone(),
        line,
        column: Some(column.into()),
        reason: clean(&reason),
    };
    let lines: Vec<&str> = text.lines().map(|l| l.trim_end_matches('\r')).collect();
    let mut k = 0;
    while k < lines.len() {
        let line_no = k + 1;
        let raw = lines[k];
        k += 1;
        if raw.trim().is_empty() {
            continue;
        }
        let c: Vec<char> = raw.chars().collect();
        if c.len() < 80 {
            bad.push(err(
                line_no,
                "1-80",
                format!("{} characters where 80 are needed", c.len()),
            ));
            continue;
        }
        if c.len() > 80 && c[80..].iter().any(|ch| !ch.is_whitespace()) {
            bad.push(err(
                line_no,
                "81",
                format!("{} characters where 80 are expected", c.len()),
            ));
            continue;
        }
        let kind = c[14];
        if matches!(kind, 's' | 'v') {
            bad.push(err(
                line_no,
                "15",
                "second line of a two-line record without its first line".into(),
            ));
            continue;
        }
        let id = crate::feed::sanitize::clean_id(field(&c, 1, 12).trim());
        if id.is_empty() {
            bad.push(err(line_no, "1-12", "no designation".into()));
            continue;
        }
        match first_line(line_no, &c, id) {
            Ok(mut rec) => {
                if matches!(kind, 'S' | 'V') {
                    // The second line must follow.
                    let Some(next) = lines.get(k) else {
                        bad.push(err(
                            line_no,
                            "15",
                            "two-line record cut short: second line missing".into(),
                        ));
                        continue;
                    };
                    k += 1;
                    let n: Vec<char> = next.chars().collect();
                    let want = if kind == 'S' { 's' } else { 'v' };
                    if n.len() < 80 || n[14] != want {
                        bad.push(err(
                            line_no + 1,
                            "15",
                            format!("expected the second line (type '{want}')"),
                        ));
                        continue;
                    }
                    match second_line(&n, kind) {
                        Ok(pos) => rec.observer_pos = pos,
                        Err((col, reason)) => {
                            bad.push(err(line_no + 1, &col, reason));
                            continue;
                        }
                    }
                }
                good.push(rec);
            }
            Err((col, reason)) => bad.push(err(line_no, &col, reason)),
        }
    }
    (good, bad)
}

type FieldError = (String, String);

fn first_line(line: usize, c: &[char], object: String) -> Result<AdesRecord, FieldError> {
    let date = field(c, 16, 32);
    let parts: Vec<&str> = date.split_whitespace().collect();
    let bad_date = || {
        (
            "16-32".to_string(),
            format!("'{}' is not a date (YYYY MM DD.dddddd)", clean(date.trim())),
        )
    };
    if parts.len() != 3 {
        return Err(bad_date());
    }
    let year: i32 = parts[0].parse().map_err(|_| bad_date())?;
    let month: u32 = parts[1].parse().map_err(|_| bad_date())?;
    let dayf: f64 = parts[2].parse().map_err(|_| bad_date())?;
    if !(1.0..32.0).contains(&dayf) {
        return Err(bad_date());
    }
    let day = dayf.floor() as u32;
    let secs = (dayf - dayf.floor()) * 86_400.0;
    let hour = (secs / 3600.0).floor().min(23.0) as u32;
    let minute = ((secs - f64::from(hour) * 3600.0) / 60.0).floor().min(59.0) as u32;
    let second = (secs - f64::from(hour * 3600 + minute * 60)).clamp(0.0, 59.999_999);
    let time = UtcTime::new(year, month, day, hour, minute, second)
        .map_err(|e| ("16-32".to_string(), e.to_string()))?;
    let ra = sexagesimal(&field(c, 33, 44), true).ok_or_else(|| {
        (
            "33-44".to_string(),
            format!(
                "'{}' is not a right ascension",
                clean(field(c, 33, 44).trim())
            ),
        )
    })?;
    if !(0.0..360.0).contains(&ra) {
        return Err(("33-44".into(), format!("{ra:.6}° is outside 0 ≤ RA < 24h")));
    }
    let dec = sexagesimal(&field(c, 45, 56), false).ok_or_else(|| {
        (
            "45-56".to_string(),
            format!("'{}' is not a declination", clean(field(c, 45, 56).trim())),
        )
    })?;
    if !(-90.0..=90.0).contains(&dec) {
        return Err(("45-56".into(), format!("{dec:.6}° is outside ±90°")));
    }
    let mag_text = field(c, 66, 70);
    let mag = match mag_text.trim() {
        "" => None,
        m => Some(
            m.parse::<f64>()
                .ok()
                .filter(|x| super::tracklets::APPARENT_MAG.contains(x))
                .ok_or_else(|| {
                    (
                        "66-70".to_string(),
                        format!("'{}' is not a magnitude", clean(m)),
                    )
                })?,
        ),
    };
    let band = Some(field(c, 71, 71).trim().to_string())
        .filter(|b| !b.is_empty())
        .map(|b| clean(&b));
    let stn = clean(field(c, 78, 80).trim());
    if stn.is_empty() {
        return Err(("78-80".into(), "no site code".into()));
    }
    Ok(AdesRecord {
        line,
        object,
        trk_sub: None,
        mode: Some(c[14].to_string()),
        stn,
        time_text: time.to_string(),
        time,
        ra_deg: ra,
        dec_deg: dec,
        rms_ra: None,
        rms_dec: None,
        rms_corr: None,
        ast_cat: None,
        mag,
        rms_mag: None,
        band,
        observer_pos: None,
    })
}

fn second_line(c: &[char], kind: char) -> Result<Option<(String, i64, [f64; 3])>, FieldError> {
    let num = |a: usize, b: usize, what: &str| -> Result<f64, FieldError> {
        let t = field(c, a, b).replace(' ', "");
        t.parse::<f64>()
            .ok()
            .filter(|x| x.is_finite())
            .ok_or_else(|| {
                (
                    format!("{a}-{b}"),
                    format!("'{}' is not a {what}", clean(&t)),
                )
            })
    };
    if kind == 'S' {
        let unit = match c[32] {
            '1' => "ICRF_KM",
            '2' => "ICRF_AU",
            other => {
                return Err((
                    "33".into(),
                    format!(
                        "unit flag '{}' is neither 1 (km) nor 2 (AU)",
                        clean(&other.to_string())
                    ),
                ));
            }
        };
        let p = [
            num(35, 45, "coordinate")?,
            num(47, 57, "coordinate")?,
            num(59, 69, "coordinate")?,
        ];
        Ok(Some((unit.to_string(), 399, p)))
    } else {
        // Roving observer: longitude (E), latitude, altitude (m); resolved to a ground site downstream.
        let lon = num(35, 44, "longitude")?;
        let lat = num(46, 55, "latitude")?;
        let alt = num(57, 61, "altitude")?;
        if !(-90.0..=90.0).contains(&lat) {
            return Err(("46-55".into(), format!("latitude {lat} outside ±90°")));
        }
        // A point on the Earth: centre 399, as the observer-position columns of ADES give it.
        Ok(Some(("WGS84".to_string(), 399, [lon, lat, alt])))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn line(id: &str, kind: char, date: &str, ra: &str, dec: &str, mag: &str, stn: &str) -> String {
        let mut s =
            format!("{id:<12}  {kind}{date:<17}{ra:<12}{dec:<12}         {mag:<6}      {stn:>3}");
        while s.chars().count() < 80 {
            s.push(' ');
        }
        s
    }

    #[test]
    fn ccd_line_parses_and_detects() {
        let l = line(
            "     qka2e7f",
            'C',
            "2027 02 24.31234",
            "10 34 14.20",
            "+19 09 31.0",
            "18.6 G",
            "TV1",
        );
        assert_eq!(l.chars().count(), 80);
        assert!(looks_like_obs80(&l));
        let (good, bad) = parse("x.txt", &l);
        assert!(bad.is_empty(), "{bad:?}");
        let r = &good[0];
        assert_eq!(r.object, "qka2e7f");
        assert!((r.ra_deg - (10.0 + 34.0 / 60.0 + 14.2 / 3600.0) * 15.0).abs() < 1e-9);
        assert!((r.dec_deg - (19.0 + 9.0 / 60.0 + 31.0 / 3600.0)).abs() < 1e-9);
        assert_eq!((r.time.hour, r.time.minute), (7, 29));
        assert_eq!(r.stn, "TV1");
        assert_eq!(r.mag, Some(18.6));
    }

    #[test]
    fn satellite_two_line_record_carries_the_observer_position() {
        let first = line(
            "     qka2e7f",
            'S',
            "2027 02 24.31234",
            "10 34 14.20",
            "-09 09 31.0",
            "",
            "TV9",
        );
        let mut second: Vec<char> =
            line("     qka2e7f", 's', "2027 02 24.31234", "", "", "", "TV9")
                .chars()
                .collect();
        let coords = "1 - 6000.1234 + 1200.5000 + 3000.0000";
        for (i, ch) in coords.chars().enumerate() {
            second[32 + i] = ch;
        }
        let text = format!("{first}\n{}\n", second.iter().collect::<String>());
        let (good, bad) = parse("sat.txt", &text);
        assert!(bad.is_empty(), "{bad:?}");
        let (sys, ctr, p) = good[0].observer_pos.clone().unwrap();
        assert_eq!((sys.as_str(), ctr), ("ICRF_KM", 399));
        assert!((p[0] + 6000.1234).abs() < 1e-9 && (p[2] - 3000.0).abs() < 1e-9);
        assert!((good[0].dec_deg + 9.158_611).abs() < 1e-5);
    }

    #[test]
    fn bad_fields_name_their_columns() {
        let l = line(
            "     qka2e7f",
            'C',
            "2027 02 30.31234",
            "10 34 14.20",
            "+19 09 31.0",
            "",
            "TV1",
        );
        let (_, bad) = parse("x.txt", &l);
        assert_eq!(
            bad[0].to_string(),
            "x.txt: line 1, column 16-32: 2027-02-30 is not a date"
        );
        let l = line(
            "     qka2e7f",
            'C',
            "2027 02 24.31234",
            "24 00 01.00",
            "+19 09 31.0",
            "",
            "TV1",
        );
        let (_, bad) = parse("x.txt", &l);
        assert_eq!(bad[0].column.as_deref(), Some("33-44"));
        let (_, bad) = parse("x.txt", "short line\n");
        assert!(bad[0].reason.contains("80 are needed"));
    }

    #[test]
    fn minutes_or_seconds_of_sixty_or_more_are_no_position() {
        for (ra, dec, column) in [
            ("20 75 06.82", "-49 50 17.8", "33-44"),
            ("20 04 60.00", "-49 50 17.8", "33-44"),
            ("20 04 06.82", "-49 50 75.0", "45-56"),
            ("20 04 06.82", "-49 60 17.8", "45-56"),
        ] {
            let l = line("     m750001", 'C', "2026 11 26.28523", ra, dec, "", "TV1");
            let (ok, bad) = parse("x.txt", &l);
            assert!(ok.is_empty(), "{ra} {dec}");
            assert_eq!(bad[0].column.as_deref(), Some(column), "{ra} {dec}");
        }
        // 59.99 is fine.
        let l = line(
            "     m750001",
            'C',
            "2026 11 26.28523",
            "20 04 59.99",
            "-49 59 59.9",
            "",
            "TV1",
        );
        assert!(parse("x.txt", &l).1.is_empty());
    }

    /// Regression: a roving observer's pair came out about centre 0, which the feed refuses for a
    /// WGS84 point (it must be on the Earth, centre 399): every such record was rejected.
    #[test]
    fn a_roving_observers_pair_is_read_as_a_point_on_the_earth() {
        let text = "     rov0003  V2026 11 26.28523 20 04 06.82 -49 50 17.8                      247\n     rov0003  v2026 11 26.28523     242.0300   +36.1200  1650                247\n     rov0003  C2026 11 26.30259 20 04 09.08 -49 50 55.2                      TV1\n";
        let (records, bad) = parse("r.txt", text);
        assert!(bad.is_empty(), "{bad:?}");
        assert_eq!(records.len(), 2);
        let sites = crate::feed::sites::SiteTable::builtin();
        let limits = crate::feed::tracklets::Limits::default();
        let intake = crate::feed::tracklets::read_bytes("r.txt", text.as_bytes(), &sites, &limits);
        assert!(intake.errors.is_empty(), "{:?}", intake.errors);
        assert_eq!(intake.tracklets[0].obs.len(), 2);
    }
}
