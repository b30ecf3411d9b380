//! The scan of a multi-night arc over distance: slices (the best fit of the other five at fixed ρ) on
//! a coarse logarithmic grid, and its valleys. A valley narrower than the coarse spacing shows only as
//! a coarse slice lower than both neighbours, however deep it really is, so every such local minimum
//! counts as a floor (`valleyzoom.rs` refines them), not only the lowest.

use super::lsq::Problem;
use super::profile::{Frame, ProfileOptions, Slice, V5, solve_slice};

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
        // along the valley through them, linearly in ln ρ, or quadratically while that predicted the
        // last slice better (smooth valleys; a jagged one, as of a false linkage, makes it overshoot).
        let mut trail: Vec<(f64, V5)> =
            vec![(rhos[k0].ln(), out[k0].map(|s| s.a).unwrap_or(start.0))];
        let mut quadratic = false;
        let mut last_chi2 = out[k0].map_or(f64::INFINITY, |s| s.chi2);
        let mut run = 0;
        let mut k = k0 as i64 + dir;
        while k >= 0 && (k as usize) < rhos.len() {
            let ku = k as usize;
            let x = rhos[ku].ln();
            let linear = extrapolate(&trail[trail.len().saturating_sub(2)..], x);
            let curved = extrapolate(&trail, x);
            let guess = if quadratic { curved } else { linear };
            out[ku] = solve_slice(p, frame, rhos[ku], guess, used, iterations);
            if let Some(s) = out[ku] {
                // Misses in units of the slice's own σ of each of the five.
                let miss = |g: &V5| {
                    (0..5)
                        .map(|i| (s.a[i] - g[i]).powi(2) / s.cov[(i, i)].max(1e-300))
                        .sum::<f64>()
                };
                quadratic = miss(&curved) <= miss(&linear);
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

/// At most this many valleys of the coarse pass are refined (the lowest ones).
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
pub(super) fn floors_by_rho(all: &[Slice], slopes: bool) -> Vec<usize> {
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
