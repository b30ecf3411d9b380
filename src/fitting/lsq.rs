//! Weighted differential correction: Levenberg–Marquardt on the Cartesian state at an epoch near
//! mid-arc, solved by QR on whitened rows (the normal matrix of a short arc is too ill-conditioned to
//! invert directly), with velocity scaled by the arc length. Outliers are rejected and readmitted with
//! the χ² test of Carpino, Milani & Chesley (2003, Icarus 166, 248).

use super::input::Tracklet;
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

/// The whitened rows reduced once by QR: R and Qᵀr, from which every damped step is a 12×6
/// problem instead of one over all rows; D are the column norms of J (equal to those of R).
struct Reduced {
    r: M6,
    qtr: S6,
    d: S6,
}

fn reduce(lin: &Linearised) -> Option<Reduced> {
    if lin.rows.nrows() < 6 {
        return None;
    }
    let qr = lin.rows.clone().qr();
    let mut qtr = lin.rhs.clone();
    qr.q_tr_mul(&mut qtr);
    let r = qr.r();
    Some(Reduced {
        r: M6::from_fn(|i, j| r[(i, j)]),
        qtr: S6::from_fn(|i, _| qtr[i]),
        d: S6::from_fn(|c, _| lin.rows.column(c).norm().max(1e-300)),
    })
}

/// Least-squares solution of [J; √λ·D] Δ = [r; 0], as [R; √λ·D] Δ = [Qᵀr; 0] by QR.
fn lm_step(red: &Reduced, lambda: f64) -> Option<S6> {
    if lambda == 0.0 {
        return red.r.solve_upper_triangular(&red.qtr);
    }
    let mut a = nalgebra::SMatrix::<f64, 12, 6>::zeros();
    a.fixed_view_mut::<6, 6>(0, 0).copy_from(&red.r);
    let mut b = nalgebra::SVector::<f64, 12>::zeros();
    b.fixed_rows_mut::<6>(0).copy_from(&red.qtr);
    for c in 0..6 {
        a[(6 + c, c)] = lambda.sqrt() * red.d[c];
    }
    let qr = a.qr();
    let mut qtb = b;
    qr.q_tr_mul(&mut qtb);
    qr.r()
        .solve_upper_triangular(&qtb.fixed_rows::<6>(0).into_owned())
}

/// Covariance of the (unscaled) state from R (the rows' singular values and right vectors), None if
/// singular.
fn covariance(red: &Reduced, vscale: f64) -> Option<M6> {
    let svd = red.r.svd(false, true);
    let smax = svd.singular_values.max();
    if svd.singular_values.min() <= 1e-13 * smax {
        return None;
    }
    let vt = svd.v_t.as_ref()?;
    let mut g = M6::zeros();
    for k in 0..6 {
        let s2 = svd.singular_values[k].powi(2);
        let v = vt.row(k);
        for i in 0..6 {
            for j in 0..6 {
                g[(i, j)] += v[i] * v[j] / s2;
            }
        }
    }
    let d = S6::new(1.0, 1.0, 1.0, 1.0 / vscale, 1.0 / vscale, 1.0 / vscale);
    Some(M6::from_fn(|i, j| g[(i, j)] * d[i] * d[j]))
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
    correct_unless(p, x0, used, opts, |_| false)
}

/// Levenberg–Marquardt from `x0`, given up (`LsqError::Abandoned`) as soon as an accepted state
/// satisfies `abandon`: a seed that has walked into the basin of a minimum already found would only
/// converge to it again.
pub fn correct_unless(
    p: &Problem,
    x0: &S6,
    used: &[bool],
    opts: &LsqOptions,
    abandon: impl Fn(&S6) -> bool,
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
    while iterations < opts.max_iterations {
        iterations += 1;
        let Some(rd) = red.as_ref() else {
            break;
        };
        // Distance to the minimum measured by the undamped step: ΔxᵀCΔx/6 (brief: < 1e-6).
        let gn = lm_step(rd, 0.0);
        if let Some(gn) = gn
            && (rd.r * gn).norm_squared() / 6.0 < 1e-6
        {
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
                if abandon(&x) {
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
