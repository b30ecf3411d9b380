//! The origin sheet against outside references (tests/reference/make_origin.py): galactic angles,
//! (U, V, W) and galactocentric states against astropy; Galactic orbit envelopes against galpy in the
//! same potential; original 1/a against scipy DOP853 through DE421's Sun, planets and Moon; kinematic
//! membership against a hand computation from the population model's ellipsoids.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::builtin_population;
use interloper::fitting::origin::flight::{fly, mu_total, to_barycentric};
use interloper::fitting::origin::{GALACTIC_RTOL, OriginOptions, membership, origin_sheet};
use interloper::fitting::result::FitResult;
use interloper::physics::constants::AU_PER_DAY_TO_KM_S;
use interloper::physics::frames::{equatorial_to_galactic, radec_from_vector};
use interloper::physics::galaxy::orbit_envelope;
use interloper::physics::propagate::propagate;
use interloper::physics::{S6, V3};
use util::{f, read_csv};

fn options() -> OriginOptions {
    OriginOptions::for_model(&builtin_population())
}

fn angle_diff_deg(a: f64, b: f64) -> f64 {
    ((a - b + 180.0).rem_euclid(360.0) - 180.0).abs()
}

#[test]
fn galactic_angles_uvw_and_galactocentric_states_match_astropy() {
    let g = equatorial_to_galactic();
    let frame = options().frame;
    let (mut worst_deg, mut worst_km_s) = (0.0f64, 0.0f64);
    for row in read_csv("origin/galactic.csv") {
        let v = V3::new(f(&row, "vx_km_s"), f(&row, "vy_km_s"), f(&row, "vz_km_s"));
        let (l, b) = radec_from_vector(&(g * -v));
        worst_deg = worst_deg
            .max(angle_diff_deg(l.to_degrees(), f(&row, "l_deg")))
            .max((b.to_degrees() - f(&row, "b_deg")).abs());
        let uvw = g * v;
        let want = [f(&row, "u_km_s"), f(&row, "v_km_s"), f(&row, "w_km_s")];
        let (p, w) = frame.galactocentric([uvw.x, uvw.y, uvw.z]);
        for k in 0..3 {
            worst_km_s = worst_km_s.max((uvw[k] - want[k]).abs());
            let gv = f(&row, ["gc_vx_km_s", "gc_vy_km_s", "gc_vz_km_s"][k]);
            worst_km_s = worst_km_s.max((w[k] - gv).abs());
            let gp = f(&row, ["gc_x_kpc", "gc_y_kpc", "gc_z_kpc"][k]);
            assert!((p[k] - gp).abs() < 1e-9, "position {k}: {} vs {gp}", p[k]);
        }
    }
    println!("galactic angles within {worst_deg:.2e} deg, velocities within {worst_km_s:.2e} km/s");
    assert!(worst_deg < 1e-3, "{worst_deg}");
    assert!(worst_km_s < 1e-2, "{worst_km_s}");
}

#[test]
fn galactic_orbit_envelopes_match_galpy_to_one_percent() {
    let o = options();
    let mut worst = 0.0f64;
    for row in read_csv("origin/galactic_orbits.csv") {
        let uvw = [f(&row, "u_km_s"), f(&row, "v_km_s"), f(&row, "w_km_s")];
        let (p, v) = o.frame.galactocentric(uvw);
        let env = orbit_envelope(p, v, o.galactic_gyr, GALACTIC_RTOL, None).unwrap();
        assert!(!env.escapes);
        for (got, key) in [
            (env.r_peri_kpc, "r_peri_kpc"),
            (env.r_apo_kpc, "r_apo_kpc"),
            (env.z_max_kpc, "z_max_kpc"),
        ] {
            let rel = (got / f(&row, key) - 1.0).abs();
            println!(
                "{} {key}: {got:.5} vs galpy {:.5}",
                row["case"],
                f(&row, key)
            );
            worst = worst.max(rel);
        }
        assert!((env.ecc - f(&row, "ecc")).abs() < 0.01);
    }
    println!("largest relative difference {worst:.2e}");
    assert!(worst < 0.01, "{worst}");
}

#[test]
fn original_inverse_semimajor_axis_matches_an_independent_nbody_integration() {
    // Tolerance on 1/a itself (exact nominal states): 1e-6 au⁻¹ plus a part in 10⁶ (the planets'
    // ephemerides differ, plan94 against DE421, and each integration stops at its own last step).
    let mut worst = 0.0f64;
    for row in read_csv("origin/flights.csv") {
        let x = S6::from_fn(|i, _| {
            f(
                &row,
                ["x_au", "y_au", "z_au", "vx_au_d", "vy_au_d", "vz_au_d"][i],
            )
        });
        let jd = f(&row, "epoch_tdb");
        let flight = fly(&x, jd, -1.0, f(&row, "r_end_au")).unwrap();
        let want = f(&row, "inv_a_bary_end");
        let xb = to_barycentric(&x, jd).unwrap();
        let (rb, vb) = (xb.fixed_rows::<3>(0), xb.fixed_rows::<3>(3));
        let osc = 2.0 / rb.norm() - vb.norm_squared() / mu_total();
        let d = (flight.inv_a - want).abs();
        println!(
            "{}: 1/a_orig {:.9e} vs DOP853 {want:.9e} (diff {d:.1e}; barycentric osculating at the epoch {osc:.6e})",
            row["case"], flight.inv_a
        );
        worst = worst.max(d / (1e-6 + 1e-6 * want.abs()));
    }
    assert!(worst < 1.0, "{worst}");
}

