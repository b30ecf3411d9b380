//! One night of positions: the attributable (direction and rate at the mean epoch, with the sky-plane
//! curvature where the night allows it) and the posterior over the unknown distance ρ and radial
//! velocity ρ̇, weighted by the population density × the phase-space Jacobian ρ⁴ × the likelihood of
//! the observed curvature.
//!
//! The (ρ, ρ̇) plane is integrated by quadrature, not by a grid of equal cells: at each ρ (trapezoid
//! rule in ln ρ) the radial velocity is mapped to barycentric energy, 1/a = 1/a_max − y²/μ with
//! y = ρ̇ + ρ̂·w, and Gauss–Legendre nodes are placed between the energies where populations begin or
//! end (the near-parabolic comet band is metres per second wide in ρ̇ and would slip between grid
//! lines) and at a few speeds at infinity on the unbound side. The numerical error is the difference
//! between the full ρ rule and its every-other-node half.

use super::input::Tracklet;
use super::population::PopulationModel;
use super::posterior::{Masses, Posterior};
use crate::physics::constants::{AU_PER_DAY_TO_KM_S, C_AU_PER_DAY, MU_BARY_OVER_SUN, MU_SUN};
use crate::physics::frames::unit_from_radec;
use crate::physics::observe::ObserverState;
use crate::physics::time::Jd2;
use crate::physics::{S6, V3};
use nalgebra::Matrix2;

const MU_BARY: f64 = MU_SUN * MU_BARY_OVER_SUN;

/// Gauss–Legendre nodes and weights on [−1, 1], three points.
const GL_X: [f64; 3] = [-0.774_596_669_241_483_4, 0.0, 0.774_596_669_241_483_4];
const GL_W: [f64; 3] = [
    0.555_555_555_555_555_6,
    0.888_888_888_888_889,
    0.555_555_555_555_555_6,
];

/// Speeds at infinity (km/s) where extra quadrature breaks go on the unbound side.
const V_INF_BREAKS_KM_S: [f64; 5] = [12.0, 30.0, 60.0, 120.0, 250.0];

#[derive(Debug, Clone, Copy)]
pub struct ShortArcOptions {
    pub v_cap_km_s: f64,
    /// Trapezoid nodes in ln ρ (the half rule uses every other one).
    pub n_rho: usize,
    pub rho_min_au: f64,
    pub rho_max_au: f64,
}

impl Default for ShortArcOptions {
    fn default() -> Self {
        ShortArcOptions {
            v_cap_km_s: super::ranging::DEFAULT_V_CAP_KM_S,
            n_rho: 61,
            rho_min_au: super::ranging::RHO_MIN_AU,
            rho_max_au: super::ranging::RHO_MAX_AU,
        }
    }
}

/// Direction, rate and curvature at the mean epoch of one night.
#[derive(Debug, Clone, Copy)]
pub struct Attributable {
    pub t0: Jd2,
    pub u: V3,
    pub udot: V3,
    pub e_a: V3,
    pub e_d: V3,
    /// One-sigma of the tangent-plane position and rate (rad, rad/day): X, Y, Ẋ, Ẏ.
    pub sigma: [f64; 4],
    /// Second derivatives of the tangent-plane coordinates (rad/day²) and their one-sigma, when the
    /// night has enough positions to measure them.
    pub curvature: Option<([f64; 2], [f64; 2])>,
    /// Correlation of the two curvature components' errors (from the positions' own correlation).
    pub curvature_corr: f64,
    /// χ² of the polynomial fit and its degrees of freedom (a failed fit hints at a false linkage).
    pub chi2: f64,
    pub dof: usize,
}

pub fn tangent_axes(u: &V3) -> (V3, V3) {
    let e_a = V3::new(-u.y, u.x, 0.0);
    let e_a = if e_a.norm() > 1e-12 {
        e_a.normalize()
    } else {
        V3::x()
    };
    (e_a, u.cross(&e_a))
}

