//! Two-night arcs of every orbit type of the synthetic reference set (tests/reference/make_synthetic.py:
//! invented orbits integrated with scipy DOP853 on JPL DE421, observed with ERFA site vectors and light
//! time), 200 noise realisations each, noise drawn here. On two nights the positions often leave e open
//! and the population model narrows it; an orbit the model finds rare (a weakly hyperbolic one, a
//! comet-like ellipse beside the near-parabolic spike) then gets an e many of its σ from the truth. Such
//! a record must not be called `ok`: no fit whose e is more than 5σ off may be reported `ok` as a single
//! answer (a fit listing other solutions must list one near the truth), the single answers left `ok`
//! must stay within 3σ of it, and where a fit is `undetermined` the positions' own range of e
//! (`e_data_interval`) must hold the truth about as often as a 95 % interval should. (Seeds 11 and 23
//! gave the same: none far off and ok; 663 of 714 and 668 of 717 held.)
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;

const REALISATIONS: usize = 200;

#[derive(Default)]
struct Tally {
    /// Pulls of the single answers reported ok.
    ok: Vec<f64>,
    far_and_ok: usize,
    /// Fits listing other solutions, and those of them whose listed solutions all miss the truth.
    listing: usize,
    listing_without_truth: usize,
    undetermined: usize,
    held_by_data: usize,
    /// Fits with an e and a σ of e.
    counted: usize,
}

fn tally(name: &str, seed: u64) -> Tally {
    let t = util::synthetic(name);
    let te = t["e"].as_f64().unwrap();
    let model = ObserverModel::new();
    let opts = FitOptions::default();
    let mut rng = SplitMix::new(seed);
    let mut out = Tally::default();
    for _ in 0..REALISATIONS {
        let r = fit_tracklet(&util::noisy(&t, &mut rng, 0.2), &model, &opts);
        let (Some(e), Some(s)) = (r.e, r.e_sigma) else {
            continue;
        };
        let pull = (e - te) / s;
        out.counted += 1;
        if !r.alternatives.is_empty() {
            // Another solution is listed: one of those shown must be near the truth.
            out.listing += 1;
            let near = |x: f64| (x - te).abs() <= 0.05 * te.max(0.1) || (x - te).abs() <= 3.0 * s;
            if !(near(e) || r.alternatives.iter().any(|a| near(a.e))) {
                out.listing_without_truth += 1;
            }
        }
        if r.status == "undetermined" {
            out.undetermined += 1;
            let [lo, hi] = r.e_data_interval.unwrap();
            out.held_by_data += usize::from((lo..=hi).contains(&te));
        } else if r.status == "ok" && r.alternatives.is_empty() {
            out.ok.push(pull);
            out.far_and_ok += usize::from(pull.abs() > 5.0);
            if pull.abs() > 5.0 {
                eprintln!(
                    "  {name}: e {e} ± {s} (truth {te}), from {}, χ²/dof {:?}, data {:?}, 95 % {:?}, {:?}",
                    r.probability_from,
                    r.chi2_per_dof,
                    r.e_data_interval,
                    r.e_interval_95,
                    r.distrust_linear
                );
            }
        }
    }
    let n = out.ok.len().max(1) as f64;
    let within3 = out.ok.iter().filter(|p| p.abs() <= 3.0).count() as f64 / n;
    eprintln!(
        "{name}: {} ok as single answers ({} more than 5σ off, {:.1} % within 3σ), {} listing another solution ({} without the truth among them), {} undetermined ({} with the truth inside the positions' own range of e)",
        out.ok.len(),
        out.far_and_ok,
        100.0 * within3,
        out.listing,
        out.listing_without_truth,
        out.undetermined,
        out.held_by_data
    );
    assert!(
        out.counted >= REALISATIONS * 98 / 100,
        "{name}: {} fits with e and σ",
        out.counted
    );
    // The ok single answers that remain are calibrated ones (seeds 7, 11, 23: 98.7-100 % within 3σ).
    assert!(
        out.ok.is_empty() || within3 >= 0.95,
        "{name}: within 3σ {within3}"
    );
    assert_eq!(out.listing_without_truth, 0, "{name}");
    out
}

#[test]
fn no_two_night_fit_far_from_the_truth_is_reported_ok_and_the_positions_range_holds_it() {
    let names = [
        "hyp_weak_2n",
        "comet_like_2n",
        "hyp_strong_2n",
        "mainbelt_2n",
        "near_earth_2n",
        "near_parabolic_bound_2n",
    ];
    let (mut undetermined, mut held) = (0, 0);
    for name in names {
        let t = tally(name, 7);
        assert_eq!(t.far_and_ok, 0, "{name}");
        undetermined += t.undetermined;
        held += t.held_by_data;
    }
    // The positions' range is a 95 % profile-likelihood interval (Δχ² ≤ 3.84).
    let share = held as f64 / undetermined as f64;
    eprintln!("undetermined fits: {held} of {undetermined} hold the truth in e_data_interval");
    assert!(undetermined > 0 && share >= 0.9, "{held} of {undetermined}");
}
