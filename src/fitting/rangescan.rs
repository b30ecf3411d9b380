//! The scan of a multi-night arc over distance: slices (the best fit of the other five at fixed ρ) on
//! a coarse logarithmic grid, then finer grids inside every valley that can matter. A valley narrower
//! than the coarse spacing shows only as a coarse slice lower than both neighbours, however deep it
//! really is, so every such local minimum is refined, not only the lowest.

use super::lsq::Problem;
use super::profile::{Frame, ProfileOptions, SLICE_ITERATIONS, Slice, V5, solve_slice};

/// A direction of the coarse pass stops after this many slices in a row each worse than the best so
/// far by more than `GIVE_UP_DCHI2` and worse than the one before: beyond them the posterior is below
/// e^-100 and χ² only grows (a second minimum lies within a factor of a few in ρ of the first).
const GIVE_UP_RUN: usize = 4;
const GIVE_UP_DCHI2: f64 = 200.0;

/// Slices at the given distances (ascending), continued outwards from the one nearest `start`;
/// with `prune`, a direction is abandoned once χ² has risen far above the best for a run of slices.
pub fn slices_at(
    p: &Problem,
    frame: &Frame,
    rhos: &[f64],
    start: (V5, f64),
    used: &[bool],
    prune: bool,
    iterations: usize,
) -> Vec<Slice> {
    if rhos.is_empty() {
        return Vec::new();
    }
    let k0 = (0..rhos.len())
        .min_by(|&a, &b| {
            (rhos[a] / start.1)
                .ln()
                .abs()
                .total_cmp(&(rhos[b] / start.1).ln().abs())
        })
        .unwrap_or(0);
    let mut out: Vec<Option<Slice>> = vec![None; rhos.len()];
    out[k0] = solve_slice(p, frame, rhos[k0], start.0, used, iterations);
    let mut best = out[k0].map_or(f64::INFINITY, |s| s.chi2);
    for dir in [1i64, -1] {
        // The last slices in this direction (ln ρ, five), latest last: the next start is extrapolated
        // along the valley through them, quadratically in ln ρ once there are three.
        let mut trail: Vec<(f64, V5)> =
            vec![(rhos[k0].ln(), out[k0].map(|s| s.a).unwrap_or(start.0))];
        let mut last_chi2 = out[k0].map_or(f64::INFINITY, |s| s.chi2);
        let mut run = 0;
        let mut k = k0 as i64 + dir;
        while k >= 0 && (k as usize) < rhos.len() {
            let ku = k as usize;
            let x = rhos[ku].ln();
            out[ku] = solve_slice(p, frame, rhos[ku], extrapolate(&trail, x), used, iterations);
            if let Some(s) = out[ku] {
                if trail.len() == 3 {
                    trail.remove(0);
                }
                trail.push((x, s.a));
                best = best.min(s.chi2);
                let rising = s.chi2 > last_chi2 && s.chi2 > best + GIVE_UP_DCHI2;
                run = if rising { run + 1 } else { 0 };
                last_chi2 = s.chi2;
            }
            if prune && run >= GIVE_UP_RUN {
                break;
            }
            k += dir;
        }
    }
    out.into_iter().flatten().collect()
}

/// The Lagrange polynomial through the points (x, five) evaluated at `x`.
fn extrapolate(points: &[(f64, V5)], x: f64) -> V5 {
    let mut sum = V5::zeros();
    for (i, (xi, ai)) in points.iter().enumerate() {
        let w: f64 = points
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != i)
            .map(|(_, (xj, _))| (x - xj) / (xi - xj))
            .product();
        sum += ai * w;
    }
    sum
}

/// At most this many valleys of the coarse pass are refined (lowest first).
pub const MAX_VALLEYS: usize = 3;

/// Slices over the whole ρ grid (the coarse pass), sorted by ρ, each in at most `iterations` steps
/// (a search for seeds needs only the valleys' shape, the posterior every slice's minimum).
pub fn coarse_slices(
    p: &Problem,
    frame: &Frame,
    start: (V5, f64),
    used: &[bool],
    opts: &ProfileOptions,
    iterations: usize,
) -> Vec<Slice> {
    let n = opts.n_rho.max(3);
    let dln = (opts.rho_max_au / opts.rho_min_au).ln() / (n - 1) as f64;
    let coarse: Vec<f64> = (0..n)
        .map(|k| (opts.rho_min_au.ln() + dln * k as f64).exp())
        .collect();
    slices_at(p, frame, &coarse, start, used, true, iterations)
}

