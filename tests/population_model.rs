//! The population model's densities against what they must satisfy whatever the numbers in the file:
//! the phase-space volume elements (finite differences of the element → state map; the (a, e, i)
//! form follows from Delaunay's canonical variables, the (q, 1/a, i) form from it by a change of
//! variables — common practice, no source), the ρ⁴ cos²δ Jacobian of (direction, rate, range, range
//! rate) → state, the interstellar velocity distribution's normalisation and mean speed against
//! draws from its own Gaussian ellipsoids, and gravitational focusing by Liouville's theorem.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::fitting::population::{ModelFile, PopulationModel};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::constants::{AU_PER_DAY_TO_KM_S, DEG, MU_BARY_OVER_SUN, MU_SUN};
use interloper::physics::elements::CometaryElements;
use interloper::physics::frames::equatorial_to_galactic;
use interloper::physics::{S6, V3};
use nalgebra::{Matrix6, Vector6};

/// 6×6 Jacobian of a map by central differences with per-parameter steps.
fn jacobian(
    f: &dyn Fn(&Vector6<f64>) -> Vector6<f64>,
    p: &Vector6<f64>,
    h: &[f64; 6],
) -> Matrix6<f64> {
    let mut j = Matrix6::zeros();
    for k in 0..6 {
        let mut a = *p;
        let mut b = *p;
        a[k] += h[k];
        b[k] -= h[k];
        j.set_column(k, &((f(&a) - f(&b)) / (2.0 * h[k])));
    }
    j
}

fn state(el: &CometaryElements, t: f64, mu: f64) -> Vector6<f64> {
    let (r, v) = el.state_at(t, mu).unwrap();
    Vector6::new(r.x, r.y, r.z, v.x, v.y, v.z)
}

#[test]
fn phase_space_volume_in_a_e_i_is_half_mu_to_three_halves_root_a_e_sin_i() {
    let mu = MU_SUN;
    for (a, e, i) in [(2.7, 0.15, 9.0), (1.4, 0.55, 32.0), (5.2, 0.05, 2.0)] {
        // Parameters (a, e, i, Ω, ω, M) with angles in radians.
        let p = Vector6::new(a, e, i * DEG, 1.1, 2.3, 0.7);
        let map = |p: &Vector6<f64>| {
            let n = (mu / p[0].powi(3)).sqrt();
            let el = CometaryElements {
                q: p[0] * (1.0 - p[1]),
                e: p[1],
                i: p[2] / DEG,
                node: p[3] / DEG,
                peri: p[4] / DEG,
                tp: -p[5] / n,
                inv_a: 1.0 / p[0],
                epoch: 0.0,
            };
            state(&el, 0.0, mu)
        };
        let det = jacobian(&map, &p, &[1e-6, 1e-7, 1e-7, 1e-7, 1e-7, 1e-7])
            .determinant()
            .abs();
        let want = 0.5 * mu.powf(1.5) * a.sqrt() * e * (i * DEG).sin();
        assert!(
            (det / want - 1.0).abs() < 1e-5,
            "a={a} e={e}: {det} vs {want}"
        );
    }
}

#[test]
fn phase_space_volume_in_q_inverse_a_i_is_half_mu_squared_e_sin_i_on_both_sides_of_e_one() {
    let mu = MU_SUN;
    for (q, inv_a, i) in [(1.2, 0.02, 60.0), (0.8, -0.5, 120.0), (2.0, 1e-5, 30.0)] {
        let p = Vector6::new(q, inv_a, i * DEG, 0.4, 1.9, 35.0);
        let map = |p: &Vector6<f64>| {
            let el = CometaryElements {
                q: p[0],
                e: 1.0 - p[0] * p[1],
                i: p[2] / DEG,
                node: p[3] / DEG,
                peri: p[4] / DEG,
                tp: p[5],
                inv_a: p[1],
                epoch: 0.0,
            };
            state(&el, 0.0, mu)
        };
        let det = jacobian(&map, &p, &[1e-7, 1e-7, 1e-7, 1e-7, 1e-7, 1e-4])
            .determinant()
            .abs();
        let e = 1.0 - q * inv_a;
        let want = 0.5 * mu * mu * e * (i * DEG).sin();
        assert!(
            (det / want - 1.0).abs() < 1e-5,
            "q={q} 1/a={inv_a}: {det} vs {want}"
        );
    }
}

#[test]
fn attributable_to_state_jacobian_is_rho_to_the_fourth_cos_squared_dec() {
    let obs = V3::new(-0.3, 0.9, 0.4);
    let obs_v = V3::new(-0.016, -0.005, -0.002);
    for (ra, dec, rho) in [(0.3, 0.4, 1.7), (2.0, -1.1, 0.05), (4.4, 0.05, 12.0)] {
        let map = |p: &Vector6<f64>| {
            let (a, d) = (p[0], p[1]);
            let u = V3::new(d.cos() * a.cos(), d.cos() * a.sin(), d.sin());
            let u_a = V3::new(-d.cos() * a.sin(), d.cos() * a.cos(), 0.0);
            let u_d = V3::new(-d.sin() * a.cos(), -d.sin() * a.sin(), d.cos());
            let r = obs + p[4] * u;
            let v = obs_v + p[5] * u + p[4] * (p[2] * u_a + p[3] * u_d);
            Vector6::new(r.x, r.y, r.z, v.x, v.y, v.z)
        };
        let p = Vector6::new(ra, dec, 0.01, -0.004, rho, 0.003);
        let det = jacobian(&map, &p, &[1e-7; 6]).determinant().abs();
        let want = rho.powi(4) * dec.cos().powi(2);
        assert!((det / want - 1.0).abs() < 1e-6, "{det} vs {want}");
    }
}

