//! The posterior's quadrature across one slice of the range profile, and the slices added where the
//! posterior changes faster along ρ than the grid can follow.
//!
//! Across a slice the fit is Gaussian in ρ̇ (the direction and rate follow it, their volume kept) and
//! the population density is integrated by Gauss–Legendre nodes between the energies where
//! populations begin or end. Along ρ the slices are summed by the trapezoid rule in ln ρ, which fails
//! where a class of orbits appears or vanishes within one spacing: at the edge of the bound region a
//! thin band of near-parabolic orbits can hold most of the bound weight. There the interval is halved
//! until neighbouring slices agree.

use super::lsq::Problem;
use super::profile::{
    DensityContext, Frame, GL_W, GL_X, M5, MU_BARY, ProfileNode, ProfileOptions, SLICE_ITERATIONS,
    Slice, V5, solve_slice,
};
use crate::physics::constants::AU_PER_DAY_TO_KM_S;
use crate::physics::{S6, V3};

/// A slice's speed cap along ρ̇ (see `speed_cap`).
#[derive(Debug, Clone, Copy)]
pub struct SpeedCap {
    pub c1: f64,
    pub x_max: f64,
    pub y_cap: f64,
}

/// Where along ρ̇ a slice's orbit arrives no faster than `v_cap` (au/day, barycentric v∞): with the
/// direction and rate held at the slice's, the barycentric radial speed ρ̇ + c1 may reach ±y_cap;
/// x_max is the barycentric 1/a at ρ̇ = −c1, the most bound orbit of the slice.
pub fn speed_cap(frame: &Frame, s: &Slice, sun_bary: &S6, v_cap: f64) -> SpeedCap {
    let sun_p = V3::new(sun_bary[0], sun_bary[1], sun_bary[2]);
    let sun_v = V3::new(sun_bary[3], sun_bary[4], sun_bary[5]);
    let x0 = frame.state(&s.a, s.rho);
    let r_b = V3::new(x0[0], x0[1], x0[2]) + sun_p;
    let u = (r_b - sun_p - frame.observer.helio_pos).normalize();
    let w_b = V3::new(x0[3], x0[4], x0[5]) + sun_v - s.a[4] * u;
    let c1 = w_b.dot(&u);
    let x_max = 2.0 / r_b.norm() - (w_b.norm_squared() - c1 * c1) / MU_BARY;
    let y_cap = (MU_BARY * x_max + v_cap * v_cap).max(0.0).sqrt();
    SpeedCap { c1, x_max, y_cap }
}

/// The fixed parts of a slice's quadrature.
pub struct SliceQuadrature<'a> {
    pub frame: &'a Frame,
    pub ctx: &'a DensityContext<'a>,
    pub opts: &'a ProfileOptions,
    /// Energies (1/a, barycentric) where a population begins or ends.
    pub breaks: Vec<f64>,
}

