//! Whole-process batch fits, timed as an observer's script runs them: the real binary, `fit --json
//! --threads 2`, over a folder of one-object files, start to exit (reading, the global search, P, the
//! JSON and, for unbound candidates, their origin sheets). Each set prints its wall time per file.
//!
//! - `three_night_synthetic`: 500 files cycling the five bound or weakly unbound three-night orbits of
//!   the synthetic reference set (main belt, near-Earth, comet-like, near-parabolic, weakly
//!   hyperbolic), two-body;
//! - `three_night_population_bound`: the bound three-night arcs of the population-model sky (500
//!   files; about one in six has a distance the linear fit cannot be trusted with and takes the range
//!   profile);
//! - `ten_night_planets`: 300 files cycling the bound ten-night synthetic arcs, fitted with the Sun,
//!   planets and Moon;
//! - `three_night_strongly_hyperbolic`: 100 files of the strongly hyperbolic synthetic orbit, each with
//!   its origin sheet (flights through the planets to 250 au and Galactic orbits);
//! - `two_night_population`: the first 200 two-night arcs of the population-model sky, bound and
//!   unbound as the model draws them (every one takes the range profile; those with P ≥ 0.01 get
//!   their origin sheets).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use criterion::{Criterion, criterion_group, criterion_main};
use std::path::{Path, PathBuf};

fn data() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/data")
}

const HEADER: &str =
    "# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|astCat|mag|band\n";

/// Object blocks (id, data lines) of a PSV file.
fn blocks(path: &Path) -> Vec<(String, Vec<String>)> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut out: Vec<(String, Vec<String>)> = Vec::new();
    for l in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("trkSub") && !l.trim().is_empty())
    {
        let id = l.split('|').next().unwrap_or("").to_string();
        match out.last_mut() {
            Some((last, lines)) if *last == id => lines.push(l.to_string()),
            _ => out.push((id, vec![l.to_string()])),
        }
    }
    out
}

/// `n` files cycling through `sources`, each object under a fresh id.
fn write_set(dir: &Path, sources: &[Vec<String>], n: usize) {
    for k in 0..n {
        let mut body = String::from(HEADER);
        for l in &sources[k % sources.len()] {
            let rest = l.split_once('|').map_or("", |(_, r)| r);
            body.push_str(&format!("b{k:05}|{rest}\n"));
        }
        std::fs::write(dir.join(format!("t{k:05}.psv")), body).unwrap();
    }
}

fn synthetic(names: &[&str]) -> Vec<Vec<String>> {
    names
        .iter()
        .flat_map(|n| blocks(&data().join(format!("synthetic/{n}.psv"))))
        .map(|(_, lines)| lines)
        .collect()
}

fn population_bound_three_night() -> Vec<Vec<String>> {
    let truth: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(data().join("population_sky/truth.json")).unwrap(),
    )
    .unwrap();
    let bound: std::collections::HashSet<String> = truth["arcs"]["three_night"]["objects"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|o| o["unbound"] == false)
        .map(|o| o["id"].as_str().unwrap().to_string())
        .collect();
    blocks(&data().join("population_sky/three_night.psv"))
        .into_iter()
        .filter(|(id, _)| bound.contains(id))
        .map(|(_, lines)| lines)
        .collect()
}

fn population_two_night(n: usize) -> Vec<Vec<String>> {
    blocks(&data().join("population_sky/two_night.psv"))
        .into_iter()
        .take(n)
        .map(|(_, lines)| lines)
        .collect()
}

fn run(dir: &Path) {
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["fit", "--json", "--threads", "2", "--sites"])
        .arg(data().join("population_sky/sites.toml"))
        .arg(dir)
        .stdout(std::process::Stdio::null())
        .status()
        .unwrap();
    // Every file of every set is fitted (exit 1 would mean a failed fit or a refused file: a time for
    // less work than the set).
    assert!(status.success(), "{status:?}");
}

fn benches(c: &mut Criterion) {
    let sets: [(&str, Vec<Vec<String>>, usize); 5] = [
        (
            "three_night_synthetic",
            synthetic(&[
                "mainbelt_3n",
                "near_earth_3n",
                "comet_like_3n",
                "near_parabolic_bound_3n",
                "hyp_weak_3n",
            ]),
            500,
        ),
        (
            "three_night_population_bound",
            population_bound_three_night(),
            500,
        ),
        (
            "ten_night_planets",
            synthetic(&[
                "mainbelt_10n",
                "near_earth_10n",
                "comet_like_10n",
                "near_parabolic_bound_10n",
            ]),
            300,
        ),
        (
            "three_night_strongly_hyperbolic",
            synthetic(&["hyp_strong_3n"]),
            100,
        ),
        ("two_night_population", population_two_night(200), 200),
    ];
    let mut group = c.benchmark_group("batch_process");
    group.sample_size(10);
    for (name, sources, n) in sets {
        let dir = tempfile::tempdir().unwrap();
        write_set(dir.path(), &sources, n);
        let start = std::time::Instant::now();
        run(dir.path());
        eprintln!(
            "{name}: {n} files, first run {:.3} ms a file (wall, 2 threads, whole process)",
            start.elapsed().as_secs_f64() * 1e3 / n as f64
        );
        group.bench_function(format!("{name}_{n}_files_2_threads"), |b| {
            b.iter(|| run(dir.path()))
        });
    }
    group.finish();
}

criterion_group!(batch, benches);
criterion_main!(batch);
