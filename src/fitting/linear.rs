//! P(unbound) for a trusted linear fit under the population model: the Gaussian posterior of the
//! least-squares state is integrated against the density along the line of steepest change of the
//! barycentric energy, x(s) = x̂ + Γg s/σ with g = ∂(1/a)/∂x and σ² = gᵀΓg, so that 1/a(s) ≈ 1/â + σs.
//! That one direction carries the class boundary and the narrow near-parabolic comet band; across
//! the other five the density changes little over a well-determined fit. Gauss–Legendre nodes go
//! between the places where the density jumps (population edges in 1/a) and crowd the class boundary
//! on the side it lies, so that tails of 10⁻³⁰⁰ still rank in the right order. The numerical error is
//! the difference between three- and two-point rules on the same intervals.

use super::population::PopulationModel;
use super::posterior::{Masses, Posterior};
use crate::physics::constants::{MU_BARY_OVER_SUN, MU_SUN};
use crate::physics::{M6, S6, V3, split_state};

const MU_BARY: f64 = MU_SUN * MU_BARY_OVER_SUN;

const GL3_X: [f64; 3] = [-0.774_596_669_241_483_4, 0.0, 0.774_596_669_241_483_4];
const GL3_W: [f64; 3] = [
    0.555_555_555_555_555_6,
    0.888_888_888_888_889,
    0.555_555_555_555_555_6,
];
const GL2_X: [f64; 2] = [-0.577_350_269_189_625_8, 0.577_350_269_189_625_8];
const GL2_W: [f64; 2] = [1.0, 1.0];

/// Where the density needs the magnitude and the Sun: the same as for the sampled paths.
pub struct LineContext<'a> {
    pub model: &'a PopulationModel,
    pub sun_bary: S6,
    pub observer: V3,
    pub v_mag: f64,
    pub v_cap_au_day: f64,
}

/// Barycentric 1/a of a heliocentric state, and its gradient with respect to that state.
pub fn inverse_a_and_gradient(x: &S6, sun_bary: &S6) -> (f64, S6) {
    let (r, v) = split_state(&(x + sun_bary));
    let rn = r.norm();
    let g_r = -2.0 * r / (rn * rn * rn);
    let g_v = -2.0 * v / MU_BARY;
    (
        2.0 / rn - v.norm_squared() / MU_BARY,
        S6::new(g_r.x, g_r.y, g_r.z, g_v.x, g_v.y, g_v.z),
    )
}