/// The attributable of one night's positions, weighted by their covariances.
pub fn attributable(tr: &Tracklet, cov: &[Matrix2<f64>]) -> Option<Attributable> {
    let n = tr.obs.len();
    if n < 2 {
        return None;
    }
    let base = tr.obs[0].time.tdb;
    let t0 = base.plus_days(tr.obs.iter().map(|o| o.time.tdb.minus(base)).sum::<f64>() / n as f64);
    let dirs: Vec<V3> = tr
        .obs
        .iter()
        .map(|o| unit_from_radec(o.ra, o.dec))
        .collect();
    let u0 = dirs.iter().fold(V3::zeros(), |a, d| a + d).normalize();
    let (e_a0, e_d0) = tangent_axes(&u0);
    let t: Vec<f64> = tr.obs.iter().map(|o| o.time.tdb.minus(t0)).collect();
    let gx: Vec<f64> = dirs.iter().map(|d| d.dot(&e_a0) / d.dot(&u0)).collect();
    let gy: Vec<f64> = dirs.iter().map(|d| d.dot(&e_d0) / d.dot(&u0)).collect();
    // Both coordinates at once, each position weighted by its full covariance (a correlation
    // between its RA and Dec errors was once dropped here). A parabola from three distinct times on
    // (a second apart or more), a line where the times cannot carry one.
    let mut sorted = t.clone();
    sorted.sort_by(f64::total_cmp);
    let distinct = 1 + sorted
        .windows(2)
        .filter(|w| w[1] - w[0] > 1.0 / 86_400.0)
        .count();
    let parabola = (distinct >= 3)
        .then(|| super::nightpoly::fit(&t, &gx, &gy, cov, 2))
        .flatten();
    let (degree, fit) = match parabola {
        Some(f) => (2, f),
        None => (1, super::nightpoly::fit(&t, &gx, &gy, cov, 1)?),
    };
    let (cx, cy) = (fit.x, fit.y);
    let u = (u0 + cx[0] * e_a0 + cy[0] * e_d0).normalize();
    let raw = cx[1] * e_a0 + cy[1] * e_d0;
    let udot = raw - u * u.dot(&raw);
    let (e_a, e_d) = tangent_axes(&u);
    let curvature = (degree == 2).then(|| {
        let [sx, sy] = fit.sigma(2);
        ([2.0 * cx[2], 2.0 * cy[2]], [2.0 * sx, 2.0 * sy])
    });
    let ([s0x, s0y], [s1x, s1y]) = (fit.sigma(0), fit.sigma(1));
    Some(Attributable {
        t0,
        u,
        udot,
        e_a,
        e_d,
        sigma: [s0x, s0y, s1x, s1y],
        curvature,
        curvature_corr: if degree == 2 {
            let [sx, sy] = fit.sigma(2);
            (fit.cov[(2, 5)] / (sx * sy)).clamp(-0.999, 0.999)
        } else {
            0.0
        },
        chi2: fit.chi2,
        dof: (2 * n).saturating_sub(2 * (degree + 1)),
    })
}

/// One quadrature node: a trial orbit with its natural-log weights.
#[derive(Debug, Clone, Copy)]
pub struct Node {
    pub rho: f64,
    pub rhodot: f64,
    pub unbound: bool,
    /// ln(posterior weight) and ln(prior weight: the same without the curvature likelihood).
    pub ln_w: f64,
    pub ln_prior: f64,
    pub chi2: f64,
    /// Index of the ln ρ node (for the half rule).
    pub k_rho: usize,
}

/// Everything the one-night posterior needs besides the tracklet.
pub struct Geometry {
    /// Observer at the attributable's epoch, and its heliocentric acceleration (AU/day²).
    pub observer: ObserverState,
    pub observer_acc: V3,
    /// The Sun's barycentric state at the epoch.
    pub sun_bary: S6,
    /// Mean V magnitude of the night (band offsets applied).
    pub v_mag: f64,
}

/// The one-night answer.
#[derive(Debug, Clone)]
pub struct ShortArc {
    pub attributable: Attributable,
    pub nodes: Vec<Node>,
    pub posterior: Posterior,
    pub evaluations: usize,
}