/// A local minimum of χ²(ρ) must stand this far below the ridge to the next lower ground on each
/// side to count as a valley of its own (slices converge to about this level; smaller bumps are
/// noise within one valley).
pub const MIN_PROMINENCE: f64 = 2.0;

/// Indices of the valley floors, ascending in ρ: local minima that stand `MIN_PROMINENCE` above their
/// ridges (the lowest slice always counts), and the lower slice of every pair whose slopes turn from
/// falling to rising.
fn floors_by_rho(all: &[Slice], slopes: bool) -> Vec<usize> {
    let n = all.len();
    let lowest = (0..n).min_by(|&a, &b| all[a].chi2.total_cmp(&all[b].chi2));
    let ridge = |k: usize, dir: i64| {
        let mut j = k as i64 + dir;
        // A floor at an end of the scan is open on that side.
        if j < 0 || j as usize >= n {
            return f64::INFINITY;
        }
        let mut peak = all[k].chi2;
        while j >= 0 && (j as usize) < n && all[j as usize].chi2 >= all[k].chi2 {
            peak = peak.max(all[j as usize].chi2);
            j += dir;
        }
        peak
    };
    let mut floors: Vec<usize> = (0..n)
        .filter(|&k| {
            let left = k == 0 || all[k].chi2 < all[k - 1].chi2;
            let right = k + 1 == n || all[k].chi2 <= all[k + 1].chi2;
            left && right
        })
        .filter(|&k| {
            Some(k) == lowest || ridge(k, -1).min(ridge(k, 1)) - all[k].chi2 >= MIN_PROMINENCE
        })
        .collect();
    // A valley narrower than the spacing can hide between a falling and a rising slice whose values
    // show nothing (both on its walls, the farther one lower still): the slopes give it away.
    for k in (1..n).filter(|_| slopes) {
        if all[k - 1].slope < 0.0 && all[k].slope > 0.0 {
            let f = if all[k - 1].chi2 <= all[k].chi2 {
                k - 1
            } else {
                k
            };
            if !floors.contains(&f) {
                floors.push(f);
            }
        }
    }
    floors.sort_unstable();
    floors
}

/// Indices of the valley floors, lowest χ² first, at most `MAX_VALLEYS`; with `slopes`, also where
/// the slopes turn (for seeds, whose least squares then finds the bottom itself).
pub fn valley_floors(all: &[Slice], slopes: bool) -> Vec<usize> {
    let mut floors = floors_by_rho(all, slopes);
    floors.sort_by(|&a, &b| all[a].chi2.total_cmp(&all[b].chi2));
    floors.truncate(MAX_VALLEYS);
    floors
}

/// Slices over the whole ρ grid, then finer grids inside each of the lowest `MAX_VALLEYS` valleys
/// (two nights pin ρ to a few per cent, far finer than the coarse grid), merged and sorted by ρ. The
/// start and each of `seeds` (other known minima) get a slice of their own: a valley narrower than the
/// coarse spacing falls between two slices on its walls, and one behind a high ridge can lie where the
/// coarse pass gave up.
pub fn slices(
    p: &Problem,
    frame: &Frame,
    start: (V5, f64),
    seeds: &[(V5, f64)],
    used: &[bool],
    opts: &ProfileOptions,
) -> Vec<Slice> {
    let mut all = coarse_slices(p, frame, start, used, opts, SLICE_ITERATIONS);
    for (a, rho) in std::iter::once(&start).chain(seeds) {
        if (opts.rho_min_au..=opts.rho_max_au).contains(rho)
            && !all.iter().any(|s| s.rho == *rho)
            && let Some(s) = solve_slice(p, frame, *rho, *a, used, SLICE_ITERATIONS)
        {
            all.push(s);
        }
    }
    all.sort_by(|a, b| a.rho.total_cmp(&b.rho));
    // No slice anywhere near an acceptable fit: a false linkage or a broken position. Zooming in on
    // its least bad distance would buy nothing.
    let dof = (2 * used.iter().filter(|u| **u).count())
        .saturating_sub(6)
        .max(1) as f64;
    let lowest = all.iter().map(|s| s.chi2).fold(f64::INFINITY, f64::min);
    if lowest > super::lsqrecord::NO_ORBIT_CHI2_PER_DOF * dof {
        return all;
    }
    // A floor this far above the lowest slice holds less than e^-30 of the posterior: refining it
    // would buy nothing, and its span (no wall rises 60 above a floor high on a flat tail) would
    // replace the fine grid of the valley that matters with a coarse one.
    let floors: Vec<Slice> = valley_floors(&all, true)
        .into_iter()
        .map(|k| all[k])
        .filter(|s| s.chi2 - lowest < OUT_OF_REACH_DCHI2)
        .collect();
    // Highest floor first: a refinement replaces the slices across its span, so the valley holding
    // most of the posterior is refined last and keeps its fine grid whatever the others' spans cover.
    for floor in floors.into_iter().rev() {
        if let Some(now) = floor_now(&all, &floor) {
            refine_valley(p, frame, &mut all, now, used, opts);
        }
    }
    all
}

