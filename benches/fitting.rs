//! Fitting benchmarks: a 3-night, 15-observation fit end to end and its differential correction alone;
//! one-night and two-night tracklets of the population-model sky (a typical one under criterion, and
//! the median and 90th percentile over the whole set on one core, printed); a four-night false linkage;
//! and the batch path (bytes → tracklets → fits → JSON) over 1,000 files on all cores.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::input::Tracklet;
use interloper::fitting::lsq::{LsqOptions, Problem, correct};
use interloper::fitting::perturb::TwoBody;
use interloper::physics::S6;
use interloper::physics::constants::MU_SUN;
use interloper::physics::observe::ObserverModel;
use std::hint::black_box;
use std::time::Instant;

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

/// The population-model sky's tracklets of one arc type, with its sites.
pub fn population_sky(file: &str) -> Vec<Tracklet> {
    let dir = format!(
        "{}/tests/reference/data/population_sky",
        env!("CARGO_MANIFEST_DIR")
    );
    let mut sites = SiteTable::builtin();
    let text = std::fs::read_to_string(format!("{dir}/sites.toml")).expect("sites");
    sites.load_toml("sites.toml", &text).expect("sites parse");
    let bytes = std::fs::read(format!("{dir}/{file}")).expect("sky file");
    merge(read_bytes(file, &bytes, &sites, &Limits::default()).tracklets)
}

/// Per-tracklet fit times on one core (each the best of three) with their indices, sorted (ms).
fn per_tracklet_ms(
    set: &[Tracklet],
    model: &ObserverModel,
    opts: &FitOptions,
) -> Vec<(f64, usize)> {
    let mut t: Vec<(f64, usize)> = set
        .iter()
        .enumerate()
        .map(|(k, tr)| {
            let best = (0..3)
                .map(|_| {
                    let s = Instant::now();
                    black_box(fit_tracklet(tr, model, opts));
                    s.elapsed().as_secs_f64() * 1e3
                })
                .fold(f64::INFINITY, f64::min);
            (best, k)
        })
        .collect();
    t.sort_by(|a, b| a.0.total_cmp(&b.0));
    t
}

/// Two objects' positions under one id: a four-night false linkage.
pub fn false_linkage(a: &Tracklet, b: &Tracklet) -> Tracklet {
    let mut obs = a.obs.clone();
    obs.extend(b.obs.iter().cloned());
    Tracklet::new("linked".into(), "bench".into(), obs)
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

    for (name, file) in [
        ("one_night", "one_night.psv"),
        ("two_nights", "two_night.psv"),
    ] {
        let set = population_sky(file);
        let t = per_tracklet_ms(&set, &model, &opts);
        let q = |f: f64| t[((t.len() - 1) as f64 * f) as usize].0;
        eprintln!(
            "{name}: {} tracklets on one core: median {:.2} ms, 90th percentile {:.2} ms, max {:.2} ms",
            t.len(),
            q(0.5),
            q(0.9),
            q(1.0)
        );
        // Under criterion: the tracklet whose time is the set's median.
        let typical = &set[t[(t.len() - 1) / 2].1];
        c.bench_function(&format!("fit_{name}_typical_tracklet"), |b| {
            b.iter(|| fit_tracklet(black_box(typical), &model, &opts))
        });
    }

    // Two objects first seen the same night under one id, as a linking step would join them.
    let two = population_sky("two_night.psv");
    let night = |t: &Tracklet| t.obs[0].time.tdb.value().floor();
    let partner = two
        .iter()
        .skip(1)
        .find(|t| night(t) == night(&two[0]))
        .expect("a second object of the same night");
    let linked = false_linkage(&two[0], partner);
    let r = fit_tracklet(&linked, &model, &opts);
    eprintln!(
        "false linkage: {} nights, status {}, {:?}",
        r.n_nights, r.status, r.poor_fit
    );
    c.bench_function("fit_four_night_false_linkage", |b| {
        b.iter(|| fit_tracklet(black_box(&linked), &model, &opts))
    });

    // Forced grid ranging (`--method ranging`, the console's `r`): the first grid and the splitting
    // of the cells that hold the weight.
    let mut group = c.benchmark_group("forced_ranging");
    group.sample_size(10);
    let ranging = FitOptions {
        method: interloper::fitting::fit::MethodChoice::Ranging,
        ..FitOptions::default()
    };
    for name in ["mainbelt_2n", "near_earth_2n", "hyp_strong_3n"] {
        let (_, t) = load(&format!("{name}.psv"));
        group.bench_function(name, |b| {
            b.iter(|| fit_tracklet(black_box(&t), &model, &ranging))
        });
    }
    group.finish();

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
