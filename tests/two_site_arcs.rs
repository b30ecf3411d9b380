//! Two sites hours apart on one date (tests/reference/make_two_site.py: orbits of the synthetic set seen
//! four times from TV1 and, 5.7 h later, four times from TV4, an arc of 0.34 d the feed counts as two
//! nights, `_2s`; and from TV2 then, 2.3 h later, TV1, 0.2 d and one night, `_1n2s`; scipy DOP853 on JPL
//! DE421, ERFA site vectors, light time). The fit models each site's own position: such arcs once went
//! to the one-night attributable, which has a single observer, took the sites' parallax for a misfit
//! (nearly every draw a poor fit) and gave near-Earth asteroids P ≈ 1.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::kinds::ProbabilitySource;
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;

const DRAWS: usize = 40;

struct Summary {
    poor: usize,
    from_profile: usize,
    max_p: f64,
    held_95: usize,
    data_held: usize,
}

fn draws(name: &str, seed: u64) -> Summary {
    let text = std::fs::read_to_string(util::reference_path("two_site/truth.json")).unwrap();
    let all: Vec<serde_json::Value> = serde_json::from_str(&text).unwrap();
    let t = all.iter().find(|t| t["object"] == name).unwrap();
    let te = t["e"].as_f64().unwrap();
    let mut rng = SplitMix::new(seed);
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let mut s = Summary {
        poor: 0,
        from_profile: 0,
        max_p: 0.0,
        held_95: 0,
        data_held: 0,
    };
    for _ in 0..DRAWS {
        let tr = util::noisy(t, &mut rng, 0.2);
        let nights = t["nights"].as_u64().unwrap() as usize;
        assert_eq!((tr.n_nights(), tr.obs.len()), (nights, 8));
        let r = fit_tracklet(&tr, &model, &opts);
        s.poor += usize::from(r.status == "poor-fit");
        s.from_profile += usize::from(r.probability_from == ProbabilitySource::RangeProfile);
        s.max_p = s.max_p.max(r.p_hyperbolic.unwrap_or(1.0));
        let holds = |i: Option<[f64; 2]>| i.is_some_and(|[lo, hi]| (lo..=hi).contains(&te));
        s.held_95 += usize::from(holds(r.e_interval_95));
        s.data_held += usize::from(holds(r.e_data_interval));
    }
    eprintln!(
        "{name}: {} of {DRAWS} poor fits, {} from the range profile, largest P {:.2e}, the 95 % interval \
         of e holds the truth in {}, the positions' own range in {}",
        s.poor, s.from_profile, s.max_p, s.held_95, s.data_held
    );
    s
}

#[test]
fn two_site_arcs_of_one_night_or_two_are_fitted_with_each_sites_position() {
    for (name, seed) in [
        ("near_earth_2s", 1),
        ("mainbelt_2s", 2),
        ("hyp_strong_2s", 3),
        ("near_earth_1n2s", 6),
        ("mainbelt_1n2s", 7),
        ("hyp_strong_1n2s", 8),
    ] {
        let s = draws(name, seed);
        assert_eq!(s.poor, 0, "{name}");
        assert_eq!(s.from_profile, DRAWS, "{name}");
    }
}

#[test]
fn bound_asteroids_seen_from_two_sites_are_not_unbound_candidates() {
    // Far below the 0.01 at which a candidate gets its origin sheet; the 95 % intervals hold the truth
    // in their share less three binomial σ over 40 draws.
    for (name, seed) in [
        ("near_earth_2s", 4),
        ("mainbelt_2s", 5),
        ("near_earth_1n2s", 9),
        ("mainbelt_1n2s", 10),
    ] {
        let s = draws(name, seed);
        assert!(s.max_p < 1e-3, "{name}: P up to {}", s.max_p);
        assert!(s.held_95 >= 34, "{name}: {}", s.held_95);
        // The positions' own range holds the truth as often. On the main-belt arcs it once held it
        // in 12 to 28 of 40: e along each slice's radial velocity passes close to a circular orbit,
        // a sharp dip that nine even points stepped over (the range began at 0.58 for a true 0.15).
        assert!(s.data_held >= 34, "{name}: {}", s.data_held);
    }
}

#[test]
fn two_positions_from_two_sites_in_one_night_go_to_grid_ranging_not_the_attributable() {
    let text = std::fs::read_to_string(util::reference_path("two_site/truth.json")).unwrap();
    let all: Vec<serde_json::Value> = serde_json::from_str(&text).unwrap();
    let t = all
        .iter()
        .find(|t| t["object"] == "near_earth_1n2s")
        .unwrap();
    let tr = util::noisy(t, &mut SplitMix::new(11), 0.2);
    // The last position from TV2 and the first from TV1, 2.3 h apart.
    let pair = vec![tr.obs[3].clone(), tr.obs[4].clone()];
    assert_ne!(pair[0].site_code, pair[1].site_code);
    let tr = interloper::fitting::input::Tracklet::new(tr.object.clone(), tr.source.clone(), pair);
    assert_eq!(tr.n_nights(), 1);
    let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
    assert_eq!(r.probability_from, ProbabilitySource::SystematicRanging);
}
