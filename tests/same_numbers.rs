//! The same files give the same numbers through `fit --json` and through the headless watcher: every
//! field of every object's record (probability, odds, elements and their σ, alternatives, residuals, …).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use std::collections::HashMap;
use std::process::Command;

fn records(out: &[u8]) -> HashMap<String, serde_json::Value> {
    // The watcher refits as files arrive; the last record of each object is the one that stands.
    let mut m = HashMap::new();
    for line in String::from_utf8_lossy(out).lines() {
        let Ok(v) = serde_json::from_str::<serde_json::Value>(line) else {
            continue;
        };
        if v.get("kind").is_some_and(|k| k != "fit") {
            continue;
        }
        if let Some(o) = v["object"].as_str() {
            m.insert(o.to_string(), v);
        }
    }
    m
}

#[test]
fn fit_and_the_headless_watcher_report_identical_numbers() {
    let feed = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let dir = tempfile::tempdir().unwrap();
    for e in std::fs::read_dir(&feed).unwrap() {
        let p = e.unwrap().path();
        std::fs::copy(&p, dir.path().join(p.file_name().unwrap())).unwrap();
    }
    let state = tempfile::tempdir().unwrap();
    let exe = env!("CARGO_BIN_EXE_interloper");
    let fit = Command::new(exe)
        .args(["fit", "--json"])
        .arg(dir.path())
        .output()
        .unwrap();
    let watch = util::watch_once(state.path(), dir.path());
    let (a, b) = (records(&fit.stdout), records(watch.as_bytes()));
    assert!(a.len() >= 10, "{} fits", a.len());
    assert_eq!(a.len(), b.len());
    // Every field of every record; the watcher adds only when the record arrived and its kind.
    for (obj, ra) in &a {
        let rb = &b[obj];
        for (k, va) in ra.as_object().unwrap() {
            assert_eq!(va, &rb[k], "{obj}: {k} differs between fit and watch");
        }
        for k in rb.as_object().unwrap().keys() {
            assert!(
                ra.get(k).is_some() || ["arrived_utc", "kind"].contains(&k.as_str()),
                "{obj}: watch has {k}, fit has not"
            );
        }
    }
}

#[test]
fn each_element_has_one_sigma_in_the_record_and_its_elements() {
    let feed = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["fit", "--json"])
        .arg(&feed)
        .output()
        .unwrap();
    let recs = records(&out.stdout);
    assert!(recs.len() >= 10);
    for (obj, r) in &recs {
        let s = &r["elements"]["sigma"];
        for (top, inner) in [("e_sigma", "e"), ("q_sigma", "q"), ("i_sigma", "i")] {
            assert_eq!(
                r[top], s[inner],
                "{obj}: {top} and elements.sigma.{inner} differ"
            );
        }
    }
}
