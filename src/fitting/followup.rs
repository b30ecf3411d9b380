//! What one more observation is worth: a fitted orbit prepared for many cheap predictions within a day
//! or so of a reference time ([`Predictor`]), and the Fisher update of its covariance by simulated
//! positions ([`Gain`]): how much σ(1/a) and σ(e) shrink, and how far P(unbound) is expected to move.
//!
//! The expected change of P uses a Gaussian in barycentric 1/a: now N(μ, σ₀²); after the positions,
//! σ₁ < σ₀, and before they are taken the new best value is itself drawn from N(μ, σ₀² − σ₁²) as far
//! as the data alone say. The reported P moves by the change of the data's odds, and its outcomes are
//! weighed as the reported P expects them ([`expected_change_from`]).

use super::covariance::{eccentricity_gradient, inverse_a_gradient};
use super::ephemeris::fit_state;
use super::fit::FitResult;
use super::significance::{MU_BARY, barycentric_with};
use super::stats::normal_cdf;
use crate::physics::constants::{ARCSEC, MU_SUN};
use crate::physics::observe::{ObserverModel, ObserverState, Prediction, project};
use crate::physics::propagate::propagate_with_stm;
use crate::physics::time::Jd2;
use crate::physics::{M6, S6, V3, split_state};
use nalgebra::{Matrix2, Matrix2x6, RowVector6};

/// A fitted orbit with its covariance, ready for predictions near `t_ref`.
#[derive(Debug, Clone)]
pub struct Predictor {
    t_ref: Jd2,
    r: V3,
    v: V3,
    /// ∂x(t_ref)/∂x(epoch).
    phi: M6,
    /// Covariance of the state at the epoch: what the positions alone say (new positions add to it).
    pub cov: M6,
    /// Up to [`REGION_SAMPLES`] of the fit's sampled orbits at `t_ref` (position, velocity, weight):
    /// the uncertainty region is their scatter on the sky, as the ephemeris draws it.
    samples: Vec<(V3, V3, f64)>,
    /// Gradients of barycentric 1/a and of heliocentric e with respect to the state at the epoch.
    pub g_inv_a: RowVector6<f64>,
    pub g_e: RowVector6<f64>,
    /// Barycentric 1/a (per AU).
    pub inv_a: f64,
}

/// Most sampled orbits the uncertainty region of a plan is drawn from (an even thinning of the
/// fit's), and fewest it is drawn from at all.
const REGION_SAMPLES: usize = 96;
const MIN_REGION_SAMPLES: usize = 7;

/// Up to [`REGION_SAMPLES`] of a fit's sampled orbits, evenly taken, carried to `t_ref` (two-body).
fn region_samples(fit: &FitResult, t_ref: Jd2) -> Vec<(V3, V3, f64)> {
    let n = fit.samples.len();
    let stride = n.div_ceil(REGION_SAMPLES).max(1);
    fit.samples
        .iter()
        .step_by(stride)
        .filter_map(|(s, ep, w)| {
            let x = S6::from_column_slice(s);
            let (r, v) = split_state(&x);
            let (r, v, _) =
                propagate_with_stm(&r, &v, t_ref.minus(Jd2::new(*ep, 0.0)), MU_SUN).ok()?;
            Some((r, v, *w))
        })
        .collect()
}

/// Covariance of a sampled answer: the weighted scatter of its orbits, each carried to the epoch.
fn sample_covariance(fit: &FitResult, epoch: Jd2) -> Option<M6> {
    let mut xs = Vec::with_capacity(fit.samples.len());
    let mut ws = Vec::with_capacity(fit.samples.len());
    for (s, ep, w) in &fit.samples {
        let x = S6::from_column_slice(s);
        let (r, v) = split_state(&x);
        let (r, v, _) = propagate_with_stm(&r, &v, epoch.minus(Jd2::new(*ep, 0.0)), MU_SUN).ok()?;
        xs.push(S6::new(r.x, r.y, r.z, v.x, v.y, v.z));
        ws.push(*w);
    }
    let total: f64 = ws.iter().sum();
    if xs.len() < 7 || total <= 0.0 {
        return None;
    }
    let mean = xs.iter().zip(&ws).map(|(x, w)| x * *w).sum::<S6>() / total;
    let cov = xs
        .iter()
        .zip(&ws)
        .map(|(x, w)| (x - mean) * (x - mean).transpose() * *w)
        .sum::<M6>()
        / total;
    Some(cov)
}

