//! `interloper plan` and the new `ephem` options from the outside: usage mistakes exit 2, the JSON plan
//! carries its documented fields, and `ephem --json` keeps its old fields beside the sky conditions.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use serde_json::Value;

mod util;

use util::run_bin as run;

fn synthetic(name: &str) -> String {
    format!(
        "{}/tests/reference/data/synthetic/{name}",
        env!("CARGO_MANIFEST_DIR")
    )
}

#[test]
fn plan_usage_mistakes_exit_2() {
    let f = synthetic("comet_like_2n.psv");
    for args in [
        vec!["plan", "--site", "TV9", "--night", "2026-11-28", &f],
        vec!["plan", "--site", "TV2", &f],
        vec!["plan", "--site", "TV2", "--night", "2026-13-01", &f],
        vec![
            "plan",
            "--site",
            "TV2",
            "--night",
            "2026-11-28",
            "--twilight",
            "dusk",
            &f,
        ],
        vec![
            "plan",
            "--site",
            "TV2",
            "--night",
            "2026-11-28",
            "--step",
            "5h",
            &f,
        ],
    ] {
        let (code, _, err) = run(&args);
        assert_eq!(code, Some(2), "{args:?}: {err}");
        assert!(!err.is_empty());
    }
}

#[test]
fn the_json_plan_has_its_documented_fields() {
    let f = synthetic("comet_like_2n.psv");
    let g = synthetic("mainbelt_1n.psv");
    let (code, out, err) = run(&[
        "plan",
        "--site",
        "TV2",
        "--night",
        "2026-11-28",
        "--json",
        &f,
        &g,
    ]);
    assert_eq!(code, Some(0), "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["twilight"], "nautical");
    for k in [
        "site",
        "dark_from_utc",
        "dark_to_utc",
        "dark_hours",
        "min_alt_deg",
        "fov_deg",
        "limiting_mag",
    ] {
        assert!(v["sites"][0].get(k).is_some(), "sites.{k}");
    }
    let items = v["items"].as_array().unwrap();
    assert_eq!(items.len() + v["unplanned"].as_array().unwrap().len(), 2);
    for i in items {
        for k in [
            "object",
            "site",
            "start_utc",
            "end_utc",
            "duration_min",
            "ra_deg",
            "dec_deg",
            "ra_hms",
            "dec_dms",
            "rate_arcsec_min",
            "v_mag",
            "alt_deg",
            "airmass",
            "moon_sep_deg",
            "moon_illum",
            "sun_alt_deg",
            "elong_deg",
            "region_major_arcsec",
            "region_minor_arcsec",
            "fov_deg",
            "region_exceeds_fov",
            "pointings",
            "p_hyperbolic",
            "expected_change",
            "inv_a_sigma_now",
            "inv_a_sigma_after",
            "priority",
            "cautions",
        ] {
            assert!(i.get(k).is_some(), "items.{k}");
        }
        assert!(i["alt_deg"].as_f64().unwrap() >= 20.0);
    }
}

#[test]
fn ephem_json_keeps_its_fields_and_adds_the_sky() {
    let f = synthetic("comet_like_2n.psv");
    let (code, out, err) = run(&[
        "ephem",
        "--site",
        "TV2",
        "--from",
        "2026-11-29T00:00:00Z",
        "--to",
        "2026-11-29T12:00:00Z",
        "--step",
        "6h",
        "--json",
        "--exposure",
        "120",
        "--twilight",
        "astronomical",
        &f,
    ]);
    assert_eq!(code, Some(0), "{err}");
    for line in out.lines() {
        let v: Value = serde_json::from_str(line).unwrap();
        for k in [
            "object",
            "time_utc",
            "ra_deg",
            "dec_deg",
            "ra_rate_arcsec_min",
            "dec_rate_arcsec_min",
            "alt_deg",
            "elong_deg",
            "v_mag",
            "unc_major_arcsec",
            "observable",
            "sun_caution",
            "moon_sep_deg",
            "moon_illum",
            "airmass",
            "ra_hms",
            "dec_dms",
            "trail_arcsec",
            "limiting_mag",
            "bright_enough",
        ] {
            assert!(v.get(k).is_some(), "{k}");
        }
        let alt = v["alt_deg"].as_f64().unwrap();
        assert_eq!(v["airmass"].is_null(), alt <= 0.0, "{alt}");
        let rate = v["ra_rate_arcsec_min"]
            .as_f64()
            .unwrap()
            .hypot(v["dec_rate_arcsec_min"].as_f64().unwrap());
        assert!((v["trail_arcsec"].as_f64().unwrap() - 2.0 * rate).abs() < 1e-9);
        assert_eq!(v["twilight"], "astronomical");
        if v["observable"].as_bool().unwrap() {
            assert!(v["sun_alt_deg"].as_f64().unwrap() < -18.0);
        }
    }
    let (code, _, _) = run(&[
        "ephem",
        "--site",
        "TV2",
        "--from",
        "2026-11-29T00:00:00Z",
        "--to",
        "2026-11-29T12:00:00Z",
        "--exposure",
        "-5",
        &f,
    ]);
    assert_eq!(code, Some(2));
}

/// Regressions found by an audit of the plan: a night the Earth's ephemeris does not cover was "no
/// dark sky" with exit 0; positions no orbit fits were scheduled at a position of the misfit; a visit
/// took a whole grid step whatever `--visit` said; and "no free time" was given where nothing was
/// scheduled at all (the visible stretch was shorter than the visit).
#[test]
fn plan_refuses_uncomputable_nights_and_leaves_out_what_it_cannot_honestly_schedule() {
    let demo = format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"));
    let (code, _, err) = run(&["plan", "--site", "TV1", "--night", "2100-06-01", &demo]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("cannot be computed"), "{err}");

    let plan = |extra: &[&str]| {
        let mut args = vec!["plan", "--site", "TV1", "--night", "2027-02-26", "--json"];
        args.extend_from_slice(extra);
        args.push(&demo);
        let (_, out, err) = run(&args);
        serde_json::from_str::<Value>(&out).unwrap_or_else(|e| panic!("{e}: {err}"))
    };
    let reason = |p: &Value, object: &str| {
        p["unplanned"]
            .as_array()
            .unwrap()
            .iter()
            .find(|u| u["object"] == object)
            .map(|u| u["reason"].as_str().unwrap().to_string())
    };
    let p = plan(&["--step", "59m", "--visit", "1m"]);
    // The demo's false linkage: poor fit, P withheld.
    assert_eq!(reason(&p, "qk9h6tx").as_deref(), Some("no-orbit"), "{p}");
    let items = p["items"].as_array().unwrap();
    assert!(!items.is_empty());
    for i in items {
        assert_ne!(i["object"], "qk9h6tx");
        let want = i["pointings"].as_f64().unwrap() * 1.0;
        let got = i["duration_min"].as_f64().unwrap();
        assert!((got - want).abs() < 1e-6, "{i}");
    }
    let p = plan(&["--step", "1m", "--visit", "12h"]);
    assert!(p["items"].as_array().unwrap().is_empty());
    for u in p["unplanned"].as_array().unwrap() {
        assert_ne!(u["reason"], "no-free-time", "nothing was scheduled: {u}");
    }
    assert_eq!(reason(&p, "qka2e7f").as_deref(), Some("too-brief"), "{p}");
}

/// Regression: the plan drew a range-profile fit's 3σ region from its least-squares covariance
/// (28,600″ by 1,170″, 16 pointings) where the ephemeris draws it from the sampled orbits (9,760″ by
/// 2,250″). Both now come from the samples, the same way.
#[test]
fn the_plan_and_the_ephemeris_draw_the_same_uncertainty_region() {
    let demo = format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"));
    let (_, out, err) = run(&[
        "plan",
        "--site",
        "TV1",
        "--night",
        "2027-01-01",
        "--json",
        "--object",
        "qk4d2pe",
        &demo,
    ]);
    let plan: Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {err}"));
    let item = &plan["items"][0];
    let start = item["start_utc"].as_str().unwrap();
    let (_, out, err) = run(&[
        "ephem", "--site", "TV1", "--from", start, "--to", start, "--step", "1m", "--json",
        "--object", "qk4d2pe", &demo,
    ]);
    let row: Value = out
        .lines()
        .find_map(|l| serde_json::from_str(l).ok())
        .unwrap_or_else(|| panic!("{out}{err}"));
    let row = if row.is_array() { row[0].clone() } else { row };
    assert_eq!(row["unc_from"], "samples", "{row}");
    for (p, e) in [
        ("region_major_arcsec", "unc_major_arcsec"),
        ("region_minor_arcsec", "unc_minor_arcsec"),
    ] {
        let (p, e) = (item[p].as_f64().unwrap(), row[e].as_f64().unwrap());
        assert!(
            (p / e - 1.0).abs() < 0.25,
            "plan {p}″ against the ephemeris's {e}″"
        );
    }
}
