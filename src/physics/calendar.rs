//! The civil calendar under UTC: Gregorian dates, Julian dates of midnight, and the leap seconds
//! (TAI − UTC) with how far the table of them is known.

/// Whether TAI − UTC came from the table or was carried past its end.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum TableStatus {
    Known,
    /// The date lies past the last announced leap-second decision; the last known offset was used.
    Extrapolated,
}

/// TAI − UTC (s) from the given UTC date on, until the next row. IERS Bulletin C history
/// (common practice, values from memory; checked against ERFA `dat` in the tests).
const LEAP_TABLE: &[(i32, u32, f64)] = &[
    (1972, 1, 10.0),
    (1972, 7, 11.0),
    (1973, 1, 12.0),
    (1974, 1, 13.0),
    (1975, 1, 14.0),
    (1976, 1, 15.0),
    (1977, 1, 16.0),
    (1978, 1, 17.0),
    (1979, 1, 18.0),
    (1980, 1, 19.0),
    (1981, 7, 20.0),
    (1982, 7, 21.0),
    (1983, 7, 22.0),
    (1985, 7, 23.0),
    (1988, 1, 24.0),
    (1990, 1, 25.0),
    (1991, 1, 26.0),
    (1992, 7, 27.0),
    (1993, 7, 28.0),
    (1994, 7, 29.0),
    (1996, 1, 30.0),
    (1997, 7, 31.0),
    (1999, 1, 32.0),
    (2006, 1, 33.0),
    (2009, 1, 34.0),
    (2012, 7, 35.0),
    (2015, 7, 36.0),
    (2017, 1, 37.0),
];

/// First UTC date (year, month, day) for which no leap-second decision is known here. From memory:
/// IERS Bulletin C 70 (July 2025) announced no leap second at the end of December 2025, so the offset
/// is known through 2026-06-30. Update together with `LEAP_TABLE`.
pub const LEAP_TABLE_VALID_BEFORE: (i32, u32, u32) = (2026, 7, 1);

fn is_leap_year(y: i32) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

/// Days in a month of the Gregorian calendar.
pub fn days_in_month(y: i32, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap_year(y) => 29,
        2 => 28,
        _ => 0,
    }
}

/// Julian date of 0h on a Gregorian calendar date (Meeus, Astronomical Algorithms 2nd ed., eq. 7.1).
pub fn midnight_jd(y: i32, m: u32, d: u32) -> f64 {
    let (yy, mm) = if m <= 2 { (y - 1, m + 12) } else { (y, m) };
    let a = yy.div_euclid(100);
    let b = 2 - a + a.div_euclid(4);
    (365.25 * f64::from(yy + 4716)).floor()
        + (30.6001 * f64::from(mm + 1)).floor()
        + f64::from(d)
        + f64::from(b)
        - 1524.5
}

fn ym_index(y: i32, m: u32) -> i64 {
    i64::from(y) * 12 + i64::from(m)
}

/// TAI − UTC (s) on a UTC calendar date, with the table status.
pub fn tai_minus_utc(y: i32, m: u32, d: u32) -> Option<(f64, TableStatus)> {
    let key = ym_index(y, m);
    let mut offset = None;
    for &(ty, tm, dat) in LEAP_TABLE {
        if ym_index(ty, tm) <= key {
            offset = Some(dat);
        }
    }
    let (vy, vm, vd) = LEAP_TABLE_VALID_BEFORE;
    let status = if (y, m, d) >= (vy, vm, vd) {
        TableStatus::Extrapolated
    } else {
        TableStatus::Known
    };
    offset.map(|o| (o, status))
}

/// Whether the UTC day ends with a positive leap second (so 23:59:60 exists).
pub(crate) fn day_has_leap_second(y: i32, m: u32, d: u32) -> bool {
    if d != days_in_month(y, m) {
        return false;
    }
    let (ny, nm) = if m == 12 { (y + 1, 1) } else { (y, m + 1) };
    match (tai_minus_utc(y, m, d), tai_minus_utc(ny, nm, 1)) {
        (Some((a, _)), Some((b, _))) => b > a,
        _ => false,
    }
}
