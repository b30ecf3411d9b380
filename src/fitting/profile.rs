//! The posterior of a short multi-night arc along its range profile: the state at the epoch is written
//! as a direction and its rate (X, Y, Ẋ, Ẏ in a tangent plane), a distance ρ and a radial velocity ρ̇
//! from a reference observer. For each ρ on a logarithmic grid the other five are fitted to every
//! observation (a constrained least squares, continued from the neighbouring ρ), so the thin valley a
//! second night leaves in (ρ, ρ̇) is followed exactly instead of being missed by a grid. Across the
//! valley the fit is Gaussian in ρ̇ (and in the direction and rate, whose volume is kept); along ρ̇ the
//! population density is integrated by Gauss–Legendre nodes between the energies where populations
//! begin or end, as in the one-night quadrature. Weight of a node:
//! exp(−χ²/2) · f(state) · ρ⁴ · √det Γ(X, Y, Ẋ, Ẏ | ρ, ρ̇) · cell.

use super::lsq::Problem;
use super::population::PopulationModel;
use super::posterior::{Masses, Posterior};
use super::profilequad::{SliceQuadrature, trapezoid};
use super::shortarc::tangent_axes;
pub use super::valleyzoom::GridInputs;
use crate::physics::constants::{MU_BARY_OVER_SUN, MU_SUN};
use crate::physics::observe::ObserverState;
use crate::physics::{S6, V3};
use nalgebra::{SMatrix, SVector};

pub(super) const MU_BARY: f64 = MU_SUN * MU_BARY_OVER_SUN;
pub type M5 = SMatrix<f64, 5, 5>;
pub type V5 = SVector<f64, 5>;

pub(super) const GL_X: [f64; 4] = [
    -0.861_136_311_594_052_6,
    -0.339_981_043_584_856_3,
    0.339_981_043_584_856_3,
    0.861_136_311_594_052_6,
];
pub(super) const GL_W: [f64; 4] = [
    0.347_854_845_137_453_9,
    0.652_145_154_862_546_1,
    0.652_145_154_862_546_1,
    0.347_854_845_137_453_9,
];

#[derive(Debug, Clone, Copy)]
pub struct ProfileOptions {
    pub n_rho: usize,
    pub rho_min_au: f64,
    pub rho_max_au: f64,
    pub v_cap_km_s: f64,
    /// Half-width of the ρ̇ window in standard deviations of the slice's fit.
    pub window_sigma: f64,
}

impl Default for ProfileOptions {
    fn default() -> Self {
        ProfileOptions {
            n_rho: 41,
            rho_min_au: super::ranging::RHO_MIN_AU,
            rho_max_au: super::ranging::RHO_MAX_AU,
            v_cap_km_s: super::ranging::DEFAULT_V_CAP_KM_S,
            window_sigma: 7.0,
        }
    }
}

/// The parametrisation: a reference observer and tangent plane at the problem's epoch.
#[derive(Debug, Clone, Copy)]
pub struct Frame {
    pub observer: ObserverState,
    pub u_ref: V3,
    pub e_a: V3,
    pub e_d: V3,
}

impl Frame {
    pub fn new(observer: ObserverState, u_ref: V3) -> Frame {
        let u = u_ref.normalize();
        let (e_a, e_d) = tangent_axes(&u);
        Frame {
            observer,
            u_ref: u,
            e_a,
            e_d,
        }
    }

    /// State from (X, Y, Ẋ, Ẏ, ρ̇) at distance ρ.
    pub fn state(&self, a: &V5, rho: f64) -> S6 {
        let u = (self.u_ref + a[0] * self.e_a + a[1] * self.e_d).normalize();
        let raw = a[2] * self.e_a + a[3] * self.e_d;
        let udot = raw - u * u.dot(&raw);
        let r = self.observer.helio_pos + rho * u;
        let v = self.observer.helio_vel + rho * udot + a[4] * u;
        S6::new(r.x, r.y, r.z, v.x, v.y, v.z)
    }

    /// (X, Y, Ẋ, Ẏ, ρ̇) and ρ of a state.
    pub fn params(&self, x: &S6) -> (V5, f64) {
        let r = V3::new(x[0], x[1], x[2]) - self.observer.helio_pos;
        let v = V3::new(x[3], x[4], x[5]) - self.observer.helio_vel;
        let rho = r.norm();
        let u = r / rho;
        let rhodot = v.dot(&u);
        let udot = (v - rhodot * u) / rho;
        let w = u.dot(&self.u_ref);
        (
            V5::new(
                u.dot(&self.e_a) / w,
                u.dot(&self.e_d) / w,
                udot.dot(&self.e_a),
                udot.dot(&self.e_d),
                rhodot,
            ),
            rho,
        )
    }
}

/// The best fit on one ρ slice.
#[derive(Debug, Clone, Copy)]
pub struct Slice {
    pub rho: f64,
    pub a: V5,
    pub chi2: f64,
    /// Inverse of the slice's normal matrix (covariance of the five).
    pub cov: M5,
    /// ∂χ²/∂ln ρ at the slice's optimum (by the envelope theorem, the slope of the profile itself): a
    /// change of sign between two slices marks a valley between them however narrow it is.
    pub slope: f64,
}

