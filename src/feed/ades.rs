//! ADES PSV (the IAU Astrometry Data Exchange Standard, pipe-separated form): `#` header blocks and
//! `!` keywords, one column-header line, then data lines with the same columns in any order. Unknown
//! columns are ignored. Every bad line is reported with file, line, column and reason; the good lines
//! of the same file are kept.

use super::InputError;
use super::sanitize::clean;
use crate::physics::time::UtcTime;

/// One position as written in the file (units as in ADES: degrees, arcseconds, km or AU).
#[derive(Debug, Clone, PartialEq)]
pub struct AdesRecord {
    pub line: usize,
    pub object: String,
    pub trk_sub: Option<String>,
    pub mode: Option<String>,
    pub stn: String,
    pub time_text: String,
    pub time: UtcTime,
    pub ra_deg: f64,
    pub dec_deg: f64,
    pub rms_ra: Option<f64>,
    pub rms_dec: Option<f64>,
    pub rms_corr: Option<f64>,
    pub ast_cat: Option<String>,
    pub mag: Option<f64>,
    pub rms_mag: Option<f64>,
    pub band: Option<String>,
    /// Observer position for roving or space-based observers: (sys, ctr, [pos1, pos2, pos3]).
    pub observer_pos: Option<(String, i64, [f64; 3])>,
}

/// Whether text looks like ADES PSV: its first data line is a pipe-separated header naming at least
/// two of the standard columns (the parser then says which required ones are missing).
pub fn looks_like_psv(text: &str) -> bool {
    const KNOWN: [&str; 12] = [
        "obsTime", "ra", "dec", "stn", "trkSub", "permID", "provID", "mode", "rmsRA", "rmsDec",
        "mag", "band",
    ];
    text.lines()
        .map(str::trim)
        .find(|l| !l.is_empty() && !l.starts_with('#') && !l.starts_with('!'))
        .is_some_and(|l| {
            let cols: Vec<&str> = l.split('|').map(str::trim).collect();
            cols.len() >= 2 && cols.iter().filter(|c| KNOWN.contains(c)).count() >= 2
        })
}

const REQUIRED: [&str; 4] = ["stn", "obsTime", "ra", "dec"];