impl Predictor {
    /// Prepare a fit for predictions near `t_ref` (TDB). The uncertainty is its least-squares
    /// covariance (what the positions alone say, so that new positions add to it as information),
    /// or the scatter of its sampled orbits when it has none (one night). `None` without a state or
    /// either.
    pub fn new(fit: &FitResult, t_ref: Jd2, model: &ObserverModel) -> Option<Predictor> {
        let (x, epoch, dynamics) = fit_state(fit)?;
        let cov = match &fit.covariance {
            Some(c) if c.len() == 6 => M6::from_fn(|i, j| c[i][j]),
            _ => sample_covariance(fit, epoch)?,
        };
        let (r, v, phi) = dynamics.state_and_stm(&x, epoch, t_ref).ok()?;
        let samples = region_samples(fit, t_ref);
        let earth = model.earth(epoch).ok()?;
        let xb = barycentric_with(&x, &earth);
        let (rb, vb) = split_state(&xb);
        let (rh, vh) = split_state(&x);
        Some(Predictor {
            t_ref,
            r,
            v,
            phi,
            cov,
            samples,
            g_inv_a: inverse_a_gradient(&rb, &vb, MU_BARY),
            g_e: eccentricity_gradient(&rh, &vh, MU_SUN),
            inv_a: 2.0 / rb.norm() - vb.norm_squared() / MU_BARY,
        })
    }

    /// Where the object appears from `obs` at `t` (TDB), and ∂(RA·cos Dec, Dec)/∂x(epoch). Two-body
    /// motion from `t_ref` (ample for planning within a day or two).
    pub fn at(&self, t: Jd2, obs: &ObserverState) -> Option<(Prediction, Matrix2x6<f64>)> {
        let (r, v, phi) = propagate_with_stm(&self.r, &self.v, t.minus(self.t_ref), MU_SUN).ok()?;
        Some(project((r, v, phi * self.phi), obs, MU_SUN))
    }

    /// 1σ of a linear function of the epoch state under the current covariance.
    pub fn sigma(&self, g: &RowVector6<f64>) -> f64 {
        (g * self.cov * g.transpose())[0].max(0.0).sqrt()
    }

    /// The sky-plane covariance (radians²) of a prediction's partials, from the positions alone.
    pub fn sky_covariance(&self, jac: &Matrix2x6<f64>) -> Matrix2<f64> {
        jac * self.cov * jac.transpose()
    }

    /// The uncertainty region to point at, (major, minor) semi-axes in arcsec: where the fit has
    /// sampled orbits, the extent that holds as large a share of them as the ephemeris's region (a
    /// wide range of distances maps onto the sky far from linearly, with long tails), drawn the same
    /// way; else `REGION_SIGMA` σ of the positions' covariance through the partials `jac`.
    pub fn region_arcsec(
        &self,
        t: Jd2,
        obs: &ObserverState,
        at: &Prediction,
        jac: &Matrix2x6<f64>,
    ) -> (f64, f64) {
        let linear = || semi_axes(&self.sky_covariance(jac));
        if self.samples.len() < MIN_REGION_SAMPLES {
            return linear();
        }
        let (e_a, e_d) = super::ephemeris::tangent_axes(at.ra, at.dec);
        let centre = at.topo.normalize();
        let (mut pts, mut ws) = (Vec::new(), Vec::new());
        for (r, v, w) in &self.samples {
            let Ok((r, v, _)) = propagate_with_stm(r, v, t.minus(self.t_ref), MU_SUN) else {
                continue;
            };
            let u = crate::physics::observe::project_position(&r, &v, obs, MU_SUN)
                .topo
                .normalize();
            let d = u.dot(&centre);
            if d <= 0.0 {
                continue;
            }
            // Gnomonic offsets from the nominal direction.
            pts.push((u.dot(&e_a) / d / ARCSEC, u.dot(&e_d) / d / ARCSEC));
            ws.push(*w);
        }
        // Too few left in front of the observer to draw a region from.
        if pts.len() < MIN_REGION_SAMPLES {
            return linear();
        }
        super::ephemeris::sample_extent(&pts, &ws).map_or_else(linear, |(a, b, _)| (a, b))
    }
}

