//! Initial orbits from three lines of sight: Gauss's method (all positive roots of the eighth-degree
//! polynomial, refined with exact universal-variable f and g and light time), plus the Gibbs and
//! Herrick–Gibbs velocity formulas for three position vectors.
//!
//! The algebra follows Curtis, Orbital Mechanics for Engineering Students, algorithms 5.5 and 5.6, in
//! heliocentric form: the observer vectors Rᵢ are heliocentric and μ is the Sun's.

use crate::physics::V3;
use crate::physics::propagate::lagrange_coefficients;

/// One line of sight: time (days, or seconds in geocentric tests), unit vector, observer position.
#[derive(Debug, Clone, Copy)]
pub struct Sight {
    pub t: f64,
    pub dir: V3,
    pub observer: V3,
}

/// A candidate orbit at the middle sight.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GaussSolution {
    pub r2: V3,
    pub v2: V3,
    /// Time of r2 (light-time corrected when a speed of light was given).
    pub t2: f64,
    /// Topocentric ranges at the three sights.
    pub ranges: [f64; 3],
}

/// Bisection of a sign change of `f` on [a, b] down to adjacent floating-point numbers.
fn bisect(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> Option<f64> {
    let (mut a0, mut b0, mut fa) = (a, b, f(a));
    let fb = f(b);
    if fa == 0.0 {
        return Some(a);
    }
    if fa * fb > 0.0 {
        return None;
    }
    loop {
        let m = 0.5 * (a0 + b0);
        if m <= a0 || m >= b0 {
            return Some(m);
        }
        let fm = f(m);
        if fa * fm <= 0.0 {
            b0 = m;
        } else {
            a0 = m;
            fa = fm;
        }
    }
}

/// The roots of `f` on [lo, hi], given the points between which it is monotonic (ascending).
fn roots_between(f: &dyn Fn(f64) -> f64, lo: f64, turns: &[f64], hi: f64) -> Vec<f64> {
    let mut edges = vec![lo];
    edges.extend(turns.iter().copied().filter(|x| *x > lo && *x < hi));
    edges.push(hi);
    edges
        .windows(2)
        .filter_map(|w| bisect(f, w[0], w[1]))
        .collect()
}

/// Positive real roots of x⁸ + a x⁶ + b x³ + c on (1e-4, 1e4)·`scale`. The polynomial is monotonic
/// between the positive roots of its derivative x²(8x⁵ + 6a x³ + 3b), and that quintic between the
/// root of its own derivative x²(40x² + 18a); so each root is bracketed exactly and bisected (no grid
/// that two close roots could slip through).
fn positive_roots(a: f64, b: f64, c: f64, scale: f64) -> Vec<f64> {
    let f = |x: f64| {
        let x3 = x * x * x;
        x3 * x3 * x * x + a * x3 * x3 + b * x3 + c
    };
    let quintic = |x: f64| 8.0 * x.powi(5) + 6.0 * a * x * x * x + 3.0 * b;
    let (lo, hi) = (1e-4 * scale, 1e4 * scale);
    let quintic_turn: Vec<f64> = if a < 0.0 {
        vec![(-0.45 * a).sqrt()]
    } else {
        Vec::new()
    };
    let turns = roots_between(&quintic, lo, &quintic_turn, hi);
    let mut roots = roots_between(&f, lo, &turns, hi);
    // A root on a shared edge is found from both sides.
    roots.dedup_by(|x, y| (*x - *y).abs() <= 1e-12 * y.abs());
    roots
}

/// Gauss's method. `mu` in the units of the sights; `light_speed` (same units) applies the
/// light-time correction during refinement, `None` for none. Returns every solution with positive
/// ranges that survives refinement, first-pass velocities included when refinement fails.
pub fn gauss(
    sights: &[Sight; 3],
    mu: f64,
    light_speed: Option<f64>,
    refine: bool,
) -> Vec<GaussSolution> {
    let [s1, s2, s3] = sights;
    let (l1, l2, l3) = (s1.dir, s2.dir, s3.dir);
    let (big_r1, big_r2, big_r3) = (s1.observer, s2.observer, s3.observer);
    let p1 = l2.cross(&l3);
    let p2 = l1.cross(&l3);
    let p3 = l1.cross(&l2);
    let d0 = l1.dot(&p1);
    let scale = big_r2.norm().max(1e-300);
    if d0.abs() < 1e-12 {
        return Vec::new();
    }
    let d = |r: &V3| [r.dot(&p1), r.dot(&p2), r.dot(&p3)];
    let dr = [d(&big_r1), d(&big_r2), d(&big_r3)]; // dr[i][j] = Dᵢⱼ with Rᵢ · pⱼ
    let tau1 = s1.t - s2.t;
    let tau3 = s3.t - s2.t;
    let tau = tau3 - tau1;
    let a = (-dr[0][1] * tau3 / tau + dr[1][1] + dr[2][1] * tau1 / tau) / d0;
    let b = (dr[0][1] * (tau3 * tau3 - tau * tau) * tau3 / tau
        + dr[2][1] * (tau * tau - tau1 * tau1) * tau1 / tau)
        / (6.0 * d0);
    let e = big_r2.dot(&l2);
    let r2sq = big_r2.norm_squared();
    let ca = -(a * a + 2.0 * a * e + r2sq);
    let cb = -2.0 * mu * b * (a + e);
    let cc = -mu * mu * b * b;
    let mut out = Vec::new();
    for r2 in positive_roots(ca, cb, cc, scale) {
        let r23 = r2 * r2 * r2;
        let rho2 = a + mu * b / r23;
        let rho1 = ((6.0 * (dr[2][0] * tau1 / tau3 + dr[1][0] * tau / tau3) * r23
            + mu * dr[2][0] * (tau * tau - tau1 * tau1) * tau1 / tau3)
            / (6.0 * r23 + mu * (tau * tau - tau3 * tau3))
            - dr[0][0])
            / d0;
        let rho3 = ((6.0 * (dr[0][2] * tau3 / tau1 - dr[1][2] * tau / tau1) * r23
            + mu * dr[0][2] * (tau * tau - tau3 * tau3) * tau3 / tau1)
            / (6.0 * r23 + mu * (tau * tau - tau1 * tau1))
            - dr[2][2])
            / d0;
        if !(rho1 > 0.0 && rho2 > 0.0 && rho3 > 0.0) {
            continue;
        }
        let pos1 = big_r1 + rho1 * l1;
        let pos2 = big_r2 + rho2 * l2;
        let pos3 = big_r3 + rho3 * l3;
        let f1 = 1.0 - 0.5 * mu * tau1 * tau1 / r23;
        let f3 = 1.0 - 0.5 * mu * tau3 * tau3 / r23;
        let g1 = tau1 - mu * tau1 * tau1 * tau1 / (6.0 * r23);
        let g3 = tau3 - mu * tau3 * tau3 * tau3 / (6.0 * r23);
        let v2 = (-f3 * pos1 + f1 * pos3) / (f1 * g3 - f3 * g1);
        let first = GaussSolution {
            r2: pos2,
            v2,
            t2: s2.t,
            ranges: [rho1, rho2, rho3],
        };
        if !refine {
            out.push(first);
            continue;
        }
        let series = [f1, g1, f3, g3];
        out.push(refine_solution(sights, mu, light_speed, &dr, d0, first, series).unwrap_or(first));
    }
    out
}

/// Curtis algorithm 5.6: iterate the ranges with exact f and g (and light-time-corrected epochs).
fn refine_solution(
    sights: &[Sight; 3],
    mu: f64,
    light_speed: Option<f64>,
    dr: &[[f64; 3]; 3],
    d0: f64,
    start: GaussSolution,
    series: [f64; 4],
) -> Option<GaussSolution> {
    let mut sol = start;
    // Each new (f, g) is averaged with the previous one: the plain iteration oscillates.
    let mut prev = series;
    for _ in 0..100 {
        let lt = |rho: f64| light_speed.map_or(0.0, |c| rho / c);
        let t1 = sights[0].t - lt(sol.ranges[0]);
        let t2 = sights[1].t - lt(sol.ranges[1]);
        let t3 = sights[2].t - lt(sol.ranges[2]);
        let c1f = lagrange_coefficients(&sol.r2, &sol.v2, t1 - t2, mu).ok()?;
        let c3f = lagrange_coefficients(&sol.r2, &sol.v2, t3 - t2, mu).ok()?;
        let f1 = 0.5 * (prev[0] + c1f[0]);
        let g1 = 0.5 * (prev[1] + c1f[1]);
        let f3 = 0.5 * (prev[2] + c3f[0]);
        let g3 = 0.5 * (prev[3] + c3f[1]);
        prev = [f1, g1, f3, g3];
        let den = f1 * g3 - f3 * g1;
        let c1 = g3 / den;
        let c3 = -g1 / den;
        let rho1 = (-dr[0][0] + dr[1][0] / c1 - dr[2][0] * c3 / c1) / d0;
        let rho2 = (-c1 * dr[0][1] + dr[1][1] - c3 * dr[2][1]) / d0;
        let rho3 = (-c1 / c3 * dr[0][2] + dr[1][2] / c3 - dr[2][2]) / d0;
        if !(rho1 > 0.0 && rho2 > 0.0 && rho3 > 0.0 && (rho1 + rho2 + rho3).is_finite()) {
            return None;
        }
        let pos1 = sights[0].observer + rho1 * sights[0].dir;
        let pos2 = sights[1].observer + rho2 * sights[1].dir;
        let pos3 = sights[2].observer + rho3 * sights[2].dir;
        let v2 = (-f3 * pos1 + f1 * pos3) / den;
        let change = (rho1 - sol.ranges[0]).abs()
            + (rho2 - sol.ranges[1]).abs()
            + (rho3 - sol.ranges[2]).abs();
        sol = GaussSolution {
            r2: pos2,
            v2,
            t2,
            ranges: [rho1, rho2, rho3],
        };
        // The differential correction polishes the orbit; Gauss only has to find the basin.
        if change < 1e-9 * (1.0 + rho2) {
            return Some(sol);
        }
    }
    Some(sol)
}

/// Gibbs's method: velocity at r₂ from three coplanar position vectors (suits separations ≳ 5°).
pub fn gibbs(r1: &V3, r2: &V3, r3: &V3, mu: f64) -> Option<V3> {
    let (m1, m2, m3) = (r1.norm(), r2.norm(), r3.norm());
    let c12 = r1.cross(r2);
    let c23 = r2.cross(r3);
    let c31 = r3.cross(r1);
    let n = m1 * c23 + m2 * c31 + m3 * c12;
    let d = c12 + c23 + c31;
    let s = r1 * (m2 - m3) + r2 * (m3 - m1) + r3 * (m1 - m2);
    let (nn, dn) = (n.norm(), d.norm());
    if nn == 0.0 || dn == 0.0 {
        return None;
    }
    Some((mu / (nn * dn)).sqrt() * (d.cross(r2) / m2 + s))
}

/// Herrick–Gibbs: velocity at r₂ from three closely spaced positions and their times.
pub fn herrick_gibbs(r1: &V3, r2: &V3, r3: &V3, t1: f64, t2: f64, t3: f64, mu: f64) -> V3 {
    let (dt21, dt31, dt32) = (t2 - t1, t3 - t1, t3 - t2);
    let (m1, m2, m3) = (r1.norm(), r2.norm(), r3.norm());
    let term = |m: f64| mu / (12.0 * m * m * m);
    -dt32 * (1.0 / (dt21 * dt31) + term(m1)) * r1
        + (dt32 - dt21) * (1.0 / (dt21 * dt32) + term(m2)) * r2
        + dt21 * (1.0 / (dt32 * dt31) + term(m3)) * r3
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Sign changes of the octic on a fine logarithmic grid (an independent, slow count).
    fn grid_roots(a: f64, b: f64, c: f64) -> Vec<f64> {
        let f = |x: f64| x.powi(8) + a * x.powi(6) + b * x.powi(3) + c;
        let n = 400_000;
        let step = (1e8f64).ln() / n as f64;
        (0..n)
            .map(|k| 1e-4 * (step * k as f64).exp())
            .collect::<Vec<_>>()
            .windows(2)
            .filter(|w| f(w[0]) * f(w[1]) < 0.0)
            .map(|w| w[0])
            .collect()
    }

    #[test]
    fn octic_roots_match_a_fine_grid_including_three_close_roots() {
        // The first case has three positive roots, two of them 1.2 % apart (near 1.0 and 1.012).
        let mut cases = vec![(-1.75, 0.8, -0.05), (-1.0, 0.5, -1e-3), (2.0, 1.0, -5.0)];
        let mut rng = super::super::ranging::SplitMix::new(7);
        for _ in 0..40 {
            let a = -4.0 + 8.0 * rng.uniform();
            let b = -4.0 + 8.0 * rng.uniform();
            let c = -(10f64).powf(-3.0 + 4.0 * rng.uniform());
            cases.push((a, b, c));
        }
        let mut three = 0;
        for (a, b, c) in cases {
            let grid = grid_roots(a, b, c);
            let found = positive_roots(a, b, c, 1.0);
            assert_eq!(
                found.len(),
                grid.len(),
                "a {a} b {b} c {c}: {found:?} vs {grid:?}"
            );
            for (x, g) in found.iter().zip(&grid) {
                assert!((x / g - 1.0).abs() < 1e-4, "{x} vs {g}");
                let fx = x.powi(8) + a * x.powi(6) + b * x.powi(3) + c;
                let size = x.powi(8) + (a * x.powi(6)).abs() + (b * x.powi(3)).abs() + c.abs();
                assert!(fx.abs() <= 1e-13 * size, "f({x}) = {fx}");
            }
            three += usize::from(grid.len() == 3);
        }
        assert!(three >= 1, "no case with three positive roots was tried");
    }

    #[test]
    fn vallado_4th_ex_7_3_gibbs() {
        // Vallado, Fundamentals of Astrodynamics and Applications 4th ed., Example 7-3
        // (third-party copy; recomputed): v₂ = (0, 5.531148, −5.191806) km/s.
        let v = gibbs(
            &V3::new(0.0, 0.0, 6378.137),
            &V3::new(0.0, -4464.696, -5102.509),
            &V3::new(0.0, 5740.323, 3189.068),
            398_600.441_8,
        )
        .unwrap();
        assert!(
            (v - V3::new(0.0, 5.531_148, -5.191_806)).norm() < 1e-5,
            "{v}"
        );
    }

    #[test]
    fn vallado_4th_ex_7_4_herrick_gibbs() {
        // Vallado 4th ed., Example 7-4 (third-party copy; recomputed): v₂ = (−6.441557, 3.777560, −1.720568).
        let v = herrick_gibbs(
            &V3::new(3419.855_64, 6019.826_02, 2784.600_22),
            &V3::new(2935.911_95, 6326.183_24, 2660.595_84),
            &V3::new(2434.952_02, 6597.386_74, 2521.523_11),
            0.0,
            76.48,
            153.04,
            398_600.441_8,
        );
        assert!(
            (v - V3::new(-6.441_557, 3.777_560, -1.720_568)).norm() < 1e-5,
            "{v}"
        );
    }

    fn curtis_sights() -> [Sight; 3] {
        // Curtis, Orbital Mechanics for Engineering Students 3rd ed., Examples 5.11/5.12: φ = 40°,
        // H = 1 km, R⊕ = 6378 km, f = 0.003353 (values from a third-party copy).
        let (re, fl, h) = (6378.0_f64, 0.003_353_f64, 1.0_f64);
        let phi = 40f64.to_radians();
        let den = (1.0 - (2.0 * fl - fl * fl) * phi.sin().powi(2)).sqrt();
        let site = |lst_deg: f64| {
            let th = lst_deg.to_radians();
            let xy = (re / den + h) * phi.cos();
            V3::new(
                xy * th.cos(),
                xy * th.sin(),
                (re * (1.0 - fl).powi(2) / den + h) * phi.sin(),
            )
        };
        let los = |ra: f64, dec: f64| {
            let (ra, dec) = (ra.to_radians(), dec.to_radians());
            V3::new(dec.cos() * ra.cos(), dec.cos() * ra.sin(), dec.sin())
        };
        [
            Sight {
                t: 0.0,
                dir: los(43.537, -8.7833),
                observer: site(44.506),
            },
            Sight {
                t: 118.10,
                dir: los(54.420, -12.074),
                observer: site(45.000),
            },
            Sight {
                t: 237.58,
                dir: los(64.318, -15.105),
                observer: site(45.499),
            },
        ]
    }

    #[test]
    fn curtis_3rd_ex_5_11_gauss_first_pass() {
        // Expected first-pass r₂ = (5659.73, 6534.76, 3269.88) km, v₂ = (−3.87913, 5.11965, −2.24095) km/s
        // (recomputed from the book's inputs; the book prints these to about 1 km).
        let sol = gauss(&curtis_sights(), 398_600.0, None, false);
        assert_eq!(sol.len(), 1);
        let s = sol[0];
        assert!(
            (s.r2 - V3::new(5659.73, 6534.76, 3269.88)).norm() < 1.0,
            "{}",
            s.r2
        );
        assert!(
            (s.v2 - V3::new(-3.879_13, 5.119_65, -2.240_95)).norm() < 1e-3,
            "{}",
            s.v2
        );
    }

    #[test]
    fn curtis_3rd_ex_5_12_gauss_refined() {
        // Refined: r₂ = (5662.74, 6538.97, 3268.78) km, v₂ = (−3.88485, 5.12541, −2.24464) km/s
        // (recomputed; a third-party test has the same velocity); the book's design orbit is a = 10000 km,
        // e = 0.1, i = 30°, Ω = 270°, ω = 90°.
        let sol = gauss(&curtis_sights(), 398_600.0, None, true);
        let s = sol[0];
        assert!(
            (s.r2 - V3::new(5662.74, 6538.97, 3268.78)).norm() < 1.0,
            "{}",
            s.r2
        );
        assert!(
            (s.v2 - V3::new(-3.884_85, 5.125_41, -2.244_64)).norm() < 1e-3,
            "{}",
            s.v2
        );
        let el =
            crate::physics::elements::CometaryElements::from_state(&s.r2, &s.v2, 0.0, 398_600.0);
        assert!((el.a().unwrap() - 10_000.0).abs() < 50.0);
        assert!((el.e - 0.1).abs() < 0.005);
        assert!((el.i - 30.0).abs() < 0.3 && (el.node - 270.0).abs() < 0.3);
    }
}
