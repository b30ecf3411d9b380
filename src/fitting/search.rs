//! The global search of a multi-night arc: initial orbits from Gauss's method on night triplets and
//! from every valley of a coarse scan over distance, each corrected by least squares; distinct minima
//! are kept, the best is refined with outlier handling, and the others that fit nearly as well are
//! returned as alternatives.

use super::fit::FitOptions;
use super::gauss::{Sight, gauss};
use super::lsq::{LsqFit, LsqOptions, Problem, correct, correct_unless, correct_with_outliers};
use super::lsqrecord::NO_ORBIT_CHI2_PER_DOF;
use super::profile::{Frame, V5};
use super::rejection::reject_threshold;
use crate::physics::constants::{C_AU_PER_DAY, MU_SUN};
use crate::physics::frames::unit_from_radec;
use crate::physics::propagate::propagate;
use crate::physics::time::Jd2;
use crate::physics::{M6, S6};

/// Levenberg–Marquardt iterations allowed a seed before it is judged.
pub const SEED_ITERATIONS: usize = 20;

/// At most this many initial orbits are corrected for one tracklet.
pub const MAX_CORRECTIONS: usize = 8;

/// Levenberg–Marquardt steps per slice of the seed scan: enough to show where the valleys are.
pub const SCAN_ITERATIONS: usize = 4;

/// Arcs of up to this many nights get the distance scan and every Gauss seed.
pub const MAX_SCAN_NIGHTS: usize = 4;

/// Distances of the seed scan (logarithmic over the ranging interval, about a factor 1.6 apart).
pub const SCAN_POINTS: usize = 41;

/// Distinct minima within this Δχ² of the best are kept as alternative solutions.
pub const ALTERNATIVE_DCHI2: f64 = 9.0;

/// Where the distance scan starts: the arc's frame and a first guess of the five (and ρ).
pub struct ScanStart {
    pub frame: Frame,
    pub start: (V5, f64),
}

/// Distinct minima up to this Δχ² above the best are handed to the range profile: a valley that fits
/// this much worse can still hold the posterior when the population favours it by orders of magnitude.
pub const PROFILE_SEED_DCHI2: f64 = 100.0;

/// What the global search found.
pub struct Found {
    /// The best minimum, refined with outlier handling.
    pub best: LsqFit,
    /// The other distinct minima within `ALTERNATIVE_DCHI2` of it or fitting as the errors allow
    /// (`competitive`), on the same observations, and those that compete once positions they alone
    /// find wild are set aside (`cleaned`: their χ² on the best one's footing).
    pub alternatives: Vec<LsqFit>,
    /// Every other distinct minimum within `PROFILE_SEED_DCHI2` (all observations), for the profile.
    pub elsewhere: Vec<S6>,
    /// χ² beside the best minimum, along the distance, rose well short of what its covariance
    /// predicts: the linear σ understates how far the data let the orbit go.
    pub flatter_than_linear: bool,
}

/// How much better (Δχ² on the positions the best minimum kept, or on every position with each χ²
/// capped where rejection begins) another minimum must fit to take its place once outliers were set
/// aside: more than a numerical tie.
const SWAP_DCHI2: f64 = 1.0;

