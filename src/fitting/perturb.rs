//! Dynamics for the fit: plain two-body motion, or the Sun with the eight planets and the Moon.
//!
//! The perturbed model integrates only the small deviation from the osculating conic at the epoch
//! (Encke's method), so a fixed-step RK4 is accurate: δ″ = −μ(r/r³ − r_k/r_k³) + Σ μₚ[(rₚ − r)/|rₚ − r|³
//! − rₚ/rₚ³], with the variational equations for the deviation of the STM integrated alongside. The
//! planets come from SOFA `plan94`, Earth from `epv00` and the Moon from `moon98` (all via `sofars`),
//! memoised at whole days and Hermite-interpolated: arcsecond-level ephemerides are ample for
//! perturbations.

use crate::physics::constants::MU_SUN;
use crate::physics::earth::{earth_state, hermite};
use crate::physics::propagate::{PropagationError, propagate_with_stm};
use crate::physics::time::Jd2;
use crate::physics::{M3, M6, S6, V3, split_state};
use nalgebra::Matrix3x6;
use std::cell::RefCell;
use std::collections::HashMap;

/// A model of motion: states and STMs at many times from one state at an epoch.
pub trait Dynamics {
    fn state_and_stm(&self, x0: &S6, epoch: Jd2, t: Jd2) -> Result<(V3, V3, M6), PropagationError>;
    /// Many times at once (the perturbed model integrates once for all of them).
    fn states(
        &self,
        x0: &S6,
        epoch: Jd2,
        times: &[Jd2],
    ) -> Result<Vec<(V3, V3, M6)>, PropagationError> {
        times
            .iter()
            .map(|t| self.state_and_stm(x0, epoch, *t))
            .collect()
    }
    /// Each state and STM handed to `f` in turn (with its index), without collecting them first.
    fn visit_states(
        &self,
        x0: &S6,
        epoch: Jd2,
        times: &[Jd2],
        f: &mut dyn FnMut(usize, (V3, V3, M6)),
    ) -> Result<(), PropagationError> {
        for (i, st) in self.states(x0, epoch, times)?.into_iter().enumerate() {
            f(i, st);
        }
        Ok(())
    }
    /// States without the STM (sampling needs many and no partials).
    fn positions(
        &self,
        x0: &S6,
        epoch: Jd2,
        times: &[Jd2],
    ) -> Result<Vec<(V3, V3)>, PropagationError> {
        Ok(self
            .states(x0, epoch, times)?
            .into_iter()
            .map(|(r, v, _)| (r, v))
            .collect())
    }
    /// Which force model this is (what the fit record says).
    fn model(&self) -> super::forcemodel::ForceModel;
}

/// Keplerian motion about the Sun.
pub struct TwoBody;

impl Dynamics for TwoBody {
    fn state_and_stm(&self, x0: &S6, epoch: Jd2, t: Jd2) -> Result<(V3, V3, M6), PropagationError> {
        let (r, v) = split_state(x0);
        propagate_with_stm(&r, &v, t.minus(epoch), MU_SUN)
    }
    fn visit_states(
        &self,
        x0: &S6,
        epoch: Jd2,
        times: &[Jd2],
        f: &mut dyn FnMut(usize, (V3, V3, M6)),
    ) -> Result<(), PropagationError> {
        let (r, v) = split_state(x0);
        for (i, t) in times.iter().enumerate() {
            f(i, propagate_with_stm(&r, &v, t.minus(epoch), MU_SUN)?);
        }
        Ok(())
    }
    fn positions(
        &self,
        x0: &S6,
        epoch: Jd2,
        times: &[Jd2],
    ) -> Result<Vec<(V3, V3)>, PropagationError> {
        let (r, v) = split_state(x0);
        times
            .iter()
            .map(|t| crate::physics::propagate::propagate(&r, &v, t.minus(epoch), MU_SUN))
            .collect()
    }
    fn model(&self) -> super::forcemodel::ForceModel {
        super::forcemodel::ForceModel::TwoBody
    }
}

/// Sun/body mass ratios (IAU 2009 system; common practice, values from memory). Earth and Moon are
/// taken separately; Mars stands for its system.
pub(crate) const MASS_RATIOS: [f64; 9] = [
    6_023_597.4,  // Mercury
    408_523.72,   // Venus
    332_946.05,   // Earth
    3_098_703.6,  // Mars
    1047.348_644, // Jupiter
    3497.9018,    // Saturn
    22_902.98,    // Uranus
    19_412.26,    // Neptune
    27_068_700.4, // Moon
];

