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

/// `fit --json` (with `extra` flags, as an observer runs it) of those bodies' positions alone.
fn fit_fast(arc: &str, file: &str, extra: &[&str]) -> Vec<(String, serde_json::Value)> {
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
    let mut args = vec!["fit", "--json", "--sites", sites.to_str().unwrap()];
    args.extend(extra);
    args.push(path.to_str().unwrap());
    let (code, out, err) = util::run_bin(&args);
    assert_eq!(code, Some(0), "{err}");
    out.lines()
        .map(|l| {
            let r: serde_json::Value = serde_json::from_str(l).unwrap();
            (r["object"].as_str().unwrap().to_string(), r)
        })
        .collect()
}

/// A number of a fit record, or a failure naming the object and the field.
fn number(id: &str, r: &serde_json::Value, path: &[&str]) -> f64 {
    path.iter()
        .fold(r, |v, k| &v[*k])
        .as_f64()
        .unwrap_or_else(|| panic!("{id}: no {}", path.join(".")))
}

#[test]
fn interstellar_bodies_faster_than_100_km_s_are_not_pinned_to_a_speed_cap() {
    let (mut fits, mut near_truth) = (0, 0);
    for (arc, file) in [
        ("two_night", "two_night.psv"),
        ("three_night", "three_night.psv"),
    ] {
        let fast = fast_bodies(arc);
        for (id, r) in fit_fast(arc, file, &[]) {
            let (e_true, v_true) = fast[&id];
            let (e, s) = (
                number(&id, &r, &["e_bary"]),
                number(&id, &r, &["e_bary_sigma"]),
            );
            let v = number(&id, &r, &["incoming", "v_inf_km_s"]);
            let sv = number(&id, &r, &["incoming", "v_inf_sigma_km_s"]);
            let (pull, pull_v) = ((e - e_true) / s, (v - v_true) / sv);
            eprintln!(
                "{id}: v∞ {v:.1} ± {sv:.1} km/s (truth {v_true:.1}), e_bary {e:.3} ± {s:.3} (truth {e_true:.3}), pulls e {pull:+.1} v∞ {pull_v:+.1}, {}",
                r["status"]
            );
            fits += 1;
            near_truth += usize::from(pull.abs() <= 5.0 && pull_v.abs() <= 5.0);
        }
    }
    eprintln!("{near_truth} of {fits} fast interstellar fits within 5σ of the true e and v∞");
    // 20 such bodies in the sky; with the cap at 100 km/s, 11 of them were more than 5σ off in e
    // (v∞ pinned just below the cap). One two-night arc of six positions allows e 2.5–6.5 only (grid
    // ranging agrees), its truth 11.9.
    assert!(fits >= 20, "{fits}");
    assert!(near_truth + 1 >= fits, "{near_truth} of {fits}");
}

#[test]
fn the_speed_cap_flag_reaches_one_night_arcs() {
    // Regression: one-night arcs kept the default cap whatever `--v-cap` said, so their P did not move.
    let capped = fit_fast("one_night", "one_night.psv", &["--v-cap", "50"]);
    let free = fit_fast("one_night", "one_night.psv", &[]);
    assert!(capped.len() >= 10, "{}", capped.len());
    assert_eq!(capped.len(), free.len());
    let mut moved = 0;
    for ((id, a), (_, b)) in capped.iter().zip(&free) {
        assert_eq!(number(id, a, &["ranging", "v_cap_km_s"]), 50.0, "{id}");
        let cap = interloper::fitting::ranging::DEFAULT_V_CAP_KM_S;
        assert_eq!(number(id, b, &["ranging", "v_cap_km_s"]), cap, "{id}");
        if let Some(v) = a["incoming"]["v_inf_km_s"].as_f64() {
            assert!(v <= 50.0 * 1.001, "{id}: v∞ {v} beyond the 50 km/s cap");
        }
        let (pa, pb) = (
            number(id, a, &["p_hyperbolic"]),
            number(id, b, &["p_hyperbolic"]),
        );
        eprintln!("{id}: P {pa:.4} under a 50 km/s cap, {pb:.4} under {cap}");
        moved += usize::from((pa - pb).abs() > 1e-6);
    }
    // Fast bodies' posteriors reach beyond 50 km/s: the cap must move P for some of them.
    assert!(moved > 0, "no P moved among {} fits", capped.len());
}