/// Draws of the heliocentric velocity at infinity (km/s, Galactic axes) straight from the file's
/// ellipsoids, without the density code.
fn draw_velocities(m: &ModelFile, n: usize, seed: u64) -> Vec<V3> {
    let iso = &m.interstellar;
    let total: f64 = iso.component.iter().map(|c| c.fraction).sum();
    let sun = V3::from(iso.solar_motion_km_s);
    let mut rng = SplitMix::new(seed);
    (0..n)
        .map(|_| {
            let mut u = rng.uniform() * total;
            let c = iso
                .component
                .iter()
                .find(|c| {
                    u -= c.fraction;
                    u <= 0.0
                })
                .unwrap_or(&iso.component[0]);
            V3::from_fn(|k, _| c.mean_km_s[k] - sun[k] + c.sigma_km_s[k] * rng.normal())
        })
        .collect()
}

/// Monte Carlo of ∫ f_interstellar(r, v) d³v / (dn/dH) at a barycentric position (or, with
/// `r.x < 0`, averaged over the sphere of radius |r|), with v drawn from a broad isotropic Gaussian
/// (km/s), and the mean speed |v| under that density.
fn velocity_integral(model: &PopulationModel, r: V3, n: usize, seed: u64) -> (f64, f64) {
    let g_eq = equatorial_to_galactic().transpose();
    let s = 90.0;
    let mut rng = SplitMix::new(seed);
    let (mut sum, mut sum_v) = (0.0, 0.0);
    let h = model.file.interstellar.h_ref;
    let iso = &model.file.interstellar;
    let k = iso.size_slope * std::f64::consts::LN_10;
    let dndh = iso.density_per_au3 * k * (0.5 * (k * model.file.mag_sigma).powi(2)).exp();
    let per_au_day = AU_PER_DAY_TO_KM_S.powi(3);
    for _ in 0..n {
        let v_kms = V3::from_fn(|_, _| s * rng.normal());
        let q = (-0.5 * v_kms.norm_squared() / (s * s)).exp()
            / ((2.0 * std::f64::consts::PI).powf(1.5) * s.powi(3));
        let v = g_eq * v_kms / AU_PER_DAY_TO_KM_S;
        let r = if r.x < 0.0 {
            V3::from_fn(|_, _| rng.normal()).normalize() * r.norm()
        } else {
            r
        };
        let x = S6::new(r.x, r.y, r.z, v.x, v.y, v.z);
        let d = model.density(&x, &S6::zeros(), h);
        if !d.unbound {
            continue;
        }
        // f is per (au/day)³; the draw density is per (km/s)³.
        let w = d.ln_f.exp() / dndh / per_au_day / q;
        sum += w;
        sum_v += w * v_kms.norm();
    }
    (sum / n as f64, sum_v / sum)
}

#[test]
fn interstellar_velocities_integrate_to_one_with_their_mean_speed_far_from_the_sun() {
    let model = PopulationModel::builtin();
    let draws = draw_velocities(&model.file, 400_000, 7);
    let mean_speed = draws.iter().map(|v| v.norm()).sum::<f64>() / draws.len() as f64;
    let (norm, mean) = velocity_integral(&model, V3::new(1e8, 3e7, -2e7), 400_000, 11);
    println!(
        "far from the Sun: ∫g = {norm:.4}, mean speed {mean:.2} km/s (ellipsoid draws {mean_speed:.2})"
    );
    assert!((norm - 1.0).abs() < 0.02, "normalisation {norm}");
    assert!(
        (mean - mean_speed).abs() < 0.02 * mean_speed,
        "{mean} vs {mean_speed}"
    );
}

#[test]
fn interstellar_density_near_the_sun_is_focused_as_liouville_requires() {
    // Averaged over a sphere around the Sun every orientation of the velocity ellipsoid counts
    // alike, so the isotropic focusing factor ⟨√(1 + 2μ/(r v∞²))⟩ must come out (at one point it
    // need not: the density downstream of the Sun's motion is higher).
    let model = PopulationModel::builtin();
    let mu = MU_SUN * MU_BARY_OVER_SUN;
    for r_au in [1.0, 0.3] {
        let draws = draw_velocities(&model.file, 400_000, 3);
        let focus = draws
            .iter()
            .map(|v| {
                let vinf = v.norm() / AU_PER_DAY_TO_KM_S;
                (1.0 + 2.0 * mu / (r_au * vinf * vinf)).sqrt()
            })
            .sum::<f64>()
            / draws.len() as f64;
        let (n_r, _) = velocity_integral(&model, V3::new(-r_au, 0.0, 0.0), 600_000, 5);
        println!("r = {r_au} au: n(r)/n∞ = {n_r:.4}, focusing factor {focus:.4}");
        assert!((n_r / focus - 1.0).abs() < 0.03, "{n_r} vs {focus}");
    }
}