/// Levenberg–Marquardt iterations a slice of the posterior's profile may take.
pub const SLICE_ITERATIONS: usize = 30;

/// Least squares of the five at fixed ρ, from `start` (Levenberg–Marquardt on whitened rows), in at
/// most `iterations` steps.
pub fn solve_slice(
    p: &Problem,
    frame: &Frame,
    rho: f64,
    start: V5,
    used: &[bool],
    iterations: usize,
) -> Option<Slice> {
    // A fit past its time budget solves no more slices (the profile is then given up).
    if super::budget::spent() {
        return None;
    }
    let mut a = start;
    let mut lambda = 1e-3;
    // The normal equations at the current `a` (None once a step has moved it).
    let mut here: Option<Normal> = None;
    let mut prev_chi2: Option<f64> = None;
    let mut undamped = true;
    for _ in 0..iterations {
        if super::budget::spent() {
            return None;
        }
        let cur = match here {
            Some(h) => h,
            None => normal(p, frame, rho, &a, used)?,
        };
        here = Some(cur);
        // Jacobi-scaled steps: the undamped one first, while such steps keep lowering χ² (damping
        // scaled by the diagonal holds back the weakly determined ρ̇ for many iterations); then damped
        // ones, accepted if χ² falls, else with the damping raised.
        let (n, g) = (cur.n, cur.g);
        let d = V5::from_fn(|i, _| n[(i, i)].sqrt().max(1e-300));
        let step = |lambda: f64| {
            let ns =
                M5::from_fn(|i, j| n[(i, j)] / (d[i] * d[j]) + if i == j { lambda } else { 0.0 });
            ns.cholesky()
                .map(|c| c.solve(&g.component_div(&d)).component_div(&d))
        };
        let gn = step(0.0);
        // Converged when the last step, or the one the linear model still promises, lowers χ² by less
        // than 1e-5 of it.
        let tol = 1e-5 * cur.chi2.max(1.0);
        if prev_chi2.is_some_and(|prev| (prev - cur.chi2).abs() <= tol)
            || gn.is_some_and(|s| g.dot(&s) <= tol)
        {
            break;
        }
        prev_chi2 = Some(cur.chi2);
        if undamped {
            // Judged by the normal equations at the trial, which the next iteration needs anyway
            // (undamped steps are nearly always accepted).
            if let Some(t) = gn.map(|s| a + s)
                && let Some(next) = normal(p, frame, rho, &t, used)
                && next.chi2 <= cur.chi2
            {
                a = t;
                here = Some(next);
                continue;
            }
            undamped = false;
        }
        let Some(trial) = damped(&step, &mut lambda, |t| {
            !super::budget::spent()
                && chi2_at(p, frame, rho, &(a + t), used).is_some_and(|c| c <= cur.chi2)
        }) else {
            break;
        };
        a += trial;
        here = None;
    }
    let at = match here {
        Some(h) => h,
        None => normal(p, frame, rho, &a, used)?,
    };
    let cov = at.n.try_inverse()?;
    Some(Slice {
        rho,
        a,
        chi2: at.chi2,
        cov,
        slope: at.slope,
    })
}

/// A damped step that `lowers` accepts, raising the damping tenfold after each refusal (at most
/// eight tries); on acceptance the damping is lowered tenfold for the next iteration.
fn damped(
    step: &impl Fn(f64) -> Option<V5>,
    lambda: &mut f64,
    lowers: impl Fn(&V5) -> bool,
) -> Option<V5> {
    for _ in 0..8 {
        match step(*lambda) {
            Some(s) if lowers(&s) => {
                *lambda = (*lambda / 10.0).max(1e-9);
                return Some(s);
            }
            _ => *lambda *= 10.0,
        }
    }
    None
}

fn chi2_at(p: &Problem, frame: &Frame, rho: f64, a: &V5, used: &[bool]) -> Option<f64> {
    p.chi2(&frame.state(a, rho), used).ok()
}

/// The linearised slice at (a, ρ).
#[derive(Debug, Clone, Copy)]
struct Normal {
    chi2: f64,
    /// Normal matrix and right-hand side of the five.
    n: M5,
    g: V5,
    /// ∂χ²/∂ln ρ at fixed `a`.
    slope: f64,
}

