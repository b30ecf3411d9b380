//! What the positions alone say about e (`e_data_interval`) beside what the posterior says (e ± σ),
//! on the two-night arcs of the synthetic reference set (tests/reference/make_synthetic.py: invented
//! orbits integrated with scipy DOP853 on JPL DE421 and observed with ERFA site vectors and light
//! time), 100 noise draws each, noise drawn here.
//!
//! The interval holds the e of every orbit along the range profile's slices within Δχ² 3.84 of the
//! best: a profile-likelihood interval, 95 % for one parameter where the likelihood is regular (it
//! is not quite, where two nights barely tie the distance). Where the population model rather than the positions
//! narrowed e, the two disagree, and the interval is the one that still holds the truth.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;

const DRAWS: usize = 100;

/// (draws with an interval, of those the truth inside it, the truth within the posterior's e ± 1.96σ).
fn coverage(name: &str) -> (usize, usize, usize) {
    let t = &util::synthetic(name);
    let te = t["e"].as_f64().unwrap();
    let mut rng = SplitMix::new(77);
    let (mut n, mut data, mut posterior, mut central) = (0, 0, 0, 0);
    for _ in 0..DRAWS {
        let r = fit_tracklet(
            &util::noisy(t, &mut rng, 0.2),
            &ObserverModel::new(),
            &FitOptions::default(),
        );
        if r.probability_from != "range-profile" {
            continue;
        }
        let [lo, hi] = r.e_data_interval.unwrap();
        assert!(lo <= hi, "{lo} {hi}");
        n += 1;
        data += usize::from((lo..=hi).contains(&te));
        let (e, s) = (r.e.unwrap(), r.e_sigma.unwrap());
        posterior += usize::from((e - te).abs() <= 1.96 * s);
        let [a, b] = r.e_interval_95.unwrap();
        central += usize::from((a..=b).contains(&te));
    }
    eprintln!(
        "{name}: {n} of {DRAWS} answers from the range profile; truth inside the positions' interval \
         {data}, inside the posterior's e ± 1.96σ {posterior}, inside its central 95 % interval {central}"
    );
    (n, data, posterior)
}

#[test]
fn the_positions_alone_interval_holds_the_true_e_where_the_posterior_may_not() {
    for name in [
        "mainbelt_2n",
        "near_earth_2n",
        "comet_like_2n",
        "near_parabolic_bound_2n",
        "hyp_weak_2n",
        "hyp_strong_2n",
    ] {
        let (n, data, posterior) = coverage(name);
        // Every two-night answer comes from the range profile.
        assert_eq!(n, DRAWS, "{name}");
        // Nominal 95 %, less where two nights barely tie the distance: the best of many nearly
        // independent distances fits the noise and Δχ² outgrows its χ²(1) calibration (the
        // main-belt arc: 83 of 100, the least of the six; its best slices lie at several au).
        assert!(data >= 80, "{name}: {data} of {n}");
        if name == "hyp_weak_2n" {
            // e 1.08, q 1.9 au, v∞ 6 km/s: the model's near-parabolic comets outweigh interstellar
            // objects that slow, so the posterior stands on the spike near e = 1 and its e ± 1.96σ
            // misses the truth in most draws; the positions alone allow it.
            assert!(
                posterior * 2 < n,
                "posterior holds the truth in {posterior} of {n}"
            );
            assert!(data >= 90, "{data} of {n}");
        }
    }
}
