//! UTC → TAI → TT → TDB with an explicit leap-second table, and Julian dates kept in two parts so that
//! milliseconds survive over centuries.
//!
//! chrono knows no leap seconds, so the table lives beside this module (`calendar`). It must be updated when the IERS announces a
//! new leap second (see DEVELOPERS.md): dates past [`LEAP_TABLE_VALID_BEFORE`] are still converted, with
//! the last known offset, but flagged [`TableStatus::Extrapolated`] so the caller can warn instead of
//! silently guessing.

use super::calendar::day_has_leap_second;
pub use super::calendar::{
    LEAP_TABLE_VALID_BEFORE, TableStatus, days_in_month, midnight_jd, tai_minus_utc,
};
use super::constants::DAY_S;
use thiserror::Error;

/// A Julian date split in two parts (`jd1` usually the midnight or the integer part, `jd2` the rest).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Jd2 {
    pub jd1: f64,
    pub jd2: f64,
}

impl Jd2 {
    pub const fn new(jd1: f64, jd2: f64) -> Self {
        Jd2 { jd1, jd2 }
    }
    /// The date as one number (loses sub-millisecond precision; fine for display and coarse tables).
    pub fn value(self) -> f64 {
        self.jd1 + self.jd2
    }
    /// `self − other` in days, computed part by part to keep precision.
    pub fn minus(self, other: Jd2) -> f64 {
        (self.jd1 - other.jd1) + (self.jd2 - other.jd2)
    }
    /// This date shifted by `days`.
    pub fn plus_days(self, days: f64) -> Jd2 {
        Jd2::new(self.jd1, self.jd2 + days)
    }
}

/// Why a time could not be converted.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum TimeError {
    #[error("'{0}' is not an ISO 8601 UTC time (expected YYYY-MM-DDThh:mm:ss[.fff][Z])")]
    Syntax(String),
    #[error("{0} is not a date")]
    NotADate(String),
    #[error("{0} is not a time of day")]
    NotATime(String),
    #[error("{0}: second 60 exists only in the last minute of a day that ends with a leap second")]
    NoLeapSecond(String),
    #[error("{0} is before 1972-01-01, where UTC had no integral leap-second table")]
    BeforeTable(String),
}

/// A validated UTC calendar time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UtcTime {
    pub year: i32,
    pub month: u32,
    pub day: u32,
    pub hour: u32,
    pub minute: u32,
    /// Seconds, 0 ≤ s < 60, or < 61 in the last minute of a leap-second day.
    pub second: f64,
}

/// One instant in the scales the fit needs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Instant {
    pub tai: Jd2,
    pub tt: Jd2,
    pub tdb: Jd2,
    /// UT1, taken equal to UTC (|DUT1| < 0.9 s moves a site by < 0.4 km).
    pub ut1: Jd2,
    pub status: TableStatus,
}

impl Instant {
    /// The same instant moved by `days` on every scale (leap seconds inside the shift are not
    /// re-examined: fine for ephemeris grids of hours to days).
    pub fn plus_days(&self, days: f64) -> Instant {
        Instant {
            tai: self.tai.plus_days(days),
            tt: self.tt.plus_days(days),
            tdb: self.tdb.plus_days(days),
            ut1: self.ut1.plus_days(days),
            status: self.status,
        }
    }
}

impl UtcTime {
    /// Build and validate a UTC calendar time.
    pub fn new(
        year: i32,
        month: u32,
        day: u32,
        hour: u32,
        minute: u32,
        second: f64,
    ) -> Result<UtcTime, TimeError> {
        let shown = format!("{year:04}-{month:02}-{day:02}");
        if !(1..=12).contains(&month) || day == 0 || day > days_in_month(year, month) {
            return Err(TimeError::NotADate(shown));
        }
        let clock = format!("{shown}T{hour:02}:{minute:02}:{second:06.3}");
        if hour > 23 || minute > 59 || !second.is_finite() || !(0.0..61.0).contains(&second) {
            return Err(TimeError::NotATime(clock));
        }
        if second >= 60.0 && !(hour == 23 && minute == 59 && day_has_leap_second(year, month, day))
        {
            return Err(TimeError::NoLeapSecond(clock));
        }
        Ok(UtcTime {
            year,
            month,
            day,
            hour,
            minute,
            second,
        })
    }

