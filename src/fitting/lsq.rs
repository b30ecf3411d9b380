//! Weighted differential correction: Levenberg–Marquardt on the Cartesian state at an epoch near
//! mid-arc, solved by QR on whitened rows (the normal matrix of a short arc is too ill-conditioned to
//! invert directly), with velocity scaled by the arc length. Outliers are rejected and readmitted with
//! the χ² test of Carpino, Milani & Chesley (2003, Icarus 166, 248).

use super::input::Tracklet;
use super::lsqstep::{covariance, lm_step, reduce};
use super::perturb::Dynamics;
pub use super::rejection::{correct_with_outliers, reject_threshold};
use crate::physics::observe::{ObserverState, Prediction, project, residual};
use crate::physics::time::Jd2;
use crate::physics::{M6, S6};
use nalgebra::{DMatrix, DVector, Matrix2, Matrix2x6};
use thiserror::Error;

#[derive(Debug, Error, Clone, PartialEq)]
pub enum LsqError {
    #[error("orbit fell inside 0.005 AU of the Sun")]
    TooClose,
    #[error("propagation failed: {0}")]
    Propagation(String),
    #[error("too few observations ({0}) for six parameters")]
    TooFew(usize),
    #[error("correction abandoned on the way into a minimum already known")]
    Abandoned,
}

/// Everything fixed during a fit of one tracklet.
pub struct Problem<'a> {
    pub tracklet: &'a Tracklet,
    pub observers: Vec<ObserverState>,
    pub cov: Vec<Matrix2<f64>>,
    /// Inverse Cholesky factors of `cov` (whitening).
    pub whiten: Vec<Matrix2<f64>>,
    pub epoch: Jd2,
    pub mu: f64,
    pub dynamics: &'a dyn Dynamics,
    /// The observations' times (TDB), in order.
    times: Vec<Jd2>,
}

impl<'a> Problem<'a> {
    pub fn new(
        tracklet: &'a Tracklet,
        observers: Vec<ObserverState>,
        cov: Vec<Matrix2<f64>>,
        epoch: Jd2,
        mu: f64,
        dynamics: &'a dyn Dynamics,
    ) -> Problem<'a> {
        let whiten = cov
            .iter()
            .map(|c| {
                c.cholesky()
                    .and_then(|ch| ch.l().try_inverse())
                    .unwrap_or_else(|| {
                        Matrix2::from_diagonal(&c.diagonal().map(|d| 1.0 / d.sqrt()))
                    })
            })
            .collect();
        Problem {
            times: tracklet.obs.iter().map(|o| o.time.tdb).collect(),
            tracklet,
            observers,
            cov,
            whiten,
            epoch,
            mu,
            dynamics,
        }
    }

    pub fn len(&self) -> usize {
        self.tracklet.obs.len()
    }

    pub fn is_empty(&self) -> bool {
        self.tracklet.obs.is_empty()
    }

    /// Prediction, O − C (radians) and partials for every observation.
    pub fn evaluate_all(&self, x: &S6) -> Result<Vec<Evaluated>, LsqError> {
        let mut out = Vec::with_capacity(self.len());
        self.dynamics
            .visit_states(x, self.epoch, &self.times, &mut |i, st| {
                let o = &self.tracklet.obs[i];
                let (p, jac) = project(st, &self.observers[i], self.mu);
                out.push((p, residual(o.ra, o.dec, &p), jac));
            })
            .map_err(|e| LsqError::Propagation(e.to_string()))?;
        Ok(out)
    }

    /// χ² of a state over the given observations (positions only, no partials).
    pub fn chi2(&self, x: &S6, used: &[bool]) -> Result<f64, LsqError> {
        let states = self
            .dynamics
            .positions(x, self.epoch, &self.times)
            .map_err(|e| LsqError::Propagation(e.to_string()))?;
        Ok(states
            .iter()
            .enumerate()
            .filter(|(i, _)| used[*i])
            .map(|(i, (r, v))| {
                let o = &self.tracklet.obs[i];
                let p =
                    crate::physics::observe::project_position(r, v, &self.observers[i], self.mu);
                let res = residual(o.ra, o.dec, &p);
                (self.whiten[i] * nalgebra::Vector2::new(res[0], res[1])).norm_squared()
            })
            .sum())
    }
}

/// One observation evaluated at a state: prediction, O − C and partials.
pub type Evaluated = (Prediction, [f64; 2], Matrix2x6<f64>);

