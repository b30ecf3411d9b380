//! Grid ranging forced on multi-night arcs (`fit --method ranging`, the console's `r`) against the
//! synthetic reference arcs: tests/reference/make_synthetic.py integrates invented orbits with scipy
//! DOP853 under the Sun, planets and Moon of JPL DE421 and observes them from the demo sites with ERFA
//! site vectors and light time. Noise is drawn here on the reference's noiseless positions.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, FitResult, MethodChoice, fit_tracklet};
use interloper::fitting::rangecells::TARGET_N_EFF;
use interloper::fitting::ranging::SplitMix;
use interloper::fitting::rangingrecord::THREE_NIGHTS_CAVEAT;
use interloper::physics::observe::ObserverModel;
use serde_json::Value;

const DRAWS: usize = 12;

fn ranged(t: &Value, rng: &mut SplitMix) -> FitResult {
    let opts = FitOptions {
        method: MethodChoice::Ranging,
        ..FitOptions::default()
    };
    fit_tracklet(&util::noisy(t, rng, 0.2), &ObserverModel::new(), &opts)
}

/// Every number the table, the orbit pane and the JSON show is one orbit's and one set of orbits'.
fn assert_one_number_per_quantity(r: &FitResult) {
    let el = r.elements.as_ref().unwrap();
    let sig = el.sigma.unwrap();
    assert_eq!(r.e, Some(el.e), "{}", r.object);
    assert_eq!(r.q_au, Some(el.q_au), "{}", r.object);
    assert_eq!(r.i_deg, Some(el.i_deg), "{}", r.object);
    assert_eq!(r.e_sigma, Some(sig.e), "{}", r.object);
    assert_eq!(r.q_sigma, Some(sig.q), "{}", r.object);
    assert_eq!(r.i_sigma, Some(sig.i), "{}", r.object);
    let [lo, hi] = r.e_interval_95.unwrap();
    let [lo68, hi68] = r.e_interval_68.unwrap();
    assert!(lo <= lo68 && lo68 <= hi68 && hi68 <= hi, "{}", r.object);
}

