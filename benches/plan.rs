//! Planning benchmark: tonight's plan for 1,000 fitted candidates (500 one-night and 500 two-night
//! arcs of the population-model sky) at one telescope over one night, fits made beforehand; each
//! iteration starts from a fresh observer model. The target is at most 2 s.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use criterion::{Criterion, criterion_group, criterion_main};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::{FitOptions, FitResult};
use interloper::fitting::plan::{PlanOptions, PlanSite, plan};
use interloper::physics::observe::ObserverModel;
use interloper::physics::time::parse_utc;
use std::hint::black_box;

fn candidates() -> (Vec<FitResult>, SiteTable) {
    let dir = format!(
        "{}/tests/reference/data/population_sky",
        env!("CARGO_MANIFEST_DIR")
    );
    let mut sites = SiteTable::builtin();
    let text = std::fs::read_to_string(format!("{dir}/sites.toml")).expect("sites");
    sites.load_toml("sites.toml", &text).expect("sites parse");
    let mut trs = Vec::new();
    for file in ["one_night.psv", "two_night.psv"] {
        let bytes = std::fs::read(format!("{dir}/{file}")).expect("sky file");
        let mut t = merge(read_bytes(file, &bytes, &sites, &Limits::default()).tracklets);
        t.truncate(500);
        trs.extend(t);
    }
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    (fit_all(trs, &FitOptions::default(), threads), sites)
}

fn bench(c: &mut Criterion) {
    let (fits, table) = candidates();
    assert_eq!(fits.len(), 1000);
    let s = table.get("Q72").expect("site");
    let from = parse_utc("2026-02-19T16:00:00Z").expect("time");
    let sites = vec![PlanSite {
        code: s.code.clone(),
        position: s.position,
        caps: s.caps,
        from,
        to: from.plus_days(1.0),
    }];
    let opts = PlanOptions::default();
    let once = std::time::Instant::now();
    let p = plan(&fits, &sites, &opts, &ObserverModel::new());
    eprintln!(
        "plan of {} candidates, one site, one night: {:.3} s ({} visits, {} left out)",
        fits.len(),
        once.elapsed().as_secs_f64(),
        p.items.len(),
        p.unplanned.len()
    );
    let mut g = c.benchmark_group("plan");
    g.sample_size(10);
    g.bench_function("1000_candidates_one_site_one_night", |b| {
        b.iter(|| black_box(plan(&fits, &sites, &opts, &ObserverModel::new())))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