#[derive(Clone, Copy)]
struct BodyNode {
    pos: [V3; 9],
    vel: [V3; 9],
}

/// Sun + planets + Moon.
#[derive(Default)]
pub struct NBody;

thread_local! {
    /// Body positions at whole days, kept per thread across fits (a night's arcs share their days).
    static NODES: RefCell<HashMap<i64, BodyNode>> = RefCell::new(HashMap::new());
}

/// Days kept per thread before the memo starts afresh (a few hundred kilobytes).
const MAX_NODES: usize = 4096;

/// Largest RK4 step (days); shorter near a massive body. The deviation from the conic is smooth, so
/// a day changes a ten-night fit by under 1e-7 σ against quarter-day steps.
const MAX_STEP: f64 = 1.0;

impl NBody {
    pub fn new() -> NBody {
        NBody
    }

    fn node(&self, day: i64) -> Result<BodyNode, PropagationError> {
        if let Some(n) = NODES.with(|m| m.borrow().get(&day).copied()) {
            return Ok(n);
        }
        let d = day as f64;
        let mut pos = [V3::zeros(); 9];
        let mut vel = [V3::zeros(); 9];
        let v3 = |a: [f64; 3]| V3::new(a[0], a[1], a[2]);
        for (k, np) in [(0usize, 1), (1, 2), (3, 4), (4, 5), (5, 6), (6, 7), (7, 8)] {
            let (pv, _) =
                sofars::eph::plan94(d, 0.0, np).map_err(|_| PropagationError::NonFinite)?;
            pos[k] = v3(pv[0]);
            vel[k] = v3(pv[1]);
        }
        let e = earth_state(Jd2::new(d, 0.0)).map_err(|_| PropagationError::NonFinite)?;
        pos[2] = e.helio_pos;
        vel[2] = e.helio_vel;
        let m = sofars::eph::moon98(d, 0.0);
        pos[8] = e.helio_pos + v3(m[0]);
        vel[8] = e.helio_vel + v3(m[1]);
        let n = BodyNode { pos, vel };
        NODES.with(|m| {
            let mut m = m.borrow_mut();
            if m.len() >= MAX_NODES {
                m.clear();
            }
            m.insert(day, n);
        });
        Ok(n)
    }

    /// Heliocentric positions of the perturbing bodies at a TDB JD (single number is enough here).
    fn bodies(&self, t: f64) -> Result<[V3; 9], PropagationError> {
        let day = t.floor();
        let s = t - day;
        let (a, b) = (self.node(day as i64)?, self.node(day as i64 + 1)?);
        Ok(std::array::from_fn(|k| {
            hermite(s, 1.0, &a.pos[k], &a.vel[k], &b.pos[k], &b.vel[k]).0
        }))
    }

    /// Perturbing acceleration, its gradient, and the distance to the nearest body.
    fn perturbation(&self, r: &V3, t: f64) -> Result<(V3, M3, f64), PropagationError> {
        let bodies = self.bodies(t)?;
        let mut acc = V3::zeros();
        let mut grad = M3::zeros();
        let mut nearest = f64::INFINITY;
        for k in 0..9 {
            let mu_p = MU_SUN / MASS_RATIOS[k];
            let rp = bodies[k];
            let d = rp - r;
            let dm = d.norm();
            let rpm = rp.norm();
            acc += mu_p * (d / dm.powi(3) - rp / rpm.powi(3));
            grad += mu_p * (3.0 * d * d.transpose() / dm.powi(5) - M3::identity() / dm.powi(3));
            nearest = nearest.min(dm);
        }
        Ok((acc, grad, nearest))
    }
}

fn kepler_gradient(r: &V3) -> M3 {
    let rm = r.norm();
    MU_SUN * (3.0 * r * r.transpose() / rm.powi(5) - M3::identity() / rm.powi(3))
}

/// Deviation state: δ, δ′, and the deviations of the position and velocity rows of the STM.
#[derive(Clone, Copy)]
struct Dev {
    d: V3,
    dd: V3,
    pr: Matrix3x6<f64>,
    pv: Matrix3x6<f64>,
}