#[test]
fn forced_ranging_of_multi_night_arcs_measures_every_spread_and_its_intervals_hold_the_truth() {
    // Before the cells were split where the weight is, a grid of 100 × 100 cells left two- and
    // three-night arcs with 1–20 effective orbits: σ of q and i of 0.0, no σ of e, and the 95 %
    // interval of e held the truth in 127 of 300 two-night bench fits (near-Earth 6 of 50); now in
    // 227 of the 250 that the positions decide.
    let mut rng = SplitMix::new(2026_12_03);
    let (mut held, mut fits) = (0, 0);
    let mut n_effs = Vec::new();
    for t in util::synthetic_truth().iter().filter(|t| {
        let nights = t["nights"].as_u64().unwrap();
        (nights == 2 || nights == 3) && t.get("e").is_some_and(Value::is_f64)
    }) {
        let name = t["object"].as_str().unwrap();
        if name == "outlier_3n" || name == "bench_3n15" {
            continue;
        }
        let te = t["e"].as_f64().unwrap();
        let (mut inside, mut undetermined) = (0, 0);
        for _ in 0..DRAWS {
            let r = ranged(t, &mut rng);
            assert_eq!(r.method, "ranging", "{name}");
            if r.status == "undetermined" {
                undetermined += 1;
            }
            if !r.status.usable() {
                continue;
            }
            // Splitting stops at TARGET_N_EFF or after its last round; a fit left below 10 is not ok.
            let n_eff = r.n_eff.unwrap();
            assert!(n_eff >= 10.0, "{name}: n_eff {n_eff}");
            n_effs.push(n_eff);
            assert!(
                r.e_sigma.unwrap() > 0.0 && r.q_sigma.unwrap() > 0.0,
                "{name}"
            );
            assert_one_number_per_quantity(&r);
            // Every usable forced fit carries the positions' own range of e, which its status follows.
            let [dlo, dhi] = r.e_data_interval.unwrap();
            assert!(dlo <= dhi, "{name}: {dlo} {dhi}");
            let [lo, hi] = r.e_interval_95.unwrap();
            inside += usize::from(lo <= te && te <= hi);
            // The ranging line's 95 % of e is the same interval, from the same orbits.
            let line = r.ranging.as_ref().unwrap().e_interval;
            let slack = 1e-6 * (hi - lo) + 1e-12;
            assert!(
                (line[0] - lo).abs() <= slack && (line[2] - hi).abs() <= slack,
                "{name}: line {line:?}, record [{lo}, {hi}]"
            );
            let says = r.distrust_linear.iter().any(|w| w == THREE_NIGHTS_CAVEAT);
            assert_eq!(says, t["nights"] == 3, "{name}: {:?}", r.distrust_linear);
            // Counted: two nights, where the grid is the tool; not the weakly hyperbolic arc, which the
            // model decides (the posterior stands on the near-parabolic comets' spike, as on the
            // automatic path). Three nights are printed: the record says not to lean on them.
            if t["nights"] == 2 && name != "hyp_weak_2n" {
                fits += 1;
                held += usize::from(lo <= te && te <= hi);
            }
        }
        eprintln!(
            "{name}: truth in the 95 % interval of e in {inside} of {DRAWS}, {undetermined} undetermined"
        );
        // The model, not the positions, sets e on the weakly hyperbolic and main-belt two-night arcs
        // (as on the automatic path, tests/two_night_status.rs): pressing r must not call them ok.
        if name == "hyp_weak_2n" || name == "mainbelt_2n" {
            assert!(
                undetermined >= DRAWS - 1,
                "{name}: {undetermined} undetermined"
            );
        }
        // Where the positions tie e (two nights of a near-Earth or strongly hyperbolic arc), none is.
        if name == "near_earth_2n" || name == "hyp_strong_2n" {
            assert_eq!(undetermined, 0, "{name}");
        }
    }
    n_effs.sort_by(f64::total_cmp);
    let low = n_effs.iter().filter(|&&n| n < TARGET_N_EFF).count();
    eprintln!(
        "effective orbits: least {:.0}, median {:.0}; {low} of {} fits below {TARGET_N_EFF}",
        n_effs[0],
        n_effs[n_effs.len() / 2],
        n_effs.len()
    );
    assert!(
        low * 20 <= n_effs.len(),
        "{low} of {} below target",
        n_effs.len()
    );
    let share = held as f64 / fits as f64;
    eprintln!(
        "two nights but hyp_weak_2n: {held} of {fits} ({:.1} %)",
        100.0 * share
    );
    assert!(fits >= 4 * DRAWS, "{fits} usable two-night fits");
    assert!(share >= 0.85, "{held} of {fits}");
}

#[test]
fn forced_ranging_of_a_false_linkage_shows_no_spread_and_says_why() {
    // Two objects under one id (the reference's false_link_3n): no orbit fits, every Δχ² is huge and
    // the weight stays on one cell however far it is split. A spread of one orbit would be a σ of 0.
    let t = util::synthetic("false_link_3n");
    let tr = util::synthetic_file(t["file"].as_str().unwrap());
    let opts = FitOptions {
        method: MethodChoice::Ranging,
        ..FitOptions::default()
    };
    let r = fit_tracklet(&tr, &ObserverModel::new(), &opts);
    assert_eq!(r.status, "poor-fit");
    // Regression: no orbit fits, so no probability and no origin (it once showed P 1.0, z 57 500).
    assert_eq!(
        (r.p_hyperbolic, r.log10_odds, r.z_hyperbolic),
        (None, None, None)
    );
    assert!(r.origin.is_none());
    assert!(r.n_eff.unwrap() < 10.0, "{:?}", r.n_eff);
    assert_eq!((r.e_sigma, r.q_sigma, r.e_interval_95), (None, None, None));
    assert!(r.elements.as_ref().unwrap().sigma.is_none());
    assert!(r.samples.is_empty() && r.ranging.is_none());
    assert!(
        r.poor_fit
            .iter()
            .any(|w| w.contains("too few to measure a spread")),
        "{:?}",
        r.poor_fit
    );
}
