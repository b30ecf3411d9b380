//! An adaptive Dormand–Prince 5(4) integrator for six-dimensional first-order systems (position and
//! velocity), with the step-size control of the usual embedded pair. Used where a trajectory crosses
//! very different time scales: an object leaving the planets for hundreds of au, a star's orbit in
//! the Galaxy.

use super::S6;

/// Tolerances and limits of one integration.
#[derive(Debug, Clone, Copy)]
pub struct Tolerance {
    /// Relative and absolute error allowed per step (mixed, per component).
    pub rtol: f64,
    pub atol: f64,
    /// First trial step (its sign is ignored; the direction comes from the call).
    pub h0: f64,
    /// Largest step allowed.
    pub h_max: f64,
    /// Steps before giving up.
    pub max_steps: usize,
}

/// One accepted step: the state and its derivative at both ends, for interpolation.
#[derive(Debug, Clone, Copy)]
pub struct Step {
    pub t0: f64,
    pub y0: S6,
    pub f0: S6,
    pub t1: f64,
    pub y1: S6,
    pub f1: S6,
}

impl Step {
    /// Cubic Hermite value of the state at time t inside the step.
    pub fn at(&self, t: f64) -> S6 {
        let h = self.t1 - self.t0;
        let s = (t - self.t0) / h;
        let (s2, s3) = (s * s, s * s * s);
        self.y0 * (2.0 * s3 - 3.0 * s2 + 1.0)
            + self.f0 * ((s3 - 2.0 * s2 + s) * h)
            + self.y1 * (-2.0 * s3 + 3.0 * s2)
            + self.f1 * ((s3 - s2) * h)
    }
}

/// What the step callback wants next.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Control {
    Continue,
    Stop,
}

/// Why an integration ended without the callback stopping it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum IntegrationError {
    #[error("the step size fell below what double precision resolves")]
    StepTooSmall,
    #[error("too many steps")]
    TooManySteps,
    #[error("the state or its derivative is not finite")]
    NonFinite,
}