/// Result of a differential correction.
#[derive(Debug, Clone)]
pub struct LsqFit {
    pub state: S6,
    pub epoch: Jd2,
    /// Covariance of the state (None when the normal matrix is singular).
    pub cov: Option<M6>,
    pub chi2: f64,
    /// O − C in (RA·cos Dec, Dec), radians, for every observation (used or not).
    pub residuals: Vec<[f64; 2]>,
    /// Standardised per-observation χ² (with the fit's own uncertainty removed for used points, added
    /// for rejected ones).
    pub obs_chi2: Vec<f64>,
    pub used: Vec<bool>,
    pub iterations: usize,
    pub lambda: f64,
    pub converged: bool,
}

impl LsqFit {
    pub fn n_used(&self) -> usize {
        self.used.iter().filter(|u| **u).count()
    }
    pub fn dof(&self) -> usize {
        (2 * self.n_used()).saturating_sub(6)
    }
    pub fn chi2_per_dof(&self) -> f64 {
        self.chi2 / self.dof().max(1) as f64
    }
}

pub(super) struct Linearised {
    /// Whitened Jacobian rows of the used observations, two per observation in order.
    pub(super) rows: DMatrix<f64>,
    /// Whitened residuals (O − C) beside them.
    pub(super) rhs: DVector<f64>,
    pub(super) chi2: f64,
    residuals: Vec<[f64; 2]>,
    partials: Vec<Matrix2x6<f64>>,
}

/// The linearised problem at `x` over the `used` observations; velocity columns are divided by
/// `vscale` (so a step's velocity part is multiplied back by 1/`vscale`).
pub(super) fn linearise(
    p: &Problem,
    x: &S6,
    used: &[bool],
    vscale: f64,
) -> Result<Linearised, LsqError> {
    let n_used = used.iter().filter(|u| **u).count();
    let mut rows = DMatrix::zeros(2 * n_used, 6);
    let mut rhs = DVector::zeros(2 * n_used);
    let mut residuals = Vec::with_capacity(p.len());
    let mut partials = Vec::with_capacity(p.len());
    let mut chi2 = 0.0;
    let mut k = 0;
    for (i, (pred, res, jac)) in p.evaluate_all(x)?.into_iter().enumerate() {
        if pred.obj_pos.norm() < 0.005 {
            return Err(LsqError::TooClose);
        }
        // A state far outside the arc's reach can propagate to non-finite partials: a step there is
        // refused like any failed propagation.
        if !(res.iter().all(|v| v.is_finite()) && jac.iter().all(|v| v.is_finite())) {
            return Err(LsqError::Propagation("non-finite prediction".into()));
        }
        residuals.push(res);
        partials.push(jac);
        if !used[i] {
            continue;
        }
        let w = &p.whiten[i];
        let wr = w * nalgebra::Vector2::new(res[0], res[1]);
        let mut wj = w * jac;
        for c in 3..6 {
            wj[(0, c)] /= vscale;
            wj[(1, c)] /= vscale;
        }
        chi2 += wr.norm_squared();
        for a in 0..2 {
            rhs[k + a] = wr[a];
            for c in 0..6 {
                rows[(k + a, c)] = wj[(a, c)];
            }
        }
        k += 2;
    }
    Ok(Linearised {
        rows,
        rhs,
        chi2,
        residuals,
        partials,
    })
}

/// Options of the differential correction.
#[derive(Debug, Clone, Copy)]
pub struct LsqOptions {
    pub max_iterations: usize,
    /// Probability that a tracklet of clean Gaussian data loses a point: the per-observation
    /// rejection threshold is sized from it and the number of observations (`reject_threshold`).
    pub false_rejection: f64,
    /// A rejected point is readmitted below this fraction of the rejection threshold.
    pub recover_fraction: f64,
    pub outliers: bool,
    /// At most this fraction of the observations may be rejected.
    pub max_reject_fraction: f64,
    /// Each night keeps at least this many observations.
    pub min_per_night: usize,
}

impl Default for LsqOptions {
    fn default() -> Self {
        LsqOptions {
            max_iterations: 50,
            // Half a percent of clean tracklets may lose a point (project choice, measured in
            // tests/outliers.rs); readmission with a margin so a point cannot flip back and forth.
            false_rejection: 0.005,
            recover_fraction: 0.9,
            outliers: true,
            max_reject_fraction: 0.1,
            min_per_night: 2,
        }
    }
}

/// Levenberg–Marquardt from `x0` with the given observations in use.
pub fn correct(p: &Problem, x0: &S6, used: &[bool], opts: &LsqOptions) -> Result<LsqFit, LsqError> {
    correct_unless(p, x0, used, opts, |_, _| false)
}

