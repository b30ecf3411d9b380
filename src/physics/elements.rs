//! State ↔ cometary elements (q, e, i, Ω, ω, Tp), defined the same way on both sides of e = 1, plus
//! 1/a, a, mean anomaly and v∞. Elements are computed in whatever frame the state is given in; use
//! [`crate::physics::frames`] to rotate to the ecliptic first.
//!
//! The perihelion time uses the universal variable at perihelion, so it needs no case split:
//! U₁ = σ/e, U₂ = (r − q)/e, then χ from the elliptic or hyperbolic inverse, t − Tp = (qU₁ + U₃)/√μ.

use super::constants::{AU_PER_DAY_TO_KM_S, DEG};
use super::propagate::{PropagationError, propagate};
use super::stumpff::stumpff;
use super::{M3, V3};

/// Osculating cometary elements. Angles in degrees, distances in AU, times as TDB Julian dates.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct CometaryElements {
    pub q: f64,
    pub e: f64,
    pub i: f64,
    pub node: f64,
    pub peri: f64,
    /// Time of perihelion (TDB JD).
    pub tp: f64,
    /// Reciprocal semi-major axis (1/AU); negative for hyperbolas.
    pub inv_a: f64,
    /// Epoch of osculation (TDB JD).
    pub epoch: f64,
}

impl CometaryElements {
    /// Semi-major axis (AU), absent for an exact parabola.
    pub fn a(&self) -> Option<f64> {
        (self.inv_a.abs() > 1e-14).then(|| 1.0 / self.inv_a)
    }
    /// Mean anomaly at the epoch (degrees): elliptic in [0, 360), hyperbolic unbounded; none for a parabola.
    pub fn mean_anomaly(&self, mu: f64) -> Option<f64> {
        let a = self.inv_a;
        if a.abs() <= 1e-14 {
            return None;
        }
        let n = (mu * a.abs().powi(3)).sqrt();
        let m = n * (self.epoch - self.tp) / DEG;
        Some(if a > 0.0 { m.rem_euclid(360.0) } else { m })
    }
    /// Speed at infinity (km/s) for a hyperbola.
    pub fn v_infinity_km_s(&self, mu: f64) -> Option<f64> {
        (self.inv_a < 0.0).then(|| (-mu * self.inv_a).sqrt() * AU_PER_DAY_TO_KM_S)
    }
    /// True anomaly at the epoch (degrees).
    pub fn true_anomaly(&self, mu: f64) -> Result<f64, PropagationError> {
        let (r, _) = self.state_at(self.epoch, mu)?;
        let (p_hat, q_hat) = self.perifocal_axes();
        Ok(r.dot(&q_hat).atan2(r.dot(&p_hat)) / DEG)
    }

    fn perifocal_axes(&self) -> (V3, V3) {
        let rot = rz(self.node * DEG) * rx(self.i * DEG) * rz(self.peri * DEG);
        (rot.column(0).into(), rot.column(1).into())
    }

    /// Heliocentric state at time `t` (TDB JD), in the frame the elements were computed in.
    pub fn state_at(&self, t: f64, mu: f64) -> Result<(V3, V3), PropagationError> {
        let (p_hat, q_hat) = self.perifocal_axes();
        let rp = self.q * p_hat;
        let vp = (mu * (1.0 + self.e) / self.q).sqrt() * q_hat;
        propagate(&rp, &vp, t - self.tp, mu)
    }

    /// Elements of a state (position AU, velocity AU/d) at `epoch` (TDB JD).
    pub fn from_state(r: &V3, v: &V3, epoch: f64, mu: f64) -> CometaryElements {
        let rm = r.norm();
        let v2 = v.norm_squared();
        let rv = r.dot(v);
        let h = r.cross(v);
        let hm = h.norm();
        let evec = eccentricity_vector(r, v, mu);
        let e = evec.norm();
        let p = hm * hm / mu;
        let q = p / (1.0 + e);
        let alpha = 2.0 / rm - v2 / mu;
        let i = h.xy().norm().atan2(h.z);
        let node_vec = V3::new(-h.y, h.x, 0.0);
        let nm = node_vec.norm();
        let (node, n_hat) = if nm > 1e-14 * hm {
            (h.x.atan2(-h.y), node_vec / nm)
        } else {
            (0.0, V3::x())
        };
        let h_hat = h / hm;
        // ω from the node to the perihelion; for a circle, perihelion is put at the epoch position.
        let peri_dir = if e > 1e-11 { evec / e } else { *r / rm };
        let peri = h_hat
            .cross(&n_hat)
            .dot(&peri_dir)
            .atan2(n_hat.dot(&peri_dir));
        let tp = epoch - time_from_perihelion(rm, rv, q, e, alpha, mu);
        CometaryElements {
            q,
            e,
            i: i / DEG,
            node: turn_positive(node / DEG),
            peri: turn_positive(peri / DEG),
            tp,
            inv_a: alpha,
            epoch,
        }
    }
}

