//! The ephemeris panel's worker: the candidate's positions through the next dark window at the chosen
//! site (the site of its last observation unless the observer picked another), found from the Sun's
//! altitude there, computed off the UI thread.

use super::runtime::AppEvent;
use crate::feed::sites::SiteTable;
use crate::fitting::conditions::SkySlot;
use crate::fitting::ephemeris::point;
use crate::fitting::fit::FitResult;
use crate::physics::observe::ObserverModel;
use crate::physics::sky::Twilight;
use crate::physics::time::{Instant, UtcTime, tt_to_utc};
use std::sync::Arc;
use std::sync::mpsc::Sender;

/// How far ahead a dark window is looked for, and the steps of the search and of the rows.
const LOOK_AHEAD_DAYS: f64 = 1.5;
const SEARCH_STEP_DAYS: f64 = 10.0 / 1440.0;
const ROW_STEP_DAYS: f64 = 30.0 / 1440.0;

/// Dark stretches shorter than this (the tail of a night already under way) are passed over.
const MIN_WINDOW_DAYS: f64 = 1.0 / 24.0;

/// The first dark stretch (Sun below the nautical limit) of at least an hour after `from` at a site:
/// (start, end).
fn dark_window(
    site: &crate::physics::site::GroundPosition,
    from: Instant,
    model: &ObserverModel,
) -> Option<(Instant, Instant)> {
    let n = (LOOK_AHEAD_DAYS / SEARCH_STEP_DAYS) as usize;
    let dark = |k: usize| {
        let t = from.plus_days(k as f64 * SEARCH_STEP_DAYS);
        SkySlot::new(site, &t, model)
            .ok()
            .map(|s| (t, s.is_dark(Twilight::Nautical)))
    };
    let mut start = None;
    for k in 0..=n {
        let (t, is_dark) = dark(k)?;
        match (start, is_dark) {
            (None, true) => start = Some(t),
            (Some(s), false) if t.tt.minus(s.tt) >= MIN_WINDOW_DAYS => return Some((s, t)),
            (Some(_), false) => start = None,
            _ => {}
        }
    }
    start.map(|s| (s, from.plus_days(LOOK_AHEAD_DAYS)))
}

fn hm(t: &Instant) -> String {
    let s = tt_to_utc(t.tt).to_string();
    s.get(11..16).map_or(s.clone(), str::to_string)
}

/// Compute and send the panel's rows (and the line saying for which site and window).
pub fn spawn(fit: FitResult, site: Option<String>, sites: Arc<SiteTable>, tx: Sender<AppEvent>) {
    std::thread::spawn(move || {
        let model = ObserverModel::new();
        let mut pts = Vec::new();
        let mut window = "no position to start from".to_string();
        if let Some(last) = fit.residuals.last()
            && let Ok(last_t) = UtcTime::parse(&last.time_utc).and_then(|u| u.instant())
        {
            // From now, or from the last position if that is later (a replayed or simulated feed).
            let now = chrono::Utc::now().format("%Y-%m-%dT%H:%M:%SZ").to_string();
            let t0 = UtcTime::parse(&now)
                .and_then(|u| u.instant())
                .ok()
                .filter(|n| n.tt.minus(last_t.tt) > 0.0)
                .unwrap_or(last_t);
            let code = site.unwrap_or_else(|| last.site.clone());
            match sites.get(&code) {
                None => window = format!("site {} is not in the site table", code),
                Some(s) => match dark_window(&s.position, t0, &model) {
                    None => window = format!("no dark hour at {code} in the next 36 h"),
                    Some((a, b)) => {
                        window = format!(
                            "at {code}, dark {}–{} UTC (Sun below −12°), every 30 min",
                            hm(&a),
                            hm(&b)
                        );
                        let n = (b.tt.minus(a.tt) / ROW_STEP_DAYS).floor() as usize;
                        for k in 0..=n {
                            let inst = a.plus_days(k as f64 * ROW_STEP_DAYS);
                            if let Some(p) = point(
                                &fit,
                                &inst,
                                tt_to_utc(inst.tt).to_string(),
                                &s.position,
                                &model,
                                fit.h_mag,
                                s.caps.min_alt_deg,
                            ) {
                                pts.push(p);
                            }
                        }
                    }
                },
            }
        }
        let _ = tx.send(AppEvent::Ephemeris(fit.object.clone(), window, pts));
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_window_found_is_dark_inside_and_light_just_before_and_after() {
        let sites = SiteTable::builtin();
        let site = sites.get("TV1").unwrap().position;
        let model = ObserverModel::new();
        // Noon UTC: the search starts in daylight at this site or before its night.
        let from = UtcTime::parse("2027-02-26T12:00:00Z")
            .unwrap()
            .instant()
            .unwrap();
        let (a, b) = dark_window(&site, from, &model).unwrap();
        let dark = |t: Instant| {
            SkySlot::new(&site, &t, &model)
                .unwrap()
                .is_dark(Twilight::Nautical)
        };
        let hours = b.tt.minus(a.tt) * 24.0;
        assert!((1.0..16.0).contains(&hours), "{hours} h");
        assert!(dark(a) && dark(a.plus_days(hours / 48.0)));
        if a.tt.minus(from.tt) > SEARCH_STEP_DAYS {
            assert!(
                !dark(a.plus_days(-SEARCH_STEP_DAYS)),
                "dark before the start"
            );
        }
        assert!(!dark(b), "still dark at the end");
    }

    /// The panel's rows predict V from the record's H, as `ephem` does (its V column was always
    /// empty: the worker never had an H).
    #[test]
    fn the_panel_predicts_v_from_the_records_absolute_magnitude() {
        let path = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"))
            .join("sample_feeds/demo_night/001_qk0f3ra_n1.psv");
        let bytes = std::fs::read(path).unwrap_or_default();
        let sites = Arc::new(SiteTable::builtin());
        let intake = crate::feed::tracklets::read_bytes(
            "001_qk0f3ra_n1.psv",
            &bytes,
            &sites,
            &crate::feed::tracklets::Limits::default(),
        );
        let tr = intake.tracklets.first().cloned();
        let tr = tr.unwrap_or_else(|| panic!("the demo file gave no tracklet"));
        let opts = crate::fitting::fit::FitOptions {
            origin: None,
            ..Default::default()
        };
        let fit = crate::fitting::fit::fit_tracklet(&tr, &ObserverModel::new(), &opts);
        let h = fit.h_mag.unwrap_or(f64::NAN);
        assert!((5.0..30.0).contains(&h), "H {h}");
        let (tx, rx) = std::sync::mpsc::channel();
        spawn(fit, Some("TV1".into()), sites, tx);
        match rx.recv_timeout(std::time::Duration::from_secs(120)) {
            Ok(AppEvent::Ephemeris(_, window, pts)) => {
                assert!(!pts.is_empty(), "{window}");
                assert!(pts.iter().all(|p| p.v_mag.is_some()), "{window}");
            }
            _ => panic!("no ephemeris from the worker"),
        }
    }
}
