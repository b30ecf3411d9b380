//! Is the fit believable? χ²/dof, nights whose mean residual disagrees with the rest, and an
//! eccentricity that jumps when one night is left out: the marks of a false linkage of different
//! objects, which converge to large-e orbits and must never rank as confident candidates.

use super::covariance::eccentricity_gradient;
use super::lsq::{LsqFit, LsqOptions, Problem, correct};
use super::stats::chi2_survival_even;
use crate::physics::V3;
use crate::physics::constants::ARCSEC;
use nalgebra::Vector2;

/// χ²/dof above this is a poor fit (common practice, no source).
pub const MAX_CHI2_PER_DOF: f64 = 3.0;
/// The other nights reject the full fit's orbit when it fits them worse than their own refit by more
/// than this: under consistent data that excess is a sum of six or fewer χ²(1) terms each weighted at
/// most 1 (the quadratic form of two nested estimates), so no more than χ²(6), whose 5 % point this is.
/// It counts only beside an e that also moved by more than 3σ; where e is linear the excess is at
/// least (Δe/σ)², so there the two together flag a move from about 3.5σ.
pub const REMAINDER_REJECTS_CHI2: f64 = 12.59;
/// The tail probability below which a night disagrees: its mean whitened residual n·|mean|² (χ²(2) if
/// the night agrees with the orbit; the threshold is then 13.8), or a one-place night's χ² about the
/// path fitted to its positions.
pub const NIGHT_DISAGREES_P: f64 = 1e-3;

#[derive(Debug, Clone, serde::Serialize)]
pub struct NightMean {
    pub night: usize,
    pub n: usize,
    pub ra_arcsec: f64,
    pub dec_arcsec: f64,
    pub chi2: f64,
}

/// Mean residual of each night (used observations only).
pub fn night_means(p: &Problem, fit: &LsqFit) -> Vec<NightMean> {
    let nights = p.tracklet.n_nights();
    (0..nights)
        .filter_map(|k| {
            let idx: Vec<usize> = (0..p.len())
                .filter(|&i| p.tracklet.night[i] == k && fit.used[i])
                .collect();
            if idx.is_empty() {
                return None;
            }
            let n = idx.len() as f64;
            let mut raw = [0.0, 0.0];
            let mut white = Vector2::zeros();
            for &i in &idx {
                raw[0] += fit.residuals[i][0] / n;
                raw[1] += fit.residuals[i][1] / n;
                white += p.whiten[i] * Vector2::new(fit.residuals[i][0], fit.residuals[i][1]) / n;
            }
            Some(NightMean {
                night: k,
                n: idx.len(),
                ra_arcsec: raw[0] / ARCSEC,
                dec_arcsec: raw[1] / ARCSEC,
                chi2: n * white.norm_squared(),
            })
        })
        .collect()
}

/// Reasons the fit is poor (empty when it is fine).
pub fn poor_fit_reasons(p: &Problem, fit: &LsqFit, e: f64, opts: &LsqOptions) -> Vec<String> {
    let mut why = Vec::new();
    if fit.chi2_per_dof() > MAX_CHI2_PER_DOF {
        why.push(format!("chi2/dof {:.1}", fit.chi2_per_dof()));
    }
    let means = night_means(p, fit);
    if means.len() >= 2 {
        for m in &means {
            if chi2_survival_even(m.chi2, 2).is_some_and(|p| p < NIGHT_DISAGREES_P) {
                why.push(format!(
                    "night {} disagrees (mean O-C {:+.2}\", {:+.2}\")",
                    m.night + 1,
                    m.ra_arcsec,
                    m.dec_arcsec
                ));
            }
        }
    }
    // Leave one night out only where three or more remain: two nights alone do not fix e; and not for
    // a fit no orbit explains (refitting its pieces cannot make it more of a misfit).
    if p.tracklet.n_nights() >= 4 && fit.chi2_per_dof() <= super::lsqrecord::NO_ORBIT_CHI2_PER_DOF {
        let nights = p.tracklet.n_nights();
        let keeps: Vec<Vec<bool>> = (0..nights)
            .map(|k| {
                (0..p.len())
                    .map(|i| fit.used[i] && p.tracklet.night[i] != k)
                    .collect()
            })
            .collect();
        // Every night's refit estimated from one linearisation; only a night whose estimate comes
        // near the line is refitted in full (the estimate is a first step, not the refit's minimum).
        let estimates = super::leaveout::leave_out(p, &fit.state, &fit.used, &keeps);
        for (k, (keep, estimate)) in keeps.iter().zip(estimates).enumerate() {
            let near = estimate.is_none_or(|(state, cov)| {
                let (de, sigma) = e_change(&state, Some(cov), e, p.mu);
                de > 0.5 * (3.0 * sigma).max(0.05)
            });
            if !near {
                continue;
            }
            let Ok(f) = correct(p, &fit.state, keep, opts) else {
                continue;
            };
            if !f.converged {
                continue;
            }
            let (de, sigma) = e_change(&f.state, f.cov, e, p.mu);
            if de <= (3.0 * sigma).max(0.05) {
                continue;
            }
            // The move counts only where the other nights themselves reject the full orbit: where
            // they fit it about as well as their own (a short remainder whose e curves within its
            // linear σ), e wandered along a valley those nights leave open. (Measured from the full
            // fit's minimum: a fit stopped short of it would count its unfinished descent.)
            let rejects = fit.converged
                && p.chi2(&fit.state, keep)
                    .is_ok_and(|c| c - f.chi2 > REMAINDER_REJECTS_CHI2);
            if rejects {
                why.push(format!("e moves {:.2} without night {}", de, k + 1));
            }
        }
    }
    why
}

/// |e(state) − e| and the σ of e(state) from its covariance (∞ without one).
fn e_change(
    state: &crate::physics::S6,
    cov: Option<crate::physics::M6>,
    e: f64,
    mu: f64,
) -> (f64, f64) {
    let r = V3::new(state[0], state[1], state[2]);
    let v = V3::new(state[3], state[4], state[5]);
    let el = crate::physics::elements::CometaryElements::from_state(&r, &v, 0.0, mu);
    let sigma = cov
        .map(|c| {
            let g = eccentricity_gradient(&r, &v, mu);
            (g * c * g.transpose())[0].max(0.0).sqrt()
        })
        .unwrap_or(f64::INFINITY);
    ((el.e - e).abs(), sigma)
}