/// The posterior along the energy line, or None when the covariance gives the line no length.
pub fn line_posterior(x: &S6, cov: &M6, ctx: &LineContext) -> Option<Posterior> {
    let (a0, g) = inverse_a_and_gradient(x, &ctx.sun_bary);
    let var = (g.transpose() * cov * g)[0];
    if !(var.is_finite() && var > 0.0) {
        return None;
    }
    let sigma = var.sqrt();
    let dir = cov * g / sigma;
    let inv_a_at = |s: f64| inverse_a_and_gradient(&(x + dir * s), &ctx.sun_bary).0;
    // The class boundary on the line: the real crossing of 1/a = 0 (the line is straight in the state,
    // not in the energy), bracketed outwards from the linear guess and refined by bisection.
    let guess = -a0 / sigma;
    let s0 = crossing(&inv_a_at, guess).unwrap_or(guess);
    let slope = {
        let h = 1e-3 * s0.abs().max(1.0);
        ((inv_a_at(s0 + h) - inv_a_at(s0 - h)) / (2.0 * h))
            .abs()
            .max(1e-300)
    };
    let scale = 1.0 / s0.abs().max(1.0);
    let s_cap = (-ctx.v_cap_au_day.powi(2) / MU_BARY - a0) / sigma;
    let s_lo = s_cap.max((-10.0_f64).min(s0 - 15.0 * scale));
    let s_hi = 10.0_f64.max(s0 + 15.0 * scale);
    let mut edges: Vec<f64> = vec![s_lo, s_hi, s0];
    edges.extend((-6..=6).map(f64::from));
    for c in [0.03, 0.1, 0.3, 1.0, 3.0, 10.0] {
        edges.push(s0 - c * scale);
        edges.push(s0 + c * scale);
    }
    // Population edges in 1/a, placed from the real crossing with the local slope (the sign of the
    // slope says on which side of s0 the bound orbits lie).
    let toward_bound = if inv_a_at(s0 + scale) > 0.0 {
        1.0
    } else {
        -1.0
    };
    for xb in ctx.model.inverse_a_breaks() {
        edges.push(s0 + toward_bound * xb / slope);
        edges.push((xb - a0) / sigma);
    }
    edges.retain(|e| e.is_finite() && *e >= s_lo && *e <= s_hi);
    edges.sort_by(f64::total_cmp);
    edges.dedup();
    let rule = |xs: &[f64], ws: &[f64]| {
        let mut post = Vec::new();
        let mut prior = Vec::new();
        for w in edges.windows(2) {
            let (lo, hi) = (w[0], w[1]);
            let half = 0.5 * (hi - lo);
            if half <= 0.0 {
                continue;
            }
            for (gx, gw) in xs.iter().zip(ws) {
                let s = 0.5 * (lo + hi) + half * gx;
                let xs6 = x + dir * s;
                let r = V3::new(xs6[0], xs6[1], xs6[2]);
                let h = ctx.model.absolute_magnitude(ctx.v_mag, &r, &ctx.observer);
                let d = ctx.model.density(&xs6, &ctx.sun_bary, h);
                if d.ln_f == f64::NEG_INFINITY {
                    continue;
                }
                let ln_cell = (gw * half).ln();
                prior.push((d.unbound, d.ln_f + ln_cell));
                post.push((d.unbound, d.ln_f + ln_cell - 0.5 * s * s));
            }
        }
        (
            Masses::of(post.iter().map(|(u, w)| (u, *w))),
            Masses::of(prior.iter().map(|(u, w)| (u, *w))),
        )
    };
    let (post, prior) = rule(&GL3_X, &GL3_W);
    let (post2, _) = rule(&GL2_X, &GL2_W);
    if !post.ln_unbound.is_finite() && !post.ln_bound.is_finite() {
        return None;
    }
    let err = (post.ln_odds() - post2.ln_odds()).abs();
    Some(Posterior::new(
        post,
        prior,
        if err.is_finite() { err } else { f64::INFINITY },
        None,
    ))
}

/// A root of f near `guess`: brackets outwards from the guess (both ways, growing steps) and bisects.
fn crossing(f: &dyn Fn(f64) -> f64, guess: f64) -> Option<f64> {
    let f0 = f(guess);
    if f0 == 0.0 {
        return Some(guess);
    }
    let mut step = 0.01 * guess.abs().max(1.0);
    let mut bracket = None;
    for _ in 0..60 {
        for s in [guess + step, guess - step] {
            if f(s).signum() != f0.signum() {
                bracket = Some(if s > guess { (guess, s) } else { (s, guess) });
                break;
            }
        }
        if bracket.is_some() || step > 1e7 {
            break;
        }
        step *= 2.0;
    }
    let (mut lo, mut hi) = bracket?;
    let f_lo = f(lo);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if f(mid).signum() == f_lo.signum() {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo < 1e-12 * mid.abs().max(1.0) {
            break;
        }
    }
    Some(0.5 * (lo + hi))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverse_a_gradient_matches_finite_differences() {
        let x = S6::new(1.1, -0.4, 0.2, 0.004, 0.015, -0.002);
        let sun = S6::new(0.003, -0.002, 0.0001, 1e-6, 5e-6, -1e-7);
        let (_, g) = inverse_a_and_gradient(&x, &sun);
        for k in 0..6 {
            let h = if k < 3 { 1e-6 } else { 1e-8 };
            let mut xp = x;
            let mut xm = x;
            xp[k] += h;
            xm[k] -= h;
            let fd = (inverse_a_and_gradient(&xp, &sun).0 - inverse_a_and_gradient(&xm, &sun).0)
                / (2.0 * h);
            assert!(
                (fd - g[k]).abs() < 1e-6 * g[k].abs().max(1.0),
                "{k}: {fd} vs {}",
                g[k]
            );
        }
    }
}
