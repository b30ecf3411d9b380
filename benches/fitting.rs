//! Fitting benchmarks: a 3-night, 15-observation fit end to end (initial orbit, differential correction,
//! covariance, checks), the differential correction alone, one-night ranging with 10⁴ trial orbits, and
//! the batch path (bytes → tracklets → fits → JSON) over 1,000 files on all cores.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::input::Tracklet;
use interloper::fitting::lsq::{LsqOptions, Problem, correct};
use interloper::fitting::perturb::TwoBody;
use interloper::physics::S6;
use interloper::physics::constants::MU_SUN;
use interloper::physics::observe::ObserverModel;
use std::hint::black_box;

fn load(name: &str) -> (Vec<u8>, Tracklet) {
    let path = format!(
        "{}/tests/reference/data/synthetic/{name}",
        env!("CARGO_MANIFEST_DIR")
    );
    let bytes = std::fs::read(&path).expect("synthetic file");
    let t = read_bytes(name, &bytes, &SiteTable::builtin(), &Limits::default())
        .tracklets
        .remove(0);
    (bytes, t)
}

fn benches(c: &mut Criterion) {
    let opts = FitOptions::default();
    let model = ObserverModel::new();
    let (bytes, tr) = load("bench_3n15.psv");
    c.bench_function("fit_3_nights_15_obs_end_to_end", |b| {
        b.iter(|| fit_tracklet(black_box(&tr), &model, &opts))
    });

    let result = fit_tracklet(&tr, &model, &opts);
    let x = S6::from_column_slice(&result.state.expect("fitted"));
    let observers: Vec<_> = tr
        .obs
        .iter()
        .map(|o| model.observer(&o.location, &o.time).expect("observer"))
        .collect();
    let epoch = tr.obs[0].time.tdb.plus_days(tr.arc_days() / 2.0);
    let dynamics = TwoBody;
    let p = Problem::new(
        &tr,
        observers,
        tr.covariances(true),
        epoch,
        MU_SUN,
        &dynamics,
    );
    let start = x + S6::new(2e-4, -1e-4, 1e-4, 2e-6, 1e-6, -1e-6);
    let used = vec![true; tr.obs.len()];
    c.bench_function("differential_correction_3_nights_15_obs", |b| {
        b.iter(|| correct(&p, black_box(&start), &used, &LsqOptions::default()))
    });

    // One-night ranging with at least 10⁴ evaluated trial orbits (grid nodes with no admissible
    // radial velocity under the speed cap are not trials, so the grid is widened until 10⁴ are).
    let (_, one) = load("hyp_strong_1n.psv");
    let mut ropts = opts.clone();
    ropts.ranging.n_rho = 150;
    let trials = fit_tracklet(&one, &model, &ropts)
        .ranging
        .map_or(0, |r| r.trials);
    eprintln!("ranging benchmark: {trials} trial orbits per fit");
    assert!(trials >= 10_000);
    c.bench_function("ranging_one_night_10k_trial_orbits", |b| {
        b.iter(|| fit_tracklet(black_box(&one), &model, &ropts))
    });

    let mut group = c.benchmark_group("batch");
    group.sample_size(10);
    group.throughput(Throughput::Elements(1000));
    let sites = SiteTable::builtin();
    group.bench_function("fit_json_1000_files_all_cores", |b| {
        b.iter(|| {
            let tracklets: Vec<Tracklet> = (0..1000)
                .flat_map(|k| {
                    read_bytes(&format!("f{k}.psv"), &bytes, &sites, &Limits::default()).tracklets
                })
                .collect();
            let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
            let results = fit_all(tracklets, &opts, threads);
            results
                .iter()
                .map(|r| serde_json::to_string(r).map_or(0, |s| s.len()))
                .sum::<usize>()
        })
    });
    group.finish();
}

criterion_group!(fitting, benches);
criterion_main!(fitting);
