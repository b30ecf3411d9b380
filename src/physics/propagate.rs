//! Two-body motion in universal variables: one code path for ellipses, parabolas and hyperbolas,
//! forward and backward in time, with the analytic state-transition matrix.
//!
//! Kepler's equation in χ is solved with the Laguerre–Conway iteration (Conway 1986, Celest. Mech. 39,
//! 199) started from the real root of its cubic truncation, with a bisection fallback on a bracket
//! (F is monotone: F′ = r > 0). The STM comes from differentiating the f and g functions through the
//! scalars r₀, σ₀, α and the implicit χ, using ∂Uₙ/∂α = −(χUₙ₊₁ − nUₙ₊₂)/2.

use super::stumpff::universal;
use super::{M3, M6, V3};
use thiserror::Error;

#[derive(Debug, Error, Clone, PartialEq)]
pub enum PropagationError {
    #[error("degenerate state: position {0:e} AU from the centre")]
    Degenerate(f64),
    #[error("Kepler's equation did not converge (Δt = {dt} d, α = {alpha})")]
    NoConvergence { dt: f64, alpha: f64 },
    #[error("non-finite state")]
    NonFinite,
}

/// Solution of the universal Kepler equation for one step.
#[derive(Debug, Clone, Copy)]
struct Step {
    chi: f64,
    u: [f64; 6],
    r: f64,
}

struct Scalars {
    r0: f64,
    sigma0: f64,
    alpha: f64,
    sqrt_mu: f64,
}

fn scalars(r0: &V3, v0: &V3, mu: f64) -> Result<Scalars, PropagationError> {
    let r0m = r0.norm();
    if !(r0m.is_finite() && v0.iter().all(|x| x.is_finite()) && mu > 0.0) {
        return Err(PropagationError::NonFinite);
    }
    if r0m < 1e-12 {
        return Err(PropagationError::Degenerate(r0m));
    }
    let sqrt_mu = mu.sqrt();
    Ok(Scalars {
        r0: r0m,
        sigma0: r0.dot(v0) / sqrt_mu,
        alpha: 2.0 / r0m - v0.norm_squared() / mu,
        sqrt_mu,
    })
}

fn kepler_f(s: &Scalars, chi: f64, target: f64) -> (f64, [f64; 6], f64, f64) {
    let u = universal(chi, s.alpha);
    let f = s.r0 * u[1] + s.sigma0 * u[2] + u[3] - target;
    let fp = s.r0 * u[0] + s.sigma0 * u[1] + u[2];
    let fpp = s.sigma0 * u[0] + (1.0 - s.alpha * s.r0) * u[1];
    (f, u, fp, fpp)
}

fn initial_guess(s: &Scalars, target: f64) -> f64 {
    // Real root of r₀χ + σ₀χ²/2 + (1 − αr₀)χ³/6 = √μΔt when that cubic is monotone; otherwise the
    // mean-motion guess for ellipses.
    let c1 = s.r0;
    let c2 = s.sigma0 / 2.0;
    let c3 = (1.0 - s.alpha * s.r0) / 6.0;
    let monotone = c3 > 0.0 && c2 * c2 < 3.0 * c1 * c3;
    // A step short against the orbit's time scales: the cubic's root by series reversion, as close
    // to χ as the exact root (both are off by the quartic term).
    let y = target / c1;
    let (b, c) = (c2 / c1, c3 / c1);
    if (b * y).abs() < 1e-2 && (c * y * y).abs() < 1e-2 {
        return y - b * y * y + (2.0 * b * b - c) * y * y * y;
    }
    if monotone {
        let mut x = target / s.r0;
        for _ in 0..30 {
            let g = ((c3 * x + c2) * x + c1) * x - target;
            let gp = (3.0 * c3 * x + 2.0 * c2) * x + c1;
            let dx = g / gp;
            x -= dx;
            if dx.abs() <= 1e-12 * (1.0 + x.abs()) {
                break;
            }
        }
        x
    } else if s.alpha > 0.0 {
        target * s.alpha
    } else {
        target / s.r0
    }
}

