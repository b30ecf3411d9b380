//! Interstellar bodies faster than 100 km/s at infinity, from the population-model sky
//! (tests/reference/make_population_sky.py: orbits drawn from the built-in model, integrated with scipy
//! on JPL DE421 and observed with ERFA site vectors). The built-in model's thick disc and halo put
//! several per cent of the interstellar bodies it brings near the Sun above 100 km/s; the fits' speed
//! cap once stood at 100 km/s, below the model's own support, and their posterior piled against it:
//! e 15.06 ± 0.18 for a true 37.5, status ok, on a two-night arc (regression).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use std::collections::HashMap;

/// The fast interstellar bodies of one arc set: id → (true barycentric e, true v∞ km/s).
fn fast_bodies(arc: &str) -> HashMap<String, (f64, f64)> {
    let text = std::fs::read_to_string(util::reference_path("population_sky/truth.json")).unwrap();
    let truth: serde_json::Value = serde_json::from_str(&text).unwrap();
    truth["arcs"][arc]["objects"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|o| {
            let v = o["v_inf_km_s"].as_f64()?;
            (v > 100.0).then(|| {
                (
                    o["id"].as_str().unwrap().to_string(),
                    (o["e_bary"].as_f64().unwrap(), v),
                )
            })
        })
        .collect()
}

/// `fit --json` (default options, as an observer runs it) of those bodies' positions alone.
fn fit_fast(arc: &str, file: &str) -> Vec<(String, serde_json::Value)> {
    let fast = fast_bodies(arc);
    let text =
        std::fs::read_to_string(util::reference_path(&format!("population_sky/{file}"))).unwrap();
    let kept: String = text
        .lines()
        .filter(|l| {
            l.starts_with('#')
                || l.starts_with("trkSub")
                || fast.contains_key(l.split('|').next().unwrap_or(""))
        })
        .map(|l| format!("{l}\n"))
        .collect();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join(file);
    std::fs::write(&path, kept).unwrap();
    let sites = util::reference_path("population_sky/sites.toml");
    let (code, out, err) = util::run_bin(&[
        "fit",
        "--json",
        "--sites",
        sites.to_str().unwrap(),
        path.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(0), "{err}");
    out.lines()
        .map(|l| {
            let r: serde_json::Value = serde_json::from_str(l).unwrap();
            (r["object"].as_str().unwrap().to_string(), r)
        })
        .collect()
}

#[test]
fn interstellar_bodies_faster_than_100_km_s_are_not_pinned_to_a_speed_cap() {
    let cap = interloper::fitting::ranging::DEFAULT_V_CAP_KM_S;
    let (mut fits, mut near_truth) = (0, 0);
    for (arc, file) in [
        ("two_night", "two_night.psv"),
        ("three_night", "three_night.psv"),
    ] {
        let fast = fast_bodies(arc);
        for (id, r) in fit_fast(arc, file) {
            let (e_true, v_true) = fast[&id];
            let (e, s) = (
                r["e_bary"].as_f64().unwrap(),
                r["e_bary_sigma"].as_f64().unwrap(),
            );
            let v = r["incoming"]["v_inf_km_s"].as_f64().unwrap();
            let pull = (e - e_true) / s;
            eprintln!(
                "{id}: v∞ {v:.1} km/s (truth {v_true:.1}), e_bary {e:.3} ± {s:.3} (truth {e_true:.3}), pull {pull:+.1}, {}",
                r["status"]
            );
            // The answer stays well inside the cap: the posterior is the model's, not the cap's.
            assert!(v < 0.6 * cap, "{id}: v∞ {v} against the cap {cap}");
            fits += 1;
            near_truth += usize::from(pull.abs() <= 5.0);
        }
    }
    eprintln!("{near_truth} of {fits} fast interstellar fits within 5σ of the true e");
    // 20 such bodies in the sky; with the cap at 100 km/s, 11 of them were more than 5σ off. One
    // two-night arc of six positions allows e 2.5–6.5 only (ranging agrees), its truth 11.9.
    assert!(fits >= 20, "{fits}");
    assert!(near_truth + 1 >= fits, "{near_truth} of {fits}");
}
