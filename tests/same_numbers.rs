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

/// Every field of `fit`'s records equals the watcher's (which adds only when a record arrived and
/// its kind).
fn assert_same(a: &HashMap<String, serde_json::Value>, b: &HashMap<String, serde_json::Value>) {
    assert_eq!(a.len(), b.len());
    for (obj, ra) in a {
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
fn an_arc_answered_by_grid_ranging_has_the_same_numbers_in_fit_and_the_watcher() {
    // Regression: `fit` seeded grid ranging's jitter with its own default seed, the watcher and the
    // console with another, so a two-position arc got two answers. Two positions of the synthetic
    // weakly hyperbolic two-night arc (tests/reference/make_synthetic.py), one a night.
    let src = std::fs::read_to_string(util::reference_path("synthetic/hyp_weak_2n.psv")).unwrap();
    let lines: Vec<&str> = src.lines().collect();
    let data: Vec<&str> = lines
        .iter()
        .copied()
        .filter(|l| l.starts_with("hyp_weak_2n|"))
        .collect();
    let mut text: String = lines
        .iter()
        .take_while(|l| !l.starts_with("hyp_weak_2n|"))
        .map(|l| format!("{l}\n"))
        .collect();
    for l in [data[0], data[data.len() - 1]] {
        text.push_str(&format!("{l}\n"));
    }
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("two_positions.psv"), text).unwrap();
    let state = tempfile::tempdir().unwrap();
    let fit = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["fit", "--json"])
        .arg(dir.path())
        .output()
        .unwrap();
    let (a, b) = (
        records(&fit.stdout),
        records(util::watch_once(state.path(), dir.path()).as_bytes()),
    );
    assert_eq!(a.len(), 1, "{}", String::from_utf8_lossy(&fit.stderr));
    let r = a.values().next().unwrap();
    assert_eq!(r["probability_from"], "systematic-ranging", "{r}");
    assert_same(&a, &b);
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
    assert_same(&a, &b);
}

/// The demo night's records from `fit --json`.
fn demo_records() -> HashMap<String, serde_json::Value> {
    let feed = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["fit", "--json"])
        .arg(&feed)
        .output()
        .unwrap();
    records(&out.stdout)
}

#[test]
fn each_element_has_one_sigma_in_the_record_and_its_elements() {
    let recs = demo_records();
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

#[test]
fn the_heliocentric_and_barycentric_lines_describe_one_orbit_with_one_spread() {
    // Sampled answers once showed e from their median sample beside e_bary, its σ, 1/a and the arrival
    // direction from the least-squares minimum (the demo's qk5t8yn: e 1.003 beside e_bary 1.918 ±
    // 1.55 and a v∞ for an answer with P(unbound) 3e-5), and one-night answers the median e in the
    // table beside the most probable node's e in the orbit pane (qk6j1uv: 0.999 and 1.002).
    let recs = demo_records();
    let mut checked = 0;
    for (obj, r) in recs.iter().filter(|(_, r)| r["p_hyperbolic"].is_number()) {
        let b = &r["barycentric"];
        assert_eq!(r["e"], r["elements"]["e"], "{obj}");
        assert_eq!(r["e_bary"], b["e"], "{obj}");
        assert_eq!(r["e_bary_sigma"], b["sigma"]["e"], "{obj}");
        assert_eq!(r["inv_a_bary"], b["inv_a_per_au"], "{obj}");
        // One state seen from the Sun and from the barycentre: the Sun moves about the barycentre at
        // about 13 m/s and sits within 0.01 AU of it, which changes e by far less than this for
        // objects a few AU away (the demo's differ by at most 0.005).
        let (e, eb) = (r["e"].as_f64().unwrap(), r["e_bary"].as_f64().unwrap());
        assert!((e - eb).abs() < 0.02, "{obj}: e {e} against e_bary {eb}");
        let (s, sb) = (
            r["e_sigma"].as_f64().unwrap(),
            r["e_bary_sigma"].as_f64().unwrap(),
        );
        assert!((s / sb - 1.0).abs() < 0.1, "{obj}: σ {s} against {sb}");
        assert_eq!(r["incoming"].is_object(), eb > 1.0, "{obj}: e_bary {eb}");
        checked += 1;
    }
    assert!(checked >= 10, "{checked}");
}

#[test]
fn every_answer_with_a_sigma_of_e_has_nested_intervals_of_e_about_its_e() {
    // One-night, range-profile, sampled, drawn and linear answers of the demo night alike.
    let recs = demo_records();
    let mut checked = 0;
    for (obj, r) in recs.iter().filter(|(_, r)| r["e_sigma"].is_number()) {
        let pair = |k: &str| -> [f64; 2] {
            let a = r[k].as_array().unwrap_or_else(|| panic!("{obj}: no {k}"));
            [a[0].as_f64().unwrap(), a[1].as_f64().unwrap()]
        };
        let ([a, b], [c, d]) = (pair("e_interval_68"), pair("e_interval_95"));
        let e = r["e"].as_f64().unwrap();
        assert!(c <= a && a <= b && b <= d, "{obj}: {c} {a} {b} {d}");
        assert!((c..=d).contains(&e), "{obj}: e {e} outside {c}–{d}");
        checked += 1;
    }
    assert!(checked >= 10, "{checked}");
}
