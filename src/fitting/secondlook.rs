//! A second look at an arc of two nights or more whose answer may stand on a wild position: where no
//! orbit was trusted (a poor fit, or no least-squares minimum on all its positions), one position the
//! answer leaves far off can be wild although the screen before fitting could not tell it from the
//! path's curvature; where least squares set positions aside, every minimum was first reached with
//! them in, and their pull can have chosen the valley. A degree's error in the first position of a
//! 21-day ten-night arc kept every correction from converging, and the range profile answered `ok` at
//! e 0.83 for a true 0.70 (a near-Earth arc: 0.82 for 0.38); a strongly hyperbolic one was a poor fit
//! at e 22 for 2.4; a near-Earth two-night arc with a position 72″ off was a poor fit (χ²/dof 242) with
//! that position rejected but its pull left in the orbit; a strongly hyperbolic three-night arc with
//! its first position 72″ off was answered `ok` at e 18.2 for 2.39 once that position was rejected.

use super::fit::{FitOptions, NO_LSQ_MINIMUM};
use super::gross::{MIN_GROSS_ARCSEC, without};
use super::input::Tracklet;
use super::kinds::FitStatus;
use super::obsid::ObsId;
use super::rejection::reject_threshold;
use super::result::{FitResult, ResidualOut};
use crate::physics::observe::ObserverModel;

/// A position this many times as far off the retried orbit as the farthest one kept (and at least
/// `LONE_FLOOR_ARCSEC` times that) is alone in its misfit (as the screen before fitting judges).
const LONE_RATIO: f64 = 10.0;
/// Below this the farthest kept position says nothing of the fit's scale (an arc fitted exactly by as
/// many numbers as it has unknowns); common practice, no source.
const LONE_FLOOR_ARCSEC: f64 = 1.0;

/// The positions farthest off the first answer tried, one at a time, farthest first.
const TRIES: usize = 3;

/// Fewest positions left once one is set aside: more numbers than the orbit's six unknowns (an orbit
/// through three positions fits them exactly, whatever they are).
const MIN_KEPT: usize = 6;

/// Beyond this many positions there is no second look (each try is a whole fit; least squares' own
/// rejection still judges such arcs).
const MAX_POSITIONS: usize = 500;

/// Whether `first` (the whole arc's record) calls for a second look.
pub fn wanted(tr: &Tracklet, first: &FitResult) -> bool {
    !super::budget::spent()
        && tr.n_nights() >= 2
        && tr.obs.len() <= MAX_POSITIONS
        && (untrusted(first) || first.n_used < first.n_obs)
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
        refit_without_rejected(tr, &first, model, opts, fit)
    };
    better.unwrap_or(first)
}

/// A poor fit, or no least-squares minimum on all positions.
fn untrusted(first: &FitResult) -> bool {
    first.status == FitStatus::PoorFit || first.distrust_linear.iter().any(|w| w == NO_LSQ_MINIMUM)
}