/// The best least-squares orbit of the arc, the other distinct minima that compete with it, and where
/// the other minima lie.
pub fn least_squares(p: &Problem, opts: &FitOptions, scan: Option<&ScanStart>) -> Option<Found> {
    let mut minima = gauss_minima(p, opts);
    // Arcs of many nights pin the distance with no second valley to fall into.
    let flat_sided = match scan {
        Some(scan) if p.tracklet.n_nights() <= MAX_SCAN_NIGHTS => {
            super::valleyseeds::valley_minima(p, opts, scan, &mut minima)
        }
        _ => Vec::new(),
    };
    minima.sort_by(|a, b| a.chi2.total_cmp(&b.chi2));
    let best = minima.first()?.clone();
    let mut flatter_than_linear = flat_sided.iter().any(|m| same_minimum(&best, m));
    let near: Vec<LsqFit> = minima
        .iter()
        .skip(1)
        .filter(|m| m.chi2 - best.chi2 < PROFILE_SEED_DCHI2)
        .cloned()
        .collect();
    let mut elsewhere: Vec<S6> = near.iter().map(|m| m.state).collect();
    // Outlier rejection within its limits; where no orbit explained the positions, it stands only if
    // the positions it kept are then explained (a single position 50σ off lifts χ²/dof of a 12-point
    // arc above 100; where every point looks like an outlier, none is set aside).
    let best_fit = match correct_with_outliers(p, &best.state, &opts.lsq) {
        Ok(f) if best.chi2_per_dof() <= NO_ORBIT_CHI2_PER_DOF => f,
        Ok(f) if f.converged && f.chi2_per_dof() <= NO_ORBIT_CHI2_PER_DOF => f,
        _ => best,
    };
    // Other minima are compared on the observations the best one kept: a point rejected from the
    // best fit would otherwise count against every other solution alone.
    let rejected = best_fit.used.iter().any(|u| !u);
    let mut others: Vec<LsqFit> = minima
        .into_iter()
        .skip(1)
        .filter_map(|m| match rejected {
            true => correct(p, &m.state, &best_fit.used, &opts.lsq)
                .ok()
                .filter(|f| f.converged && !same_minimum(&best_fit, f)),
            false => Some(m),
        })
        .collect();
    // A wild position shapes every minimum it is in: the best of them with it can be the wrong one
    // without it (a 10″ wild point left a strongly hyperbolic arc at e 18 for a true 2.4). Where another
    // minimum fits the kept positions clearly better, it is the answer (on those same positions).
    let mut best_fit = best_fit;
    if let Some(k) = (0..others.len())
        .filter(|&k| others[k].chi2 < best_fit.chi2 - SWAP_DCHI2)
        .min_by(|&a, &b| others[a].chi2.total_cmp(&others[b].chi2))
    {
        let better = others.swap_remove(k);
        let old = std::mem::replace(&mut best_fit, better);
        // The minimum given up is now one of the others the profile and the doubts must see.
        elsewhere.push(old.state);
        others.push(old);
        others.retain(|m| !same_minimum(&best_fit, m));
        flatter_than_linear = flat_sided.iter().any(|m| same_minimum(&best_fit, m));
    }
    let competing = |others: Vec<LsqFit>, best: &LsqFit| -> Vec<LsqFit> {
        others
            .into_iter()
            .filter(|m| competitive(m.chi2, best) && m.cov.is_some())
            .collect()
    };
    let mut others = competing(others, &best_fit);
    let cap = reject_threshold(p.len(), opts.lsq.false_rejection);
    let cleaned = cleaned_elsewhere(p, opts, &best_fit, (&near, cap), &mut others);
    others.extend(cleaned);
    // Where another minimum, without the positions it alone finds wild, fits every position clearly
    // better than the best does, each position's χ² capped where rejection begins (a position it sets
    // aside costs it the cap), it is the answer, on its own positions: the wild position chose the
    // valley. Setting aside a position is never free here, so a wrong minimum cannot win by dropping
    // the ones it misfits.
    let capped = |f: &LsqFit| -> f64 { f.obs_chi2.iter().map(|c| c.min(cap)).sum() };
    if let Some(k) = (0..others.len())
        .filter(|&k| {
            others[k].used != best_fit.used && capped(&others[k]) < capped(&best_fit) - SWAP_DCHI2
        })
        .min_by(|&a, &b| capped(&others[a]).total_cmp(&capped(&others[b])))
        && let Ok(own) = correct(p, &others[k].state, &others[k].used, &opts.lsq)
        && own.converged
        && own.cov.is_some()
    {
        others.swap_remove(k);
        let old = std::mem::replace(&mut best_fit, own);
        elsewhere.push(old.state);
        // The rest compared again, on the new answer's positions.
        let again: Vec<LsqFit> = others
            .into_iter()
            .chain(std::iter::once(old))
            .filter_map(|m| correct(p, &m.state, &best_fit.used, &opts.lsq).ok())
            .filter(|f| f.converged && !same_minimum(&best_fit, f))
            .fold(Vec::new(), |mut kept: Vec<LsqFit>, f| {
                if !kept.iter().any(|k| same_minimum(k, &f)) {
                    kept.push(f);
                }
                kept
            });
        others = competing(again, &best_fit);
        flatter_than_linear = flat_sided.iter().any(|m| same_minimum(&best_fit, m));
    }
    Some(Found {
        best: best_fit,
        alternatives: others,
        elsewhere,
        flatter_than_linear,
    })
}

