//! The plan overlay's worker: tonight's plan over every candidate, at the sites that observed the
//! feed's candidates last, for the 24 hours after the latest of those positions, made off the UI thread.

use super::runtime::AppEvent;
use crate::feed::sites::SiteTable;
use crate::fitting::fit::FitResult;
use crate::fitting::plan::{PlanOptions, PlanSite, plan};
use crate::physics::observe::ObserverModel;
use crate::physics::time::{Instant, UtcTime};
use std::sync::Arc;
use std::sync::mpsc::Sender;

/// Sites planned for at most (the most frequent last sites first).
pub const MAX_PLAN_SITES: usize = 4;

/// The telescopes and stretch the overlay plans for.
pub fn plan_sites(fits: &[FitResult], sites: &SiteTable) -> Vec<PlanSite> {
    let mut counts: Vec<(String, usize)> = Vec::new();
    let mut latest: Option<Instant> = None;
    for r in fits.iter().filter_map(|f| f.residuals.last()) {
        if let Ok(t) = UtcTime::parse(&r.time_utc).and_then(|u| u.instant())
            && latest.is_none_or(|l| t.tt.minus(l.tt) > 0.0)
        {
            latest = Some(t);
        }
        match counts.iter_mut().find(|(c, _)| *c == r.site) {
            Some(e) => e.1 += 1,
            None => counts.push((r.site.clone(), 1)),
        }
    }
    let Some(from) = latest else {
        return Vec::new();
    };
    counts.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
    counts
        .iter()
        .filter_map(|(c, _)| sites.get(c))
        .take(MAX_PLAN_SITES)
        .map(|s| PlanSite {
            code: s.code.clone(),
            position: s.position,
            caps: s.caps,
            from,
            to: from.plus_days(1.0),
        })
        .collect()
}

/// Make the plan on a thread and send it back.
pub fn spawn(fits: Vec<FitResult>, sites: Arc<SiteTable>, tx: Sender<AppEvent>) {
    std::thread::spawn(move || {
        let at = plan_sites(&fits, &sites);
        let p = plan(&fits, &at, &PlanOptions::default(), &ObserverModel::new());
        let _ = tx.send(AppEvent::Plan(p));
    });
}
