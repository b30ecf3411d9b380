//! Sexagesimal notation: right ascension in hours, minutes and seconds of time, declination in
//! degrees, arcminutes and arcseconds, written with colons and read back.

use thiserror::Error;

#[derive(Debug, Clone, PartialEq, Error)]
pub enum SexagesimalError {
    #[error("'{0}' is not of the form H:M:S or D:M:S")]
    Form(String),
    #[error("'{0}' has a minute or second field outside 0–60")]
    Field(String),
}

/// RA in degrees with `decimals` places, in [0, 360) as printed: a value that rounds up to 360 is 0
/// (359.999999° once printed as 360.00000).
pub fn ra_deg_text(ra_deg: f64, decimals: usize) -> String {
    let scale = 10f64.powi(decimals as i32);
    let turn = (360.0 * scale).round();
    // (+ 0.0: a rounded −0 prints as "-0".)
    let units = (ra_deg * scale).round().rem_euclid(turn) + 0.0;
    format!("{:.*}", decimals, units / scale)
}

/// Right ascension (degrees, any turn) as "HH:MM:SS.sss" (milliseconds of time, 0.015″).
pub fn ra_hms(ra_deg: f64) -> String {
    let ms_per_day = 24 * 3_600_000_i64;
    let total = ((ra_deg / 15.0 * 3_600_000.0).round() as i64).rem_euclid(ms_per_day);
    let (h, rest) = (total / 3_600_000, total % 3_600_000);
    let (m, rest) = (rest / 60_000, rest % 60_000);
    format!("{h:02}:{m:02}:{:02}.{:03}", rest / 1000, rest % 1000)
}

/// Declination (degrees) as "±DD:MM:SS.ss" (hundredths of an arcsecond).
pub fn dec_dms(dec_deg: f64) -> String {
    let total = (dec_deg.abs() * 360_000.0).round() as i64;
    let sign = if dec_deg < 0.0 && total > 0 { '-' } else { '+' };
    let (d, rest) = (total / 360_000, total % 360_000);
    let (m, rest) = (rest / 6000, rest % 6000);
    format!("{sign}{d:02}:{m:02}:{:02}.{:02}", rest / 100, rest % 100)
}

fn fields(text: &str) -> Result<(bool, f64, f64, f64), SexagesimalError> {
    let t = text.trim();
    let (neg, body) = match t.strip_prefix('-') {
        Some(b) => (true, b),
        None => (false, t.strip_prefix('+').unwrap_or(t)),
    };
    let parts: Vec<&str> = body.split([':', ' ']).filter(|p| !p.is_empty()).collect();
    let form = || SexagesimalError::Form(text.to_string());
    if parts.len() != 3 {
        return Err(form());
    }
    let num = |s: &str| s.parse::<f64>().ok().filter(|v| v.is_finite() && *v >= 0.0);
    let (a, b, c) = match (num(parts[0]), num(parts[1]), num(parts[2])) {
        (Some(a), Some(b), Some(c)) => (a, b, c),
        _ => return Err(form()),
    };
    if b >= 60.0 || c >= 60.0 {
        return Err(SexagesimalError::Field(text.to_string()));
    }
    Ok((neg, a, b, c))
}

/// "HH:MM:SS.sss" → degrees.
pub fn parse_ra_hms(text: &str) -> Result<f64, SexagesimalError> {
    let (neg, h, m, s) = fields(text)?;
    if neg || h >= 24.0 {
        return Err(SexagesimalError::Form(text.to_string()));
    }
    Ok(15.0 * (h + m / 60.0 + s / 3600.0))
}

/// "±DD:MM:SS.ss" → degrees.
pub fn parse_dec_dms(text: &str) -> Result<f64, SexagesimalError> {
    let (neg, d, m, s) = fields(text)?;
    let v = d + m / 60.0 + s / 3600.0;
    if v > 90.0 {
        return Err(SexagesimalError::Form(text.to_string()));
    }
    Ok(if neg { -v } else { v })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ra_degrees_never_print_as_360() {
        assert_eq!(ra_deg_text(359.999_999_9, 5), "0.00000");
        assert_eq!(ra_deg_text(359.999_94, 4), "359.9999");
        assert_eq!(ra_deg_text(-0.000_001, 4), "0.0000");
        assert_eq!(ra_deg_text(12.345_67, 3), "12.346");
    }

    #[test]
    fn carries_round_up_into_the_next_field() {
        assert_eq!(ra_hms(359.999_999_99), "00:00:00.000");
        assert_eq!(dec_dms(-0.000_000_1), "+00:00:00.00");
        assert_eq!(
            dec_dms(-(29.0 + 59.0 / 60.0 + 59.999 / 3600.0)),
            "-30:00:00.00"
        );
    }

    #[test]
    fn malformed_text_is_refused() {
        for bad in ["12:61:00", "1:2", "ab:00:00", "25:00:00", "12:00:60"] {
            assert!(parse_ra_hms(bad).is_err(), "{bad}");
        }
        assert!(parse_dec_dms("+91:00:00").is_err());
    }
}
