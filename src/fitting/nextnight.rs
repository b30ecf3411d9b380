//! "What one more night buys": from the site that observed a candidate last, the best time in the
//! following day (dark sky, highest altitude), four positions there at the site's usual accuracy, and
//! what they are expected to do to σ(e), σ(1/a) and P(unbound) — a Fisher update of the current
//! covariance (see `followup.rs`), no refit, so it is cheap enough for every interesting candidate.

use super::conditions::{DEFAULT_SITE_MIN_ALT_DEG, SkySlot};
use super::fit::FitResult;
use super::followup::{Gain, Predictor, expected_change_from, gain, moved_posterior};
use super::input::{DEFAULT_SIGMA_ARCSEC, SIGMA_FLOOR_ARCSEC, Tracklet};
use crate::physics::observe::{ObserverLocation, ObserverModel};
use crate::physics::site::GroundPosition;
use crate::physics::sky::Twilight;
use crate::physics::time::{Instant, tt_to_utc};

/// Positions in the simulated night, and their spacing (minutes): a usual follow-up sequence.
pub const NEXT_NIGHT_POSITIONS: usize = 4;
pub const NEXT_NIGHT_SPACING_MIN: f64 = 25.0;
/// The estimate is made only where P(unbound) is still open: between these.
pub const OPEN_P: (f64, f64) = (0.01, 0.99);
/// Time grid for the best time (minutes) over the day starting half a day after the last position.
const SEARCH_STEP_MIN: f64 = 20.0;

/// What the next night is expected to settle.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum Verdict {
    /// The expected P leaves the open band (0.01–0.99).
    #[serde(rename = "one more night should settle it")]
    Settles,
    /// σ(1/a) shrinks markedly, but P is expected to stay open.
    #[serde(rename = "more nights needed")]
    MoreNights,
    /// σ(1/a) shrinks by less than a fifth: only a longer arc will help.
    #[serde(rename = "a night adds little: wait for a longer arc")]
    LongerArc,
}

impl Verdict {
    /// The words of the verdict (as in the JSON).
    pub fn text(self) -> &'static str {
        match self {
            Verdict::Settles => "one more night should settle it",
            Verdict::MoreNights => "more nights needed",
            Verdict::LongerArc => "a night adds little: wait for a longer arc",
        }
    }
}

/// The `next_night` object of `fit --json`.
#[derive(Debug, Clone, serde::Serialize)]
pub struct NextNight {
    pub site: String,
    /// Middle of the simulated sequence, and the object's altitude then.
    pub time_utc: String,
    pub alt_deg: f64,
    pub positions: usize,
    pub accuracy_arcsec: f64,
    pub e_sigma_now: f64,
    pub e_sigma: f64,
    pub inv_a_sigma_now: f64,
    pub inv_a_sigma: f64,
    /// P(unbound) expected after the night if the best orbit stays where it is.
    pub p_hyperbolic: f64,
    /// Expected |ΔP(unbound)| before the night is observed.
    pub expected_change: f64,
    pub verdict: Verdict,
}

/// The chosen night: where, when, at what accuracy.
#[derive(Debug, Clone)]
pub struct NightChoice {
    pub site: String,
    pub position: GroundPosition,
    pub times: Vec<Instant>,
    /// The middle of the sequence, where `alt_deg` is.
    pub mid: Instant,
    pub alt_deg: f64,
    pub accuracy_arcsec: f64,
}

/// Median one-coordinate accuracy of a site's positions in the tracklet, treated like the fit does.
fn site_accuracy(tr: &Tracklet, site: &str) -> f64 {
    let s = |v: Option<f64>| {
        v.filter(|x| x.is_finite() && *x > 0.0)
            .unwrap_or(DEFAULT_SIGMA_ARCSEC)
            .max(SIGMA_FLOOR_ARCSEC)
    };
    let mut v: Vec<f64> = tr
        .obs
        .iter()
        .filter(|o| o.site_code == site)
        .map(|o| 0.5 * (s(o.sigma_ra_arcsec) + s(o.sigma_dec_arcsec)))
        .collect();
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied().unwrap_or(DEFAULT_SIGMA_ARCSEC)
}