impl Dev {
    fn zero() -> Dev {
        Dev {
            d: V3::zeros(),
            dd: V3::zeros(),
            pr: Matrix3x6::zeros(),
            pv: Matrix3x6::zeros(),
        }
    }
    fn axpy(&self, h: f64, k: &Dev) -> Dev {
        Dev {
            d: self.d + k.d * h,
            dd: self.dd + k.dd * h,
            pr: self.pr + k.pr * h,
            pv: self.pv + k.pv * h,
        }
    }
}

impl NBody {
    fn derivative(
        &self,
        x0: &(V3, V3),
        epoch: Jd2,
        t: f64,
        y: &Dev,
    ) -> Result<(Dev, f64), PropagationError> {
        let (rk, _, phik) = propagate_with_stm(&x0.0, &x0.1, t - epoch.value(), MU_SUN)?;
        let r = rk + y.d;
        let rm = r.norm();
        let rkm = rk.norm();
        let (ap, gp, nearest) = self.perturbation(&r, t)?;
        let acc = -MU_SUN * (r / rm.powi(3) - rk / rkm.powi(3)) + ap;
        let phik_r: Matrix3x6<f64> = phik.fixed_rows::<3>(0).into_owned();
        let full_r = phik_r + y.pr;
        let g = kepler_gradient(&r) + gp;
        let dpv = g * full_r - kepler_gradient(&rk) * phik_r;
        Ok((
            Dev {
                d: y.dd,
                dd: acc,
                pr: y.pv,
                pv: dpv,
            },
            nearest,
        ))
    }

    /// One RK4 step from (t, y) with k1 = f(t, y) given; returns y(t + h), f there, and the nearest
    /// body's distance there.
    fn rk4(
        &self,
        x0: &(V3, V3),
        epoch: Jd2,
        t: f64,
        y: &Dev,
        k1: &Dev,
        h: f64,
    ) -> Result<(Dev, Dev, f64), PropagationError> {
        let (k2, _) = self.derivative(x0, epoch, t + h / 2.0, &y.axpy(h / 2.0, k1))?;
        let (k3, _) = self.derivative(x0, epoch, t + h / 2.0, &y.axpy(h / 2.0, &k2))?;
        let (k4, _) = self.derivative(x0, epoch, t + h, &y.axpy(h, &k3))?;
        let next = Dev {
            d: y.d + (k1.d + 2.0 * k2.d + 2.0 * k3.d + k4.d) * (h / 6.0),
            dd: y.dd + (k1.dd + 2.0 * k2.dd + 2.0 * k3.dd + k4.dd) * (h / 6.0),
            pr: y.pr + (k1.pr + 2.0 * k2.pr + 2.0 * k3.pr + k4.pr) * (h / 6.0),
            pv: y.pv + (k1.pv + 2.0 * k2.pv + 2.0 * k3.pv + k4.pv) * (h / 6.0),
        };
        let (k_end, near) = self.derivative(x0, epoch, t + h, &next)?;
        Ok((next, k_end, near))
    }

    /// Integrate from the epoch across all of `targets` (one side of the epoch, sorted outward) in
    /// steps set by the nearest body only, and read each target off the step that contains it by
    /// cubic Hermite interpolation (every field's derivative is known at both ends of a step): a
    /// night of closely spaced positions costs no extra steps.
    fn sweep(
        &self,
        x0: &(V3, V3),
        epoch: Jd2,
        targets: &[f64],
    ) -> Result<Vec<Dev>, PropagationError> {
        let mut out = Vec::with_capacity(targets.len());
        let Some(&last) = targets.last() else {
            return Ok(out);
        };
        let mut t = epoch.value();
        let dir = if last >= t { 1.0 } else { -1.0 };
        let mut y = Dev::zero();
        let (mut k, near) = self.derivative(x0, epoch, t, &y)?;
        // Near a body, keep a step to ~5 % of the encounter time (distance over ~0.02 AU/d).
        let mut step = (near * 2.5).clamp(1e-3, MAX_STEP);
        let mut i = 0;
        while i < targets.len() {
            if (targets[i] - t) * dir <= 1e-12 {
                out.push(y);
                i += 1;
                continue;
            }
            let h = dir * (last - t).abs().min(step);
            let (next, k_next, near) = self.rk4(x0, epoch, t, &y, &k, h)?;
            while i < targets.len() && (targets[i] - t) * dir <= h.abs() + 1e-12 {
                let s = ((targets[i] - t) / h).clamp(0.0, 1.0);
                out.push(hermite_dev(&y, &k, &next, &k_next, s, h));
                i += 1;
            }
            t += h;
            y = next;
            k = k_next;
            step = (near * 2.5).clamp(1e-3, MAX_STEP);
        }
        Ok(out)
    }
}