impl SliceQuadrature<'_> {
    /// Weighted nodes of slice `k` per unit ln ρ (the trapezoid cell is applied once the grid is
    /// final), relative to the best χ² of the profile.
    pub fn nodes(&self, k: usize, s: &Slice, best_chi2: f64) -> Vec<ProfileNode> {
        let mut out = Vec::new();
        let v_cap = self.opts.v_cap_km_s / AU_PER_DAY_TO_KM_S;
        let var_rd = s.cov[(4, 4)];
        if !(var_rd.is_finite() && var_rd > 0.0) {
            return out;
        }
        let sd = var_rd.sqrt();
        // Conditional shift of the direction and rate per unit ρ̇, and their conditional volume.
        let shift = V5::from_fn(|i, _| s.cov[(i, 4)] / var_rd);
        let cond = M5::from_fn(|i, j| s.cov[(i, j)] - s.cov[(i, 4)] * s.cov[(j, 4)] / var_rd);
        let det4 = cond.fixed_view::<4, 4>(0, 0).determinant();
        if !(det4.is_finite() && det4 > 0.0) {
            return out;
        }
        let ln_cell = 5.0 * s.rho.ln() + 0.5 * det4.ln();
        // ρ̇ window, cut at the speed cap, with breaks where the energy crosses population edges.
        let cap = speed_cap(self.frame, s, &self.ctx.sun_bary, v_cap);
        let (c1, x_max, y_cap) = (cap.c1, cap.x_max, cap.y_cap);
        let (lo, hi) = (
            (s.a[4] - self.opts.window_sigma * sd).max(-c1 - y_cap),
            (s.a[4] + self.opts.window_sigma * sd).min(-c1 + y_cap),
        );
        if hi <= lo {
            return out;
        }
        let mut edges = vec![lo, hi];
        for c in [-3.0, -1.5, -0.5, 0.5, 1.5, 3.0] {
            edges.push(s.a[4] + c * sd);
        }
        // A class boundary beyond the window still gets its Gaussian tail, which lies within a few
        // σ²/distance of the boundary: without it the other class would have no weight at all.
        let mut tails: Vec<(f64, f64)> = Vec::new();
        if x_max > 0.0 {
            let yb = (MU_BARY * x_max).sqrt();
            for b in [-c1 - yb, -c1 + yb] {
                let dist = (b - s.a[4]).abs();
                let reach = 30.0 * sd * sd / dist.max(sd);
                if b > hi && b < -c1 + y_cap {
                    tails.push((b, (b + reach).min(-c1 + y_cap)));
                } else if b < lo && b > -c1 - y_cap {
                    tails.push(((b - reach).max(-c1 - y_cap), b));
                }
            }
        }
        for xb in &self.breaks {
            if *xb < x_max {
                let y = (MU_BARY * (x_max - xb)).sqrt();
                edges.extend([-c1 - y, -c1 + y]);
            }
        }
        edges.retain(|e| *e >= lo && *e <= hi);
        edges.sort_by(f64::total_cmp);
        edges.dedup();
        let mut intervals: Vec<(f64, f64)> = edges.windows(2).map(|w| (w[0], w[1])).collect();
        for (a, b) in tails {
            // Geometric pieces from the boundary outwards.
            let (near, far) = if (a - s.a[4]).abs() < (b - s.a[4]).abs() {
                (a, b)
            } else {
                (b, a)
            };
            let mut prev = near;
            for f in [0.01, 0.03, 0.1, 0.3, 1.0] {
                let next = near + (far - near) * f;
                intervals.push((prev.min(next), prev.max(next)));
                prev = next;
            }
        }
        // H once per slice, as in the one-night quadrature: along ρ̇ the position moves only by the
        // direction's conditional shift (on 150 two-night arcs of the population sky, P moved by at
        // most 1e-4 of itself against H at every node).
        let h = {
            let x = self.frame.state(&s.a, s.rho);
            let r = V3::new(x[0], x[1], x[2]);
            let observer = &self.frame.observer.helio_pos;
            self.ctx
                .model
                .absolute_magnitude(self.ctx.v_mag, &r, observer)
        };
        for w in intervals.iter().map(|(a, b)| [*a, *b]) {
            let half = 0.5 * (w[1] - w[0]);
            if half <= 0.0 {
                continue;
            }
            for (gx, gw) in GL_X.iter().zip(GL_W) {
                let rd = 0.5 * (w[0] + w[1]) + half * gx;
                let a = s.a + shift * (rd - s.a[4]);
                let x = self.frame.state(&a, s.rho);
                let d = self.ctx.model.density(&x, &self.ctx.sun_bary, h);
                if d.ln_f == f64::NEG_INFINITY {
                    continue;
                }
                let ln_prior = d.ln_f + ln_cell + (gw * half).ln();
                let dchi2 = s.chi2 - best_chi2 + ((rd - s.a[4]) / sd).powi(2);
                out.push(ProfileNode {
                    state: x,
                    rho: s.rho,
                    unbound: d.unbound,
                    ln_w: ln_prior - 0.5 * dchi2,
                    ln_prior,
                    k_rho: k,
                });
            }
        }
        out
    }
}

/// A class's weight per unit ln ρ within this many e-folds of its largest is resolved.
const RESOLVE_WITHIN: f64 = 15.0;
/// Neighbouring slices whose weights of a class differ by more than this many e-folds get a slice
/// between them.
const MAX_STEP: f64 = 2.0;
/// Halving stops at this spacing in ln ρ (a true jump in the weight stays a jump).
const MIN_SPACING: f64 = 2e-4;
/// At most this many slices are added to one profile, in at most this many rounds of halving.
const MAX_ADDED: usize = 48;
const MAX_ROUNDS: usize = 14;

/// ln of the bound and the unbound weight of a slice per unit ln ρ (−∞ where it has none).
fn class_weights(nodes: &[ProfileNode]) -> [f64; 2] {
    let mut out = [f64::NEG_INFINITY; 2];
    for (c, w) in out.iter_mut().enumerate() {
        let ws = nodes.iter().filter(|n| usize::from(n.unbound) == c);
        let top = ws.clone().map(|n| n.ln_w).fold(f64::NEG_INFINITY, f64::max);
        if top.is_finite() {
            *w = top + ws.map(|n| (n.ln_w - top).exp()).sum::<f64>().ln();
        }
    }
    out
}

/// The unbound class is not resolved where its largest weight per unit ln ρ on the grid lies this many
/// e-folds below the bound one's: P is then of order e⁻²⁵ ≈ 1e-11 times the ratio of the classes'
/// widths in ln ρ (an estimate; on the population sky no P above 1e-9 moved, 22 log10 odds below −12
/// moved by more than 0.1), which changes no decision, though it may reorder such candidates among
/// themselves. Resolving it took half of the slices added on bound three-night arcs. (The bound class is
/// always resolved: for a likely unbound candidate how strongly bound is excluded is the ranking.)
const NEGLIGIBLE_UNBOUND: f64 = 25.0;

