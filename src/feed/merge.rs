//! One object's observations from every file that reports it, each observation once: the same
//! report twice, or the same exposure in two precisions (a PSV line and an 80-column record).

use crate::fitting::input::{Observation, Tracklet};
use std::collections::BTreeMap;

/// Tracklets of one object (from several files) as one, objects in the order first seen, each
/// observation once.
pub fn merge(tracklets: Vec<Tracklet>) -> Vec<Tracklet> {
    let mut order: Vec<String> = Vec::new();
    let mut by_object: BTreeMap<String, (Vec<String>, Vec<Observation>)> = BTreeMap::new();
    for t in tracklets {
        let entry = by_object.entry(t.object.clone()).or_insert_with(|| {
            order.push(t.object.clone());
            (Vec::new(), Vec::new())
        });
        if !entry.0.contains(&t.source) {
            entry.0.push(t.source.clone());
        }
        entry.1.extend(t.obs);
    }
    order
        .into_iter()
        .filter_map(|o| {
            let (sources, obs) = by_object.remove(&o)?;
            Some(Tracklet::new(o, sources.join("; "), dedupe(obs)))
        })
        .collect()
}

/// Two reports of one observation in different precisions (an 80-column record keeps the time to
/// 10⁻⁵ or 10⁻⁶ day and RA to a millisecond of time): the same site, times within this (days)…
const SAME_TIME_DAYS: f64 = 1.0e-5;
/// …and positions within this (arcsec). Common practice, no source: the formats' rounding is well
/// inside both, and two real exposures from one site are never this close in both.
const SAME_PLACE_ARCSEC: f64 = 0.3;

/// Same time, place and position: the same observation reported twice (also in two formats).
pub fn dedupe(obs: Vec<Observation>) -> Vec<Observation> {
    // One identity decides "the same observation" here as everywhere (store, residuals, journal):
    // sorted by it, the list is in time order and a repeat sits next to its first report.
    let mut keyed: Vec<(crate::fitting::obsid::ObsId, Observation)> = obs
        .into_iter()
        .map(|o| (crate::fitting::obsid::ObsId::of(&o), o))
        .collect();
    keyed.sort_by(|a, b| a.0.cmp(&b.0));
    keyed.dedup_by(|a, b| a.0 == b.0);
    // The same observation in another precision: one report stands, the same whatever order the
    // files came in (so exclusions keep naming it): the one that states its uncertainty (an
    // 80-column record states none), else the first in identity order. A night once counted twice.
    let mut kept: Vec<Observation> = Vec::with_capacity(keyed.len());
    for (_, o) in keyed {
        let n = kept.len();
        let repeat = kept
            .iter()
            .rev()
            .take_while(|k| o.time.tt.minus(k.time.tt).abs() <= SAME_TIME_DAYS)
            .position(|k| {
                k.site_code == o.site_code && separation_arcsec(k, &o) <= SAME_PLACE_ARCSEC
            })
            .map(|back| n - 1 - back);
        match repeat {
            None => kept.push(o),
            Some(i) if states_uncertainty(&o) && !states_uncertainty(&kept[i]) => kept[i] = o,
            Some(_) => {}
        }
    }
    kept
}

fn states_uncertainty(o: &Observation) -> bool {
    o.sigma_ra_arcsec.is_some() || o.sigma_dec_arcsec.is_some()
}

fn separation_arcsec(a: &Observation, b: &Observation) -> f64 {
    use crate::physics::frames::unit_from_radec;
    unit_from_radec(a.ra, a.dec).angle(&unit_from_radec(b.ra, b.dec))
        / crate::physics::constants::ARCSEC
}