/// Where least squares set positions aside: the arc fitted from scratch without them, if that lands
/// in a minimum that fits the same positions better (by more than a numerical tie) and is `ok` or
/// `undetermined`. Those they were rejected against the first minimum and that the new orbit reaches
/// (within the rejection threshold) are taken back: the arc is fitted once more without only the others.
fn refit_without_rejected(
    tr: &Tracklet,
    first: &FitResult,
    model: &ObserverModel,
    opts: &FitOptions,
    fit: &impl Fn(&Tracklet) -> FitResult,
) -> Option<FitResult> {
    let index = indices(tr);
    let rejected: Vec<usize> = first
        .residuals
        .iter()
        .filter(|x| !x.used)
        .map(|x| index.get(&x.id).copied())
        .collect::<Option<_>>()?;
    if rejected.is_empty() {
        return None;
    }
    let (before, n_used) = (first.chi2_per_dof?, first.n_used);
    let inflate = opts.inflate_nights;
    let r = without(tr, (&rejected, &|_| true), model, inflate, fit)?;
    let better = r.n_used == n_used
        && r.chi2_per_dof.is_some_and(|c| {
            let dof = (2 * r.n_used).saturating_sub(6).max(1) as f64;
            (before - c) * dof > SWAP_DCHI2
        });
    if !(better && r.status.usable()) {
        return None;
    }
    let bar = reject_threshold(tr.obs.len(), opts.lsq.false_rejection);
    let still_out: Vec<usize> = r
        .residuals
        .iter()
        .filter(|x| !x.used && (x.chi2 > bar || x.chi2.is_nan()))
        .filter_map(|x| index.get(&x.id).copied())
        .collect();
    if still_out.is_empty() || still_out.len() == rejected.len() {
        return Some(r);
    }
    without(tr, (&still_out, &|_| true), model, inflate, fit)
        .filter(|again| again.status.usable())
        .or(Some(r))
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

/// Whether position `i` may be set aside: others remain on its night and site (at least two on arcs
/// of fewer than four nights, as least squares keeps), and at least `MIN_KEPT` positions remain. A
/// lone position's departure is the path's curvature and the sites' parallax, and a night of another
/// object must not pass by losing one of its few positions.
fn may_set_aside(tr: &Tracklet, i: usize, opts: &FitOptions) -> bool {
    let floor = if tr.n_nights() >= 4 {
        1
    } else {
        opts.lsq.min_per_night
    };
    let mates = (0..tr.obs.len())
        .filter(|&j| {
            j != i && tr.night[j] == tr.night[i] && tr.obs[j].location == tr.obs[i].location
        })
        .count();
    mates >= floor.max(1) && tr.obs.len() > MIN_KEPT
}

/// The record of `tr` without the one position, among the `TRIES` farthest (in χ²) off `first`'s
/// orbit that may be set aside, whose removal leaves a sound least-squares answer (`ok` or
/// `undetermined`, a minimum on every other position, none of them set aside) whose orbit passes at
/// least `MIN_GROSS_ARCSEC` from it, or `LONE_RATIO` times as far as from any kept position (at least
/// `LONE_FLOOR_ARCSEC`) and beyond the rejection threshold (a position 72″ off on a three-night arc
/// pulled its night-mates 18″ along: the fit with it was a poor one, and its rejection never
/// converged); None where no such position is found. A night of another object a few arcsec off (a
/// false linkage) stays a poor fit: without one of its positions the others could pass, but the one
/// left out is not ten times farther off than they are.
fn retry_without_one(
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
        .filter(|&(c, i)| c.is_finite() && may_set_aside(tr, i, opts))
        .collect();
    far.sort_by(|a, b| b.0.total_cmp(&a.0));
    far.truncate(TRIES);
    let off = |x: &ResidualOut| x.ra_arcsec.hypot(x.dec_arcsec) >= MIN_GROSS_ARCSEC;
    far.into_iter().find_map(|(_, i)| {
        if super::budget::spent() {
            return None;
        }
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
                        .fold(LONE_FLOOR_ARCSEC, f64::max);
                    let d = x.ra_arcsec.hypot(x.dec_arcsec);
                    off(x) || (d >= LONE_RATIO * kept && x.chi2 > bar)
                })
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::time::parse_utc;

    /// Nights of `per_night[k]` positions, one site.
    fn arc(per_night: &[usize]) -> Tracklet {
        let start = parse_utc("2026-11-26T06:00:00Z").unwrap_or_else(|e| panic!("{e}"));
        let mut obs = Vec::new();
        for (night, &n) in per_night.iter().enumerate() {
            for k in 0..n {
                let t = night as f64 + k as f64 * 25.0 / 1440.0;
                obs.push(crate::testutil::observation(
                    start.plus_days(t),
                    120.0 + 0.2 * t,
                    10.0 + 0.05 * t,
                ));
            }
        }
        Tracklet::new("x".into(), "x".into(), obs)
    }

    /// Never a lone position of its night, never one that leaves its night below two positions on
    /// arcs of fewer than four nights, never one that leaves fewer than six positions: a night of
    /// another object (2 + 2, 3 + 2) could otherwise pass by losing one of its few positions, and an
    /// arc fitted exactly by its six numbers makes anything look ten times off.
    #[test]
    fn positions_that_may_be_set_aside_leave_every_night_and_the_arc_judgeable() {
        let opts = FitOptions::default();
        let may = |per_night: &[usize]| -> Vec<bool> {
            let tr = arc(per_night);
            (0..tr.obs.len())
                .map(|i| may_set_aside(&tr, i, &opts))
                .collect()
        };
        assert!(may(&[2, 2]).iter().all(|m| !m));
        assert!(may(&[3, 2]).iter().all(|m| !m));
        assert!(may(&[4, 3]).iter().all(|m| *m));
        assert!(may(&[4, 2]).iter().all(|m| !m));
        assert_eq!(may(&[5, 2]), [true, true, true, true, true, false, false]);
        // A lone later night, on three nights and on four.
        assert_eq!(may(&[4, 4, 1]).iter().filter(|m| **m).count(), 8);
        assert!(!may(&[3, 3, 3, 1])[9]);
        assert!(may(&[3, 3, 3, 2])[9]);
    }
}