/// The eccentricity vector of a state (pointing to perihelion, of length e).
pub fn eccentricity_vector(r: &V3, v: &V3, mu: f64) -> V3 {
    ((v.norm_squared() - mu / r.norm()) * r - r.dot(v) * v) / mu
}

/// An angle from atan2 in degrees, [−180°, 180°], taken to [0°, 360°): the same value as
/// `rem_euclid(360.0)` there, without its floating-point remainder.
fn turn_positive(deg: f64) -> f64 {
    if deg < 0.0 { deg + 360.0 } else { deg }
}

/// t − Tp (days) from r, r·v, q, e, α, uniform in e.
fn time_from_perihelion(rm: f64, rv: f64, q: f64, e: f64, alpha: f64, mu: f64) -> f64 {
    if e < 1e-11 {
        return 0.0;
    }
    let sqrt_mu = mu.sqrt();
    let u1 = rv / sqrt_mu / e;
    let u2 = (rm - q) / e;
    let chi = if alpha > 1e-14 {
        let sa = alpha.sqrt();
        (sa * u1).atan2(1.0 - alpha * u2) / sa
    } else if alpha < -1e-14 {
        let sa = (-alpha).sqrt();
        (sa * u1).asinh() / sa
    } else {
        u1
    };
    let c3 = stumpff(alpha * chi * chi)[3];
    (q * u1 + chi * chi * chi * c3) / sqrt_mu
}

pub(crate) fn rz(a: f64) -> M3 {
    let (s, c) = a.sin_cos();
    M3::new(c, -s, 0.0, s, c, 0.0, 0.0, 0.0, 1.0)
}

pub(crate) fn rx(a: f64) -> M3 {
    let (s, c) = a.sin_cos();
    M3::new(1.0, 0.0, 0.0, 0.0, c, -s, 0.0, s, c)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::constants::MU_SUN;

    #[test]
    fn angles_from_atan2_are_turned_positive_exactly_as_the_remainder_would() {
        let (mut n, mut edge) = (0, 0);
        for k in 0..=20_000 {
            let t = std::f64::consts::PI * (k as f64 / 10_000.0 - 1.0);
            for (y, x) in [(t.sin(), t.cos()), (-0.0, -1.0), (0.0, -1.0), (-0.0, 1.0)] {
                let deg = y.atan2(x) / DEG;
                edge += usize::from(deg.abs() >= 180.0 || deg == 0.0);
                assert_eq!(
                    turn_positive(deg).to_bits(),
                    deg.rem_euclid(360.0).to_bits(),
                    "{deg}"
                );
                n += 1;
            }
        }
        assert!(n > 80_000 && edge > 0, "{n} {edge}");
    }

    #[test]
    fn perihelion_state_gives_back_its_elements() {
        for e in [0.0001, 0.3, 0.99997, 1.0, 1.00001, 1.2, 6.0] {
            let el = CometaryElements {
                q: 1.3,
                e,
                i: 33.0,
                node: 120.0,
                peri: 250.0,
                tp: 2_461_000.5,
                inv_a: (1.0 - e) / 1.3,
                epoch: 2_461_000.5,
            };
            let (r, v) = el.state_at(2_461_040.5, MU_SUN).unwrap();
            let back = CometaryElements::from_state(&r, &v, 2_461_040.5, MU_SUN);
            assert!((back.q - el.q).abs() < 1e-11, "e={e} q={}", back.q);
            assert!((back.e - el.e).abs() < 1e-11, "e={e} {}", back.e);
            assert!((back.i - el.i).abs() < 1e-9);
            assert!((back.node - el.node).abs() < 1e-9);
            if e > 0.001 {
                assert!((back.peri - el.peri).abs() < 1e-8, "e={e} {}", back.peri);
                assert!(
                    (back.tp - el.tp).abs() < 1e-7,
                    "e={e} tp {}",
                    back.tp - el.tp
                );
            }
        }
    }
}