fn solve(s: &Scalars, dt: f64) -> Result<Step, PropagationError> {
    let target = s.sqrt_mu * dt;
    if dt == 0.0 {
        let u = universal(0.0, s.alpha);
        return Ok(Step {
            chi: 0.0,
            u,
            r: s.r0,
        });
    }
    let mut chi = initial_guess(s, target);
    if !chi.is_finite() {
        chi = target / s.r0;
    }
    // F(0) = −√μΔt, so χ has the sign of Δt: that end of the bracket is known from the start.
    let (mut lo, mut hi) = if dt > 0.0 {
        (0.0, f64::INFINITY)
    } else {
        (f64::NEG_INFINITY, 0.0)
    };
    const N: f64 = 5.0;
    for _ in 0..200 {
        let (f, u, fp, fpp) = kepler_f(s, chi, target);
        if !f.is_finite() {
            // Overflow on a hyperbola: this χ is far too large in magnitude.
            if chi > 0.0 {
                hi = chi;
            } else {
                lo = chi;
            }
            chi = next_inside(lo, hi, chi);
            continue;
        }
        if f < 0.0 {
            lo = lo.max(chi);
        } else {
            hi = hi.min(chi);
        }
        let disc = ((N - 1.0) * (N - 1.0) * fp * fp - N * (N - 1.0) * f * fpp)
            .abs()
            .sqrt();
        let delta = N * f / (fp + fp.signum() * disc);
        let mut next = chi - delta;
        let converged = delta.abs() <= 4.0 * f64::EPSILON * chi.abs().max(1e-300)
            || f.abs() <= 1e-15 * target.abs().max(s.r0 * chi.abs());
        if converged {
            return Ok(Step { chi, u, r: fp });
        }
        if !(next > lo && next < hi && next.is_finite()) {
            next = next_inside(lo, hi, chi);
        } else if delta.abs() <= FINISH * chi.abs() {
            // Laguerre's iteration converges cubically: after a step this small the error is far
            // below rounding, so the step is taken and the Uₖ follow it by their Taylor series instead
            // of another evaluation.
            let u = shift(&u, s.alpha, next - chi);
            let r = s.r0 * u[0] + s.sigma0 * u[1] + u[2];
            return Ok(Step { chi: next, u, r });
        }
        if next == chi {
            return Ok(Step { chi, u, r: fp });
        }
        chi = next;
    }
    Err(PropagationError::NoConvergence { dt, alpha: s.alpha })
}

/// A Laguerre step at most this fraction of χ ends the iteration (the error left is of order its
/// cube).
const FINISH: f64 = 1e-6;

/// U₀…U₅ at χ + h from their values at χ, by Taylor's series to h⁴: dUₖ/dχ = Uₖ₋₁, continued below
/// k = 0 by Uₖ₋₂ = −αUₖ (so dU₀/dχ = −αU₁). For |h| ≤ `FINISH`·|χ| the truncation is below 1e-24
/// relative.
fn shift(u: &[f64; 6], alpha: f64, h: f64) -> [f64; 6] {
    // w[j] = U_{j−4}, j = 0..10.
    let mut w = [0.0; 10];
    w[4..].copy_from_slice(u);
    for j in (0..4).rev() {
        w[j] = -alpha * w[j + 2];
    }
    let coef = [1.0, h, h * h / 2.0, h * h * h / 6.0, h * h * h * h / 24.0];
    let mut out = [0.0; 6];
    for (k, slot) in out.iter_mut().enumerate() {
        *slot = (0..5).map(|j| coef[j] * w[k + 4 - j]).sum();
    }
    out
}

/// A point strictly inside (lo, hi), expanding geometrically when one side is still open.
fn next_inside(lo: f64, hi: f64, chi: f64) -> f64 {
    match (lo.is_finite(), hi.is_finite()) {
        (true, true) => 0.5 * (lo + hi),
        (true, false) => (lo.abs().max(chi.abs()).max(1e-3)) * 2.0 * lo.signum().max(1.0),
        (false, true) => -(hi.abs().max(chi.abs()).max(1e-3)) * 2.0,
        (false, false) => 0.0,
    }
}

/// Lagrange coefficients of one step.
struct Fg {
    f: f64,
    g: f64,
    fdot: f64,
    gdot: f64,
}

fn fg(s: &Scalars, st: &Step, dt: f64) -> Fg {
    let u = &st.u;
    Fg {
        f: 1.0 - u[2] / s.r0,
        g: dt - u[3] / s.sqrt_mu,
        fdot: -s.sqrt_mu * u[1] / (st.r * s.r0),
        gdot: 1.0 - u[2] / st.r,
    }
}

/// Exact Lagrange coefficients (f, g, ḟ, ġ) for a step of `dt`: r = f r₀ + g v₀, v = ḟ r₀ + ġ v₀.
pub fn lagrange_coefficients(
    r0: &V3,
    v0: &V3,
    dt: f64,
    mu: f64,
) -> Result<[f64; 4], PropagationError> {
    let s = scalars(r0, v0, mu)?;
    let st = solve(&s, dt)?;
    let c = fg(&s, &st, dt);
    Ok([c.f, c.g, c.fdot, c.gdot])
}

