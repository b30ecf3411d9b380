//! The fit against synthetic observations made outside the project: tests/reference/make_synthetic.py
//! integrates invented orbits with scipy DOP853 under the Sun, planets and Moon of JPL DE421, observes
//! them from the demo sites with ERFA site vectors and light time, and writes noisy ADES PSV files and the
//! truth. Noise draws for the calibration tests are made here, on the reference's noiseless positions.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, FitResult, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;

fn fit_file(name: &str) -> FitResult {
    fit_tracklet(
        &util::synthetic_file(name),
        &ObserverModel::new(),
        &FitOptions::default(),
    )
}

#[test]
fn three_and_ten_night_fits_recover_e_and_q_within_3_sigma() {
    for t in util::synthetic_truth()
        .iter()
        .filter(|t| t.get("e").is_some() && t["nights"].as_u64() >= Some(3))
    {
        if t["object"] == "outlier_3n" {
            continue;
        }
        let r = fit_file(t["file"].as_str().unwrap());
        assert_eq!(r.status, "ok", "{}: {:?}", r.object, r.poor_fit);
        let (e, se) = (r.e.unwrap(), r.e_sigma.unwrap());
        let (q, sq) = (r.q_au.unwrap(), r.q_sigma.unwrap());
        let (te, tq) = (t["e"].as_f64().unwrap(), t["q"].as_f64().unwrap());
        assert!(
            (e - te).abs() < 3.0 * se,
            "{}: e {e} ± {se}, truth {te}",
            r.object
        );
        assert!(
            (q - tq).abs() < 3.0 * sq,
            "{}: q {q} ± {sq}, truth {tq}",
            r.object
        );
    }
}

#[test]
fn score_sign_is_right_where_e_is_far_from_one_and_data_decide() {
    for t in util::synthetic_truth()
        .iter()
        .filter(|t| t.get("e").is_some())
    {
        let te = t["e_bary"].as_f64().unwrap();
        if (te - 1.0).abs() < 0.25 || t["object"] == "outlier_3n" {
            continue;
        }
        let r = fit_file(t["file"].as_str().unwrap());
        let prior_decides = r.prior_dominated;
        if t["nights"].as_u64() == Some(1) {
            // One night: the answer must be flagged as the prior's, or have the right sign.
            let z = r.z_hyperbolic.unwrap();
            assert!(
                prior_decides || (z > 0.0) == (te > 1.0),
                "{}: z {z}",
                r.object
            );
            continue;
        }
        let z = r.z_hyperbolic.unwrap();
        assert_eq!(z > 0.0, te > 1.0, "{}: z {z}, true e_bary {te}", r.object);
    }
}

#[test]
fn a_four_arcsecond_outlier_is_rejected_and_kept_visible() {
    let t = util::synthetic_truth()
        .into_iter()
        .find(|t| t["object"] == "outlier_3n")
        .unwrap();
    let r = fit_file("outlier_3n.psv");
    let k = t["outlier_index"].as_u64().unwrap() as usize;
    assert_eq!(r.n_used, r.n_obs - 1);
    assert!(!r.residuals[k].used, "the shifted point was kept");
    assert!(
        r.residuals[k].dec_arcsec.abs() > 3.0,
        "its residual is still shown"
    );
    // Usable; with the point set aside e is 0.26 ± 0.13 by least squares, within 3σ of zero, so the
    // answer comes from the range profile (e 0.15 ± 0.03 under the model, truth 0.15) and its status
    // says the positions alone allow e 0.09–0.47.
    assert_eq!(r.status, "undetermined");
}

#[test]
fn a_false_linkage_is_a_poor_fit_and_never_a_confident_candidate() {
    let mut results = vec![
        fit_file("false_link_3n.psv"),
        fit_file("mainbelt_3n.psv"),
        fit_file("hyp_strong_3n.psv"),
    ];
    assert_eq!(results[0].status, "poor-fit");
    assert!(!results[0].poor_fit.is_empty());
    interloper::fitting::fit::rank(&mut results);
    assert_eq!(results[0].object, "hyp_strong_3n");
    assert_eq!(results.last().unwrap().object, "false_link_3n");
}

#[test]
fn eccentricity_pulls_are_calibrated_over_300_noise_realisations() {
    let t = util::synthetic_truth()
        .into_iter()
        .find(|t| t["object"] == "comet_like_3n")
        .unwrap();
    let te = t["e"].as_f64().unwrap();
    let model = ObserverModel::new();
    let mut rng = SplitMix::new(300);
    let mut pulls = Vec::new();
    for _ in 0..300 {
        let tr = util::noisy(&t, &mut rng, 0.2);
        let r = fit_tracklet(&tr, &model, &FitOptions::default());
        if r.method != "least-squares" || r.e_sigma.is_none() {
            continue;
        }
        pulls.push((r.e.unwrap() - te) / r.e_sigma.unwrap());
    }
    assert!(pulls.len() >= 295, "{} usable fits", pulls.len());
    let n = pulls.len() as f64;
    let mean = pulls.iter().sum::<f64>() / n;
    let sd = (pulls.iter().map(|p| (p - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    eprintln!("pull mean {mean:.3}, sd {sd:.3} over {} fits", pulls.len());
    assert!(mean.abs() <= 0.15, "mean {mean}");
    assert!((0.85..=1.15).contains(&sd), "sd {sd}");
}

#[test]
fn one_night_main_belt_tracklets_stay_low_in_p_hyperbolic() {
    let t = util::synthetic_truth()
        .into_iter()
        .find(|t| t["object"] == "mainbelt_1n")
        .unwrap();
    let model = ObserverModel::new();
    let mut rng = SplitMix::new(1);
    let mut ps = Vec::new();
    for _ in 0..40 {
        let r = fit_tracklet(
            &util::noisy(&t, &mut rng, 0.2),
            &model,
            &FitOptions::default(),
        );
        assert_eq!(r.method, "ranging");
        assert_eq!(r.probability_from, "short-arc-quadrature");
        ps.push(r.p_hyperbolic.unwrap());
    }
    let mean = ps.iter().sum::<f64>() / ps.len() as f64;
    let max = ps.iter().cloned().fold(0.0, f64::max);
    eprintln!("one-night main-belt P(e>1): mean {mean:.3}, max {max:.3}");
    assert!(mean < 0.1 && max < 0.25, "mean {mean} max {max}");
}

#[test]
fn one_night_answers_are_reproducible() {
    let a = fit_file("hyp_strong_1n.psv");
    let b = fit_file("hyp_strong_1n.psv");
    assert_eq!(a.p_hyperbolic, b.p_hyperbolic);
    assert_eq!(a.e, b.e);
    assert!(a.ranging.is_some());
}
