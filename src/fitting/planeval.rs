//! One candidate on the plan's time grids: at every dark step of every site, where it is, whether it
//! is above the site's altitude limit, how large its 3σ region is, and what a visit there is worth.

use super::conditions::SkySlot;
use super::ephemeris::{SLOPE_G, hg_magnitude, phase_angle};
use super::fit::FitResult;
use super::followup::{Predictor, expected_change_from, gain};
use super::plan::{PlanOptions, PlanSite};
use crate::physics::constants::{ARCSEC, DEG};
use crate::physics::observe::ObserverModel;

/// The candidate at one step of one site's grid (only where dark and high enough).
#[derive(Debug, Clone, Copy)]
pub struct SlotEval {
    pub alt_deg: f64,
    pub ra_deg: f64,
    pub dec_deg: f64,
    pub rate_arcsec_min: f64,
    pub elong_deg: f64,
    pub moon_sep_deg: f64,
    pub moon_caution: bool,
    /// Predicted V (H–G) when the fit's absolute magnitude is known.
    pub v_mag: Option<f64>,
    /// 3σ semi-axes of the sky region (arcsec).
    pub major_arcsec: f64,
    pub minor_arcsec: f64,
    /// Expected |ΔP| of one visit here, and σ(1/a) before and after it.
    pub value: f64,
    pub inv_a_sigma_now: f64,
    pub inv_a_sigma_after: f64,
}

/// A candidate over every site's grid.
#[derive(Debug, Clone)]
pub struct Evaluation {
    /// Per site, per step.
    pub slots: Vec<Vec<Option<SlotEval>>>,
    /// Highest value anywhere, and the fractional shrinkage of σ(1/a) where the object stands
    /// highest (the slot a visit of negligible |ΔP| is placed at, so that the order of the plan and
    /// the shrinkage it shows agree: the largest anywhere once ranked a visit that shrank σ by 5 %).
    pub best: f64,
    pub best_shrink: f64,
}

fn at_slot(
    fit: &FitResult,
    h: Option<f64>,
    pred: &Predictor,
    slot: &SkySlot,
    site: &PlanSite,
    opts: &PlanOptions,
) -> Option<SlotEval> {
    if !slot.is_dark(opts.twilight) {
        return None;
    }
    let (p, jac) = pred.at(slot.inst.tdb, &slot.observer)?;
    let delta = p.topo.norm();
    let dir = p.topo / delta;
    let alt = slot.altitude_deg(&dir);
    if alt < site.caps.min_alt_deg {
        return None;
    }
    let r = p.obj_pos.norm();
    let beta = phase_angle(r, delta, slot.observer.helio_pos.norm());
    let v_mag = h.map(|h| hg_magnitude(h, SLOPE_G, r, delta, beta));
    // Too faint for the telescope: not a usable time.
    if v_mag.is_some_and(|v| v > site.caps.limiting_mag) {
        return None;
    }
    // One visit: its positions taken together (they are minutes apart: the same partials).
    let per_visit = site.caps.accuracy_arcsec / (opts.positions_per_visit.max(1) as f64).sqrt();
    let g = gain(pred, &[jac], per_visit)?;
    let (major, minor) = pred.region_arcsec(slot.inst.tdb, &slot.observer, &p, &jac);
    let rel_v = p.obj_vel - slot.observer.helio_vel;
    let across = rel_v - dir * rel_v.dot(&dir);
    Some(SlotEval {
        alt_deg: alt,
        ra_deg: p.ra / DEG,
        dec_deg: p.dec / DEG,
        rate_arcsec_min: across.norm() / delta / ARCSEC / 1440.0,
        elong_deg: slot.sun_dir.angle(&dir) / DEG,
        moon_sep_deg: slot.moon_sep_deg(&dir),
        moon_caution: slot.moon_caution(&dir),
        v_mag,
        major_arcsec: major,
        minor_arcsec: minor,
        value: expected_change_from(
            fit.p_hyperbolic,
            pred.inv_a,
            g.inv_a_sigma_now,
            g.inv_a_sigma_after,
        ),
        inv_a_sigma_now: g.inv_a_sigma_now,
        inv_a_sigma_after: g.inv_a_sigma_after,
    })
}

/// Evaluate one fit (of absolute magnitude `h`, when known) over every site's grid; None when it has
/// no orbit or uncertainty to plan from.
pub fn evaluate(
    fit: &FitResult,
    h: Option<f64>,
    sites: &[PlanSite],
    grids: &[Vec<Option<SkySlot>>],
    opts: &PlanOptions,
    model: &ObserverModel,
) -> Option<Evaluation> {
    // No orbit to point from: a failed fit, or positions no orbit fits (its P is withheld).
    if fit.status == "failed" || (fit.status == "poor-fit" && fit.p_hyperbolic.is_none()) {
        return None;
    }
    let first = sites.first()?;
    let t_ref = first
        .from
        .tdb
        .plus_days(0.5 * first.to.tdb.minus(first.from.tdb));
    let pred = Predictor::new(fit, t_ref, model)?;
    let mut best: f64 = 0.0;
    let (mut highest, mut best_shrink) = (f64::NEG_INFINITY, 0.0);
    let slots = sites
        .iter()
        .zip(grids)
        .map(|(site, grid)| {
            grid.iter()
                .map(|slot| {
                    let e = at_slot(fit, h, &pred, slot.as_ref()?, site, opts)?;
                    best = best.max(e.value);
                    if e.inv_a_sigma_now > 0.0 && e.alt_deg > highest {
                        highest = e.alt_deg;
                        best_shrink = 1.0 - e.inv_a_sigma_after / e.inv_a_sigma_now;
                    }
                    Some(e)
                })
                .collect()
        })
        .collect();
    Some(Evaluation {
        slots,
        best,
        best_shrink,
    })
}
