//! When the linear covariance cannot be trusted (few nights, poorly known range, a strongly nonlinear
//! eccentricity), P(e > 1) comes from importance sampling around the fit: draws from Gaussians around
//! the minima, weighted by exp(−χ²/2) × prior over the proposal density. The prior is the same
//! population prior as ranging's (flat in the Cartesian state, unbound orbits down-weighted), since a
//! flat prior alone hands a loosely constrained arc to the vast unbound volume; the Bayes factor
//! reports what the data alone say.

use super::covariance::eccentricity_gradient;
use super::lsq::{LsqFit, Problem};
use super::ranging::{SplitMix, UNBOUND_DENSITY_FACTOR};
use super::significance::MU_BARY;
use super::stats::effective_sample_size;
use crate::physics::elements::CometaryElements;
use crate::physics::{M6, S6, V3};

/// Proposal width in units of the fit's σ (wide enough to reach the tails of a curved distribution).
pub const PROPOSAL_SCALE: f64 = 2.0;

#[derive(Debug, Clone)]
pub struct SampleSet {
    pub states: Vec<S6>,
    /// Posterior weights under the population prior (normalised).
    pub weights: Vec<f64>,
    /// P(e_bary > 1) under the population prior (flat in the state, unbound density × the ranging
    /// factor), and under the flat prior alone.
    pub p_hyperbolic: f64,
    pub p_hyperbolic_flat: f64,
    /// Posterior over prior odds of unbound vs bound (data alone); |log₁₀ K| < 0.5: decided by the prior.
    pub bayes_factor: f64,
    pub n_eff: f64,
}

fn bary_e(x: &S6, shift: &S6) -> f64 {
    let b = x + shift;
    CometaryElements::from_state(
        &V3::new(b[0], b[1], b[2]),
        &V3::new(b[3], b[4], b[5]),
        0.0,
        MU_BARY,
    )
    .e
}

/// Why the linear answer cannot be trusted, if it cannot.
pub fn distrust_reasons(p: &Problem, fit: &LsqFit, bary_shift: &S6) -> Vec<String> {
    let mut why = Vec::new();
    if p.tracklet.n_nights() < 3 {
        why.push(format!("{} nights", p.tracklet.n_nights()));
    }
    let Some(cov) = fit.cov else {
        why.push("singular normal matrix".into());
        return why;
    };
    if let Some(rel) = relative_range_sigma(p, fit) {
        if rel > 0.1 {
            why.push(format!("range known to {:.0} %", 100.0 * rel));
        }
    }
    if fit.lambda > 1e-2 {
        why.push("damping still large at convergence".into());
    }
    if eccentricity_nonlinear(fit, &cov, bary_shift) {
        why.push("eccentricity nonlinear within 1σ".into());
    }
    why
}

/// σ_ρ/ρ at the epoch, seen from the observer nearest in time.
pub fn relative_range_sigma(p: &Problem, fit: &LsqFit) -> Option<f64> {
    let cov = fit.cov?;
    let dt = |i: usize| p.tracklet.obs[i].time.tdb.minus(fit.epoch).abs();
    let mid = (0..p.len()).min_by(|&a, &b| dt(a).total_cmp(&dt(b)))?;
    let r = V3::new(fit.state[0], fit.state[1], fit.state[2]);
    let topo = r - p.observers[mid].helio_pos;
    let u = topo.normalize();
    let var_rho = (u.transpose() * cov.fixed_view::<3, 3>(0, 0) * u)[0];
    Some(var_rho.max(0.0).sqrt() / topo.norm())
}

/// Sigma points along the covariance's principal axes: does e leave its linear prediction over ±1σ by
/// more than a fifth of σ_e (a curvature that size changes the answer; smaller ones do not)?
fn eccentricity_nonlinear(fit: &LsqFit, cov: &M6, bary_shift: &S6) -> bool {
    let b = fit.state + bary_shift;
    let grad = eccentricity_gradient(
        &V3::new(b[0], b[1], b[2]),
        &V3::new(b[3], b[4], b[5]),
        MU_BARY,
    );
    let e0 = bary_e(&fit.state, bary_shift);
    let sigma_e = (grad * cov * grad.transpose())[0].max(0.0).sqrt();
    let eig = cov.symmetric_eigen();
    (0..6).any(|k| {
        let dx: S6 = eig.eigenvectors.column(k) * eig.eigenvalues[k].max(0.0).sqrt();
        let lin = (grad * dx)[0];
        [1.0, -1.0].iter().any(|sgn| {
            let non = bary_e(&(fit.state + dx * *sgn), bary_shift) - e0;
            (non - sgn * lin).abs() > 0.2 * sigma_e
        })
    })
}

/// One Gaussian of a proposal mixture.
struct Component {
    mean: S6,
    l: M6,
    inv: M6,
    log_norm: f64,
}

impl Component {
    fn new(mean: S6, cov: M6) -> Option<Component> {
        let ch = cov.cholesky()?;
        let l = ch.l();
        let log_det: f64 = (0..6).map(|k| l[(k, k)].ln()).sum::<f64>() * 2.0;
        Some(Component {
            mean,
            inv: ch.inverse(),
            l,
            log_norm: -0.5 * log_det,
        })
    }
}