/// `floor` if it is still in the grid; if a wider refinement has replaced it by a coarser grid, the
/// lowest slice of the valley it lay in as that grid shows it.
fn floor_now(all: &[Slice], floor: &Slice) -> Option<Slice> {
    if all.iter().any(|s| s.rho == floor.rho) {
        return Some(*floor);
    }
    let rho = floor.rho;
    let ids = valley_ids(all);
    let off = |k: usize| (all[k].rho / rho).ln().abs();
    let near = (0..all.len()).min_by(|&a, &b| off(a).total_cmp(&off(b)))?;
    (0..all.len())
        .filter(|&k| ids[k] == ids[near])
        .min_by(|&a, &b| all[a].chi2.total_cmp(&all[b].chi2))
        .map(|k| all[k])
}

/// χ² this far above a valley's floor bounds its span; a floor this far above the lowest slice is not
/// refined at all.
const OUT_OF_REACH_DCHI2: f64 = 60.0;

/// Refine about a valley's floor across its coarse walls, then zoom in on the lowest floors that first
/// pass shows inside its span: the span can hold two valleys narrower than the coarse spacing, and two
/// nights pin ρ to a fraction of a per cent when far apart.
fn refine_valley(
    p: &Problem,
    frame: &Frame,
    all: &mut Vec<Slice>,
    floor: Slice,
    used: &[bool],
    opts: &ProfileOptions,
) {
    // A parabola through coarse slices can put a narrow valley's floor a whole cell away from where
    // it is, so the first pass spans the valley between its coarse walls.
    let (lo, hi) = refine_range(all, &floor, opts, false);
    refine_between(p, frame, all, &floor, (lo, hi), used);
    let lowest = all.iter().map(|s| s.chi2).fold(f64::INFINITY, f64::min);
    let mut inner: Vec<Slice> = floors_by_rho(all, true)
        .into_iter()
        .map(|k| all[k])
        .filter(|s| (lo..=hi).contains(&s.rho.ln()) && s.chi2 - lowest < OUT_OF_REACH_DCHI2)
        .collect();
    inner.sort_by(|a, b| a.chi2.total_cmp(&b.chi2));
    inner.truncate(ZOOMS_PER_VALLEY);
    // Highest first, as for the valleys: the lowest floor's zoom is the one no other replaces.
    for best in inner.into_iter().rev() {
        if let Some(now) = floor_now(all, &best) {
            let range = refine_range(all, &now, opts, true);
            refine_between(p, frame, all, &now, range, used);
        }
    }
}

/// Floors found inside one refined span that are zoomed in on.
const ZOOMS_PER_VALLEY: usize = 2;

/// Replace the slices strictly between `lo` and `hi` (ln ρ), except `best`, by a finer even grid
/// solved outwards from `best`.
fn refine_between(
    p: &Problem,
    frame: &Frame,
    all: &mut Vec<Slice>,
    best: &Slice,
    (lo, hi): (f64, f64),
    used: &[bool],
) {
    let m = 24;
    let fine: Vec<f64> = (1..m)
        .map(|k| (lo + (hi - lo) * k as f64 / m as f64).exp())
        .collect();
    let new = slices_at(
        p,
        frame,
        &fine,
        (best.a, best.rho),
        used,
        false,
        SLICE_ITERATIONS,
    );
    if new.is_empty() {
        return;
    }
    // The slice the grid was solved from stays: it may be the floor itself.
    all.retain(|s| s.rho.ln() <= lo || s.rho.ln() >= hi || s.rho == best.rho);
    all.extend(new);
    all.sort_by(|a, b| a.rho.total_cmp(&b.rho));
}

/// The least spacing in ln ρ of the three slices a zoom's parabola passes through.
const PARABOLA_BASE: f64 = 0.01;

