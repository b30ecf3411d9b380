//! The range profile's grid: the coarse scan over distance, then finer grids inside every valley
//! that can hold posterior weight, refined so that the valley holding most of it keeps the finest.

use super::lsq::Problem;
use super::profile::{Frame, ProfileOptions, SLICE_ITERATIONS, Slice, V5, solve_slice};
use super::rangescan::{coarse_slices, floors_by_rho, slices_at, valley_floors, valley_ids};

/// What a profile's grid is made from: the arc, its frame, the first slice's start, the other known
/// minima, the observations used and the grid's options.
pub struct GridInputs<'a> {
    pub p: &'a Problem<'a>,
    pub frame: &'a Frame,
    pub start: (V5, f64),
    pub seeds: &'a [(V5, f64)],
    pub used: &'a [bool],
    pub opts: &'a ProfileOptions,
}

/// The slices, sorted by ρ, and whether any of them comes near an acceptable fit (without one the
/// valleys are not refined: see `no_orbit_near`).
pub struct Grid {
    pub slices: Vec<Slice>,
    pub orbit_near: bool,
}

/// Slices over the whole ρ grid, then finer grids inside each of the lowest `MAX_VALLEYS` valleys
/// (two nights pin ρ to a few per cent, far finer than the coarse grid), merged and sorted by ρ. The
/// start and each of `seeds` (other known minima) get a slice of their own: a valley narrower than the
/// coarse spacing falls between two slices on its walls, and one behind a high ridge can lie where the
/// coarse pass gave up.
pub fn slices(g: &GridInputs) -> Grid {
    let GridInputs {
        p,
        frame,
        start,
        seeds,
        used,
        opts,
    } = *g;
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
    if no_orbit_near(&all, used) {
        return Grid {
            slices: all,
            orbit_near: false,
        };
    }
    let lowest = all.iter().map(|s| s.chi2).fold(f64::INFINITY, f64::min);
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
    Grid {
        slices: all,
        orbit_near: true,
    }
}

/// No slice anywhere near an acceptable fit: a false linkage or a broken position. Zooming in on its
/// least bad distance, or on where its weight changes, would buy nothing.
fn no_orbit_near(all: &[Slice], used: &[bool]) -> bool {
    let dof = (2 * used.iter().filter(|u| **u).count())
        .saturating_sub(6)
        .max(1) as f64;
    let lowest = all.iter().map(|s| s.chi2).fold(f64::INFINITY, f64::min);
    lowest > super::lsqrecord::NO_ORBIT_CHI2_PER_DOF * dof
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

/// The ln ρ range to refine about one valley's lowest slice: where χ² is within `OUT_OF_REACH_DCHI2`
/// of it, bounded by the neighbouring slices, and (with `parabola`) no wider than ±8 σ of a parabola
/// through it and slices on either side when that is narrower.
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
