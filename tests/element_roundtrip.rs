//! Property tests: cometary elements → state → elements returns the elements, for every conic type.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::physics::constants::MU_SUN;
use interloper::physics::elements::CometaryElements;
use proptest::prelude::*;

fn conic_e() -> impl Strategy<Value = f64> {
    prop_oneof![
        0.01f64..0.95,
        0.95f64..0.9999,
        0.9999f64..1.0001,
        Just(1.0),
        1.0001f64..1.5,
        1.5f64..10.0,
    ]
}

fn angle_diff(a: f64, b: f64) -> f64 {
    ((a - b + 540.0).rem_euclid(360.0) - 180.0).abs()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]
    #[test]
    fn elements_survive_a_round_trip_through_the_state(
        q in 0.05f64..40.0,
        e in conic_e(),
        i in 0.5f64..179.5,
        node in 0.0f64..360.0,
        peri in 0.0f64..360.0,
        dt in -1500.0f64..1500.0,
    ) {
        let inv_a = (1.0 - e) / q;
        // keep ellipses within a few revolutions of perihelion so Tp is the nearest passage
        let dt = if inv_a > 0.0 {
            let period = std::f64::consts::TAU / (MU_SUN * inv_a.powi(3)).sqrt();
            dt.clamp(-0.45 * period, 0.45 * period)
        } else { dt };
        let el = CometaryElements { q, e, i, node, peri, tp: 2_461_000.5, inv_a, epoch: 2_461_000.5 + dt };
        let (r, v) = el.state_at(el.epoch, MU_SUN).unwrap();
        let back = CometaryElements::from_state(&r, &v, el.epoch, MU_SUN);
        prop_assert!((back.q - q).abs() < 1e-9 * q, "q {} vs {q}", back.q);
        prop_assert!((back.e - e).abs() < 1e-9, "e {} vs {e}", back.e);
        prop_assert!((back.inv_a - inv_a).abs() < 1e-9 * (1.0 + inv_a.abs()));
        prop_assert!(angle_diff(back.i, i) < 1e-7);
        prop_assert!(angle_diff(back.node, node) < 1e-6);
        prop_assert!(angle_diff(back.peri, peri) < 1e-6, "ω {} vs {peri}", back.peri);
        let scale = 1.0 + dt.abs();
        prop_assert!((back.tp - el.tp).abs() < 1e-8 * scale, "Tp off by {}", back.tp - el.tp);
    }
}
