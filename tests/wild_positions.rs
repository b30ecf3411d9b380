//! One wild position in an otherwise clean arc (the synthetic reference arcs of
//! tests/reference/make_synthetic.py: scipy DOP853 on JPL DE421, ERFA site vectors, light time; the
//! reference's own noise). Three ways it once went wrong: a position tens of degrees off (a mistyped
//! RA) kept every correction from converging and the range profile answered `ok` far from the truth (a
//! ten-night arc 700σ off); a position 10″ (50σ) off lifted χ²/dof above 100, where rejection was not
//! tried, and the record was a poor fit with no probability; and once rejected, the answer stayed in
//! the wrong minimum the wild position had chosen (e 18 for a true 2.4). Each is now answered as the
//! arc without that line is.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::input::Tracklet;
use interloper::physics::observe::ObserverModel;

const DEG: f64 = std::f64::consts::PI / 180.0;

fn with_wild(file: &str, k: usize, d_ra_deg: f64, d_dec_deg: f64) -> (Tracklet, Tracklet) {
    let tr = util::synthetic_file(file);
    let mut wild = tr.clone();
    wild.obs[k].ra += d_ra_deg * DEG;
    wild.obs[k].dec += d_dec_deg * DEG;
    let mut without = tr.obs.clone();
    without.remove(k);
    let without = Tracklet::new(tr.object.clone(), tr.source.clone(), without);
    (wild, without)
}

#[test]
fn one_wild_position_is_set_aside_and_the_answer_is_the_arcs_without_it() {
    answered_as_without(&[
        ("hyp_strong_3n.psv", 0, -281.0, 0.0),
        ("hyp_strong_10n.psv", 0, 30.0, 0.0),
        ("hyp_strong_3n.psv", 5, 0.0, 10.0 / 3600.0),
        ("near_earth_3n.psv", 7, 0.0, -2.0),
        ("mainbelt_10n.psv", 20, 1.0, 1.0),
        // The first position of the first night: its night-mates depart from the arc's steady rate by
        // a minute of arc (the screen once set aside none of them, and then least squares the wrong one).
        ("hyp_weak_3n.psv", 0, 30.0, 0.0),
        ("near_earth_3n.psv", 0, 30.0, 0.0),
        ("comet_like_3n.psv", 5, 1.0, 0.0),
    ]);
}

/// Wild positions the screen before fitting cannot tell from the path's curvature, found by moving
/// each of the first, middle and last positions of the eighteen synthetic two-, three- and ten-night
/// arcs by 2″–3° in RA or Dec (a probe not committed: all 864 now `ok` within 3σ of the arc without the
/// line, with that position alone set aside; before, 4 were `ok` 5σ or more off and 11 poor). Before the
/// second look: a degree on the first position of a 21-day arc kept every correction from converging
/// (the range profile answered `ok`, e 0.83 for 0.70, 0.82 for 0.38, 1.44 for 1.08; a poor fit at e 22
/// for 2.4); 72″ left the strongly hyperbolic three-night arc `ok` at e 18.2 for 2.39 once it was
/// rejected; 72″ on five other three-night arcs gave poor fits with no position set aside; and on
/// two-night arcs 36″–0.5° left poor fits (χ²/dof 3–250) with the position rejected but its pull kept.
#[test]
fn a_wild_position_within_the_paths_curvature_is_found_by_a_second_look() {
    let d = 0.02;
    let cases = [
        ("comet_like_10n.psv", 0, 1.0, 0.0),
        ("near_earth_10n.psv", 0, 1.0, 0.0),
        ("hyp_weak_10n.psv", 0, 1.0, 0.0),
        ("hyp_strong_10n.psv", 0, 1.0, 0.0),
        ("hyp_strong_3n.psv", 0, d, 0.0),
        ("hyp_strong_3n.psv", 0, 5.0 * d, 0.0),
        ("near_earth_3n.psv", 0, 0.0, d),
        ("near_earth_3n.psv", 11, d, 0.0),
        ("hyp_weak_3n.psv", 6, 0.0, d),
        ("near_parabolic_bound_3n.psv", 0, d, 0.0),
        ("near_parabolic_bound_3n.psv", 6, d, 0.0),
        ("near_earth_2n.psv", 4, 0.0, d),
        ("near_earth_2n.psv", 7, d, 0.0),
        ("mainbelt_2n.psv", 7, d / 2.0, 0.0),
        ("hyp_weak_2n.psv", 7, 0.0, 5.0 * d),
    ];
    // The screen before fitting passes every one of them: what finds them is the second look.
    for &(file, k, d_ra, d_dec) in &cases {
        let (wild, _) = with_wild(file, k, d_ra, d_dec);
        assert!(
            interloper::fitting::gross::gross_outliers(&wild).is_empty(),
            "{file} {k}"
        );
    }
    answered_as_without(&cases);
}