/// Cubic Hermite between (y0, y0′) and (y1, y1′) over a step h, at fraction s.
fn hermite_dev(y0: &Dev, k0: &Dev, y1: &Dev, k1: &Dev, s: f64, h: f64) -> Dev {
    let s2 = s * s;
    let s3 = s2 * s;
    let (a, b, c, d) = (
        2.0 * s3 - 3.0 * s2 + 1.0,
        (s3 - 2.0 * s2 + s) * h,
        -2.0 * s3 + 3.0 * s2,
        (s3 - s2) * h,
    );
    Dev {
        d: y0.d * a + k0.d * b + y1.d * c + k1.d * d,
        dd: y0.dd * a + k0.dd * b + y1.dd * c + k1.dd * d,
        pr: y0.pr * a + k0.pr * b + y1.pr * c + k1.pr * d,
        pv: y0.pv * a + k0.pv * b + y1.pv * c + k1.pv * d,
    }
}

impl Dynamics for NBody {
    fn state_and_stm(&self, x0: &S6, epoch: Jd2, t: Jd2) -> Result<(V3, V3, M6), PropagationError> {
        Ok(self.states(x0, epoch, &[t])?.remove(0))
    }

    fn states(
        &self,
        x0: &S6,
        epoch: Jd2,
        times: &[Jd2],
    ) -> Result<Vec<(V3, V3, M6)>, PropagationError> {
        let xs = split_state(x0);
        let mut devs: Vec<Option<Dev>> = vec![None; times.len()];
        for forward in [true, false] {
            let mut idx: Vec<usize> = (0..times.len())
                .filter(|&i| (times[i].minus(epoch) >= 0.0) == forward)
                .collect();
            idx.sort_by(|&a, &b| {
                let (da, db) = (times[a].minus(epoch).abs(), times[b].minus(epoch).abs());
                da.total_cmp(&db)
            });
            let targets: Vec<f64> = idx
                .iter()
                .map(|&i| epoch.value() + times[i].minus(epoch))
                .collect();
            for (i, d) in idx.iter().zip(self.sweep(&xs, epoch, &targets)?) {
                devs[*i] = Some(d);
            }
        }
        times
            .iter()
            .zip(devs)
            .map(|(t, d)| {
                let d = d.unwrap_or_else(Dev::zero);
                let (r, v, mut phi) = propagate_with_stm(&xs.0, &xs.1, t.minus(epoch), MU_SUN)?;
                let mut top = phi.fixed_view_mut::<3, 6>(0, 0);
                top += d.pr;
                let mut bottom = phi.fixed_view_mut::<3, 6>(3, 0);
                bottom += d.pv;
                Ok((r + d.d, v + d.dd, phi))
            })
            .collect()
    }

    fn model(&self) -> super::forcemodel::ForceModel {
        super::forcemodel::ForceModel::SunPlanetsMoon
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn perturbed_stm_matches_central_differences() {
        let nb = NBody::new();
        let x0 = S6::new(1.05, 0.2, 0.05, -0.003, 0.016, 0.001);
        let epoch = Jd2::new(2_461_000.5, 0.0);
        let t = Jd2::new(2_461_000.5, 40.0);
        let (_, _, phi) = nb.state_and_stm(&x0, epoch, t).unwrap();
        for j in 0..6 {
            let h = if j < 3 { 1e-6 } else { 1e-8 };
            let mut a = x0;
            let mut b = x0;
            a[j] += h;
            b[j] -= h;
            let (ra, _, _) = nb.state_and_stm(&a, epoch, t).unwrap();
            let (rb, _, _) = nb.state_and_stm(&b, epoch, t).unwrap();
            for i in 0..3 {
                let num = (ra[i] - rb[i]) / (2.0 * h);
                assert!(
                    (num - phi[(i, j)]).abs() < 1e-4 * phi.column(j).amax(),
                    "({i},{j}) {num} {}",
                    phi[(i, j)]
                );
            }
        }
    }
}