/// `REGION_SIGMA` σ semi-axes (arcsec) of a sky-plane covariance (radians²).
pub fn semi_axes(c: &Matrix2<f64>) -> (f64, f64) {
    let (a, b, d) = (c[(0, 0)], c[(0, 1)], c[(1, 1)]);
    let mean = 0.5 * (a + d);
    let rad = (0.25 * (a - d) * (a - d) + b * b).sqrt();
    let s = |l: f64| super::ephemeris::REGION_SIGMA * l.max(0.0).sqrt() / ARCSEC;
    (s(mean + rad), s(mean - rad))
}

/// What a set of positions buys.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gain {
    pub inv_a_sigma_now: f64,
    pub inv_a_sigma_after: f64,
    pub e_sigma_now: f64,
    pub e_sigma_after: f64,
    /// Expected |ΔP| of the data-only P(unbound) (module notes).
    pub expected_dp: f64,
    /// Data-only P(unbound) now and, if the best value stays where it is, after.
    pub p_data_now: f64,
    pub p_data_after: f64,
}

/// Fisher update of the predictor's covariance by positions with partials `jacs`, each with a
/// one-coordinate accuracy of `sigma_arcsec`: a sequence of rank-2 updates in Joseph's form, which
/// stays positive where the covariance is enormous (a two-night arc with σ(e) near 3,000 once came
/// out of the short form with σ(e) larger after the night than before). Information only ever
/// narrows a σ: one that rounding widens is the σ before.
pub fn gain(pred: &Predictor, jacs: &[Matrix2x6<f64>], sigma_arcsec: f64) -> Option<Gain> {
    let r = Matrix2::identity() * (sigma_arcsec * ARCSEC).powi(2);
    let mut cov = pred.cov;
    for j in jacs {
        let s = j * cov * j.transpose() + r;
        let k = cov * j.transpose() * s.try_inverse()?;
        let keep = M6::identity() - k * j;
        cov = keep * cov * keep.transpose() + k * r * k.transpose();
        cov = (cov + cov.transpose()) * 0.5;
    }
    let sig = |g: &RowVector6<f64>, c: &M6| (g * c * g.transpose())[0].max(0.0).sqrt();
    let (s0, e0) = (pred.sigma(&pred.g_inv_a), pred.sigma(&pred.g_e));
    let s1 = sig(&pred.g_inv_a, &cov).min(s0);
    Some(Gain {
        inv_a_sigma_now: s0,
        inv_a_sigma_after: s1,
        e_sigma_now: e0,
        e_sigma_after: sig(&pred.g_e, &cov).min(e0),
        expected_dp: expected_change(pred.inv_a, s0, s1),
        p_data_now: p_unbound(pred.inv_a, s0),
        p_data_after: p_unbound(pred.inv_a, s1),
    })
}

/// Φ(−μ/σ): the Gaussian mass of 1/a below zero.
pub fn p_unbound(mu: f64, sigma: f64) -> f64 {
    if sigma > 0.0 {
        normal_cdf(-mu / sigma)
    } else if mu < 0.0 {
        1.0
    } else {
        0.0
    }
}

/// E|Φ(−m/σ₁) − Φ(−μ/σ₀)| with m ~ N(μ, σ₀² − σ₁²), by the trapezoid rule over ±6 standard deviations.
pub fn expected_change(mu: f64, s0: f64, s1: f64) -> f64 {
    expected_change_from(None, mu, s0, s1)
}

