//! Shared helpers for the integration tests: reading the committed reference vectors, running the binary.
#![allow(dead_code)]

pub mod screens;

use std::collections::HashMap;
use std::path::PathBuf;

pub fn reference_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference/data")
        .join(name)
}

/// Every record of one file of the population-model sky (tests/reference/data/population_sky, written
/// by tests/reference/make_population_sky.py) with its own site table, fitted on two threads without
/// origin sheets.
pub fn fit_population_sky(file: &str) -> Vec<interloper::fitting::fit::FitResult> {
    use interloper::feed::tracklets::{Limits, merge, read_bytes};
    let mut sites = interloper::feed::sites::SiteTable::builtin();
    let text = std::fs::read_to_string(reference_path("population_sky/sites.toml")).unwrap();
    sites.load_toml("sites.toml", &text).unwrap();
    let bytes = std::fs::read(reference_path(&format!("population_sky/{file}"))).unwrap();
    let intake = read_bytes(file, &bytes, &sites, &Limits::default());
    assert!(intake.errors.is_empty(), "{:?}", intake.errors.first());
    let opts = interloper::fitting::fit::FitOptions {
        origin: None,
        ..interloper::fitting::fit::FitOptions::default()
    };
    interloper::fitting::batch::fit_all(merge(intake.tracklets), &opts, 2)
}

/// Every synthetic arc's truth (tests/reference/data/synthetic/truth.json, written by
/// tests/reference/make_synthetic.py).
pub fn synthetic_truth() -> Vec<serde_json::Value> {
    let text = std::fs::read_to_string(reference_path("synthetic/truth.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// The truth of the synthetic arc `object`.
pub fn synthetic(object: &str) -> serde_json::Value {
    synthetic_truth()
        .into_iter()
        .find(|t| t["object"] == object)
        .unwrap_or_else(|| panic!("no synthetic arc {object}"))
}

/// The one tracklet of a synthetic file as the reference wrote it (with its own noise), read as the
/// feed reads it; no line may be refused.
pub fn synthetic_file(file: &str) -> interloper::fitting::input::Tracklet {
    use interloper::feed::{sites::SiteTable, tracklets};
    let bytes = std::fs::read(reference_path(&format!("synthetic/{file}"))).unwrap();
    let intake = tracklets::read_bytes(
        file,
        &bytes,
        &SiteTable::builtin(),
        &tracklets::Limits::default(),
    );
    assert!(intake.errors.is_empty(), "{:?}", intake.errors);
    assert_eq!(intake.tracklets.len(), 1);
    intake.tracklets.into_iter().next().unwrap()
}

/// Rows of a reference CSV as maps from column name to the raw text.
pub fn read_csv(name: &str) -> Vec<HashMap<String, String>> {
    let text = std::fs::read_to_string(reference_path(name)).expect("reference file");
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .expect("header")
        .split(',')
        .map(str::to_owned)
        .collect();
    lines
        .filter(|l| !l.trim().is_empty())
        .map(|l| {
            header
                .iter()
                .cloned()
                .zip(l.split(',').map(str::to_owned))
                .collect()
        })
        .collect()
}

pub fn f(row: &HashMap<String, String>, key: &str) -> f64 {
    row[key]
        .parse()
        .unwrap_or_else(|_| panic!("{key} = {}", row[key]))
}

/// A tracklet from the reference's noiseless positions (`clean` in truth.json) plus our own Gaussian
/// noise of `sigma` arcsec per coordinate.
pub fn noisy(
    t: &serde_json::Value,
    rng: &mut interloper::fitting::ranging::SplitMix,
    sigma: f64,
) -> interloper::fitting::input::Tracklet {
    arc(t, rng, sigma, sigma)
}

/// The reference's noiseless positions with noise of `noise` arcsec per coordinate, reported with an
/// uncertainty of `stated` arcsec.
pub fn arc(
    t: &serde_json::Value,
    rng: &mut interloper::fitting::ranging::SplitMix,
    stated: f64,
    noise: f64,
) -> interloper::fitting::input::Tracklet {
    let sigma = noise;
    use interloper::fitting::input::{Observation, Tracklet};
    use interloper::physics::constants::DEG;
    let sites = interloper::feed::sites::SiteTable::builtin();
    let obs = t["clean"]
        .as_array()
        .expect("clean positions")
        .iter()
        .map(|c| {
            let dec = c["dec"].as_f64().expect("dec");
            let code = c["stn"].as_str().expect("stn").to_string();
            Observation {
                time: interloper::physics::time::parse_utc(c["time"].as_str().expect("time"))
                    .expect("utc"),
                ra: (c["ra"].as_f64().expect("ra")
                    + rng.normal() * sigma / 3600.0 / (dec * DEG).cos())
                    * DEG,
                dec: (dec + rng.normal() * sigma / 3600.0) * DEG,
                sigma_ra_arcsec: Some(stated),
                sigma_dec_arcsec: Some(stated),
                correlation: None,
                location: interloper::physics::observe::ObserverLocation::Ground(
                    sites.get(&code).expect("site").position,
                ),
                site_code: code,
                mag: None,
                band: None,
                origin: "synthetic".into(),
            }
        })
        .collect();
    Tracklet::new(
        t["object"].as_str().expect("object").into(),
        "synthetic".into(),
        obs,
    )
}

/// Arguments of a headless watch of one directory that prints JSON lines and stops after 2 s idle; the
/// state directory and the watched directory follow.
pub const WATCH_ONCE: [&str; 6] = [
    "watch",
    "--headless",
    "--json",
    "--stop-after-idle",
    "2",
    "--state",
];

/// Standard output of a headless watch of `dir` with state in `state` (see [`WATCH_ONCE`]).
pub fn watch_once(state: &std::path::Path, dir: &std::path::Path) -> String {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(WATCH_ONCE)
        .arg(state)
        .arg(dir)
        .output()
        .expect("the interloper binary runs");
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// Run the interloper binary with `args`: exit code, stdout, stderr.
pub fn run_bin(args: &[&str]) -> (Option<i32>, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(args)
        .output()
        .expect("the interloper binary runs");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// The sequence numbers a `journal-append` child acknowledges ("ack N" lines on its stdout), as they
/// come; the channel closes when the child's stdout does.
pub fn ack_stream(child: &mut std::process::Child) -> std::sync::mpsc::Receiver<u64> {
    use std::io::BufRead;
    let stdout = child.stdout.take().unwrap();
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        for line in std::io::BufReader::new(stdout)
            .lines()
            .map_while(Result::ok)
        {
            if let Some(seq) = line
                .strip_prefix("ack ")
                .and_then(|s| s.parse::<u64>().ok())
                && tx.send(seq).is_err()
            {
                return;
            }
        }
    });
    rx
}
