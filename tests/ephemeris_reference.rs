//! Follow-up ephemerides against the reference truth: the synthetic objects' positions 1–10 days after
//! their last observation, computed by tests/reference/make_synthetic.py with DE421 + ERFA + scipy N-body,
//! must fall inside the predicted 3σ regions; over 300 noise realisations the linear 3σ ellipse must
//! contain the truth in 97–100 % of cases, and the sample region of one-night ranging must too.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::feed::sites::SiteTable;
use interloper::fitting::ephemeris::{EphemerisPoint, point};
use interloper::fitting::fit::{FitOptions, FitResult, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::constants::DEG;
use interloper::physics::observe::ObserverModel;
use interloper::physics::time::parse_utc;
use serde_json::Value;

/// Offset of the truth from the prediction (arcsec east, north) and whether it lies in the region.
fn inside(p: &EphemerisPoint, ra: f64, dec: f64) -> (bool, f64) {
    let de = ((ra - p.ra_deg + 540.0) % 360.0 - 180.0) * (p.dec_deg * DEG).cos() * 3600.0;
    let dn = (dec - p.dec_deg) * 3600.0;
    let (a, b, pa) = (
        p.unc_major_arcsec.unwrap(),
        p.unc_minor_arcsec.unwrap(),
        p.unc_pa_deg.unwrap() * DEG,
    );
    let (ue, un) = (pa.sin(), pa.cos());
    let along = de * ue + dn * un;
    let across = -de * un + dn * ue;
    let sep = (de * de + dn * dn).sqrt();
    let ok = if p.unc_from == "samples" {
        along.abs() <= a && across.abs() <= b
    } else {
        (along / a).powi(2) + (across / b).powi(2) <= 1.0
    };
    (ok, sep)
}

fn predict(fit: &FitResult, when: &Value, model: &ObserverModel) -> EphemerisPoint {
    let sites = SiteTable::builtin();
    let site = sites.get(when["stn"].as_str().unwrap()).unwrap().position;
    let inst = parse_utc(when["time"].as_str().unwrap()).unwrap();
    point(fit, &inst, String::new(), &site, model, None, 20.0).unwrap()
}

#[test]
fn positions_1_to_10_days_ahead_fall_inside_their_3_sigma_regions() {
    let model = ObserverModel::new();
    let (mut n, mut hits) = (0, 0);
    let mut worst_10n: f64 = 0.0;
    for t in util::synthetic_truth()
        .iter()
        .filter(|t| t.get("future").is_some() && t["nights"].as_u64() >= Some(3))
    {
        if t["object"] == "outlier_3n" || t["object"] == "bench_3n15" {
            continue;
        }
        let name = t["file"].as_str().unwrap();
        let tr = util::synthetic_file(name);
        let fit = fit_tracklet(&tr, &model, &FitOptions::default());
        for f in t["future"].as_array().unwrap() {
            let p = predict(&fit, f, &model);
            let (ok, sep) = inside(&p, f["ra"].as_f64().unwrap(), f["dec"].as_f64().unwrap());
            n += 1;
            hits += usize::from(ok);
            if t["nights"] == 10 {
                worst_10n = worst_10n.max(sep);
            }
        }
    }
    eprintln!(
        "{hits}/{n} future positions inside the 3σ region; worst 10-night miss distance {worst_10n:.2}″"
    );
    assert!(n >= 100);
    assert!(hits as f64 >= 0.95 * n as f64, "{hits}/{n}");
    assert!(worst_10n < 5.0, "10-night predictions off by {worst_10n}″");
}

fn coverage(object: &str, day: usize, runs: usize, method: &str) -> f64 {
    let t = util::synthetic_truth()
        .into_iter()
        .find(|t| t["object"] == object)
        .unwrap();
    let f = &t["future"][day - 1];
    let model = ObserverModel::new();
    let mut rng = SplitMix::new(77);
    let (mut n, mut hits) = (0, 0);
    for _ in 0..runs {
        let fit = fit_tracklet(
            &util::noisy(&t, &mut rng, 0.2),
            &model,
            &FitOptions::default(),
        );
        assert_eq!(fit.method, method);
        let p = predict(&fit, f, &model);
        let (ok, _) = inside(&p, f["ra"].as_f64().unwrap(), f["dec"].as_f64().unwrap());
        n += 1;
        hits += usize::from(ok);
    }
    hits as f64 / n as f64
}

#[test]
fn the_linear_3_sigma_ellipse_covers_the_truth_in_97_to_100_percent_of_300_realisations() {
    let c = coverage("comet_like_3n", 5, 300, "least-squares");
    eprintln!("linear 3σ coverage at +5 d: {:.1} %", 100.0 * c);
    assert!((0.97..=1.0).contains(&c), "{c}");
}

#[test]
fn the_one_night_sample_region_covers_the_truth_a_day_later_in_300_realisations() {
    let c = coverage("mainbelt_1n", 1, 300, "ranging");
    eprintln!(
        "one-night sample-region coverage at +1 d: {:.1} %",
        100.0 * c
    );
    assert!(c >= 0.9, "{c}");
}