/// χ², normal matrix and right-hand side of the five at (a, ρ), and the slope in ln ρ.
fn normal(p: &Problem, frame: &Frame, rho: f64, a: &V5, used: &[bool]) -> Option<Normal> {
    let x = frame.state(a, rho);
    // ∂state/∂(five) by central differences of the (cheap, smooth) map.
    let steps = [1e-7, 1e-7, 1e-6, 1e-6, 1e-7];
    let mut jm = SMatrix::<f64, 6, 5>::zeros();
    for k in 0..5 {
        let mut ap = *a;
        let mut am = *a;
        ap[k] += steps[k];
        am[k] -= steps[k];
        let d = (frame.state(&ap, rho) - frame.state(&am, rho)) / (2.0 * steps[k]);
        jm.set_column(k, &d);
    }
    let ev = p.evaluate_all(&x).ok()?;
    let mut n = M5::zeros();
    let mut g = V5::zeros();
    // Σ (W J)ᵀ W r over the full state: −½ ∂χ²/∂state.
    let mut gx = S6::zeros();
    let mut chi2 = 0.0;
    for (i, (pred, res, jac)) in ev.iter().enumerate() {
        if pred.obj_pos.norm() < 0.005 {
            return None;
        }
        if !used[i] {
            continue;
        }
        let w = &p.whiten[i];
        let wr = w * nalgebra::Vector2::new(res[0], res[1]);
        let wjx = w * jac;
        let wj = wjx * jm;
        chi2 += wr.norm_squared();
        n += wj.transpose() * wj;
        g += wj.transpose() * wr;
        gx += wjx.transpose() * wr;
    }
    // The state is linear in ρ at fixed `a`: ∂state/∂ρ = (state − state at ρ = 0)/ρ.
    let dx_drho = (x - frame.state(a, 0.0)) / rho;
    let slope = -2.0 * rho * gx.dot(&dx_drho);
    Some(Normal { chi2, n, g, slope })
}

/// One weighted trial orbit of the profile.
#[derive(Debug, Clone, Copy)]
pub struct ProfileNode {
    pub state: S6,
    pub rho: f64,
    pub unbound: bool,
    pub ln_w: f64,
    pub ln_prior: f64,
    pub k_rho: usize,
}

/// The profile's answer.
#[derive(Debug, Clone)]
pub struct Profile {
    pub slices: Vec<Slice>,
    pub nodes: Vec<ProfileNode>,
    /// None when no slice could carry a posterior (a gross misfit: the slices exist, the valley not).
    pub posterior: Option<Posterior>,
    pub best: Slice,
}

/// What the density needs besides the state.
pub struct DensityContext<'a> {
    pub model: &'a PopulationModel,
    pub sun_bary: S6,
    pub v_mag: f64,
}

/// The posterior along the profile.
pub fn profile(g: &GridInputs, ctx: &DensityContext) -> Option<Profile> {
    let (p, frame, used, opts) = (g.p, g.frame, g.used, g.opts);
    let grid = super::valleyzoom::slices(g);
    // A grid cut short by the time budget would weigh what it happened to reach.
    if super::budget::spent() {
        return None;
    }
    let mut all = grid.slices;
    let nc = SliceQuadrature {
        frame,
        ctx,
        opts,
        breaks: ctx.model.inverse_a_breaks(),
    };
    let first_best = all.iter().map(|s| s.chi2).reduce(f64::min)?;
    let per_slice = if !grid.orbit_near {
        (0..all.len())
            .map(|k| nc.nodes(k, &all[k], first_best))
            .collect()
    } else {
        super::profilequad::refine_steep(p, frame, &mut all, used, &nc, first_best)
    };
    let best = all
        .iter()
        .min_by(|a, b| a.chi2.total_cmp(&b.chi2))
        .copied()?;
    let rhos: Vec<f64> = all.iter().map(|s| s.rho).collect();
    let cell = trapezoid(&rhos);
    // Weights relative to the best slice of the final grid (an added slice may fit better).
    let shift = 0.5 * (best.chi2 - first_best);
    let nodes: Vec<ProfileNode> = per_slice
        .into_iter()
        .flatten()
        .map(|mut n| {
            n.ln_w += shift;
            n.ln_w += cell[n.k_rho].ln();
            n.ln_prior += cell[n.k_rho].ln();
            n
        })
        .collect();
    if nodes.is_empty() {
        return Some(Profile {
            slices: all,
            nodes,
            posterior: None,
            best,
        });
    }
    let post = Masses::of(nodes.iter().map(|n| (&n.unbound, n.ln_w)));
    let prior = Masses::of(nodes.iter().map(|n| (&n.unbound, n.ln_prior)));
    // The half rule: every other slice with its own trapezoid weights.
    let even: Vec<f64> = rhos.iter().step_by(2).copied().collect();
    let cell_half = trapezoid(&even);
    let half: Vec<(bool, f64)> = nodes
        .iter()
        .filter(|n| n.k_rho % 2 == 0)
        .map(|n| {
            (
                n.unbound,
                n.ln_w - cell[n.k_rho].ln() + cell_half[n.k_rho / 2].ln(),
            )
        })
        .collect();
    let post_half = Masses::of(half.iter().map(|(u, w)| (u, *w)));
    let err = (post.ln_odds() - post_half.ln_odds()).abs();
    Some(Profile {
        slices: all,
        posterior: Some(Posterior::new(
            post,
            prior,
            if err.is_finite() { err } else { f64::INFINITY },
            None,
        )),
        nodes,
        best,
    })
}