    /// Parse `YYYY-MM-DDThh:mm:ss[.fff][Z|+00:00]` (also a space for `T`, and `hh:mm` without seconds).
    pub fn parse(text: &str) -> Result<UtcTime, TimeError> {
        let syntax = || TimeError::Syntax(text.chars().take(40).collect());
        let s = text.trim();
        let s = s
            .strip_suffix('Z')
            .or_else(|| s.strip_suffix("+00:00"))
            .unwrap_or(s);
        let (date, clock) = s.split_once(['T', ' ']).ok_or_else(syntax)?;
        let mut dp = date.split('-');
        let (ys, ms, ds) = (dp.next(), dp.next(), dp.next());
        if dp.next().is_some() {
            return Err(syntax());
        }
        let num = |p: Option<&str>, width: usize| -> Result<u32, TimeError> {
            let p = p.ok_or_else(syntax)?;
            if p.len() != width || !p.bytes().all(|b| b.is_ascii_digit()) {
                return Err(syntax());
            }
            p.parse().map_err(|_| syntax())
        };
        let year = num(ys, 4)? as i32;
        let month = num(ms, 2)?;
        let day = num(ds, 2)?;
        let mut cp = clock.split(':');
        let hour = num(cp.next(), 2)?;
        let minute = num(cp.next(), 2)?;
        let second = match cp.next() {
            None => 0.0,
            Some(sec) => {
                let int_part = sec.split('.').next().unwrap_or("");
                let valid = int_part.len() == 2
                    && sec.bytes().all(|b| b.is_ascii_digit() || b == b'.')
                    && sec.bytes().filter(|&b| b == b'.').count() <= 1
                    && !sec.ends_with('.');
                if !valid {
                    return Err(syntax());
                }
                sec.parse::<f64>().map_err(|_| syntax())?
            }
        };
        if cp.next().is_some() {
            return Err(syntax());
        }
        UtcTime::new(year, month, day, hour, minute, second)
    }

    /// Seconds of the UTC day since midnight (may reach 86 400+ inside a leap second).
    fn seconds_of_day(&self) -> f64 {
        f64::from(self.hour * 3600 + self.minute * 60) + self.second
    }

    /// Convert to TAI, TT, TDB (and UT1 ≈ UTC).
    pub fn instant(&self) -> Result<Instant, TimeError> {
        let (dat, status) = tai_minus_utc(self.year, self.month, self.day).ok_or_else(|| {
            TimeError::BeforeTable(format!(
                "{:04}-{:02}-{:02}",
                self.year, self.month, self.day
            ))
        })?;
        let midnight = midnight_jd(self.year, self.month, self.day);
        let sod = self.seconds_of_day();
        let tai = Jd2::new(midnight, (sod + dat) / DAY_S);
        let tt = Jd2::new(midnight, (sod + dat + 32.184) / DAY_S);
        // UT1 ≈ UTC; inside a leap second the day is 86 401 s long, as in SOFA's quasi-JD convention.
        let day_len = if day_has_leap_second(self.year, self.month, self.day) {
            DAY_S + 1.0
        } else {
            DAY_S
        };
        let ut1 = Jd2::new(midnight, sod / day_len);
        let tdb = Jd2::new(tt.jd1, tt.jd2 + tdb_minus_tt(tt, ut1.jd2) / DAY_S);
        Ok(Instant {
            tai,
            tt,
            tdb,
            ut1,
            status,
        })
    }
}

/// Nodes of the TDB − TT interpolation per day.
const DTDB_NODES_PER_DAY: f64 = 16.0;

/// TDB − TT (s) at the geocentre: the Fairhead & Bretagnon series as implemented by SOFA `dtdb`,
/// evaluated at nodes every 90 min (kept per thread) and interpolated linearly. The series has hundreds of
/// terms; its fastest (the Moon's, period near a month, about 10 µs amplitude) curves so little over
/// 90 min that the interpolation stays within a nanosecond (tested below), where a nanosecond moves an
/// asteroid by micrometres. The UT fraction enters the series only through topocentric terms, which
/// the geocentre does not have.
fn tdb_minus_tt(tt: Jd2, _ut_fraction: f64) -> f64 {
    use std::cell::RefCell;
    use std::collections::HashMap;
    thread_local! {
        static NODES: RefCell<HashMap<i64, f64>> = RefCell::new(HashMap::new());
    }
    let days = (tt.jd1 - J2000_JD) + tt.jd2;
    let x = days * DTDB_NODES_PER_DAY;
    let k = x.floor();
    let node = |k: f64| {
        NODES.with(|m| {
            let mut m = m.borrow_mut();
            if m.len() > 100_000 {
                m.clear();
            }
            *m.entry(k as i64).or_insert_with(|| {
                sofars::ts::dtdb(J2000_JD, k / DTDB_NODES_PER_DAY, 0.0, 0.0, 0.0, 0.0)
            })
        })
    };
    let (a, b) = (node(k), node(k + 1.0));
    a + (b - a) * (x - k)
}

