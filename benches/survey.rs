//! A survey night's mix through `fit --json`: about 70 % one-night tracklets, 25 % three-night, 4 %
//! long arcs (ten nights) and 1 % false linkages, made from the population-model sky and the
//! synthetic long arcs with fresh ids. Criterion times 2,000 of them in process on all cores; then the
//! whole 50,000-tracklet night goes through the real binary once, and its wall time, throughput and
//! peak resident memory are printed.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly
#![allow(unsafe_code)] // getrusage for the peak memory of the child processes

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::FitOptions;
use std::path::{Path, PathBuf};
use std::time::Instant;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/data")
}

/// Object blocks of a PSV file: (id, data lines).
fn blocks(path: &Path) -> Vec<(String, Vec<String>)> {
    let text = std::fs::read_to_string(path).expect("reference file");
    let mut out: Vec<(String, Vec<String>)> = Vec::new();
    for l in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("trkSub"))
    {
        let id = l.split('|').next().unwrap_or("").to_string();
        match out.last_mut() {
            Some((last, lines)) if *last == id => lines.push(l.to_string()),
            _ => out.push((id, vec![l.to_string()])),
        }
    }
    out
}

/// The mix as PSV files of at most `per_file` tracklets, written under `dir`; returns the count.
fn write_mix(dir: &Path, total: usize, per_file: usize) -> usize {
    let one = blocks(&root().join("population_sky/one_night.psv"));
    let three = blocks(&root().join("population_sky/three_night.psv"));
    // False linkages join two objects first seen the same night, as a linking step would.
    let two = blocks(&root().join("population_sky/two_night.psv"));
    let date = |b: &(String, Vec<String>)| {
        b.1.first()
            .and_then(|l| l.split('|').nth(3))
            .map_or(String::new(), |t| t.chars().take(10).collect())
    };
    let pairs: Vec<Vec<String>> = two
        .iter()
        .enumerate()
        .filter_map(|(k, a)| {
            two.iter()
                .skip(k + 1)
                .find(|b| date(b) == date(a))
                .map(|b| a.1.iter().chain(b.1.iter()).cloned().collect())
        })
        .collect();
    let long: Vec<(String, Vec<String>)> = std::fs::read_dir(root().join("synthetic"))
        .expect("synthetic dir")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.to_string_lossy().ends_with("_10n.psv"))
        .flat_map(|p| blocks(&p))
        .collect();
    let header = "# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|astCat|mag|band\n";
    let mut files: Vec<String> = Vec::new();
    let mut current = String::from(header);
    let mut in_file = 0;
    for k in 0..total {
        let id = format!("mx{k:06}");
        let lines: Vec<String> = match k % 100 {
            0..=69 => one[k % one.len()].1.clone(),
            70..=94 => three[k % three.len()].1.clone(),
            95..=98 => long[k % long.len()].1.clone(),
            _ => pairs[k % pairs.len()].clone(),
        };
        for l in lines {
            let rest = l.split_once('|').map_or("", |(_, r)| r);
            current.push_str(&format!("{id}|{rest}\n"));
        }
        in_file += 1;
        if in_file == per_file {
            files.push(std::mem::replace(&mut current, String::from(header)));
            in_file = 0;
        }
    }
    if in_file > 0 {
        files.push(current);
    }
    for (k, f) in files.iter().enumerate() {
        std::fs::write(dir.join(format!("night_{k:03}.psv")), f).expect("write mix");
    }
    total
}

fn sites() -> (SiteTable, PathBuf) {
    let p = root().join("population_sky/sites.toml");
    let mut t = SiteTable::builtin();
    t.load_toml("sites.toml", &std::fs::read_to_string(&p).expect("sites"))
        .expect("sites parse");
    (t, p)
}

/// Peak resident memory of finished children (KiB), from getrusage.
fn children_max_rss_kib() -> i64 {
    let mut u: libc::rusage = unsafe { std::mem::zeroed() };
    // SAFETY: getrusage writes into the zeroed struct we own.
    unsafe { libc::getrusage(libc::RUSAGE_CHILDREN, &mut u) };
    u.ru_maxrss
}

fn benches(c: &mut Criterion) {
    let (sites, sites_path) = sites();
    let small = tempfile::tempdir().expect("tempdir");
    write_mix(small.path(), 2000, 1000);
    let bytes: Vec<(String, Vec<u8>)> = std::fs::read_dir(small.path())
        .expect("mix dir")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .map(|p| (p.display().to_string(), std::fs::read(&p).expect("read")))
        .collect();
    let opts = FitOptions::default();
    let mut group = c.benchmark_group("survey_mix");
    group.sample_size(10);
    group.throughput(Throughput::Elements(2000));
    group.bench_function("fit_json_2000_tracklet_mix_all_cores", |b| {
        b.iter(|| {
            let tracklets: Vec<_> = bytes
                .iter()
                .flat_map(|(n, b)| read_bytes(n, b, &sites, &Limits::default()).tracklets)
                .collect();
            let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
            fit_all(tracklets, &opts, threads)
                .iter()
                .map(|r| serde_json::to_string(r).map_or(0, |s| s.len()))
                .sum::<usize>()
        })
    });
    group.finish();

    let big = tempfile::tempdir().expect("tempdir");
    let n = write_mix(big.path(), 50_000, 2_500);
    let start = Instant::now();
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["fit", "--json", "--sites"])
        .arg(&sites_path)
        .arg(big.path())
        .stdout(std::process::Stdio::null())
        .status()
        .expect("run interloper fit");
    let secs = start.elapsed().as_secs_f64();
    eprintln!(
        "survey night: {n} tracklets through `fit --json` in {secs:.1} s = {:.0} tracklets/s, \
         peak resident memory {:.0} MiB (exit {:?})",
        n as f64 / secs,
        children_max_rss_kib() as f64 / 1024.0,
        status.code()
    );
}

criterion_group!(survey, benches);
criterion_main!(survey);