/// Adaptive importance sampling of about `n` orbits. Round one draws from a mixture of Gaussians around
/// every distinct minimum (`fits`, best first); the next rounds refit one Gaussian to the weighted draws
/// of the round before (population Monte Carlo), so the proposal follows a curved, elongated valley of a
/// short arc instead of the linear ellipsoid. The estimate comes from the last round.
pub fn importance_sample(
    p: &Problem,
    fits: &[&LsqFit],
    n: usize,
    seed: u64,
    bary_shift: &S6,
) -> Option<SampleSet> {
    let mut comps: Vec<Component> = fits
        .iter()
        .filter_map(|f| Component::new(f.state, f.cov? * (PROPOSAL_SCALE * PROPOSAL_SCALE)))
        .collect();
    if comps.is_empty() {
        return None;
    }
    let used = &fits[0].used;
    let chi2_ref = fits[0].chi2;
    let mut rng = SplitMix::new(seed);
    let rounds = 3;
    let per_round = (n / rounds).max(50);
    let mut last: Option<SampleSet> = None;
    for round in 0..rounds {
        let mut states = Vec::with_capacity(per_round);
        let mut logw = Vec::with_capacity(per_round);
        let mut log_q_all = Vec::with_capacity(per_round);
        for k in 0..per_round {
            let c = &comps[k % comps.len()];
            let z = S6::from_fn(|_, _| rng.normal());
            let x = c.mean + c.l * z;
            let Ok(chi2) = p.chi2(&x, used) else {
                continue;
            };
            let terms: Vec<f64> = comps
                .iter()
                .map(|m| {
                    let d = x - m.mean;
                    m.log_norm - 0.5 * (d.transpose() * m.inv * d)[0]
                })
                .collect();
            let top = terms.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            let log_q = top + terms.iter().map(|t| (t - top).exp()).sum::<f64>().ln();
            states.push(x);
            logw.push(-0.5 * (chi2 - chi2_ref) - log_q);
            log_q_all.push(log_q);
        }
        let max = logw.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        if !max.is_finite() {
            break;
        }
        let lq_max = log_q_all.iter().cloned().fold(f64::INFINITY, f64::min);
        // Likelihood over proposal (flat prior), then the population prior's class factor.
        let flat: Vec<f64> = logw.iter().map(|w| (w - max).exp()).collect();
        let unbound: Vec<bool> = states.iter().map(|x| bary_e(x, bary_shift) > 1.0).collect();
        let factor = |u: bool| if u { UNBOUND_DENSITY_FACTOR } else { 1.0 };
        let post: Vec<f64> = flat
            .iter()
            .zip(&unbound)
            .map(|(w, u)| w * factor(*u))
            .collect();
        let total: f64 = post.iter().sum();
        let weights: Vec<f64> = post.iter().map(|w| w / total).collect();
        let class = |w: &[f64], u: bool| {
            w.iter()
                .zip(&unbound)
                .filter(|(_, b)| **b == u)
                .map(|(x, _)| x)
                .sum::<f64>()
        };
        let flat_total: f64 = flat.iter().sum();
        // Prior mass of each class within the sampled region: prior over proposal, no likelihood.
        let prior_only: Vec<f64> = log_q_all
            .iter()
            .zip(&unbound)
            .map(|(lq, u)| (-(lq - lq_max)).exp() * factor(*u))
            .collect();
        let (pu, pb) = (class(&post, true), class(&post, false));
        let (qu, qb) = (class(&prior_only, true), class(&prior_only, false));
        let bayes_factor = if pb > 0.0 && qu > 0.0 && qb > 0.0 {
            (pu / pb) / (qu / qb)
        } else if pu > 0.0 {
            f64::INFINITY
        } else {
            0.0
        };
        let set = SampleSet {
            n_eff: effective_sample_size(&weights),
            p_hyperbolic: pu / total,
            p_hyperbolic_flat: class(&flat, true) / flat_total,
            bayes_factor,
            weights,
            states,
        };
        if round + 1 < rounds {
            // Refit the proposal to this round's weighted draws (slightly widened).
            let mean = set
                .states
                .iter()
                .zip(&set.weights)
                .fold(S6::zeros(), |a, (x, w)| a + x * *w);
            let cov = set
                .states
                .iter()
                .zip(&set.weights)
                .fold(M6::zeros(), |a, (x, w)| {
                    let d = x - mean;
                    a + d * d.transpose() * *w
                });
            if set.n_eff >= 10.0 {
                if let Some(c) = Component::new(mean, cov * 1.5) {
                    comps = vec![c];
                }
            }
        }
        last = Some(set);
    }
    last
}

/// Weighted mean and standard deviation of a quantity over samples.
pub fn weighted_spread(values: &[f64], weights: &[f64]) -> (f64, f64) {
    let m: f64 = values.iter().zip(weights).map(|(v, w)| v * w).sum();
    let var: f64 = values
        .iter()
        .zip(weights)
        .map(|(v, w)| w * (v - m).powi(2))
        .sum();
    (m, var.max(0.0).sqrt())
}