/// Other minima that compete once the positions they alone find wild are set aside (`cleaned`),
/// within `ALTERNATIVE_DCHI2` of the best on common positions; one already `listed` on the best's
/// positions is replaced by its cleaned self where that fits better. Only minima with a position
/// beyond `cap` (where rejection begins) are cleaned: the others have none to set aside.
fn cleaned_elsewhere(
    p: &Problem,
    opts: &FitOptions,
    best: &LsqFit,
    (near, cap): (&[LsqFit], f64),
    listed: &mut [LsqFit],
) -> Vec<LsqFit> {
    let mut out: Vec<LsqFit> = Vec::new();
    for m0 in near.iter().filter(|m| m.obs_chi2.iter().any(|c| *c > cap)) {
        let Some(m) = cleaned(p, &opts.lsq, best, &m0.state) else {
            continue;
        };
        // A wild position can pull a minimum beyond its cleaned self's basin: either way round.
        let one = |l: &LsqFit| same_minimum(l, &m) || same_minimum(&m, l);
        if let Some(l) = listed.iter_mut().find(|l| one(l)) {
            if m.chi2 < l.chi2 {
                *l = m;
            }
            continue;
        }
        if m.chi2 - best.chi2 < ALTERNATIVE_DCHI2 && !out.iter().any(one) {
            out.push(m);
        }
    }
    out
}

/// The minimum reached from `x` with its own outlier handling, where it sets aside positions `best`
/// keeps, with its χ² on `best`'s footing: its own, plus `best`'s on every position `best` keeps, less
/// `best`'s refitted on the positions this one keeps; Δχ² against `best` is then the difference on
/// the positions this one keeps (the record's Δχ² for it says so: `FitResult::alternatives`). A wild position the best minimum bends to keep counts against every other minimum
/// compared on the best one's positions: a 1″ point (5σ) on a strongly hyperbolic three-night arc kept
/// a wrong minimum (e 17.4 for 2.4) at χ² 21 against 49 at the true one, answered alone, `ok`.
pub(super) fn cleaned(p: &Problem, opts: &LsqOptions, best: &LsqFit, x: &S6) -> Option<LsqFit> {
    let mut m = correct_with_outliers(p, x, opts).ok()?;
    if !m.converged || m.cov.is_none() || m.used == best.used {
        return None;
    }
    let b = correct(p, &best.state, &m.used, opts).ok()?;
    // The best refitted there must still be the best minimum (a position it had set aside, back in,
    // can carry it to another basin).
    if !b.converged || same_minimum(best, &m) || !same_minimum(best, &b) {
        return None;
    }
    m.chi2 += best.chi2 - b.chi2;
    Some(m)
}

/// A seed corrected briefly: a good seed converges in a handful of iterations; the winner is
/// refined in full afterwards. A seed that walks into the basin of one of the `minima` found so far
/// is given up: it would only find that minimum again.
pub(super) fn correct_seed(
    p: &Problem,
    seed: &S6,
    opts: &FitOptions,
    minima: &[LsqFit],
) -> Option<LsqFit> {
    let known = basins(minima);
    let used = vec![true; p.len()];
    let seed_opts = LsqOptions {
        max_iterations: opts.lsq.max_iterations.min(SEED_ITERATIONS),
        ..opts.lsq
    };
    // A state that already fits better than a known minimum cannot be on its way down to it, however
    // wide that minimum's ellipsoid (a gross misfit's covers whole valleys of good orbits).
    let inside = |x: &S6, chi2: f64| known.iter().any(|b| chi2 >= b.chi2 && b.holds(x));
    let f = correct_unless(p, seed, &used, &seed_opts, inside)
        .ok()
        .filter(|f| f.chi2.is_finite())?;
    // A seed still walking down a long curved valley when its brief correction ends is continued if
    // it already fits like an orbit, or better than every minimum found so far (one wild position
    // keeps every good seed above the first bound, and a seed still falling below a gross misfit is
    // the search's only way out of it: a near-Earth ten-night arc with a 4″ wild point was left
    // with a misfit of χ² 1.5 million while seeds needing 23–27 steps reached χ² 380); the others
    // are given up.
    // (Every minimum counts here, also one without a covariance, which has no basin; with none known
    // yet the seed is let finish too: the first minimum, even a gross misfit, is what the next seeds
    // are judged against. A false linkage pays at most the full correction for each of its seeds.)
    let better_than_known = minima.iter().all(|m| f.chi2 < m.chi2);
    if f.converged || (f.chi2_per_dof() > NO_ORBIT_CHI2_PER_DOF && !better_than_known) {
        return f.converged.then_some(f);
    }
    // One still creeping along its valley after the full correction, yet fitting as well as the
    // stated errors allow, stands as that valley's minimum: the range profile follows the valley
    // from there (an arc had its only good valley lost this way behind a misfit of χ² 11 000).
    correct_unless(p, &f.state, &used, &opts.lsq, inside)
        .ok()
        .filter(|f| f.chi2.is_finite() && (f.converged || fits_as_stated(f)))
}