/// The best time in the day after the last ground-based position, from that site.
pub fn choose_night(
    pred: &Predictor,
    tr: &Tracklet,
    model: &ObserverModel,
    twilight: Twilight,
) -> Option<NightChoice> {
    let last = tr
        .obs
        .iter()
        .rev()
        .find(|o| matches!(o.location, ObserverLocation::Ground(_)))?;
    let ObserverLocation::Ground(position) = last.location else {
        return None;
    };
    let half = (NEXT_NIGHT_POSITIONS as f64 - 1.0) * NEXT_NIGHT_SPACING_MIN / 2.0 / 1440.0;
    let ok = |inst: &Instant| -> Option<f64> {
        let slot = SkySlot::new(&position, inst, model).ok()?;
        let (p, _) = pred.at(inst.tdb, &slot.observer)?;
        let alt = slot.altitude_deg(&p.topo.normalize());
        (slot.is_dark(twilight) && alt >= DEFAULT_SITE_MIN_ALT_DEG).then_some(alt)
    };
    let steps = (1440.0 / SEARCH_STEP_MIN) as usize;
    let mut best: Option<(f64, Instant)> = None;
    for k in 0..=steps {
        let mid = last
            .time
            .plus_days(0.5 + k as f64 * SEARCH_STEP_MIN / 1440.0);
        // The whole sequence must be dark and high enough.
        let (Some(alt), Some(_), Some(_)) = (
            ok(&mid),
            ok(&mid.plus_days(-half)),
            ok(&mid.plus_days(half)),
        ) else {
            continue;
        };
        if best.is_none_or(|(a, _)| alt > a) {
            best = Some((alt, mid));
        }
    }
    let (alt, mid) = best?;
    let times = (0..NEXT_NIGHT_POSITIONS)
        .map(|i| mid.plus_days(-half + i as f64 * NEXT_NIGHT_SPACING_MIN / 1440.0))
        .collect();
    Some(NightChoice {
        site: last.site_code.clone(),
        position,
        times,
        mid,
        alt_deg: alt,
        accuracy_arcsec: site_accuracy(tr, &last.site_code),
    })
}

/// The Fisher gain of a chosen night.
pub fn night_gain(pred: &Predictor, night: &NightChoice, model: &ObserverModel) -> Option<Gain> {
    let loc = ObserverLocation::Ground(night.position);
    let jacs: Option<Vec<_>> = night
        .times
        .iter()
        .map(|t| {
            let obs = model.observer(&loc, t).ok()?;
            pred.at(t.tdb, &obs).map(|(_, j)| j)
        })
        .collect();
    gain(pred, &jacs?, night.accuracy_arcsec)
}

/// "What one more night buys" for a fit of a tracklet, where it matters: an arc of two nights or
/// more with a covariance and P(unbound) still between 0.01 and 0.99. `None` otherwise.
pub fn next_night(fit: &FitResult, tr: &Tracklet, model: &ObserverModel) -> Option<NextNight> {
    let p = fit.p_hyperbolic?;
    if fit.n_nights < 2 || fit.covariance.is_none() || !(OPEN_P.0..=OPEN_P.1).contains(&p) {
        return None;
    }
    // An update around one minimum cannot weigh another of the other class: with such a solution
    // listed it once promised "one more night should settle it" at P → 10⁻¹⁶⁴ for an arc whose other
    // solution was the true, unbound orbit.
    if fit.alternatives.iter().any(|a| a.unbound != (p >= 0.5)) {
        return None;
    }
    let last = tr.obs.last()?.time.tdb;
    let pred = Predictor::new(fit, last.plus_days(1.0), model)?;
    let night = choose_night(&pred, tr, model, Twilight::default())?;
    let g = night_gain(&pred, &night, model)?;
    // The current posterior odds move by the change of the data's own odds.
    let p_after = moved_posterior(p, g.p_data_now, g.p_data_after);
    let shrink = 1.0 - g.inv_a_sigma_after / g.inv_a_sigma_now.max(f64::MIN_POSITIVE);
    let verdict = if !(OPEN_P.0..=OPEN_P.1).contains(&p_after) {
        Verdict::Settles
    } else if shrink >= 0.2 {
        Verdict::MoreNights
    } else {
        Verdict::LongerArc
    };
    // The middle of the sequence (between two positions when their count is even), where the
    // altitude was found.
    let mid = night.mid;
    Some(NextNight {
        site: night.site,
        time_utc: tt_to_utc(mid.tt).to_string(),
        alt_deg: night.alt_deg,
        positions: night.times.len(),
        accuracy_arcsec: night.accuracy_arcsec,
        e_sigma_now: g.e_sigma_now,
        e_sigma: g.e_sigma_after,
        inv_a_sigma_now: g.inv_a_sigma_now,
        inv_a_sigma: g.inv_a_sigma_after,
        p_hyperbolic: p_after,
        expected_change: expected_change_from(
            Some(p),
            pred.inv_a,
            g.inv_a_sigma_now,
            g.inv_a_sigma_after,
        ),
        verdict,
    })
}