fn logit(p: f64) -> f64 {
    let p = p.clamp(1e-300, 1.0 - 1e-16);
    p.ln() - (1.0 - p).ln()
}

/// The reported posterior P moved by the change of the data's own Gaussian odds: the posterior log
/// odds shift by logit P_data(after) − logit P_data(now).
pub fn moved_posterior(p_post: f64, data_now: f64, data_after: f64) -> f64 {
    let l = logit(p_post) + logit(data_after) - logit(data_now);
    1.0 / (1.0 + (-l).exp())
}

/// Expected |ΔP| of one update: of the data-only P (`p_post` None), or of the reported posterior P
/// moved by the data's odds ([`moved_posterior`]), so that a P the prior pins near 0 or 1 barely moves.
///
/// The outcomes are weighed by what the reported P itself expects of them, not by the data alone: an
/// outcome that leaves the data's P at P_d′ has, under the posterior, the density
/// f_d · (P·P_d′/P_d + (1 − P)(1 − P_d′)/(1 − P_d)), f_d the data's own predictive (the unbound and
/// bound outcome laws mixed with the posterior's weights instead of the data's). With P′ from
/// [`moved_posterior`] the integrand's |P′ − P| times that density is P(1 − P)/(P_d(1 − P_d)) times
/// f_d |P_d′ − P_d|, so E|ΔP| is the data's own expected change scaled by that factor: a martingale's
/// step, E[P′] = P, never above 2P(1 − P). A P of 10⁻¹¹ cannot be expected to move by 0.3 because the
/// data alone would have said 0.3.
pub fn expected_change_from(p_post: Option<f64>, mu: f64, s0: f64, s1: f64) -> f64 {
    // Kept off the ends, where the data's odds are infinite.
    let d0 = p_unbound(mu, s0).clamp(1e-300, 1.0 - 1e-16);
    let tau = (s0 * s0 - s1 * s1).max(0.0).sqrt();
    // An even count keeps z = 0 off the nodes (a perfectly sharp update is discontinuous there).
    const N: usize = 96;
    let (mut acc, mut norm) = (0.0, 0.0);
    for k in 0..N {
        let z = -6.0 + 12.0 * k as f64 / (N - 1) as f64;
        let w = (-0.5 * z * z).exp() * if k == 0 || k == N - 1 { 0.5 } else { 1.0 };
        acc += w * (p_unbound(mu + tau * z, s1) - d0).abs();
        norm += w;
    }
    let data = acc / norm;
    match p_post {
        None => data,
        Some(p) => {
            let spread = p * (1.0 - p);
            (data * spread / (d0 * (1.0 - d0))).min(2.0 * spread)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A predictor with covariance `cov` and gradients along the first and second state axes.
    fn predictor(cov: M6) -> Predictor {
        Predictor {
            t_ref: Jd2::new(2_461_000.5, 0.0),
            r: V3::new(1.0, 0.0, 0.0),
            v: V3::new(0.0, 0.017, 0.0),
            phi: M6::identity(),
            cov,
            samples: Vec::new(),
            g_inv_a: RowVector6::new(1.0, 0.0, 0.0, 0.0, 0.0, 0.0),
            g_e: RowVector6::new(0.0, 1.0, 0.0, 0.0, 0.0, 0.0),
            inv_a: -0.1,
        }
    }

    #[test]
    fn positions_never_widen_a_sigma_even_about_an_enormous_covariance() {
        // Regression: a two-night arc with σ(e) near 3,000 came out of the update with a larger σ(e)
        // than it went in with, and a P that moved although σ(1/a) did not.
        let big = M6::from_fn(|i, j| if i == j { 1e8 * (i + 1) as f64 } else { 9.9e7 });
        let small = M6::identity() * 1e-6;
        let jac = Matrix2x6::new(
            1.0, 0.3, 0.0, 0.0, 0.0, 0.0, //
            0.0, 1.0, 0.0, 0.0, 0.0, 0.0,
        );
        for cov in [big, small] {
            let pred = predictor(cov);
            let g = gain(&pred, &[jac, jac, jac, jac], 0.2).unwrap();
            assert!(g.e_sigma_after <= g.e_sigma_now, "{g:?}");
            assert!(g.inv_a_sigma_after <= g.inv_a_sigma_now, "{g:?}");
            assert!(
                g.inv_a_sigma_after < g.inv_a_sigma_now,
                "a measured axis narrows: {g:?}"
            );
            assert!(
                g.p_data_after <= 1.0 && g.p_data_after >= g.p_data_now,
                "{g:?}"
            );
        }
    }

    #[test]
    fn nothing_learned_moves_nothing_and_a_sharp_answer_moves_p_to_an_end() {
        assert!(expected_change(0.001, 0.01, 0.01) < 1e-12);
        // P now is Φ(0) = 0.5; a perfect measurement sends it to 0 or 1: |ΔP| = 0.5 on average.
        let full = expected_change(0.0, 0.01, 1e-9);
        assert!((full - 0.5).abs() < 0.01, "{full}");
        let half = expected_change(0.0, 0.01, 0.005);
        assert!(half > 0.05 && half < full, "{half}");
        // A posterior the prior pins near zero moves far less on the same data.
        let pinned = expected_change_from(Some(1e-6), 0.0, 0.01, 0.005);
        assert!(pinned > 0.0 && pinned < 0.1 * half, "{pinned} vs {half}");
        assert!((moved_posterior(0.3, 0.5, 0.5) - 0.3).abs() < 1e-12);
    }

    /// Regression: a P the prior holds at 10⁻¹¹ was expected to move by 0.3 when the data alone said
    /// 0.3 (the outcomes were weighed by the data's predictive). Checked against a direct integration
    /// over the posterior's own predictive on a fine grid: E[P′] = P, E|ΔP| the same, and never above
    /// 2P(1 − P).
    #[test]
    fn the_expected_change_is_that_of_the_posteriors_own_predictive_and_keeps_its_bound() {
        let direct = |p: f64, mu: f64, s0: f64, s1: f64| {
            let d0 = p_unbound(mu, s0);
            let tau = (s0 * s0 - s1 * s1).sqrt();
            let (mut mass, mut mean, mut change) = (0.0, 0.0, 0.0);
            let n = 200_000;
            for k in 0..n {
                let z = -12.0 + 24.0 * (k as f64 + 0.5) / n as f64;
                let f =
                    (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt() * 24.0 / n as f64;
                let d1 = p_unbound(mu + tau * z, s1);
                let (u, b) = (p * d1 / d0, (1.0 - p) * (1.0 - d1) / (1.0 - d0));
                let p1 = moved_posterior(p, d0, d1);
                mass += f * (u + b);
                mean += f * (u + b) * p1;
                change += f * (u + b) * (p1 - p).abs();
            }
            (mass, mean, change)
        };
        for &p in &[1e-11, 1e-4, 0.02, 0.3, 0.5, 0.9, 0.999] {
            for &(mu, s0, s1) in &[
                (0.0005, 0.001, 0.0002),
                (-0.002, 0.001, 1e-4),
                (0.01, 0.003, 0.0027),
                (0.0, 0.01, 0.005),
                (0.003, 0.001, 5e-4),
            ] {
                let got = expected_change_from(Some(p), mu, s0, s1);
                let (mass, mean, change) = direct(p, mu, s0, s1);
                assert!((mass - 1.0).abs() < 1e-4, "{mass}");
                assert!((mean - p).abs() < 1e-3 * p, "P {p}: mean {mean}");
                assert!(
                    (got - change).abs() <= 0.01 * change + 1e-15,
                    "P {p}, {mu} {s0} {s1}: {got} against {change}"
                );
                assert!(got <= 2.0 * p * (1.0 - p), "{got}");
            }
        }
        let held = expected_change_from(Some(1e-11), 0.0005, 0.001, 0.0002);
        let data = expected_change(0.0005, 0.001, 0.0002);
        assert!(held < 1e-10 && data > 0.05, "{held} {data}");
    }
}