/// Parse a PSV document. Returns the good records and an error per rejected line (or one for the file).
pub fn parse(file: &str, text: &str) -> (Vec<AdesRecord>, Vec<InputError>) {
    let mut good = Vec::new();
    let mut bad = Vec::new();
    let err = |line: usize, column: Option<&str>, reason: String| {
        InputError::cleaned(file, line, column, &reason)
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut header: Option<Vec<String>> = None;
    for (k, raw) in text.lines().enumerate() {
        let line_no = k + 1;
        let line = raw.trim_end_matches('\r');
        let t = line.trim();
        if t.is_empty() || t.starts_with('#') || t.starts_with('!') {
            continue;
        }
        let cells: Vec<&str> = line.split('|').map(str::trim).collect();
        let Some(cols) = &header else {
            let names: Vec<String> = cells.iter().map(|c| clean(c)).collect();
            let mut seen = std::collections::HashSet::new();
            if let Some(d) = names
                .iter()
                .find(|n| !n.is_empty() && !seen.insert(n.as_str()))
            {
                bad.push(err(
                    line_no,
                    Some(d),
                    "column appears twice in the header".into(),
                ));
                return (good, bad);
            }
            let missing: Vec<&str> = REQUIRED
                .iter()
                .copied()
                .filter(|r| !names.iter().any(|n| n == r))
                .collect();
            let has_id = ["permID", "provID", "trkSub"]
                .iter()
                .any(|r| names.iter().any(|n| n == r));
            if !missing.is_empty() || !has_id {
                let mut m: Vec<String> = missing.iter().map(|s| s.to_string()).collect();
                if !has_id {
                    m.push("permID, provID or trkSub".into());
                }
                bad.push(err(
                    line_no,
                    None,
                    format!("header lacks required column(s): {}", m.join(", ")),
                ));
                return (good, bad);
            }
            header = Some(names);
            continue;
        };
        if cells.len() != cols.len() {
            bad.push(err(
                line_no,
                None,
                format!("{} fields where the header has {}", cells.len(), cols.len()),
            ));
            continue;
        }
        match record(line_no, cols, &cells) {
            Ok(r) => good.push(r),
            Err((col, reason)) => bad.push(err(line_no, Some(&col), reason)),
        }
    }
    match header {
        None => bad.push(err(
            0,
            None,
            "no ADES PSV header line (columns separated by |)".into(),
        )),
        Some(_) if good.is_empty() && bad.is_empty() => {
            bad.push(err(0, None, "header but no data lines".into()))
        }
        Some(_) => {}
    }
    (good, bad)
}

/// One record from named fields (a PSV line, or an XML record's elements): the checks both forms share.
pub(super) fn record(
    line: usize,
    cols: &[String],
    cells: &[&str],
) -> Result<AdesRecord, (String, String)> {
    let get = |name: &str| -> Option<&str> {
        cols.iter()
            .position(|c| c == name)
            .map(|i| cells[i])
            .filter(|v| !v.is_empty())
    };
    let text = |name: &str| get(name).map(clean);
    let num = |name: &str| -> Result<Option<f64>, (String, String)> {
        match get(name) {
            None => Ok(None),
            Some(v) => match v.parse::<f64>() {
                Ok(x) if x.is_finite() && x.abs() < 1e15 => Ok(Some(x)),
                Ok(_) => Err((name.into(), format!("{} is not a usable number", clean(v)))),
                Err(_) => Err((name.into(), format!("'{}' is not a number", clean(v)))),
            },
        }
    };
    let id = |name: &str| get(name).map(crate::feed::sanitize::clean_id);
    let object = id("permID")
        .or_else(|| id("provID"))
        .or_else(|| id("trkSub"))
        .ok_or_else(|| {
            (
                "trkSub".to_string(),
                "no permID, provID or trkSub".to_string(),
            )
        })?;
    let stn = text("stn").ok_or_else(|| ("stn".to_string(), "missing station".to_string()))?;
    let time_text =
        get("obsTime").ok_or_else(|| ("obsTime".to_string(), "missing time".to_string()))?;
    let time = UtcTime::parse(time_text).map_err(|e| ("obsTime".to_string(), e.to_string()))?;
    let ra = num("ra")?.ok_or_else(|| ("ra".to_string(), "missing".to_string()))?;
    if !(0.0..360.0).contains(&ra) {
        return Err(("ra".into(), format!("{ra} is outside 0 ≤ RA < 360°")));
    }
    let dec = num("dec")?.ok_or_else(|| ("dec".to_string(), "missing".to_string()))?;
    if !(-90.0..=90.0).contains(&dec) {
        return Err(("dec".into(), format!("{dec} is outside ±90°")));
    }
    let positive = |name: &str| -> Result<Option<f64>, (String, String)> {
        match num(name)? {
            Some(x) if x <= 0.0 => Err((name.into(), format!("{x} must be positive"))),
            other => Ok(other),
        }
    };
    let rms_ra = positive("rmsRA")?;
    let rms_dec = positive("rmsDec")?;
    let rms_corr = match num("rmsCorr")? {
        Some(c) if !(-1.0..=1.0).contains(&c) => {
            return Err(("rmsCorr".into(), format!("{c} is outside ±1")));
        }
        c => c,
    };
    let mag = match num("mag")? {
        Some(m) if !super::tracklets::APPARENT_MAG.contains(&m) => {
            return Err((
                "mag".into(),
                format!(
                    "{m} is not an apparent magnitude ({} to {})",
                    super::tracklets::APPARENT_MAG.start(),
                    super::tracklets::APPARENT_MAG.end()
                ),
            ));
        }
        m => m,
    };
    // Kept only to be written back: a zero or negative one is dropped, not the position with it.
    let rms_mag = match num("rmsMag")? {
        Some(s) if s > 10.0 => {
            return Err(("rmsMag".into(), format!("{s} mag is not an uncertainty")));
        }
        s => s.filter(|s| *s > 0.0),
    };
    let observer_pos = match (get("sys"), get("ctr")) {
        (Some(sys), Some(ctr)) => {
            let ctr: i64 = ctr.parse().map_err(|_| {
                (
                    "ctr".to_string(),
                    format!("'{}' is not a body code", clean(ctr)),
                )
            })?;
            let p = [num("pos1")?, num("pos2")?, num("pos3")?];
            match p {
                [Some(a), Some(b), Some(c)] => Some((clean(sys), ctr, [a, b, c])),
                _ => {
                    return Err((
                        "pos1".into(),
                        "sys and ctr given without pos1, pos2, pos3".into(),
                    ));
                }
            }
        }
        _ if ["sys", "ctr", "pos1", "pos2", "pos3"]
            .iter()
            .any(|k| get(k).is_some()) =>
        {
            // Half an observer's position: fitting it from the station's would misplace it.
            return Err((
                if get("sys").is_none() { "sys" } else { "ctr" }.into(),
                "sys, ctr and pos1, pos2, pos3 go together (the observer's position)".into(),
            ));
        }
        _ => None,
    };
    Ok(AdesRecord {
        line,
        object,
        trk_sub: text("trkSub"),
        mode: text("mode"),
        stn,
        time_text: clean(time_text),
        time,
        ra_deg: ra,
        dec_deg: dec,
        rms_ra,
        rms_dec,
        rms_corr,
        ast_cat: text("astCat"),
        mag,
        rms_mag,
        band: text("band"),
        observer_pos,
    })
}

/// Write records back as PSV (for round trips and exports).
pub fn write(records: &[AdesRecord]) -> String {
    let mut s = String::from(
        "# version=2022\npermID|trkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|rmsCorr|astCat|mag|rmsMag|band\n",
    );
    let o = |x: Option<f64>| x.map(|v| format!("{v}")).unwrap_or_default();
    let t = |x: &Option<String>| x.clone().unwrap_or_default();
    for r in records {
        s.push_str(&format!(
            "{}|{}|{}|{}|{}|{}|{}|{}|{}|{}|{}|{}|{}|{}\n",
            r.object,
            t(&r.trk_sub),
            t(&r.mode),
            r.stn,
            r.time_text,
            r.ra_deg,
            r.dec_deg,
            o(r.rms_ra),
            o(r.rms_dec),
            o(r.rms_corr),
            t(&r.ast_cat),
            o(r.mag),
            o(r.rms_mag),
            t(&r.band)
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    const SAMPLE: &str = "# version=2022\n# observatory\n! mpcCode TV1\npermID |trkSub  |mode|stn |obsTime                 |ra         |dec        |rmsRA|rmsDec|astCat|mag  |band|extraThing\n        |K26a01  |CCD |TV1 |2026-11-30T03:10:11.20Z |  41.123456| -12.345678|0.15 |0.14  |Gaia3 |20.1 |G   |x\n        |K26a01  |CCD |TV1 |2026-02-30T03:10:11.20Z |  41.123456| -12.345678|0.15 |0.14  |Gaia3 |20.1 |G   |x\n        |K26a01  |CCD |TV1 |2026-11-30T03:40:11.20Z |  361.0    | -12.3     |0.15 |0.14  |Gaia3 |20.1 |G   |x\n";

    #[test]
    fn good_lines_are_kept_and_bad_ones_named() {
        let (good, bad) = parse("a.psv", SAMPLE);
        assert_eq!(good.len(), 1);
        assert_eq!(good[0].object, "K26a01");
        assert_eq!(good[0].rms_ra, Some(0.15));
        assert_eq!(bad.len(), 2);
        assert_eq!(
            bad[0].to_string(),
            "a.psv: line 6, column obsTime: 2026-02-30 is not a date"
        );
        assert_eq!(bad[1].column.as_deref(), Some("ra"));
    }

    #[test]
    fn columns_in_any_order_and_round_trip() {
        let text = "ra|obsTime|stn|dec|trkSub\n10.5|2026-01-02T03:04:05Z|TV2|-5.25|abc\n";
        let (good, bad) = parse("b.psv", text);
        assert!(bad.is_empty(), "{bad:?}");
        let again = write(&good);
        let (back, bad2) = parse("c.psv", &again);
        assert!(bad2.is_empty(), "{bad2:?}");
        assert_eq!(back[0].ra_deg, 10.5);
        assert_eq!(back[0].time, good[0].time);
    }

    /// Regressions: a magnitude of 200 was taken (and decided the object's size and its P), and half an
    /// observer's position (sys without ctr, positions without sys) was dropped silently, fitting the
    /// record from the station's place instead.
    #[test]
    fn absurd_magnitudes_and_half_given_observer_positions_are_refused_on_their_line() {
        let head = "permID|stn|obsTime|ra|dec|mag|sys|ctr|pos1|pos2|pos3\n";
        let row = "K26a01|TV2|2026-01-02T03:04:05Z|10.5|-5.25";
        for (rest, column) in [
            ("|200|||||", "mag"),
            ("|-40|||||", "mag"),
            ("|19.5|ICRF_KM||1e4|0|0", "ctr"),
            ("|19.5||399|1e4|0|0", "sys"),
            ("|19.5|||1e4|0|0", "sys"),
        ] {
            let (good, bad) = parse("m.psv", &format!("{head}{row}{rest}\n"));
            assert!(good.is_empty(), "{rest}: {good:?}");
            assert_eq!(bad[0].column.as_deref(), Some(column), "{rest}: {bad:?}");
            assert_eq!(bad[0].line, 2);
        }
        let (good, bad) = parse("ok.psv", &format!("{head}{row}|19.5|||||\n"));
        assert!(bad.is_empty() && good[0].mag == Some(19.5), "{bad:?}");
    }
}