/// Each (file, position, ΔRA°, ΔDec°) is answered with that position alone set aside, and its status,
/// e and the probability's path as the arc without it.
fn answered_as_without(cases: &[(&str, usize, f64, f64)]) {
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    for &(file, k, d_ra, d_dec) in cases {
        let (wild, without) = with_wild(file, k, d_ra, d_dec);
        let r = fit_tracklet(&wild, &model, &opts);
        let clean = fit_tracklet(&without, &model, &opts);
        let what = format!("{file} position {k} moved {d_ra}° in RA, {d_dec}° in Dec");
        // `ok`, or `undetermined` as the arc without the line is (a two-night main-belt arc).
        assert!(r.status.usable(), "{what}: {:?}", r.poor_fit);
        assert_eq!(
            r.status, clean.status,
            "{what}: {:?} {:?}",
            r.poor_fit, r.distrust_linear
        );
        assert_eq!(
            (r.n_obs, r.n_used),
            (wild.obs.len(), wild.obs.len() - 1),
            "{what}"
        );
        assert_eq!(r.residuals.len(), wild.obs.len(), "{what}");
        let set_aside: Vec<usize> = (0..r.residuals.len())
            .filter(|&i| !r.residuals[i].used)
            .collect();
        assert_eq!(set_aside, vec![k], "{what}");
        let off = r.residuals[k].ra_arcsec.hypot(r.residuals[k].dec_arcsec);
        assert!(off > 5.0, "{what}: its O − C {off}″");
        let (e, e0) = (r.e.unwrap(), clean.e.unwrap());
        assert!(
            (e - e0).abs() < 1e-3 * clean.e_sigma.unwrap().max(1e-6) + 1e-9,
            "{what}: e {e} against {e0}"
        );
        assert_eq!(r.probability_from, clean.probability_from, "{what}");
    }
}

#[test]
fn a_lone_position_of_its_night_or_site_is_never_set_aside_as_wild() {
    // Its departure from the others' steady motion is the path's curvature and the sites' parallax,
    // with nothing beside it to judge it by: a near-Earth arc seen four times from one site and once,
    // 2.3 h later, from another (tests/reference/make_two_site.py); a main-belt arc's third night cut to
    // one position.
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let text = std::fs::read_to_string(util::reference_path("two_site/truth.json")).unwrap();
    let all: Vec<serde_json::Value> = serde_json::from_str(&text).unwrap();
    let two_site = all
        .iter()
        .find(|t| t["object"] == "near_earth_1n2s")
        .unwrap();
    let tr = util::arc(
        two_site,
        &mut interloper::fitting::ranging::SplitMix::new(3),
        0.2,
        0.2,
    );
    let lone_site = Tracklet::new(tr.object.clone(), tr.source.clone(), tr.obs[..5].to_vec());
    let main = util::synthetic_file("mainbelt_3n.psv");
    let lone_night = Tracklet::new(
        main.object.clone(),
        main.source.clone(),
        main.obs[..9].to_vec(),
    );
    for (what, tr) in [
        ("one from a second site", lone_site),
        ("one on a third night", lone_night),
    ] {
        assert!(
            interloper::fitting::gross::gross_outliers(&tr).is_empty(),
            "{what}"
        );
        let r = fit_tracklet(&tr, &model, &opts);
        assert_eq!(r.n_obs, tr.obs.len(), "{what}");
        assert!(
            r.residuals.iter().all(|x| x.used),
            "{what}: {:?}",
            r.residuals
        );
    }
}
