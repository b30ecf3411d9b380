//! Leave-some-out refits estimated from one linearisation: at the full fit's minimum, dropping a group
//! of observations moves the least-squares solution by one Gauss–Newton step built from the remaining
//! normal equations, Δx = (N − N_k)⁻¹ g_k, where g_k is the dropped group's share of the gradient (the
//! total gradient vanishes at the minimum). Exact for a linear problem; near the minimum of a
//! well-determined fit it is what a full refit from there would reach in its first step.

use super::lsq::{Problem, linearise};
use crate::physics::{M6, S6};

/// For each `keep` mask (a subset of `used`): the estimated state and covariance of the refit on the
/// kept observations alone, or None where the kept ones no longer determine an orbit.
pub fn leave_out(p: &Problem, x: &S6, used: &[bool], keeps: &[Vec<bool>]) -> Vec<Option<(S6, M6)>> {
    let vscale = p.tracklet.arc_days().max(1.0);
    let Ok(lin) = linearise(p, x, used, vscale) else {
        return vec![None; keeps.len()];
    };
    // Row pair of each used observation.
    let mut row_of = vec![usize::MAX; p.len()];
    let mut k = 0;
    for (i, u) in used.iter().enumerate() {
        if *u {
            row_of[i] = k;
            k += 2;
        }
    }
    keeps
        .iter()
        .map(|keep| {
            let mut n = M6::zeros();
            let mut g = S6::zeros();
            for (i, &r) in row_of.iter().enumerate() {
                if r == usize::MAX || !keep[i] {
                    continue;
                }
                for a in r..r + 2 {
                    let j = S6::from_fn(|c, _| lin.rows[(a, c)]);
                    n += j * j.transpose();
                    g += j * lin.rhs[a];
                }
            }
            // Well enough conditioned to stand for an orbit (the full fit's own test is similar).
            let inv = n.try_inverse()?;
            let step = inv * g;
            let d = S6::new(1.0, 1.0, 1.0, 1.0 / vscale, 1.0 / vscale, 1.0 / vscale);
            let state = x + step.component_mul(&d);
            let cov = M6::from_fn(|i, j| inv[(i, j)] * d[i] * d[j]);
            Some((state, cov)).filter(|(s, c)| s.iter().all(|v| v.is_finite()) && c[(0, 0)] > 0.0)
        })
        .collect()
}