/// Damping beyond which a correction whose linear model promises a fall of χ² below `STALL_PROMISE`
/// counts as converged: every step, down to steps this short, raised χ².
const STALL_LAMBDA: f64 = 1e4;
const STALL_PROMISE: f64 = 0.1;

/// Levenberg–Marquardt from `x0`, given up (`LsqError::Abandoned`) as soon as an accepted state and
/// its χ² satisfy `abandon`: a seed that has walked into the basin of a minimum already found would
/// only converge to it again.
pub fn correct_unless(
    p: &Problem,
    x0: &S6,
    used: &[bool],
    opts: &LsqOptions,
    abandon: impl Fn(&S6, f64) -> bool,
) -> Result<LsqFit, LsqError> {
    let n_used = used.iter().filter(|u| **u).count();
    if 2 * n_used < 6 {
        return Err(LsqError::TooFew(n_used));
    }
    let vscale = p.tracklet.arc_days().max(1.0);
    let mut x = *x0;
    let mut lin = linearise(p, &x, used, vscale)?;
    let mut red = reduce(&lin);
    let mut lambda = 1e-3;
    // Undamped steps are tried first, until one fails to lower χ²: the damping (scaled by the
    // diagonal) holds back the weak distance direction of a short arc for many iterations.
    let mut undamped = true;
    let mut converged = false;
    let mut iterations = 0;
    // A fit past its time budget takes no more steps (unconverged, as with too few iterations).
    while iterations < opts.max_iterations && !super::budget::spent() {
        iterations += 1;
        let Some(rd) = red.as_ref() else {
            break;
        };
        // Distance to the minimum measured by the undamped step: ΔxᵀCΔx/6 (brief: < 1e-6). It is also
        // the fall of χ² the linear model promises.
        let gn = lm_step(rd, 0.0);
        let promised = gn.map_or(f64::INFINITY, |gn| (rd.r * gn).norm_squared());
        if promised / 6.0 < 1e-6 {
            converged = true;
            break;
        }
        let step = match gn {
            Some(gn) if undamped => Some(gn),
            _ => {
                undamped = false;
                lm_step(rd, lambda)
            }
        };
        let Some(dp) = step else {
            break;
        };
        let mut trial = x;
        for c in 0..6 {
            trial[c] += if c < 3 { dp[c] } else { dp[c] / vscale };
        }
        match linearise(p, &trial, used, vscale) {
            Ok(next) if next.chi2 <= lin.chi2 => {
                let rel = (lin.chi2 - next.chi2) / lin.chi2.max(1e-300);
                x = trial;
                if abandon(&x, next.chi2) {
                    return Err(LsqError::Abandoned);
                }
                lin = next;
                red = reduce(&lin);
                lambda = (lambda / 10.0).max(1e-12);
                if rel < 1e-10 && lambda < 1e-2 {
                    converged = true;
                    break;
                }
            }
            _ if undamped => undamped = false,
            _ => {
                lambda *= 10.0;
                // Stalled at the bottom: no step, however short, lowers χ² (the partials and χ² part
                // at the level of rounding there), and the linear model promises less than
                // `STALL_PROMISE`: the minimum to well within its own σ.
                if lambda > STALL_LAMBDA && promised < STALL_PROMISE {
                    converged = true;
                    break;
                }
                if lambda > 1e10 {
                    break;
                }
            }
        }
    }
    let cov = red.as_ref().and_then(|r| covariance(r, vscale));
    let obs_chi2 = per_observation_chi2(p, &lin, cov.as_ref(), used);
    Ok(LsqFit {
        state: x,
        epoch: p.epoch,
        cov,
        chi2: lin.chi2,
        residuals: lin.residuals,
        obs_chi2,
        used: used.to_vec(),
        iterations,
        lambda,
        converged,
    })
}

fn per_observation_chi2(
    p: &Problem,
    lin: &Linearised,
    cov: Option<&M6>,
    used: &[bool],
) -> Vec<f64> {
    (0..p.len())
        .map(|i| {
            let r = nalgebra::Vector2::new(lin.residuals[i][0], lin.residuals[i][1]);
            let b = &lin.partials[i];
            let mut g = p.cov[i];
            if let Some(c) = cov {
                let bgb = b * c * b.transpose();
                g = if used[i] { g - bgb } else { g + bgb };
            }
            let g = if g.determinant() > 1e-6 * p.cov[i].determinant() {
                g
            } else {
                p.cov[i]
            };
            g.try_inverse()
                .map_or(f64::INFINITY, |gi| (r.transpose() * gi * r)[0])
        })
        .collect()
}