/// The ln ρ range to refine about one valley's lowest slice: where χ² is within `OUT_OF_REACH_DCHI2` of it, bounded by
/// the neighbouring slices, and (with `parabola`) no wider than ±8 σ of a parabola through it and its
/// neighbours when that is narrower.
fn refine_range(all: &[Slice], best: &Slice, opts: &ProfileOptions, parabola: bool) -> (f64, f64) {
    let k = all.iter().position(|s| s.rho == best.rho).unwrap_or(0);
    let x = |i: usize| all[i].rho.ln();
    let lo_n = all
        .iter()
        .rposition(|s| s.rho < best.rho && s.chi2 - best.chi2 >= OUT_OF_REACH_DCHI2)
        .map_or(opts.rho_min_au.ln(), x);
    let hi_n = all
        .iter()
        .position(|s| s.rho > best.rho && s.chi2 - best.chi2 >= OUT_OF_REACH_DCHI2)
        .map_or(opts.rho_max_au.ln(), x);
    // The parabola's other points: the nearest slices at least `PARABOLA_BASE` away on each side (a
    // neighbour a hair away, such as a kept slice beside a new grid node, makes χ²'s last digits
    // look like a steep valley and the zoom a sliver).
    let below = (0..k).rev().find(|&i| x(k) - x(i) >= PARABOLA_BASE);
    let above = (k + 1..all.len()).find(|&i| x(i) - x(k) >= PARABOLA_BASE);
    let (Some(kl), Some(kh), true) = (below, above, parabola) else {
        return (lo_n, hi_n);
    };
    let (x0, x1, x2) = (x(kl), x(k), x(kh));
    let (y0, y1, y2) = (all[kl].chi2, all[k].chi2, all[kh].chi2);
    // Second derivative of the parabola through the three points; χ² ≈ c (x − v)² near the bottom.
    let d = (y2 - y1) / (x2 - x1) - (y1 - y0) / (x1 - x0);
    let curv = d / (0.5 * (x2 - x0));
    if !(curv.is_finite() && curv > 0.0) {
        return (lo_n, hi_n);
    }
    let sigma = (2.0 / curv).sqrt();
    let slope_mid = (y2 - y0) / (x2 - x0);
    let vertex = (x1 - slope_mid / curv).clamp(x0, x2);
    (
        (vertex - 8.0 * sigma).max(lo_n),
        (vertex + 8.0 * sigma).min(hi_n),
    )
}

/// Valley number of each slice (sorted by ρ): valleys meet at the highest slice between two floors.
pub fn valley_ids(all: &[Slice]) -> Vec<usize> {
    let floors = floors_by_rho(all, false);
    let mut ids = vec![0; all.len()];
    let mut start = 0;
    for (v, w) in floors.windows(2).enumerate() {
        let ridge = (w[0]..=w[1])
            .max_by(|&a, &b| all[a].chi2.total_cmp(&all[b].chi2))
            .unwrap_or(w[1]);
        for id in ids.iter_mut().take(ridge + 1).skip(start) {
            *id = v;
        }
        start = ridge + 1;
    }
    for id in ids.iter_mut().skip(start) {
        *id = floors.len().saturating_sub(1);
    }
    ids
}

#[cfg(test)]
mod tests {
    use super::*;

    fn slice(rho: f64, chi2: f64) -> Slice {
        Slice {
            slope: 0.0,
            rho,
            a: V5::zeros(),
            chi2,
            cov: super::super::profile::M5::identity(),
        }
    }

    #[test]
    fn every_local_minimum_is_a_valley_floor_lowest_first() {
        let all: Vec<Slice> = [
            (1.0, 50.0),
            (1.5, 9.0),
            (2.0, 80.0),
            (3.0, 2.0),
            (4.0, 40.0),
        ]
        .iter()
        .map(|&(r, c)| slice(r, c))
        .collect();
        assert_eq!(valley_floors(&all, false), vec![3, 1]);
        assert_eq!(valley_ids(&all), vec![0, 0, 0, 1, 1]);
    }

    #[test]
    fn a_bump_smaller_than_the_slice_noise_does_not_split_a_valley() {
        let all: Vec<Slice> = [(1.0, 50.0), (1.5, 9.0), (2.0, 9.5), (3.0, 8.8), (4.0, 40.0)]
            .iter()
            .map(|&(r, c)| slice(r, c))
            .collect();
        assert_eq!(valley_floors(&all, false), vec![3]);
        assert_eq!(valley_ids(&all), vec![0, 0, 0, 0, 0]);
    }

    #[test]
    fn a_falling_end_counts_as_a_floor() {
        let all: Vec<Slice> = [(1.0, 5.0), (1.5, 9.0), (2.0, 80.0), (3.0, 70.0)]
            .iter()
            .map(|&(r, c)| slice(r, c))
            .collect();
        assert_eq!(valley_floors(&all, false), vec![0, 3]);
    }
}