/// Whether the interval between two slices' class weights (bound, unbound) is too coarse for the
/// trapezoid rule.
fn steep(a: [f64; 2], b: [f64; 2], top: [f64; 2]) -> bool {
    (0..2).any(|c| {
        let hi = a[c].max(b[c]);
        let lo = a[c].min(b[c]);
        let negligible = c == 1 && top[1] < top[0] - NEGLIGIBLE_UNBOUND;
        top[c].is_finite() && !negligible && hi >= top[c] - RESOLVE_WITHIN && hi - lo > MAX_STEP
    })
}

/// Halve every interval of the slices (sorted by ρ) across which a class's weight changes by more than
/// `MAX_STEP` e-folds where it matters, until none does, the spacing reaches `MIN_SPACING` or
/// `MAX_ADDED` slices have been added. Returns each slice's nodes (weights per unit ln ρ, relative to
/// `best_chi2`), made once here and kept for the posterior.
pub fn refine_steep(
    p: &Problem,
    frame: &Frame,
    all: &mut Vec<Slice>,
    used: &[bool],
    q: &SliceQuadrature,
    best_chi2: f64,
) -> Vec<Vec<ProfileNode>> {
    let mut nodes: Vec<Vec<ProfileNode>> = all
        .iter()
        .enumerate()
        .map(|(k, s)| q.nodes(k, s, best_chi2))
        .collect();
    let mut w: Vec<[f64; 2]> = nodes.iter().map(|n| class_weights(n)).collect();
    let mut added = 0;
    // Each round halves every coarse interval once; a slice that cannot be solved leaves its interval
    // as it is, so the rounds are bounded too.
    for _ in 0..MAX_ROUNDS {
        if added >= MAX_ADDED {
            break;
        }
        let top = w.iter().fold([f64::NEG_INFINITY; 2], |t, x| {
            [t[0].max(x[0]), t[1].max(x[1])]
        });
        let coarse: Vec<usize> = (0..all.len().saturating_sub(1))
            .filter(|&k| (all[k + 1].rho / all[k].rho).ln() > MIN_SPACING)
            .filter(|&k| steep(w[k], w[k + 1], top))
            .collect();
        if coarse.is_empty() {
            break;
        }
        // From the far end, so that the indices still to come stay valid.
        for &k in coarse.iter().rev().take(MAX_ADDED - added) {
            let rho = (all[k].rho * all[k + 1].rho).sqrt();
            let from = if all[k].chi2 <= all[k + 1].chi2 {
                all[k].a
            } else {
                all[k + 1].a
            };
            let Some(s) = solve_slice(p, frame, rho, from, used, SLICE_ITERATIONS) else {
                continue;
            };
            let n = q.nodes(k + 1, &s, best_chi2);
            w.insert(k + 1, class_weights(&n));
            nodes.insert(k + 1, n);
            all.insert(k + 1, s);
            added += 1;
        }
    }
    // Slices were inserted: number the nodes by their slice's place in the final grid.
    for (k, n) in nodes.iter_mut().enumerate() {
        n.iter_mut().for_each(|n| n.k_rho = k);
    }
    nodes
}

/// Trapezoid weights in ln ρ for nodes at arbitrary (sorted) distances.
pub fn trapezoid(rhos: &[f64]) -> Vec<f64> {
    let x: Vec<f64> = rhos.iter().map(|r| r.ln()).collect();
    (0..x.len())
        .map(|k| {
            let left = if k > 0 { x[k] - x[k - 1] } else { 0.0 };
            let right = if k + 1 < x.len() {
                x[k + 1] - x[k]
            } else {
                0.0
            };
            0.5 * (left + right)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_interval_is_halved_for_either_class_unless_the_unbound_one_is_negligible() {
        let ninf = f64::NEG_INFINITY;
        // The bound class's weight jumps by 5 e-folds next to its top: halved.
        assert!(steep([0.0, ninf], [-5.0, ninf], [0.0, ninf]));
        // A gentle change is left alone.
        assert!(!steep([0.0, ninf], [-1.0, ninf], [0.0, ninf]));
        // The unbound class jumps near its own top, 10 e-folds below the bound one: halved.
        assert!(steep([0.0, -10.0], [0.0, -15.0], [0.0, -10.0]));
        // The same 30 e-folds below the bound one: negligible, left alone.
        assert!(!steep([0.0, -30.0], [0.0, -35.0], [0.0, -30.0]));
        // The bound class is resolved however far below the unbound one it lies.
        assert!(steep([-40.0, 0.0], [-45.0, 0.0], [-40.0, 0.0]));
        // A class with no weight anywhere is never resolved.
        assert!(!steep([ninf, 0.0], [ninf, 0.0], [ninf, 0.0]));
    }
}