/// State after `dt` days of two-body motion about a centre of gravitational parameter `mu` (AU³/d²).
pub fn propagate(r0: &V3, v0: &V3, dt: f64, mu: f64) -> Result<(V3, V3), PropagationError> {
    let s = scalars(r0, v0, mu)?;
    let st = solve(&s, dt)?;
    let c = fg(&s, &st, dt);
    Ok((c.f * r0 + c.g * v0, c.fdot * r0 + c.gdot * v0))
}

/// State after `dt` days and the 6×6 state-transition matrix ∂(r, v)/∂(r₀, v₀).
pub fn propagate_with_stm(
    r0: &V3,
    v0: &V3,
    dt: f64,
    mu: f64,
) -> Result<(V3, V3, M6), PropagationError> {
    let s = scalars(r0, v0, mu)?;
    let st = solve(&s, dt)?;
    let c = fg(&s, &st, dt);
    let u = &st.u;
    let chi = st.chi;
    let r = st.r;
    let a = s.alpha;
    // ∂Uₖ/∂α at fixed χ, k = 0..3.
    let da = [
        -chi * u[1] / 2.0,
        -(chi * u[2] - u[3]) / 2.0,
        -(chi * u[3] - 2.0 * u[4]) / 2.0,
        -(chi * u[4] - 3.0 * u[5]) / 2.0,
    ];
    // Derivatives of (f, g, ḟ, ġ) with respect to p ∈ {r₀, σ₀, α}.
    let mut d = [[0.0; 3]; 4];
    for (p, col) in [0usize, 1, 2].iter().enumerate() {
        let (is_r0, is_s0, is_a) = (*col == 0, *col == 1, *col == 2);
        let f_p = if is_r0 {
            u[1]
        } else if is_s0 {
            u[2]
        } else {
            s.r0 * da[1] + s.sigma0 * da[2] + da[3]
        };
        let dchi = -f_p / r;
        let ea = if is_a { 1.0 } else { 0.0 };
        let du0 = -a * u[1] * dchi + ea * da[0];
        let du1 = u[0] * dchi + ea * da[1];
        let du2 = u[1] * dchi + ea * da[2];
        let du3 = u[2] * dchi + ea * da[3];
        let dr = if is_r0 { u[0] } else { 0.0 }
            + s.r0 * du0
            + if is_s0 { u[1] } else { 0.0 }
            + s.sigma0 * du1
            + du2;
        let er0 = if is_r0 { 1.0 } else { 0.0 };
        d[0][p] = -du2 / s.r0 + er0 * u[2] / (s.r0 * s.r0);
        d[1][p] = -du3 / s.sqrt_mu;
        d[2][p] = -s.sqrt_mu
            * (du1 / (r * s.r0) - u[1] * dr / (r * r * s.r0) - er0 * u[1] / (r * s.r0 * s.r0));
        d[3][p] = -du2 / r + u[2] * dr / (r * r);
    }
    // Gradients of the scalars p with respect to r₀ and v₀ (as row vectors).
    let gr = [
        r0.transpose() / s.r0,
        v0.transpose() / s.sqrt_mu,
        -2.0 * r0.transpose() / (s.r0 * s.r0 * s.r0),
    ];
    let gv = [
        nalgebra::RowVector3::zeros(),
        r0.transpose() / s.sqrt_mu,
        -2.0 * v0.transpose() / (s.sqrt_mu * s.sqrt_mu),
    ];
    let grad = |k: usize| {
        let mut wr = nalgebra::RowVector3::zeros();
        let mut wv = nalgebra::RowVector3::zeros();
        for p in 0..3 {
            wr += d[k][p] * gr[p];
            wv += d[k][p] * gv[p];
        }
        (wr, wv)
    };
    let (fr, fv) = grad(0);
    let (g_r, g_v) = grad(1);
    let (fdr, fdv) = grad(2);
    let (gdr, gdv) = grad(3);
    let id = M3::identity();
    let rr = id * c.f + r0 * fr + v0 * g_r;
    let rv = id * c.g + r0 * fv + v0 * g_v;
    let vr = id * c.fdot + r0 * fdr + v0 * gdr;
    let vv = id * c.gdot + r0 * fdv + v0 * gdv;
    let mut phi = M6::zeros();
    phi.fixed_view_mut::<3, 3>(0, 0).copy_from(&rr);
    phi.fixed_view_mut::<3, 3>(0, 3).copy_from(&rv);
    phi.fixed_view_mut::<3, 3>(3, 0).copy_from(&vr);
    phi.fixed_view_mut::<3, 3>(3, 3).copy_from(&vv);
    Ok((c.f * r0 + c.g * v0, c.fdot * r0 + c.gdot * v0, phi))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::constants::MU_SUN;

    #[test]
    fn taylor_shift_of_the_universal_functions_matches_their_direct_evaluation() {
        for alpha in [0.8, 0.05, 1e-9, 0.0, -1e-9, -0.3, -4.0] {
            for chi in [1e-3, 0.05, 0.7, -0.4, 2.0] {
                let h = FINISH * chi;
                let shifted = shift(&universal(chi, alpha), alpha, h);
                let direct = universal(chi + h, alpha);
                for k in 0..6 {
                    let scale = direct[k].abs().max(f64::MIN_POSITIVE);
                    // The closed forms of c₄ and c₅ lose about three digits to cancellation.
                    let tol = if k < 4 { 1e-14 } else { 1e-11 };
                    assert!(
                        (shifted[k] - direct[k]).abs() <= tol * scale,
                        "α {alpha} χ {chi} U{k}: {} vs {}",
                        shifted[k],
                        direct[k]
                    );
                }
            }
        }
    }

    fn central_difference_stm(r0: &V3, v0: &V3, dt: f64) -> M6 {
        let mut out = M6::zeros();
        for j in 0..6 {
            let h = if j < 3 { 1e-7 } else { 1e-9 };
            let mut xp = [r0.x, r0.y, r0.z, v0.x, v0.y, v0.z];
            let mut xm = xp;
            xp[j] += h;
            xm[j] -= h;
            let (rp, vp) = propagate(
                &V3::new(xp[0], xp[1], xp[2]),
                &V3::new(xp[3], xp[4], xp[5]),
                dt,
                MU_SUN,
            )
            .unwrap();
            let (rm, vm) = propagate(
                &V3::new(xm[0], xm[1], xm[2]),
                &V3::new(xm[3], xm[4], xm[5]),
                dt,
                MU_SUN,
            )
            .unwrap();
            for i in 0..3 {
                out[(i, j)] = (rp[i] - rm[i]) / (2.0 * h);
                out[(i + 3, j)] = (vp[i] - vm[i]) / (2.0 * h);
            }
        }
        out
    }

    #[test]
    fn analytic_stm_matches_central_differences_for_every_conic() {
        let k = MU_SUN.sqrt();
        let cases = [
            // ellipse (main belt), near-parabola, hyperbola, both time directions
            (V3::new(2.5, 0.3, 0.1), V3::new(-0.001, 0.0105, 0.002), 40.0),
            (
                V3::new(2.5, 0.3, 0.1),
                V3::new(-0.001, 0.0105, 0.002),
                -300.0,
            ),
            (
                V3::new(1.0, 0.0, 0.0),
                V3::new(0.0, k * 2f64.sqrt(), 0.0001),
                60.0,
            ),
            (V3::new(0.8, -0.4, 0.3), V3::new(0.01, 0.025, -0.004), 25.0),
            (V3::new(0.8, -0.4, 0.3), V3::new(0.01, 0.025, -0.004), -80.0),
        ];
        for (r0, v0, dt) in cases {
            let (_, _, phi) = propagate_with_stm(&r0, &v0, dt, MU_SUN).unwrap();
            let num = central_difference_stm(&r0, &v0, dt);
            for i in 0..6 {
                for j in 0..6 {
                    let scale = num.column(j).amax().max(1e-3);
                    assert!(
                        (phi[(i, j)] - num[(i, j)]).abs() < 1e-5 * scale,
                        "dt={dt} ({i},{j}) analytic {} numeric {}",
                        phi[(i, j)],
                        num[(i, j)]
                    );
                }
            }
        }
    }

    #[test]
    fn there_and_back_returns_the_start() {
        let r0 = V3::new(0.3, 1.1, -0.2);
        let v0 = V3::new(-0.02, 0.004, 0.011);
        for dt in [0.5, 17.0, 400.0, 3000.0] {
            let (r1, v1) = propagate(&r0, &v0, dt, MU_SUN).unwrap();
            let (r2, v2) = propagate(&r1, &v1, -dt, MU_SUN).unwrap();
            assert!((r2 - r0).norm() < 1e-11 * r0.norm(), "dt={dt}");
            assert!((v2 - v0).norm() < 1e-11 * v0.norm(), "dt={dt}");
        }
    }
}
