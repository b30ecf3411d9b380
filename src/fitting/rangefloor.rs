//! The floor of the valley grid ranging samples: a Levenberg–Marquardt fit of all six parameters of a
//! cell's orbit (ln ρ, ρ̇ and the attributable's four) from the cell of lowest χ². Across nights the
//! valley is narrower than any cell the splitting reaches in a few rounds; the cell that holds its
//! floor is then split every round, chosen by where the floor lies and not by its own draw. The fit
//! knows nothing of the speed cap or the distance range: a floor outside the grid holds no cell and is
//! not followed.

use super::rangecells::Scan;
use crate::physics::V3;
use nalgebra::{DMatrix, DVector, SVector};

/// Iterations of the floor's fit, at most.
const ITERATIONS: usize = 30;
/// Finite-difference steps of (ln ρ, ρ̇ [au/day], direction [rad] ×2, rate [rad/day] ×2).
const STEPS: [f64; 6] = [1e-6, 1e-8, 1e-8, 1e-8, 1e-8, 1e-8];

type P6 = SVector<f64, 6>;

impl Scan<'_> {
    /// Whitened O − C of the orbit with parameters `p` (ln ρ, ρ̇, then the attributable's corrections
    /// along its two tangent axes, of the direction and of the rate).
    fn residuals_at(&self, p: &P6, out: &mut DVector<f64>) -> bool {
        let att = &self.att;
        let u: V3 = (att.u + p[2] * att.e_a + p[3] * att.e_d).normalize();
        let udot = att.udot + p[4] * att.e_a + p[5] * att.e_d;
        self.whitened((p[0].exp(), p[1]), &u, &udot, out)
    }

    /// The (ln ρ, ρ̇) where the fit from (ln ρ, ρ̇) = `from` stopped: the χ² minimum, or the last
    /// point reached where an orbit beside it could not be predicted or the iterations ran out (None
    /// where the orbit at `from` cannot be predicted).
    pub(super) fn floor(&self, from: (f64, f64)) -> Option<(f64, f64)> {
        let n2 = 2 * self.tr.obs.len();
        let mut p = P6::from([from.0, from.1, 0.0, 0.0, 0.0, 0.0]);
        let mut r = DVector::zeros(n2);
        if !self.residuals_at(&p, &mut r) {
            return None;
        }
        let mut chi2 = r.norm_squared();
        let (mut lambda, mut probe) = (1e-3, DVector::zeros(n2));
        let mut jac = DMatrix::zeros(n2, 6);
        for _ in 0..ITERATIONS {
            for k in 0..6 {
                let mut q = p;
                q[k] += STEPS[k];
                if !self.residuals_at(&q, &mut probe) {
                    return Some((p[0], p[1]));
                }
                jac.set_column(k, &((&probe - &r) / STEPS[k]));
            }
            let jtj = jac.transpose() * &jac;
            let g = jac.transpose() * &r;
            // Go on while a step was taken and either gained or was held back by the damping (a small
            // gain under heavy damping is not convergence in a narrow curved valley).
            let mut go_on = false;
            for _ in 0..8 {
                let mut a = jtj.clone();
                for k in 0..6 {
                    a[(k, k)] *= 1.0 + lambda;
                }
                let Some(step) = a.lu().solve(&(-&g)) else {
                    break;
                };
                let q = p + P6::from_iterator(step.iter().copied());
                if self.residuals_at(&q, &mut probe) && probe.norm_squared() < chi2 {
                    let gain = chi2 - probe.norm_squared();
                    go_on = gain > 1e-6 * chi2.max(1.0) || lambda > 1e-2;
                    (p, chi2) = (q, probe.norm_squared());
                    std::mem::swap(&mut r, &mut probe);
                    lambda = (lambda / 10.0).max(1e-9);
                    break;
                }
                lambda *= 10.0;
            }
            if !go_on {
                break;
            }
        }
        Some((p[0], p[1]))
    }
}