const J2000_JD: f64 = 2_451_545.0;

/// TT from TDB (inverse of the above; one fixed-point step is enough, the correction is < 2 ms).
pub fn tdb_to_tt(tdb: Jd2) -> Jd2 {
    let d = tdb_minus_tt(tdb, 0.0);
    Jd2::new(tdb.jd1, tdb.jd2 - d / DAY_S)
}

/// UTC calendar time from a TT date (for display; inverse of [`UtcTime::instant`] to < 1 ms).
pub fn tt_to_utc(tt: Jd2) -> UtcTime {
    // TAI − UTC is constant within a day, so look it up for the day found with a provisional offset.
    let mut guess = tt.value() - 69.184 / DAY_S;
    for _ in 0..2 {
        let (y, m, d, _) = calendar_from_jd(guess);
        let dat = tai_minus_utc(y, m, d).map_or(37.0, |x| x.0);
        guess = tt.value() - (dat + 32.184) / DAY_S;
    }
    let (y, m, d, frac) = calendar_from_jd(guess);
    // Inside a leap second the day's own offset puts the instant past the day's 86 400 s (the next
    // day's offset, which the search above settles on, folds it onto 23:59:59, shown twice).
    if day_has_leap_second(y, m, d)
        && let Some((dat, _)) = tai_minus_utc(y, m, d)
    {
        let within = (tt.value() - (dat + 32.184) / DAY_S - (midnight_jd(y, m, d))) * DAY_S;
        let within = (within * 1000.0).round() / 1000.0;
        if (DAY_S..DAY_S + 1.0).contains(&within) {
            return UtcTime {
                year: y,
                month: m,
                day: d,
                hour: 23,
                minute: 59,
                second: within - (DAY_S - 60.0),
            };
        }
    }
    let mut secs = frac * DAY_S;
    secs = (secs * 1000.0).round() / 1000.0;
    let mut day = (y, m, d);
    if secs >= DAY_S {
        secs -= DAY_S;
        let next = calendar_from_jd(midnight_jd(y, m, d) + 1.5);
        day = (next.0, next.1, next.2);
    }
    let hour = (secs / 3600.0).floor() as u32;
    let minute = ((secs - f64::from(hour) * 3600.0) / 60.0).floor() as u32;
    let second = secs - f64::from(hour * 3600 + minute * 60);
    UtcTime {
        year: day.0,
        month: day.1,
        day: day.2,
        hour,
        minute,
        second,
    }
}

/// Gregorian calendar date and fraction of day from a Julian date (Meeus 2nd ed., ch. 7).
pub fn calendar_from_jd(jd: f64) -> (i32, u32, u32, f64) {
    let z = (jd + 0.5).floor();
    let f = jd + 0.5 - z;
    let alpha = ((z - 1_867_216.25) / 36_524.25).floor();
    let a = z + 1.0 + alpha - (alpha / 4.0).floor();
    let b = a + 1524.0;
    let c = ((b - 122.1) / 365.25).floor();
    let d = (365.25 * c).floor();
    let e = ((b - d) / 30.6001).floor();
    let day = (b - d - (30.6001 * e).floor()) as u32;
    let month = if e < 14.0 { e - 1.0 } else { e - 13.0 } as u32;
    let year = if month > 2 { c - 4716.0 } else { c - 4715.0 } as i32;
    (year, month, day, f)
}

impl std::fmt::Display for UtcTime {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{:04}-{:02}-{:02}T{:02}:{:02}:{:06.3}Z",
            self.year, self.month, self.day, self.hour, self.minute, self.second
        )
    }
}