#[test]
fn membership_matches_the_hand_computation() {
    let comps = options().components;
    let rows = read_csv("origin/membership.csv");
    let (mut thin_ok, mut thin_n, mut halo_ok, mut halo_n) = (0, 0, 0, 0);
    for row in &rows {
        let v = [
            f(row, "u_lsr_km_s"),
            f(row, "v_lsr_km_s"),
            f(row, "w_lsr_km_s"),
        ];
        let m = membership(v, &comps).unwrap();
        for (got, key) in [
            (m.thin_disc, "thin_disc"),
            (m.thick_disc, "thick_disc"),
            (m.halo, "halo"),
        ] {
            let want = f(row, key);
            assert!(
                (got - want).abs() <= 1e-12 + 1e-9 * want,
                "{key}: {got} vs {want}"
            );
        }
        match row["case"].as_str() {
            "thin_draw" => {
                thin_n += 1;
                thin_ok += usize::from(m.thin_disc > m.thick_disc.max(m.halo));
            }
            "halo_draw" => {
                halo_n += 1;
                halo_ok += usize::from(m.halo > m.thin_disc.max(m.thick_disc));
            }
            _ => {}
        }
    }
    println!(
        "thin-disc draws called thin disc: {thin_ok}/{thin_n}; halo draws called halo: {halo_ok}/{halo_n}"
    );
    assert!(thin_ok * 10 >= thin_n * 9);
    assert!(halo_ok * 2 > halo_n);
}

/// A heliocentric state at `jd`, 3 au from the barycentre and inbound, of an object that arrived with
/// the heliocentric Galactic velocity `uvw` (km/s): an exact two-body hyperbola about the whole solar
/// system's mass with an impact parameter of 2 au, built from its asymptote (ê = cos θ û + sin θ ĥ×û
/// with cos θ = 1/e, sin θ = −√(e²−1)/e puts the incoming asymptote along û).
fn arrival_with(uvw: V3, jd: f64) -> S6 {
    let mu = mu_total();
    let v_inf = equatorial_to_galactic().transpose() * uvw / AU_PER_DAY_TO_KM_S;
    let u = v_inf.normalize();
    let h = u.cross(&V3::z()).normalize();
    let a = mu / v_inf.norm_squared();
    let e = (1.0 + (2.0 / a).powi(2)).sqrt();
    let p_hat = u / e - h.cross(&u) * ((e * e - 1.0).sqrt() / e);
    let q = a * (e - 1.0);
    let (rp, vp) = (p_hat * q, h.cross(&p_hat) * (mu * (e + 1.0) / q).sqrt());
    let (mut lo, mut hi) = (0.0, 1e4);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if propagate(&rp, &vp, -mid, mu).unwrap().0.norm() < 3.0 {
            lo = mid
        } else {
            hi = mid
        }
    }
    let (r, v) = propagate(&rp, &vp, -lo, mu).unwrap();
    let bary = S6::new(r.x, r.y, r.z, v.x, v.y, v.z);
    bary - to_barycentric(&S6::zeros(), jd).unwrap()
}

#[test]
fn synthetic_objects_drawn_from_the_thin_disc_and_the_halo_come_out_so() {
    let mut o = options();
    o.samples = 8;
    o.galactic_samples = 4;
    let rows = read_csv("origin/membership.csv");
    let sun = o.frame.solar_motion_km_s;
    for case in ["thin_draw", "halo_draw"] {
        let row = rows.iter().find(|r| r["case"] == case).unwrap();
        let lsr = V3::new(
            f(row, "u_lsr_km_s"),
            f(row, "v_lsr_km_s"),
            f(row, "w_lsr_km_s"),
        );
        let uvw = lsr - V3::from(sun);
        let jd = 2_460_000.5;
        let x = arrival_with(uvw, jd);
        let tr =
            interloper::fitting::input::Tracklet::new(case.into(), "synthetic".into(), Vec::new());
        let mut r = FitResult::empty(&tr);
        r.p_hyperbolic = Some(1.0);
        r.state = Some([x[0], x[1], x[2], x[3], x[4], x[5]]);
        r.epoch_jd_tdb = Some(jd);
        r.covariance = Some(
            (0..6)
                .map(|i| std::array::from_fn(|j| if i == j { 1e-14 } else { 0.0 }))
                .collect(),
        );
        let s = origin_sheet(&r, &o).unwrap();
        let got = V3::from(s.uvw_helio_km_s.unwrap());
        println!(
            "{case}: drawn {uvw:?}, recovered {got:?}, membership {:?}",
            s.membership
        );
        assert!(
            (got - uvw).norm() < 0.05 + 1e-3 * uvw.norm(),
            "{got:?} vs {uvw:?}"
        );
        let m = s.membership.unwrap();
        for (got, key) in [
            (m.thin_disc, "thin_disc"),
            (m.thick_disc, "thick_disc"),
            (m.halo, "halo"),
        ] {
            assert!((got - f(row, key)).abs() < 0.02, "{key}");
        }
        if case == "thin_draw" {
            assert!(m.thin_disc > 0.5);
        } else {
            assert!(m.halo > 0.5);
        }
        assert!((m.thin_disc + m.thick_disc + m.halo - 1.0).abs() < 1e-12);
        assert!(s.inv_a_orig_per_au < 0.0 && s.galactic_orbit.is_some());
    }
}
