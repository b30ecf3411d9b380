//! A second look at an arc of two nights or more that found no orbit it trusts (a poor fit, or no
//! least-squares minimum on all its positions): one position the answer leaves far off can be wild
//! although the screen before fitting could not tell it from the path's curvature. A degree's error in
//! the first position of a 21-day ten-night arc kept every correction from converging, and the range
//! profile answered `ok` at e 0.83 for a true 0.70 (a near-Earth arc: 0.82 for 0.38); a strongly
//! hyperbolic one was a poor fit at e 22 for 2.4; a near-Earth two-night arc with a position 72″ off
//! was a poor fit (χ²/dof 242) with that position rejected but its pull left in the orbit.

use super::fit::FitOptions;
use super::fit::NO_LSQ_MINIMUM;
use super::gross::{MIN_GROSS_ARCSEC, without};
use super::input::Tracklet;
use super::kinds::FitStatus;
use super::obsid::ObsId;
use super::rejection::reject_threshold;
use super::result::{FitResult, ResidualOut};
use crate::physics::observe::ObserverModel;

/// A position this many times as far off the retried orbit as the farthest one kept is alone in its
/// misfit (as the screen before fitting judges: `GROSS_RATIO`).
const LONE_RATIO: f64 = 10.0;

/// The positions farthest off the first answer tried, one at a time, farthest first.
const TRIES: usize = 3;

/// Whether `first` (the whole arc's record) calls for a second look: no trusted orbit, or positions
/// set aside by least squares (every minimum was first reached with them in, and their pull can have
/// chosen the valley: a strongly hyperbolic three-night arc with its first position 72″ off was
/// answered `ok` at e 18.2 for 2.39 once that position was rejected).
pub fn wanted(tr: &Tracklet, first: &FitResult) -> bool {
    tr.n_nights() >= 2 && (untrusted(first) || first.n_used < first.n_obs)
}

/// Where least squares set positions aside: the arc fitted from scratch without them, if that lands
/// in a minimum that fits the same positions better (by more than a numerical tie) and is `ok` or
/// `undetermined`.
pub fn refit_without_rejected(
    tr: &Tracklet,
    first: &FitResult,
    model: &ObserverModel,
    inflate_nights: bool,
    fit: &impl Fn(&Tracklet) -> FitResult,
) -> Option<FitResult> {
    let index = indices(tr);
    let mut rejected = Vec::new();
    for x in first.residuals.iter().filter(|x| !x.used) {
        rejected.push(*index.get(&x.id)?);
    }
    if rejected.is_empty() {
        return None;
    }
    let (before, first_chi2) = (first.chi2_per_dof?, first.n_used);
    // They stay set aside however near the new orbit passes: least squares judged them already.
    let r = without(tr, (&rejected, &|_| true), model, inflate_nights, fit)?;
    let better = r.n_used == first_chi2
        && r.chi2_per_dof.is_some_and(|c| {
            let dof = (2 * r.n_used).saturating_sub(6).max(1) as f64;
            (before - c) * dof > SWAP_DCHI2
        });
    (better && r.status.usable()).then_some(r)
}

/// How much better (Δχ² on the same positions) the fit from scratch must be to replace the first.
const SWAP_DCHI2: f64 = 1.0;

fn indices(tr: &Tracklet) -> std::collections::HashMap<ObsId, usize> {
    tr.obs
        .iter()
        .enumerate()
        .map(|(i, o)| (ObsId::of(o), i))
        .collect()
}

/// The record of `tr` without the one position, among the `TRIES` farthest (in χ²) off `first`'s
/// orbit, whose removal leaves a sound least-squares answer (`ok` or `undetermined`, a minimum on
/// every other position, none of them set aside) whose orbit passes at least `MIN_GROSS_ARCSEC` from
/// it, or `LONE_RATIO` times as far as from any kept position and beyond the rejection threshold (a
/// position 72″ off on a three-night arc pulled its night-mates 18″ along: the fit with it was a poor
/// one, and its rejection never converged); None where no such position is found. The distance keeps
/// a night of another object a few arcsec off (a false linkage) a poor fit: without one of its
/// positions the others can pass.
pub fn retry_without_one(
    tr: &Tracklet,
    first: &FitResult,
    model: &ObserverModel,
    opts: &FitOptions,
    fit: &impl Fn(&Tracklet) -> FitResult,
) -> Option<FitResult> {
    let index = indices(tr);
    let bar = reject_threshold(tr.obs.len(), opts.lsq.false_rejection);
    let mut far: Vec<(f64, usize)> = first
        .residuals
        .iter()
        .filter_map(|x| Some((x.chi2, *index.get(&x.id)?)))
        .filter(|(c, _)| c.is_finite())
        .collect();
    far.sort_by(|a, b| b.0.total_cmp(&a.0));
    far.truncate(TRIES);
    let off = |x: &ResidualOut| x.ra_arcsec.hypot(x.dec_arcsec) >= MIN_GROSS_ARCSEC;
    far.into_iter().find_map(|(_, i)| {
        without(tr, (&[i], &|_| true), model, opts.inflate_nights, fit).filter(|r| {
            r.status.usable()
                && r.n_used + 1 == tr.obs.len()
                && !r.distrust_linear.iter().any(|w| w == NO_LSQ_MINIMUM)
                && r.residuals.iter().find(|x| !x.used).is_some_and(|x| {
                    let kept = r
                        .residuals
                        .iter()
                        .filter(|y| y.used)
                        .map(|y| y.ra_arcsec.hypot(y.dec_arcsec))
                        .fold(0.0, f64::max);
                    let d = x.ra_arcsec.hypot(x.dec_arcsec);
                    off(x) || (d >= LONE_RATIO * kept && x.chi2 > bar)
                })
        })
    })
}

/// The second look's answer: where no orbit was trusted, the arc without one far position; where
/// least squares set positions aside, the arc fitted from scratch without them; else the first answer.
pub fn second_look(
    tr: &Tracklet,
    first: FitResult,
    model: &ObserverModel,
    opts: &FitOptions,
    fit: &impl Fn(&Tracklet) -> FitResult,
) -> FitResult {
    let better = if untrusted(&first) {
        retry_without_one(tr, &first, model, opts, fit)
    } else {
        refit_without_rejected(tr, &first, model, opts.inflate_nights, fit)
    };
    better.unwrap_or(first)
}

/// A poor fit, or no least-squares minimum on all positions.
fn untrusted(first: &FitResult) -> bool {
    first.status == FitStatus::PoorFit || first.distrust_linear.iter().any(|w| w == NO_LSQ_MINIMUM)
}
