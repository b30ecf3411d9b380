//! Element uncertainties by the Jacobian route: Σ_el = J Γ Jᵀ with J = ∂(q, e, i, Ω, ω, Tp, 1/a)/∂x.
//! The eccentricity and 1/a rows are analytic (they drive the score); the full set is differenced
//! centrally, with angles unwrapped, which is accurate to ~1e-7 relative for these smooth maps.

use crate::physics::elements::CometaryElements;
use crate::physics::{M3, M6, S6, V3};
use nalgebra::{RowVector6, SMatrix};

/// 1σ of each element (degrees for angles, days for Tp), when a covariance exists.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ElementSigmas {
    pub q: f64,
    pub e: f64,
    pub i: f64,
    pub node: f64,
    pub peri: f64,
    pub tp: f64,
    pub inv_a: f64,
}

/// ∂e/∂(r, v) (brief derivation: e-vector gradient projected on ê).
pub fn eccentricity_gradient(r: &V3, v: &V3, mu: f64) -> RowVector6<f64> {
    let rm = r.norm();
    let v2 = v.norm_squared();
    let rv = r.dot(v);
    let evec = ((v2 - mu / rm) * r - rv * v) / mu;
    let e = evec.norm().max(1e-300);
    let ehat = evec / e;
    let id = M3::identity();
    let de_dr =
        ((v2 - mu / rm) * id + mu * r * r.transpose() / rm.powi(3) - v * v.transpose()) / mu;
    let de_dv = (2.0 * r * v.transpose() - rv * id - v * r.transpose()) / mu;
    let gr = ehat.transpose() * de_dr;
    let gv = ehat.transpose() * de_dv;
    RowVector6::new(gr[0], gr[1], gr[2], gv[0], gv[1], gv[2])
}

/// ∂(1/a)/∂(r, v) = (−2rᵀ/r³, −2vᵀ/μ).
pub fn inverse_a_gradient(r: &V3, v: &V3, mu: f64) -> RowVector6<f64> {
    let r3 = r.norm().powi(3);
    RowVector6::new(
        -2.0 * r.x / r3,
        -2.0 * r.y / r3,
        -2.0 * r.z / r3,
        -2.0 * v.x / mu,
        -2.0 * v.y / mu,
        -2.0 * v.z / mu,
    )
}

fn as_vec(el: &CometaryElements) -> [f64; 7] {
    [el.q, el.e, el.i, el.node, el.peri, el.tp, el.inv_a]
}

fn wrap_deg(d: f64) -> f64 {
    (d + 540.0).rem_euclid(360.0) - 180.0
}

/// Elements of a state in the frame given by `rot` (applied to position and velocity), and their σ.
pub fn elements_with_sigmas(
    x: &S6,
    cov: Option<&M6>,
    epoch: f64,
    mu: f64,
    rot: &M3,
) -> (CometaryElements, Option<ElementSigmas>) {
    let el_of = |s: &S6| {
        let r = rot * V3::new(s[0], s[1], s[2]);
        let v = rot * V3::new(s[3], s[4], s[5]);
        CometaryElements::from_state(&r, &v, epoch, mu)
    };
    let el = el_of(x);
    let Some(cov) = cov else {
        return (el, None);
    };
    let mut jac = SMatrix::<f64, 7, 6>::zeros();
    let rn = V3::new(x[0], x[1], x[2]).norm();
    let vn = V3::new(x[3], x[4], x[5]).norm();
    for j in 0..6 {
        let h = if j < 3 { 1e-7 * rn } else { 1e-7 * vn };
        let (mut a, mut b) = (*x, *x);
        a[j] += h;
        b[j] -= h;
        let (ea, eb) = (as_vec(&el_of(&a)), as_vec(&el_of(&b)));
        for k in 0..7 {
            let d = if (2..5).contains(&k) {
                wrap_deg(ea[k] - eb[k])
            } else {
                ea[k] - eb[k]
            };
            jac[(k, j)] = d / (2.0 * h);
        }
    }
    // Analytic rows for e and 1/a (rotation-invariant quantities).
    let (r, v) = (V3::new(x[0], x[1], x[2]), V3::new(x[3], x[4], x[5]));
    jac.set_row(1, &eccentricity_gradient(&r, &v, mu));
    jac.set_row(6, &inverse_a_gradient(&r, &v, mu));
    let s = jac * cov * jac.transpose();
    let sd = |k: usize| s[(k, k)].max(0.0).sqrt();
    (
        el,
        Some(ElementSigmas {
            q: sd(0),
            e: sd(1),
            i: sd(2),
            node: sd(3),
            peri: sd(4),
            tp: sd(5),
            inv_a: sd(6),
        }),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::constants::MU_SUN;

    #[test]
    fn analytic_eccentricity_and_inverse_a_gradients_match_differences() {
        let r = V3::new(0.9, -0.5, 0.3);
        let v = V3::new(0.012, 0.019, -0.006);
        let ge = eccentricity_gradient(&r, &v, MU_SUN);
        let ga = inverse_a_gradient(&r, &v, MU_SUN);
        let f = |x: &S6| {
            let el = CometaryElements::from_state(
                &V3::new(x[0], x[1], x[2]),
                &V3::new(x[3], x[4], x[5]),
                0.0,
                MU_SUN,
            );
            (el.e, el.inv_a)
        };
        let x = S6::new(r.x, r.y, r.z, v.x, v.y, v.z);
        for j in 0..6 {
            let h = if j < 3 { 1e-7 } else { 1e-9 };
            let (mut a, mut b) = (x, x);
            a[j] += h;
            b[j] -= h;
            let ((ea, aa), (eb, ab)) = (f(&a), f(&b));
            assert!(((ea - eb) / (2.0 * h) - ge[j]).abs() < 1e-6 * ge.amax());
            assert!(((aa - ab) / (2.0 * h) - ga[j]).abs() < 1e-6 * ga.amax());
        }
    }
}
