//! The linear algebra of one differential-correction step: the whitened rows reduced once by QR, the
//! damped steps solved from that reduction, and the covariance from its singular values.

use super::lsq::Linearised;
use crate::physics::{M6, S6};

/// Iterations an iterative decomposition of a small matrix may take (the SVD of a 6×6 factor, the
/// symmetric eigen-decompositions of a covariance or a sky ellipse; they need a few dozen).
pub const MAX_SVD_SWEEPS: usize = 1000;

/// The whitened rows reduced once by QR: R and Qᵀr, from which every damped step is a 12×6
/// problem instead of one over all rows; D are the column norms of J (equal to those of R).
pub(super) struct Reduced {
    pub(super) r: M6,
    qtr: S6,
    d: S6,
}

pub(super) fn reduce(lin: &Linearised) -> Option<Reduced> {
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
pub(super) fn lm_step(red: &Reduced, lambda: f64) -> Option<S6> {
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
pub(super) fn covariance(red: &Reduced, vscale: f64) -> Option<M6> {
    // An iterative decomposition never settles on a non-finite matrix: bounded, and refused outright.
    if !red.r.iter().all(|v| v.is_finite()) {
        return None;
    }
    let svd = red.r.try_svd(false, true, f64::EPSILON, MAX_SVD_SWEEPS)?;
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_non_finite_factor_has_no_covariance_instead_of_an_endless_decomposition() {
        // A hyperbolic arc (invented, q 4.4 AU, e 3.6, three nights over five days) once hung its
        // fit: a factor holding NaN sent the singular value decomposition round for ever.
        let mut r = M6::identity();
        r[(2, 3)] = f64::NAN;
        let red = Reduced {
            r,
            qtr: S6::zeros(),
            d: S6::repeat(1.0),
        };
        assert!(covariance(&red, 1.0).is_none());
        let ok = Reduced {
            r: M6::identity() * 2.0,
            qtr: S6::zeros(),
            d: S6::repeat(1.0),
        };
        let c = covariance(&ok, 1.0).unwrap();
        assert!((c[(0, 0)] - 0.25).abs() < 1e-15, "{c}");
    }
}