impl ShortArc {
    /// Heliocentric state and epoch of a node, optionally with the attributable shifted by
    /// `delta` (X, Y, Ẋ, Ẏ in the tangent plane) for drawing orbits that carry its uncertainty.
    pub fn state(&self, g: &Geometry, n: &Node, delta: [f64; 4]) -> (S6, Jd2) {
        let a = &self.attributable;
        let u = (a.u + delta[0] * a.e_a + delta[1] * a.e_d).normalize();
        let udot = a.udot + delta[2] * a.e_a + delta[3] * a.e_d;
        let r = g.observer.helio_pos + n.rho * u;
        let v = g.observer.helio_vel + n.rho * udot + n.rhodot * u;
        (
            S6::new(r.x, r.y, r.z, v.x, v.y, v.z),
            a.t0.plus_days(-n.rho / C_AU_PER_DAY),
        )
    }
}

/// Why the one-night posterior could not be formed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ShortArcError {
    #[error("the positions do not define a direction and rate")]
    NoAttributable,
    #[error("no trial orbit within the speed cap has any weight under the population model")]
    NoWeight,
}

/// Posterior over (ρ, ρ̇) for one night.
pub fn one_night(
    tr: &Tracklet,
    cov: &[Matrix2<f64>],
    g: &Geometry,
    model: &PopulationModel,
    opts: &ShortArcOptions,
) -> Result<ShortArc, ShortArcError> {
    let att = attributable(tr, cov).ok_or(ShortArcError::NoAttributable)?;
    let sun_p = V3::new(g.sun_bary[0], g.sun_bary[1], g.sun_bary[2]);
    let sun_v = V3::new(g.sun_bary[3], g.sun_bary[4], g.sun_bary[5]);
    let v_cap = opts.v_cap_km_s / AU_PER_DAY_TO_KM_S;
    let v_breaks: Vec<f64> = V_INF_BREAKS_KM_S
        .iter()
        .map(|v| v / AU_PER_DAY_TO_KM_S)
        .filter(|v| *v < v_cap)
        .collect();
    let x_breaks = model.inverse_a_breaks();
    let support = model.bound_support();
    let n_rho = opts.n_rho.max(3) | 1;
    let dln = (opts.rho_max_au / opts.rho_min_au).ln() / (n_rho - 1) as f64;
    let mut nodes = Vec::with_capacity(n_rho * 40);
    let mut evaluations = 0;
    let mut ys: Vec<f64> = Vec::with_capacity(32);
    for k in 0..n_rho {
        let rho = (opts.rho_min_au.ln() + dln * k as f64).exp();
        // Trapezoid weight in ln ρ, times ρ for dρ = ρ d ln ρ, times the Jacobian ρ⁴.
        let end = if k == 0 || k == n_rho - 1 { 0.5 } else { 1.0 };
        let ln_cell = (end * dln).ln() + 5.0 * rho.ln();
        let r_h = g.observer.helio_pos + rho * att.u;
        // The absolute magnitude depends on the position only: once per distance.
        let h = model.absolute_magnitude(g.v_mag, &r_h, &g.observer.helio_pos);
        let w_h = g.observer.helio_vel + rho * att.udot;
        let (r_b, w_b) = (r_h + sun_p, w_h + sun_v);
        let c1 = w_b.dot(&att.u);
        let x_max = 2.0 / r_b.norm() - (w_b.norm_squared() - c1 * c1) / MU_BARY;
        let y_cap2 = MU_BARY * x_max + v_cap * v_cap;
        if y_cap2 <= 0.0 {
            continue;
        }
        let y_cap = y_cap2.sqrt();
        ys.clear();
        ys.push(0.0);
        ys.push(y_cap);
        for xb in &x_breaks {
            if *xb < x_max {
                ys.push((MU_BARY * (x_max - xb)).sqrt());
            }
        }
        for v in &v_breaks {
            let y2 = MU_BARY * x_max + v * v;
            if y2 > 0.0 {
                ys.push(y2.sqrt());
            }
        }
        ys.retain(|y| *y <= y_cap);
        ys.sort_by(f64::total_cmp);
        ys.dedup();
        for w in ys.windows(2) {
            let (lo, hi) = (w[0], w[1]);
            if hi - lo <= 0.0 {
                continue;
            }
            // 1/a over the interval; skip bound stretches no population occupies.
            let (x_lo, x_hi) = (x_max - hi * hi / MU_BARY, x_max - lo * lo / MU_BARY);
            let bound_part = x_hi > 0.0;
            let occupied = x_lo < 0.0 || support.iter().any(|(a, b)| x_hi >= *a && x_lo <= *b);
            if bound_part && !occupied {
                continue;
            }
            let half = 0.5 * (hi - lo);
            let mid = 0.5 * (hi + lo);
            for (gx, gw) in GL_X.iter().zip(GL_W) {
                let y = mid + half * gx;
                for sign in [-1.0, 1.0] {
                    let rhodot = sign * y - c1;
                    let v_h = w_h + rhodot * att.u;
                    let x = S6::new(r_h.x, r_h.y, r_h.z, v_h.x, v_h.y, v_h.z);
                    evaluations += 1;
                    let d = model.density(&x, &g.sun_bary, h);
                    let (unbound, ln_f) = (d.unbound, d.ln_f);
                    if ln_f == f64::NEG_INFINITY {
                        continue;
                    }
                    let chi2 = curvature_chi2(&att, g, &r_h, rho, rhodot);
                    let ln_prior = ln_f + ln_cell + (gw * half).ln();
                    nodes.push(Node {
                        rho,
                        rhodot,
                        unbound,
                        ln_w: ln_prior - 0.5 * chi2,
                        ln_prior,
                        chi2,
                        k_rho: k,
                    });
                }
            }
        }
    }
    if nodes.is_empty() {
        return Err(ShortArcError::NoWeight);
    }
    let post = Masses::of(nodes.iter().map(|n| (&n.unbound, n.ln_w)));
    let prior = Masses::of(nodes.iter().map(|n| (&n.unbound, n.ln_prior)));
    if !post.ln_unbound.is_finite() && !post.ln_bound.is_finite() {
        return Err(ShortArcError::NoWeight);
    }
    // The half rule: every other ln ρ node, with doubled trapezoid weights (ends keep their half).
    // (Every even node, ends included, carries twice its full-rule weight.)
    let half_w = |n: &Node| n.k_rho.is_multiple_of(2).then(|| n.ln_w + 2f64.ln());
    let halves: Vec<(bool, f64)> = nodes
        .iter()
        .filter_map(|n| half_w(n).map(|w| (n.unbound, w)))
        .collect();
    let post_half = Masses::of(halves.iter().map(|(u, w)| (u, *w)));
    let err = (post.ln_odds() - post_half.ln_odds()).abs();
    let err = if err.is_finite() { err } else { f64::INFINITY };
    Ok(ShortArc {
        attributable: att,
        posterior: Posterior::new(post, prior, err, None),
        nodes,
        evaluations,
    })
}

/// χ² of the measured sky-plane curvature against the one this trial orbit predicts: the tangential
/// part of the topocentric acceleration (Sun's pull on the object minus the observer's own
/// acceleration, diurnal motion included) less the Coriolis-like 2ρ̇u̇, over ρ.
fn curvature_chi2(att: &Attributable, g: &Geometry, r_h: &V3, rho: f64, rhodot: f64) -> f64 {
    let Some((k_obs, k_sig)) = att.curvature else {
        return 0.0;
    };
    let rn = r_h.norm();
    let acc = -MU_SUN * r_h / (rn * rn * rn) - g.observer_acc;
    let perp = acc - att.u * att.u.dot(&acc);
    let uddot = (perp - 2.0 * rhodot * att.udot) / rho;
    let kp = [uddot.dot(&att.e_a), uddot.dot(&att.e_d)];
    let (dx, dy) = ((k_obs[0] - kp[0]) / k_sig[0], (k_obs[1] - kp[1]) / k_sig[1]);
    let r = att.curvature_corr;
    (dx * dx - 2.0 * r * dx * dy + dy * dy) / (1.0 - r * r)
}
