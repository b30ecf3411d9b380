//! The global search against three-night arcs (near-Earth orbits, and one asteroid beyond them) made
//! outside the project
//! (tests/reference/make_neo_arcs.py: 150 invented orbits over four night spacings and seven regression arcs, integrated with scipy
//! DOP853 on JPL DE421 and observed with ERFA site vectors and light time). Each arc is fitted noise-free
//! and with 0.2″ noise drawn here. A fit far from the truth (|pull| > 5) must never be reported as a
//! clean single answer, and the arcs whose geometry once trapped the search in a wrong minimum (found by
//! this survey) are kept as regression cases.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::fitting::result::FitResult;
use interloper::physics::observe::ObserverModel;
use serde_json::Value;

fn arcs() -> Vec<Value> {
    let text = std::fs::read_to_string(util::reference_path("neo_arcs/truth.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// (e − e_true)/σ_e of the reported answer and whether it listed another solution.
fn pull(t: &Value, noise: f64, rng: &mut SplitMix) -> (f64, bool, String) {
    let te = t["e"].as_f64().unwrap();
    let tr = util::arc(t, rng, 0.2, noise);
    let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
    let p = match (r.e, r.e_sigma) {
        (Some(e), Some(s)) if s > 0.0 => (e - te) / s,
        _ => f64::NAN,
    };
    let what = format!(
        "{} noise {noise}: e {:?} ± {:?} (truth {te:.4}), χ²/dof {:?}, {} {}",
        t["object"], r.e, r.e_sigma, r.chi2_per_dof, r.status, r.method
    );
    (p, !r.alternatives.is_empty(), what)
}

#[test]
fn no_near_earth_arc_is_reported_as_a_clean_answer_far_from_the_truth() {
    let mut rng = SplitMix::new(11);
    let (mut fits, mut listed, mut beyond3) = (0, 0, 0);
    let mut bad = Vec::new();
    for t in arcs() {
        for noise in [0.0, 0.2] {
            let (p, alternatives, what) = pull(&t, noise, &mut rng);
            fits += 1;
            listed += usize::from(alternatives);
            beyond3 += usize::from(p.abs() > 3.0);
            if !alternatives && p.abs().partial_cmp(&5.0) != Some(std::cmp::Ordering::Less) {
                bad.push(what);
            }
        }
    }
    eprintln!(
        "{fits} near-Earth fits: {listed} listed a second solution, {beyond3} beyond 3σ, {} far off as a single answer",
        bad.len()
    );
    assert!(fits >= 300, "{fits}");
    // Regression: neo081r_p013n with 0.2″ noise once came out hyperbolic (e 2.06, P = 1): the search
    // found the true minimum (χ² 19.4 against 26.0), but the range profile started from it put no slice
    // in its valley, narrower than the coarse spacing, and answered from the wrong one.
    assert!(bad.is_empty(), "{bad:#?}");
}

#[test]
fn arcs_that_once_trapped_the_search_now_reach_the_true_minimum() {
    // neo291_p048n: noise-free, the search stopped in a minimum of χ² 3 at e 0.44 (truth 0.58);
    // neo273_p013n: with noise, in one of χ² 17.3 while the true basin had 11.8.
    let all = arcs();
    let mut rng = SplitMix::new(11);
    // neo081r_p013n and neo095r_p048n: see the survey above (the valley the range profile missed, and a
    // second minimum it must list).
    for name in [
        "neo291_p048n",
        "neo273_p013n",
        "neo081r_p013n",
        "neo095r_p048n",
    ] {
        let t = all.iter().find(|t| t["object"] == name).unwrap();
        for _ in 0..20 {
            for noise in [0.0, 0.2] {
                let (p, alternatives, what) = pull(t, noise, &mut rng);
                assert!(p.abs() < 5.0 || alternatives, "{what}");
            }
        }
    }
}

#[test]
fn five_noisy_draws_of_every_near_earth_arc_give_no_far_off_single_answer_and_no_false_unbound() {
    // A second survey with fresh noise (its seed found four more traps, each mended: a valley beyond a
    // ridge where the profile's scan gave up, a seed still walking down a curved valley when its brief
    // correction ended, and a bound valley lost behind a better-fitting hyperbolic one).
    let mut rng = SplitMix::new(99);
    let (mut fits, mut listed, mut unbound) = (0, 0, 0);
    let mut bad = Vec::new();
    for t in arcs() {
        for _ in 0..5 {
            let tr = util::arc(&t, &mut rng, 0.2, 0.2);
            let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
            let te = t["e"].as_f64().unwrap();
            let (Some(e), Some(s)) = (r.e, r.e_sigma) else {
                bad.push(format!("{}: no e", t["object"]));
                continue;
            };
            fits += 1;
            let alternatives = !r.alternatives.is_empty();
            listed += usize::from(alternatives);
            // Every arc of this set is bound (near-Earth asteroids and one Hungaria-like asteroid).
            unbound += usize::from(r.p_hyperbolic.unwrap_or(0.0) > 0.5);
            if !alternatives && ((e - te) / s).abs() >= 5.0 {
                bad.push(format!(
                    "{}: e {e} ± {s} (truth {te:.4}), χ²/dof {:?}, {}",
                    t["object"], r.chi2_per_dof, r.probability_from
                ));
            }
        }
    }
    eprintln!(
        "{fits} noisy near-Earth fits: {listed} listed a second solution, {} far off as a single answer, {unbound} with P(unbound) > 0.5",
        bad.len()
    );
    assert!(fits >= 750, "{fits}");
    assert!(bad.is_empty(), "{bad:#?}");
    assert_eq!(unbound, 0);
}

/// One draw of a noisy survey replayed: the arc `name`, draw `draw` of five, with the noise the survey
/// of that `seed` gave it.
fn survey_draw(
    seed: u64,
    name: &str,
    draw: usize,
) -> (Value, interloper::fitting::input::Tracklet) {
    let mut rng = SplitMix::new(seed);
    for t in arcs() {
        for k in 0..5 {
            let tr = util::arc(&t, &mut rng, 0.2, 0.2);
            if t["object"] == name && k == draw {
                return (t, tr);
            }
        }
    }
    panic!("{name} is missing from the reference arcs");
}

/// The record gives `why` among its reasons to distrust the linear answer.
fn assert_says(r: &FitResult, why: &str) {
    assert!(
        r.distrust_linear.iter().any(|w| w == why),
        "{why:?} not among {:?}",
        r.distrust_linear
    );
}

/// A replayed survey draw fitted: the result, its e and σ_e, and the pull of e against the truth.
fn replayed(seed: u64, name: &str, draw: usize) -> (FitResult, f64, f64, f64) {
    let (t, tr) = survey_draw(seed, name, draw);
    let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
    let (e, s) = (r.e.unwrap(), r.e_sigma.unwrap());
    let pull = (e - t["e"].as_f64().unwrap()) / s;
    (r, e, s, pull)
}

#[test]
fn a_night_triplet_that_lands_in_a_poor_minimum_still_hands_over_to_the_single_night_pair_seeds() {
    // neo385r_p025n, fifth draw of the seed-99 survey above: the Gauss roots of the three night
    // midpoints lead to a poor minimum (χ² ≈ 5·10⁴), a root from two positions of one night to the
    // best one (χ²/dof 0.85, e 0.405 ± 0.044 against a true 0.437). Without that seed the distance
    // scan alone ends in a neighbouring minimum (χ²/dof 0.95) with e 3.2σ from the truth.
    let (r, e, s, pull) = replayed(99, "neo385r_p025n", 4);
    assert!(r.chi2_per_dof.unwrap() < 0.9, "{:?}", r.chi2_per_dof);
    assert!(pull.abs() < 2.0, "e {e} ± {s}, pull {pull}");
}

#[test]
fn two_minima_within_one_spacing_of_the_scan_are_both_found() {
    // neo024r_p048n, third draw of a survey with seed 2027: its valley on the scan holds two minima
    // (ρ 1.25 and 1.37 AU, both between the slices at 1.20 and 1.55). The night triplet and the
    // valley's floor both reach the wrong one (χ²/dof 1.64, e 0.38 ± 0.02 against a true 0.60); the
    // probe halfway to the bracket's end finds the other (χ²/dof 1.54), which is then listed.
    let (r, e, s, pull) = replayed(2027, "neo024r_p048n", 2);
    assert!(r.chi2_per_dof.unwrap() < 1.6, "{:?}", r.chi2_per_dof);
    assert!(
        pull.abs() < 5.0 || !r.alternatives.is_empty(),
        "e {e} ± {s}, pull {pull}, no other solution listed"
    );
}

#[test]
fn a_decisive_linear_answer_with_a_poorly_known_range_takes_its_spread_from_the_profile() {
    // neo187r_p013n, second draw of a survey with seed 777: one minimum at ρ 0.71 AU whose range is
    // known to 10 %, and e climbs from 0.12 to 0.29 towards the truth at 0.93 AU (Δχ² 3.7 on the profile).
    // Gaussian draws about the minimum gave e 0.116 ± 0.033 (pull −5.5); the profile follows the valley.
    // The third draw of seed 31337 is the same arc with its range known to between 5 and 10 %: there the
    // draws gave e 0.111 ± 0.022 against a true 0.295 (pull −8.4) until the threshold came down to 5 %.
    for (seed, draw) in [(777, 1), (31337, 2)] {
        let (_, e, s, pull) = replayed(seed, "neo187r_p013n", draw);
        eprintln!("seed {seed} draw {draw}: e {e:.4} ± {s:.4}, pull {pull:+.2}");
        assert!(pull.abs() < 3.0, "seed {seed}: e {e} ± {s}, pull {pull}");
    }
}

#[test]
fn a_minimum_whose_chi2_rises_short_of_its_covariance_answers_from_the_profile() {
    // neo024r_p048n, fifth draw of a survey with seed 31337: one minimum (ρ 1.277 AU, known to 2 %, so
    // the linear answer stood with e 0.408 ± 0.037 against a true 0.602, pull −5.3). χ² at the truth
    // (ρ 1.379 AU) is only 6.7 above the minimum where the covariance predicts 668: the scan's probe
    // at ρ 1.40 rose 14 where the covariance predicts 27. The profile follows the flat side.
    let (r, e, s, pull) = replayed(31337, "neo024r_p048n", 4);
    eprintln!(
        "e {e:.4} ± {s:.4}, pull {pull:+.2}, {:?}",
        r.distrust_linear
    );
    assert_says(&r, interloper::fitting::fit::FLATTER_REASON);
    assert!(pull.abs() < 4.0, "e {e} ± {s}, pull {pull}");
}

#[test]
fn valleys_hidden_between_scan_slices_or_behind_a_misfit_are_found() {
    // Three arcs of orbits drawn later (appended to the reference set). neo377f_p048n: its true
    // minimum (ρ 1.32 AU, χ² 8) lay between scan slices of χ² 2400 and 970, both falling towards a
    // wrong minimum at ρ 1.86 AU (χ² 10.8), which was then reported alone with e 0.63 ± 0.011 against
    // a true 0.40 in 6 of 10 draws. neo171f_p013n and neo567f_p013n: the seed from the valley's floor
    // (χ² 17) was given up inside the wide ellipsoid of a Gauss minimum of χ² 6000 and then stalled
    // at the valley's bottom, so the misfit was reported (χ²/dof 250 and 630).
    let all = arcs();
    let mut rng = SplitMix::new(2026);
    for name in ["neo377f_p048n", "neo171f_p013n", "neo567f_p013n"] {
        let t = all.iter().find(|t| t["object"] == name).unwrap();
        for _ in 0..20 {
            let (p, alternatives, what) = pull(t, 0.2, &mut rng);
            assert!(p.abs() < 5.0 || alternatives, "{what}");
        }
    }
}

#[test]
fn a_better_fitting_minimum_of_the_other_class_does_not_decide_the_probability_alone() {
    // neo672u_p013n (q 0.64 AU, e 0.63, i 39°), one noise draw each from seeds 452 and 2222 (the two
    // of 6000 that fell this way): a hyperbolic minimum at ρ 1.66 AU (e 2.96) fits the three nights
    // better than the asteroid's own valley at ρ 0.74 AU, by Δχ² 11.7 — more than the alternatives'
    // 9 — so the linear answer stood alone: e 2.99–3.02 ± 0.06, P(unbound) 1.0. The answer now comes from
    // the range profile, which weighs both valleys under the population model, and lists the one it
    // does not stand on.
    let all = arcs();
    let t = all.iter().find(|t| t["object"] == "neo672u_p013n").unwrap();
    let te = t["e"].as_f64().unwrap();
    let near = |e: f64| (e - te).abs() < 0.05;
    for seed in [452, 2222] {
        let mut rng = SplitMix::new(seed);
        let tr = util::arc(t, &mut rng, 0.2, 0.2);
        let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
        let p = r.p_hyperbolic.unwrap();
        eprintln!(
            "seed {seed}: e {:?} ± {:?}, P(unbound) {p:.3}, other solutions {:?}",
            r.e,
            r.e_sigma,
            r.alternatives.iter().map(|a| a.e).collect::<Vec<_>>()
        );
        assert_says(&r, interloper::fitting::fit::FLIPS_REASON);
        assert!(p < 0.99, "seed {seed}: P(unbound) {p}");
        assert!(
            near(r.e.unwrap()) || r.alternatives.iter().any(|a| near(a.e)),
            "seed {seed}: the true valley is neither the answer nor listed"
        );
    }
}

#[test]
fn a_wild_point_in_a_near_earth_arc_is_set_aside_and_shapes_nothing() {
    // Regression: with one position 2″ or 4″ off (10σ, 20σ), the fit set it aside, but the range
    // profile behind P, σ and the samples still weighed it: 13 of 314 such arcs were reported far off
    // as single answers (a Hungaria-like arc at e 0.416 ± 0.002 for 0.039).
    let mut rng = SplitMix::new(4242);
    let (mut fits, mut kept) = (0, 0);
    let mut bad = Vec::new();
    for t in arcs() {
        let te = t["e"].as_f64().unwrap();
        for k in [10.0, 20.0] {
            let mut tr = util::arc(&t, &mut rng, 0.2, 0.2);
            let w = (rng.uniform() * tr.obs.len() as f64) as usize % tr.obs.len();
            let angle = std::f64::consts::TAU * rng.uniform();
            let off = k * 0.2 / 3600.0 * interloper::physics::constants::DEG;
            let o = &mut tr.obs[w];
            o.ra += off * angle.cos() / o.dec.cos();
            o.dec += off * angle.sin();
            let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
            fits += 1;
            kept += usize::from(r.residuals.get(w).is_none_or(|x| x.used));
            if let (Some(e), Some(s)) = (r.e, r.e_sigma)
                && ((e - te) / s).abs() > 5.0
                && r.alternatives.is_empty()
            {
                bad.push(format!(
                    "{} {k}σ: e {e:.4} ± {s:.4}, truth {te:.4}",
                    t["object"]
                ));
            }
        }
    }
    eprintln!(
        "{fits} near-Earth arcs with a wild point: {kept} kept it, {} far off as a single answer",
        bad.len()
    );
    assert_eq!(kept, 0);
    assert!(bad.is_empty(), "{bad:#?}");
}
