//! Origin-sheet benchmarks: one flight through the planets to 250 au, one Galactic orbit over 3 Gyr,
//! and the whole sheet of a fitted three-night unbound candidate with the default sample counts (what
//! `fit --json` pays per candidate with P(unbound) ≥ 0.01).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use criterion::{Criterion, criterion_group, criterion_main};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::origin::flight::fly;
use interloper::fitting::origin::{GALACTIC_RTOL, origin_sheet};
use interloper::physics::galaxy::orbit_envelope;
use interloper::physics::observe::ObserverModel;
use interloper::physics::{S6, V3};
use std::hint::black_box;

fn benches(c: &mut Criterion) {
    let x = S6::new(1.2, 0.4, -0.3, -0.004, 0.021, 0.012);
    c.bench_function("flight_back_to_250_au", |b| {
        b.iter(|| fly(black_box(&x), 2_461_000.5, -1.0, 250.0))
    });
    c.bench_function("galactic_orbit_3_gyr", |b| {
        b.iter(|| {
            orbit_envelope(
                V3::new(-8.0, 0.0, 0.02),
                black_box(V3::new(-20.0, 222.0, 10.0)),
                3.0,
                GALACTIC_RTOL,
                None,
            )
        })
    });
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/data/synthetic/hyp_strong_3n.psv"
    );
    let bytes = std::fs::read(path).expect("synthetic file");
    let intake = read_bytes(
        "hyp_strong_3n.psv",
        &bytes,
        &SiteTable::builtin(),
        &Limits::default(),
    );
    let tr = intake.tracklets.into_iter().next().expect("one tracklet");
    let opts = FitOptions {
        origin: None,
        ..FitOptions::default()
    };
    let fit = fit_tracklet(&tr, &ObserverModel::new(), &opts);
    let o = FitOptions::default()
        .origin
        .expect("default origin options");
    c.bench_function("origin_sheet_three_nights", |b| {
        b.iter(|| origin_sheet(black_box(&fit), &o))
    });
}

criterion_group! {
    name = origin;
    config = Criterion::default().sample_size(10);
    targets = benches
}
criterion_main!(origin);
