//! Physics-layer benchmarks: one propagation, one observation with light time and partials, and the
//! observer positions of a night's observations (tables built once, amortised over the night).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use criterion::{Criterion, criterion_group, criterion_main};
use interloper::physics::constants::MU_SUN;
use interloper::physics::observe::{
    ObserverLocation, ObserverModel, ObserverState, predict_with_partials,
};
use interloper::physics::propagate::propagate;
use interloper::physics::site::GroundPosition;
use interloper::physics::time::{Jd2, parse_utc};
use interloper::physics::{S6, V3};
use std::hint::black_box;

fn benches(c: &mut Criterion) {
    let r0 = V3::new(2.1, 1.3, 0.4);
    let v0 = V3::new(-0.006, 0.009, 0.001);
    c.bench_function("propagate_one_state_30d", |b| {
        b.iter(|| propagate(black_box(&r0), black_box(&v0), black_box(30.0), MU_SUN))
    });

    let x0 = S6::new(2.1, 1.3, 0.4, -0.006, 0.009, 0.001);
    let obs = ObserverState {
        helio_pos: V3::new(0.3, -0.95, 0.0),
        helio_vel: V3::new(0.0165, 0.005, 0.0),
        sun_bary_vel: V3::new(3e-6, -5e-6, 0.0),
    };
    let epoch = Jd2::new(2_461_000.5, 0.0);
    let t = Jd2::new(2_461_000.5, 1.37);
    c.bench_function("observation_with_light_time_and_partials", |b| {
        b.iter(|| predict_with_partials(black_box(&x0), epoch, black_box(t), &obs, MU_SUN))
    });

    // One tracklet's night: 40 observations over 8 hours from one site, with a fresh model each time
    // (the worst case: nothing memoised yet).
    let site = ObserverLocation::Ground(GroundPosition::Geodetic {
        lon_deg: 250.7,
        lat_deg: -33.9,
        alt_m: 1500.0,
    });
    let instants: Vec<_> = (0..40)
        .map(|k| parse_utc(&format!("2026-03-01T{:02}:{:02}:00Z", k / 5, (k % 5) * 12)).unwrap())
        .collect();
    c.bench_function("observer_positions_for_a_night_of_40_fresh_model", |b| {
        b.iter(|| {
            let model = ObserverModel::new();
            instants
                .iter()
                .map(|i| model.observer(&site, i).unwrap().helio_pos.x)
                .sum::<f64>()
        })
    });

    // A survey night's intake: 1,000 observations from three sites over 10 hours, fresh model.
    let sites: Vec<_> = [(250.7, -33.9), (12.3, 47.1), (135.2, 64.5)]
        .iter()
        .map(|&(lon, lat)| {
            ObserverLocation::Ground(GroundPosition::Geodetic {
                lon_deg: lon,
                lat_deg: lat,
                alt_m: 500.0,
            })
        })
        .collect();
    let night: Vec<_> = (0..1000)
        .map(|k| {
            let secs = k * 36;
            parse_utc(&format!(
                "2026-03-01T{:02}:{:02}:{:02}Z",
                secs / 3600,
                (secs / 60) % 60,
                secs % 60
            ))
            .unwrap()
        })
        .collect();
    c.bench_function("observer_positions_for_a_night_of_1000_fresh_model", |b| {
        b.iter(|| {
            let model = ObserverModel::new();
            night
                .iter()
                .enumerate()
                .map(|(k, i)| model.observer(&sites[k % 3], i).unwrap().helio_pos.x)
                .sum::<f64>()
        })
    });
}

criterion_group!(physics, benches);
criterion_main!(physics);