/// χ² consistent with the stated errors: within 3σ of its χ² distribution.
fn fits_as_stated(m: &LsqFit) -> bool {
    m.cov.is_some() && chi2_as_stated(m.chi2, m.dof())
}

/// Whether a χ² over `dof` degrees of freedom is within 3σ of its distribution (χ²/dof below
/// 1 + 3√(2/dof)).
fn chi2_as_stated(chi2: f64, dof: usize) -> bool {
    let dof = dof.max(1) as f64;
    chi2 / dof < 1.0 + 3.0 * (2.0 / dof).sqrt()
}

/// Whether another distinct minimum, of χ² `chi2` on the observations `best` kept, is reported beside
/// it: it fits within `ALTERNATIVE_DCHI2` of the best, or fits as the stated errors allow. A minimum
/// the positions cannot reject is not dropped because another happens to fit better: on the strongly
/// hyperbolic three-night arc, 2 noise draws in 500 put a wrong minimum (e 18.4 for 2.4) 10.6 below
/// the true one, whose own χ² (21.8 for 18 degrees of freedom) is unremarkable.
pub(super) fn competitive(chi2: f64, best: &LsqFit) -> bool {
    chi2 - best.chi2 < ALTERNATIVE_DCHI2 || chi2_as_stated(chi2, best.dof())
}

/// Where a known minimum's basin certainly lies: within `SAME_MINIMUM_M2` of it (Mahalanobis², its
/// own covariance), the region `same_minimum` counts as that minimum.
pub(super) struct Basin {
    state: S6,
    inverse: M6,
    chi2: f64,
}

impl Basin {
    fn of(m: &LsqFit) -> Option<Basin> {
        let inverse = m.cov.and_then(|c| c.try_inverse())?;
        Some(Basin {
            state: m.state,
            inverse,
            chi2: m.chi2,
        })
    }

    fn holds(&self, x: &S6) -> bool {
        let d = x - self.state;
        (d.transpose() * self.inverse * d)[0] < SAME_MINIMUM_M2
    }
}

fn basins(minima: &[LsqFit]) -> Vec<Basin> {
    minima.iter().filter_map(Basin::of).collect()
}

/// Two minima closer than this (Mahalanobis², the first one's covariance) are one: 3σ.
const SAME_MINIMUM_M2: f64 = 9.0;

/// Whether two minima are the same (within 3σ of the first, Mahalanobis).
pub fn same_minimum(m: &LsqFit, f: &LsqFit) -> bool {
    match Basin::of(m) {
        Some(b) => b.holds(&f.state),
        None => {
            let d = m.state - f.state;
            d.fixed_rows::<3>(0).norm() < 1e-4 * m.state.fixed_rows::<3>(0).norm()
        }
    }
}

/// Whether two seeds are one orbit (position and velocity each equal to 1e-8 of their size).
fn same_seed(a: &S6, b: &S6) -> bool {
    let d = a - b;
    d.fixed_rows::<3>(0).norm() <= 1e-8 * a.fixed_rows::<3>(0).norm()
        && d.fixed_rows::<3>(3).norm() <= 1e-8 * a.fixed_rows::<3>(3).norm()
}

/// Add a minimum unless one already found is the same; keep the lower.
pub(super) fn merge(minima: &mut Vec<LsqFit>, f: LsqFit) {
    let same = minima.iter().position(|m| same_minimum(m, &f));
    match same {
        Some(k) if minima[k].chi2 <= f.chi2 => {}
        Some(k) => minima[k] = f,
        None => minima.push(f),
    }
}