// Dormand–Prince 5(4) coefficients.
const C: [f64; 7] = [0.0, 0.2, 0.3, 0.8, 8.0 / 9.0, 1.0, 1.0];
const A: [[f64; 6]; 7] = [
    [0.0; 6],
    [0.2, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [
        19372.0 / 6561.0,
        -25360.0 / 2187.0,
        64448.0 / 6561.0,
        -212.0 / 729.0,
        0.0,
        0.0,
    ],
    [
        9017.0 / 3168.0,
        -355.0 / 33.0,
        46732.0 / 5247.0,
        49.0 / 176.0,
        -5103.0 / 18656.0,
        0.0,
    ],
    [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
    ],
];
/// Fifth-order weights minus the embedded fourth-order ones (the error estimate).
const E: [f64; 7] = [
    35.0 / 384.0 - 5179.0 / 57600.0,
    0.0,
    500.0 / 1113.0 - 7571.0 / 16695.0,
    125.0 / 192.0 - 393.0 / 640.0,
    -2187.0 / 6784.0 + 92097.0 / 339200.0,
    11.0 / 84.0 - 187.0 / 2100.0,
    -1.0 / 40.0,
];

/// Integrate y′ = f(t, y) from (t0, y0) in the direction of `dir` (+1 forward, −1 backward) until
/// the callback returns `Stop` after an accepted step. Returns the last step's end time and state.
pub fn integrate<F, G>(
    f: F,
    t0: f64,
    y0: S6,
    dir: f64,
    tol: &Tolerance,
    mut on_step: G,
) -> Result<(f64, S6), IntegrationError>
where
    F: Fn(f64, &S6) -> Result<S6, IntegrationError>,
    G: FnMut(&Step) -> Control,
{
    let dir = if dir < 0.0 { -1.0 } else { 1.0 };
    let (mut t, mut y) = (t0, y0);
    let mut k0 = f(t, &y)?;
    let mut h = tol.h0.abs().min(tol.h_max) * dir;
    for _ in 0..tol.max_steps {
        let mut k = [k0; 6];
        for s in 1..6 {
            let mut ys = y;
            for (j, kj) in k.iter().enumerate().take(s) {
                if A[s][j] != 0.0 {
                    ys += kj * (h * A[s][j]);
                }
            }
            k[s] = f(t + C[s] * h, &ys)?;
        }
        let y_new = y + (0..6).fold(S6::zeros(), |acc, j| acc + k[j] * (h * A[6][j]));
        let k_new = f(t + h, &y_new)?;
        let err_vec =
            (0..6).fold(S6::zeros(), |acc, j| acc + k[j] * (h * E[j])) + k_new * (h * E[6]);
        let err = (0..6)
            .map(|i| {
                let sc = tol.atol + tol.rtol * y[i].abs().max(y_new[i].abs());
                (err_vec[i] / sc).powi(2)
            })
            .sum::<f64>()
            .sqrt()
            / 6f64.sqrt();
        if !err.is_finite() {
            return Err(IntegrationError::NonFinite);
        }
        if err <= 1.0 {
            let step = Step {
                t0: t,
                y0: y,
                f0: k0,
                t1: t + h,
                y1: y_new,
                f1: k_new,
            };
            t += h;
            y = y_new;
            k0 = k_new;
            if on_step(&step) == Control::Stop {
                return Ok((t, y));
            }
        }
        let factor = (0.9 * err.max(1e-10).powf(-0.2)).clamp(0.2, 5.0);
        h = (h * factor).abs().min(tol.h_max) * dir;
        if h.abs() <= 1e-14 * t.abs().max(1.0) {
            return Err(IntegrationError::StepTooSmall);
        }
    }
    Err(IntegrationError::TooManySteps)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::V3;
    use crate::physics::propagate::propagate;

    fn kepler(_t: f64, y: &S6) -> Result<S6, IntegrationError> {
        let r = V3::new(y[0], y[1], y[2]);
        let a = -r / r.norm().powi(3);
        Ok(S6::new(y[3], y[4], y[5], a.x, a.y, a.z))
    }

    #[test]
    fn eccentric_orbit_matches_the_universal_variable_solution() {
        let y0 = S6::new(1.0, 0.0, 0.1, 0.0, 1.2, 0.2);
        let tol = Tolerance {
            rtol: 1e-12,
            atol: 1e-14,
            h0: 1e-3,
            h_max: 1.0,
            max_steps: 100_000,
        };
        for dir in [1.0, -1.0] {
            let t_end = 25.0 * dir;
            let mut last = (0.0, y0);
            let (_, _) = integrate(kepler, 0.0, y0, dir, &tol, |s| {
                last = (s.t1, s.y1);
                if (s.t1 - t_end) * dir >= 0.0 {
                    Control::Stop
                } else {
                    Control::Continue
                }
            })
            .unwrap();
            let (r, _) = propagate(
                &V3::new(y0[0], y0[1], y0[2]),
                &V3::new(y0[3], y0[4], y0[5]),
                last.0,
                1.0,
            )
            .unwrap();
            let got = V3::new(last.1[0], last.1[1], last.1[2]);
            assert!((got - r).norm() < 1e-8, "{dir}: {}", (got - r).norm());
        }
    }

    #[test]
    fn hermite_interpolation_reproduces_the_step_ends() {
        let y0 = S6::new(1.0, 0.0, 0.0, 0.0, 1.0, 0.0);
        let tol = Tolerance {
            rtol: 1e-10,
            atol: 1e-12,
            h0: 0.1,
            h_max: 0.1,
            max_steps: 10,
        };
        let mut first = None;
        let _ = integrate(kepler, 0.0, y0, 1.0, &tol, |s| {
            first = Some(*s);
            Control::Stop
        });
        let s = first.unwrap();
        assert!((s.at(s.t0) - s.y0).norm() < 1e-15);
        assert!((s.at(s.t1) - s.y1).norm() < 1e-15);
        // The midpoint of a circular orbit step lies on the circle to the interpolation's order.
        let mid = s.at(0.5 * (s.t0 + s.t1));
        assert!((V3::new(mid[0], mid[1], mid[2]).norm() - 1.0).abs() < 1e-6);
    }
}
