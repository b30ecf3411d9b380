//! The identity of one observation: made once from the observation itself and carried everywhere
//! "the same observation" matters — the merged store, the residual rows, the observer's exclusions
//! and the journal (through its stable text form).

use super::input::Observation;
use crate::physics::time::{Jd2, tt_to_utc};
use std::fmt;
use std::str::FromStr;

/// Ticks per day of the time part (1e-8 day, under a millisecond).
const TICKS_PER_DAY: i64 = 100_000_000;
/// Position quantum (radians): 1e-9 rad, 0.2 milliarcseconds.
const RAD_QUANTUM: f64 = 1e-9;

/// Time (TT, in 1e-8 day), site and position (in 1e-9 rad). Ordered by time first, so a sorted list
/// of identities is the observations in time order.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct ObsId {
    tt_ticks: i64,
    site: String,
    ra: i64,
    dec: i64,
}

/// Text that is not an observation identity.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("not an observation identity: {0:?}")]
pub struct BadObsId(pub String);

impl ObsId {
    pub fn of(o: &Observation) -> ObsId {
        let tt = o.time.tt;
        let whole = tt.jd1.floor();
        let frac = (tt.jd1 - whole) + tt.jd2;
        ObsId {
            tt_ticks: whole as i64 * TICKS_PER_DAY + (frac * TICKS_PER_DAY as f64).round() as i64,
            site: o.site_code.clone(),
            ra: (o.ra / RAD_QUANTUM).round() as i64,
            dec: (o.dec / RAD_QUANTUM).round() as i64,
        }
    }

    pub fn site(&self) -> &str {
        &self.site
    }

    /// What the observer sees: UTC time and site ("2027-02-26T03:00:00.000@F51").
    pub fn label(&self) -> String {
        let tt = Jd2 {
            jd1: self.tt_ticks.div_euclid(TICKS_PER_DAY) as f64,
            jd2: self.tt_ticks.rem_euclid(TICKS_PER_DAY) as f64 / TICKS_PER_DAY as f64,
        };
        format!("{}@{}", tt_to_utc(tt), self.site)
    }
}

/// The stable text form the journal keeps: `TTTICKS/RA/DEC/SITE` (the site last, so any character
/// it holds reads back).
impl fmt::Display for ObsId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{}/{}/{}/{}",
            self.tt_ticks, self.ra, self.dec, self.site
        )
    }
}

impl FromStr for ObsId {
    type Err = BadObsId;
    fn from_str(s: &str) -> Result<ObsId, BadObsId> {
        let bad = || BadObsId(s.chars().take(80).collect());
        let mut parts = s.splitn(4, '/');
        let mut num = || -> Result<i64, BadObsId> {
            parts.next().and_then(|p| p.parse().ok()).ok_or_else(bad)
        };
        let (tt_ticks, ra, dec) = (num()?, num()?, num()?);
        let site = parts.next().filter(|p| !p.is_empty()).ok_or_else(bad)?;
        Ok(ObsId {
            tt_ticks,
            site: site.to_string(),
            ra,
            dec,
        })
    }
}

impl serde::Serialize for ObsId {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

impl<'de> serde::Deserialize<'de> for ObsId {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<ObsId, D::Error> {
        let s = String::deserialize(d)?;
        s.parse().map_err(serde::de::Error::custom)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_text_form_reads_back_to_the_same_identity() {
        let id = ObsId {
            tt_ticks: 246_109_812_345_678,
            site: "F51".into(),
            ra: 2_094_395_102,
            dec: -174_532_925,
        };
        let text = id.to_string();
        assert_eq!(text.parse::<ObsId>(), Ok(id.clone()));
        assert_eq!(
            serde_json::from_str::<ObsId>(&serde_json::to_string(&id).unwrap()).unwrap(),
            id
        );
        assert!(id.label().ends_with("@F51"), "{}", id.label());
        for bad in ["", "1/2/3", "x/2/3/F51", "1/2/3/"] {
            assert!(bad.parse::<ObsId>().is_err(), "{bad}");
        }
    }

    #[test]
    fn any_identity_a_journal_line_can_hold_has_a_label() {
        for ticks in [i64::MIN, -1, 0, 1, i64::MAX] {
            let id: ObsId = format!("{ticks}/0/0/X").parse().unwrap();
            assert!(id.label().ends_with("@X"), "{ticks}");
        }
    }
}
