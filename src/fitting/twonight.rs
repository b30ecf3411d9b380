//! Two nights of positions: the range profile gives the posterior (P, element spreads, orbits for the
//! ephemeris) and its most probable slice starts the full least-squares fit that supplies residuals,
//! outliers and the record's elements.

use super::fit::{FitOptions, Given, lsq_result};
use super::input::Tracklet;
use super::lsq::{Problem, correct_with_outliers};
use super::onenight::{instant_at, night_v_mag};
use super::perturb::{Dynamics, TwoBody};
use super::profile::{DensityContext, Frame, ProfileOptions, profile};
use super::result::FitResult;
use crate::physics::constants::MU_SUN;
use crate::physics::frames::unit_from_radec;
use crate::physics::observe::{ObserverModel, ObserverState};
use crate::physics::time::Jd2;
use crate::physics::{S6, V3};
use nalgebra::SVector;

/// What every multi-night path shares about one tracklet.
pub struct ArcInputs<'a> {
    pub tr: &'a Tracklet,
    pub model: &'a ObserverModel,
    pub observers: &'a [ObserverState],
    pub cov: &'a [nalgebra::Matrix2<f64>],
    pub shift: S6,
    pub epoch: Jd2,
    pub opts: &'a FitOptions,
}

/// Fit a two-night arc by its range profile (with the planets beyond ten days of arc); None hands it
/// back to the general path (a profile that found nothing).
pub fn fit_two_nights(inp: &ArcInputs) -> Option<FitResult> {
    if inp.tr.arc_days() > super::fit::PERTURB_ARC_DAYS {
        return fit_by_profile(inp, None, &super::perturb::NBody::new());
    }
    fit_by_profile(inp, None, &TwoBody)
}

/// Any multi-night arc along its range profile (the answer for two nights, for arcs whose linear
/// answer cannot be trusted, and the way out when least squares finds no orbit), from `start` or a
/// straight line through the positions.
pub fn fit_by_profile(
    inp: &ArcInputs,
    start: Option<S6>,
    dynamics: &dyn Dynamics,
) -> Option<FitResult> {
    let (tr, model, opts, epoch) = (inp.tr, inp.model, inp.opts, inp.epoch);
    let shift = &inp.shift;
    let p = Problem::new(
        tr,
        inp.observers.to_vec(),
        inp.cov.to_vec(),
        epoch,
        MU_SUN,
        dynamics,
    );
    let loc = tr.obs[tr.obs.len() / 2].location;
    let observer = model.observer(&loc, &instant_at(tr, epoch)).ok()?;
    let dirs: Vec<V3> = tr
        .obs
        .iter()
        .map(|o| unit_from_radec(o.ra, o.dec))
        .collect();
    let frame = Frame::new(observer, dirs[0] + dirs[dirs.len() - 1]);
    let start = match start {
        Some(x) => frame.params(&x),
        None => (straight_start(tr, &dirs, &frame, epoch), 1.0),
    };
    let (v_mag, _) = night_v_mag(tr, &opts.population);
    let ctx = DensityContext {
        model: &opts.population,
        sun_bary: *shift,
        v_mag,
    };
    let used = vec![true; tr.obs.len()];
    let popts = ProfileOptions {
        v_cap_km_s: opts.ranging.v_cap_km_s,
        ..ProfileOptions::default()
    };
    let prof = profile(&p, &frame, start, &used, &ctx, &popts)?;
    let best_state = frame.state(&prof.best.a, prof.best.rho);
    let fit = correct_with_outliers(&p, &best_state, &opts.lsq).ok()?;
    // A profile without a posterior is a gross misfit: the record still shows the best attempt and
    // its residuals, with P along the energy line of that fit (it ranks among the poor fits anyway).
    let given = prof.posterior.map(|posterior| {
        let top = prof
            .nodes
            .iter()
            .map(|n| n.ln_w)
            .fold(f64::NEG_INFINITY, f64::max);
        let raw: Vec<f64> = prof.nodes.iter().map(|n| (n.ln_w - top).exp()).collect();
        let total: f64 = raw.iter().sum();
        Given {
            posterior,
            from: "range-profile",
            states: prof.nodes.iter().map(|n| n.state).collect(),
            weights: raw.iter().map(|w| w / total).collect(),
        }
    });
    Some(lsq_result(
        &p,
        &fit,
        &[],
        shift,
        opts,
        dynamics.name(),
        given,
    ))
}

/// Direction and rate at the epoch from a straight line through all positions in the frame's
/// tangent plane (enough to start the first slice), with no radial motion.
fn straight_start(tr: &Tracklet, dirs: &[V3], frame: &Frame, epoch: Jd2) -> SVector<f64, 5> {
    let n = dirs.len() as f64;
    let t: Vec<f64> = tr.obs.iter().map(|o| o.time.tdb.minus(epoch)).collect();
    let gx: Vec<f64> = dirs
        .iter()
        .map(|d| d.dot(&frame.e_a) / d.dot(&frame.u_ref))
        .collect();
    let gy: Vec<f64> = dirs
        .iter()
        .map(|d| d.dot(&frame.e_d) / d.dot(&frame.u_ref))
        .collect();
    let tm = t.iter().sum::<f64>() / n;
    let stt: f64 = t.iter().map(|x| (x - tm).powi(2)).sum::<f64>().max(1e-12);
    let line = |g: &[f64]| {
        let gm = g.iter().sum::<f64>() / n;
        let slope = t
            .iter()
            .zip(g)
            .map(|(x, y)| (x - tm) * (y - gm))
            .sum::<f64>()
            / stt;
        (gm - slope * tm, slope)
    };
    let (x0, xd) = line(&gx);
    let (y0, yd) = line(&gy);
    SVector::<f64, 5>::new(x0, y0, xd, yd, 0.0)
}