/// Minima from Gauss's method, triplet by triplet (seeds are made lazily: most arcs settle on the
/// first).
fn gauss_minima(p: &Problem, opts: &FitOptions) -> Vec<LsqFit> {
    let tr = p.tracklet;
    let mut minima: Vec<LsqFit> = Vec::new();
    // Arcs of many nights settle on the first statistically good minimum; short ones try every seed
    // (a wrong basin there can fit as well as the stated errors allow).
    let settle = tr.n_nights() > MAX_SCAN_NIGHTS;
    // "Good" means χ² consistent with the stated errors (3σ of the χ² distribution). A wrong basin can
    // still fit that well, which is why the distance scan follows.
    let good = |minima: &[LsqFit]| minima.iter().any(fits_as_stated);
    // Real arcs settle within the first few seeds; a false linkage would try them all. Half way
    // through, if every minimum is still a gross misfit, more seeds will not help.
    let hopeless =
        |m: &[LsqFit]| !m.is_empty() && m.iter().all(|f| f.chi2_per_dof() > NO_ORBIT_CHI2_PER_DOF);
    let mut corrections = 0;
    // Different roots of one triplet's polynomial often refine to the same orbit: a seed met before
    // would only repeat its correction (it still counts against the budget, as it always did).
    let mut tried: Vec<S6> = Vec::new();
    'triplets: for t in night_triplets(p) {
        // A triplet with two positions from one night has a short baseline and its roots are poor
        // starts that walk far; an arc of three or more nights needs them only when its night triplets
        // gave no minimum that fits as well as the errors allow (the distance scan then looks for the
        // other valleys).
        if tr.n_nights() >= 3 && shares_a_night(p, t) && good(&minima) {
            break;
        }
        for s in gauss_seeds(p, t) {
            if (settle && good(&minima))
                || corrections >= MAX_CORRECTIONS
                || (corrections >= MAX_CORRECTIONS / 2 && hopeless(&minima))
            {
                break 'triplets;
            }
            corrections += 1;
            if tried.iter().any(|t| same_seed(t, &s)) {
                continue;
            }
            tried.push(s);
            if let Some(f) = correct_seed(p, &s, opts, &minima) {
                merge(&mut minima, f);
            }
        }
    }
    minima
}

fn sight(p: &Problem, i: usize, t_ref: Jd2) -> Sight {
    let o = &p.tracklet.obs[i];
    Sight {
        t: o.time.tdb.minus(t_ref),
        dir: unit_from_radec(o.ra, o.dec),
        observer: p.observers[i].helio_pos,
    }
}

/// Triplets of observations for Gauss's method: the middle of the first, middle and last nights
/// first, then other night triplets, then two points of one night with one of another.
pub fn night_triplets(p: &Problem) -> Vec<[usize; 3]> {
    let tr = p.tracklet;
    let nights = tr.n_nights();
    let members =
        |k: usize| -> Vec<usize> { (0..tr.obs.len()).filter(|&i| tr.night[i] == k).collect() };
    let mid = |k: usize| {
        let m = members(k);
        m[m.len() / 2]
    };
    let mut triplets: Vec<[usize; 3]> = Vec::new();
    if nights >= 3 {
        triplets.push([mid(0), mid(nights / 2), mid(nights - 1)]);
        for a in 0..nights {
            for b in a + 1..nights {
                for c in b + 1..nights {
                    let t = [mid(a), mid(b), mid(c)];
                    if !triplets.contains(&t) && triplets.len() < 20 {
                        triplets.push(t);
                    }
                }
            }
        }
    }
    for k in 0..nights {
        let m = members(k);
        if m.len() >= 2 {
            let other = if k + 1 < nights {
                mid(k + 1)
            } else {
                mid(k - 1)
            };
            let mut t = [m[0], m[m.len() - 1], other];
            t.sort_unstable();
            if !triplets.contains(&t) {
                triplets.push(t);
            }
        }
    }
    triplets
}

/// Whether two positions of a triplet are from the same night.
fn shares_a_night(p: &Problem, t: [usize; 3]) -> bool {
    let night = &p.tracklet.night;
    night[t[0]] == night[t[1]] || night[t[1]] == night[t[2]] || night[t[0]] == night[t[2]]
}

/// Gauss solutions of one triplet, propagated to the epoch.
pub fn gauss_seeds(p: &Problem, t: [usize; 3]) -> Vec<S6> {
    let sights = [
        sight(p, t[0], p.epoch),
        sight(p, t[1], p.epoch),
        sight(p, t[2], p.epoch),
    ];
    gauss(&sights, MU_SUN, Some(C_AU_PER_DAY), true)
        .into_iter()
        .filter_map(|sol| {
            propagate(&sol.r2, &sol.v2, -sol.t2, MU_SUN)
                .ok()
                .map(|(r, v)| S6::new(r.x, r.y, r.z, v.x, v.y, v.z))
        })
        .collect()
}