/// Parse an ISO 8601 UTC time straight to an [`Instant`].
pub fn parse_utc(text: &str) -> Result<Instant, TimeError> {
    UtcTime::parse(text)?.instant()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interpolated_tdb_minus_tt_is_the_full_series_to_a_nanosecond() {
        // Against the full series (SOFA dtdb through sofars) at 20,000 instants over two centuries.
        let mut worst: f64 = 0.0;
        for k in 0..20_000 {
            let days = -36_525.0 + k as f64 * 3.652_513_7;
            let tt = Jd2::new(J2000_JD, days);
            let full = sofars::ts::dtdb(tt.jd1, tt.jd2, 0.0, 0.0, 0.0, 0.0);
            worst = worst.max((tdb_minus_tt(tt, 0.3) - full).abs());
        }
        assert!(worst < 1e-9, "{worst} s");
    }

    fn secs(a: &str, b: &str) -> f64 {
        let ta = parse_utc(a).unwrap().tai;
        let tb = parse_utc(b).unwrap().tai;
        tb.minus(ta) * DAY_S
    }

    #[test]
    fn interval_across_2016_leap_second_is_two_seconds() {
        let d = secs("2016-12-31T23:59:59.5Z", "2017-01-01T00:00:00.5Z");
        assert!((d - 2.0).abs() < 1e-6, "{d}");
        let d = secs("2016-12-31T23:59:60.0Z", "2017-01-01T00:00:00.0Z");
        assert!((d - 1.0).abs() < 1e-6, "{d}");
    }

    #[test]
    fn times_inside_a_leap_second_print_as_second_sixty() {
        // Each second across the 2016 leap second comes back as it was written (23:59:60 once came
        // back as 23:59:59, which then appeared twice).
        for t in [
            "2016-12-31T23:59:58.750Z",
            "2016-12-31T23:59:59.500Z",
            "2016-12-31T23:59:60.000Z",
            "2016-12-31T23:59:60.500Z",
            "2016-12-31T23:59:60.999Z",
            "2017-01-01T00:00:00.000Z",
            "2017-01-01T00:00:00.250Z",
            "2015-06-30T23:59:60.100Z",
            "2016-06-30T23:59:59.900Z",
        ] {
            assert_eq!(tt_to_utc(parse_utc(t).unwrap().tt).to_string(), t);
        }
    }

    #[test]
    fn second_sixty_rejected_on_an_ordinary_day() {
        assert!(matches!(
            UtcTime::parse("2016-12-30T23:59:60Z"),
            Err(TimeError::NoLeapSecond(_))
        ));
        assert!(matches!(
            UtcTime::parse("2016-12-31T23:58:60Z"),
            Err(TimeError::NoLeapSecond(_))
        ));
    }

    #[test]
    fn february_thirtieth_is_not_a_date() {
        assert!(matches!(
            UtcTime::parse("2026-02-30T01:00:00Z"),
            Err(TimeError::NotADate(_))
        ));
        assert!(UtcTime::parse("2024-02-29T01:00:00Z").is_ok());
        assert!(UtcTime::parse("2023-02-29T01:00:00Z").is_err());
    }

    #[test]
    fn malformed_strings_are_syntax_errors() {
        for s in [
            "",
            "2026-01-01",
            "2026-1-01T00:00:00",
            "2026-01-01T00:00:00:00",
            "2026-01-01T0a:00:00",
            "2026-01-01T00:00:5",
            "2026-01-01T00:00:05.",
            "2026-01-01T00:00:NaN",
        ] {
            assert!(UtcTime::parse(s).is_err(), "{s}");
        }
    }

    #[test]
    fn dates_past_the_table_are_flagged_not_guessed_silently() {
        let inside = parse_utc("2026-06-30T12:00:00Z").unwrap();
        assert_eq!(inside.status, TableStatus::Known);
        let past = parse_utc("2027-03-21T10:00:00Z").unwrap();
        assert_eq!(past.status, TableStatus::Extrapolated);
        assert!(matches!(
            parse_utc("1969-07-20T20:17:00Z"),
            Err(TimeError::BeforeTable(_))
        ));
    }

    #[test]
    fn meeus_example_7a_julian_day() {
        // Meeus, Astronomical Algorithms 2nd ed., Example 7.a: 1957 Oct 4.81 = JD 2436116.31
        // (checked against a stored copy of the example).
        let jd = midnight_jd(1957, 10, 4) + 0.81;
        assert!((jd - 2_436_116.31).abs() < 1e-9);
        let (y, m, d, f) = calendar_from_jd(2_436_116.31);
        assert_eq!((y, m, d), (1957, 10, 4));
        assert!((f - 0.81).abs() < 1e-6);
    }

    #[test]
    fn tt_to_utc_inverts_instant() {
        let t = UtcTime::parse("2026-11-30T03:14:15.926Z").unwrap();
        let back = tt_to_utc(t.instant().unwrap().tt);
        assert_eq!(
            (back.year, back.month, back.day, back.hour, back.minute),
            (2026, 11, 30, 3, 14)
        );
        assert!((back.second - 15.926).abs() < 1e-3);
    }
}
