//! A night's motion on the sky as a polynomial in time (degree 1 or 2), both tangent-plane
//! coordinates fitted at once and each position weighted by its full 2×2 covariance, so that a
//! correlation between the errors in RA and Dec (`rmsCorr`) counts. With uncorrelated errors it is
//! two independent weighted fits, one per coordinate.

use nalgebra::{Matrix2, SMatrix, SVector};

/// Coefficients of x(t) and y(t) (constant, rate, half the acceleration; the last 0 for degree 1),
/// their joint covariance (x's three, then y's three) and χ².
pub struct NightPoly {
    pub x: [f64; 3],
    pub y: [f64; 3],
    pub cov: SMatrix<f64, 6, 6>,
    pub chi2: f64,
}

impl NightPoly {
    /// σ of x's and y's coefficient `k` (0 position, 1 rate, 2 half the acceleration).
    pub fn sigma(&self, k: usize) -> [f64; 2] {
        [self.cov[(k, k)].sqrt(), self.cov[(3 + k, 3 + k)].sqrt()]
    }
}

/// Fit (t, x, y) with covariances `cov` (x first); None where the normal matrix is singular.
pub fn fit(
    t: &[f64],
    x: &[f64],
    y: &[f64],
    cov: &[Matrix2<f64>],
    degree: usize,
) -> Option<NightPoly> {
    let m = degree.clamp(1, 2) + 1;
    let mut n = SMatrix::<f64, 6, 6>::zeros();
    let mut b = SVector::<f64, 6>::zeros();
    let mut weights = Vec::with_capacity(t.len());
    for (((ti, xi), yi), ci) in t.iter().zip(x).zip(y).zip(cov) {
        let w = ci.try_inverse()?;
        let basis = [1.0, *ti, ti * ti];
        for r in 0..m {
            for (kr, zr) in [(0usize, 0usize), (3, 1)] {
                // Row of the parameter (coordinate kr/3, power r) against both residual components.
                let wz = w[(zr, 0)] * xi + w[(zr, 1)] * yi;
                b[kr + r] += basis[r] * wz;
                for c in 0..m {
                    for (kc, zc) in [(0usize, 0usize), (3, 1)] {
                        n[(kr + r, kc + c)] += basis[r] * basis[c] * w[(zr, zc)];
                    }
                }
            }
        }
        weights.push(w);
    }
    if m == 2 {
        // Degree 1: the acceleration terms are held at zero.
        n[(2, 2)] = 1.0;
        n[(5, 5)] = 1.0;
    }
    let cov6 = n.try_inverse()?;
    let p = cov6 * b;
    let (px, py) = ([p[0], p[1], p[2]], [p[3], p[4], p[5]]);
    let chi2 = t
        .iter()
        .zip(x)
        .zip(y)
        .zip(&weights)
        .map(|(((ti, xi), yi), w)| {
            let at = |c: &[f64; 3]| c[0] + c[1] * ti + c[2] * ti * ti;
            let r = nalgebra::Vector2::new(xi - at(&px), yi - at(&py));
            (r.transpose() * w * r)[0]
        })
        .sum();
    Some(NightPoly {
        x: px,
        y: py,
        cov: cov6,
        chi2,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn night() -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let t = vec![-0.05, -0.02, 0.0, 0.03, 0.06];
        let x: Vec<f64> = t.iter().map(|t| 1e-4 + 2e-3 * t + 4e-4 * t * t).collect();
        let y: Vec<f64> = t.iter().map(|t| -3e-5 + 5e-4 * t - 1e-4 * t * t).collect();
        let noise = [1.1e-6, -0.7e-6, 0.4e-6, -1.3e-6, 0.9e-6];
        (
            t,
            x.iter().zip(noise).map(|(v, n)| v + n).collect(),
            y.iter()
                .zip(noise.iter().rev())
                .map(|(v, n)| v - n)
                .collect(),
        )
    }

    #[test]
    fn uncorrelated_errors_give_two_independent_weighted_fits() {
        let (t, x, y) = night();
        let cov = vec![Matrix2::new(1e-12, 0.0, 0.0, 4e-12); t.len()];
        let joint = fit(&t, &x, &y, &cov, 2).unwrap();
        // x alone by its normal equations, weights 1e12.
        let one = |z: &[f64], var: f64| {
            let mut n = nalgebra::Matrix3::<f64>::zeros();
            let mut b = nalgebra::Vector3::<f64>::zeros();
            for (ti, zi) in t.iter().zip(z) {
                let basis = nalgebra::Vector3::new(1.0, *ti, ti * ti);
                n += basis * basis.transpose() / var;
                b += basis * *zi / var;
            }
            let inv = n.try_inverse().unwrap();
            (inv * b, inv)
        };
        let (cx, vx) = one(&x, 1e-12);
        let (cy, vy) = one(&y, 4e-12);
        for k in 0..3 {
            assert!((joint.x[k] - cx[k]).abs() <= 1e-9 * cx[k].abs().max(1e-9));
            assert!((joint.y[k] - cy[k]).abs() <= 1e-9 * cy[k].abs().max(1e-9));
            let [sx, sy] = joint.sigma(k);
            assert!((sx - vx[(k, k)].sqrt()).abs() <= 1e-9 * sx);
            assert!((sy - vy[(k, k)].sqrt()).abs() <= 1e-9 * sy);
        }
    }

    #[test]
    fn a_correlation_between_the_coordinates_changes_the_answer() {
        let (t, x, y) = night();
        let plain = fit(&t, &x, &y, &[Matrix2::new(1e-12, 0.0, 0.0, 1e-12); 5], 2).unwrap();
        let c = 0.9e-12;
        let tied = fit(&t, &x, &y, &[Matrix2::new(1e-12, c, c, 1e-12); 5], 2).unwrap();
        assert!(
            (plain.chi2 - tied.chi2).abs() > 1e-3 * plain.chi2,
            "{} {}",
            plain.chi2,
            tied.chi2
        );
        // Correlated errors: the covariance of x's and y's rates is no longer zero.
        assert!(plain.cov[(1, 4)].abs() < 1e-30);
        assert!(tied.cov[(1, 4)] > 0.0);
    }
}
