//! Leaving one night out of a four-night arc: a fit is called poor for "e moves … without night k" only
//! where the other nights themselves reject the full orbit, so a clean arc whose first three nights
//! leave e open is not thrown out, while a fourth night of another object still is. Arcs: the first
//! four nights (days 0, 1, 2 and 4) of the synthetic ten-night references (tests/reference/
//! make_synthetic.py: scipy DOP853 on JPL DE421, ERFA sites, light time); noise and the foreign
//! night's offsets are drawn here.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::input::Tracklet;
use interloper::fitting::ranging::SplitMix;
use interloper::physics::constants::ARCSEC;
use interloper::physics::observe::ObserverModel;

const DRAWS: usize = 150;

/// The first four nights of a ten-night reference arc with 0.2″ noise; the fourth night's positions
/// moved by `offset` arcsec in a random direction, growing to twice that over the night (another
/// object's positions linked in).
fn four_nights(name: &str, rng: &mut SplitMix, offset: f64) -> Tracklet {
    let tr = util::noisy(&util::synthetic(name), rng, 0.2);
    let angle = std::f64::consts::TAU * rng.uniform();
    let mut obs: Vec<_> = (0..tr.obs.len())
        .filter(|&i| tr.night[i] < 4)
        .map(|i| tr.obs[i].clone())
        .collect();
    let fourth: Vec<usize> = (0..obs.len()).filter(|&i| tr.night[i] == 3).collect();
    for (j, &i) in fourth.iter().enumerate() {
        let grow = 1.0 + j as f64 / (fourth.len() - 1).max(1) as f64;
        let o = &mut obs[i];
        o.ra += offset * grow * angle.cos() * ARCSEC / o.dec.cos();
        o.dec += offset * grow * angle.sin() * ARCSEC;
    }
    Tracklet::new(tr.object.clone(), tr.source.clone(), obs)
}

/// Of `DRAWS` fits: how many are poor fits, and how many of those for e moving without a night.
fn poor(name: &str, seed: u64, offset: f64) -> (usize, usize) {
    let mut rng = SplitMix::new(seed);
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let (mut poor, mut moves) = (0, 0);
    for _ in 0..DRAWS {
        let tr = four_nights(name, &mut rng, offset);
        assert_eq!(tr.n_nights(), 4);
        let r = fit_tracklet(&tr, &model, &opts);
        poor += usize::from(r.status == "poor-fit");
        moves += usize::from(r.poor_fit.iter().any(|w| w.starts_with("e moves")));
    }
    eprintln!(
        "{name}, fourth night moved {offset}″: {poor} of {DRAWS} poor fits, {moves} for e moving"
    );
    (poor, moves)
}

#[test]
fn clean_four_night_arcs_are_not_poor_fits_because_three_nights_leave_e_open() {
    // Without the test of the other nights, 19 of these 150 clean near-parabolic arcs were poor fits
    // for "e moves" (their first three nights alone are a range-profile case).
    for (name, seed) in [("near_parabolic_bound_10n", 1), ("comet_like_10n", 2)] {
        let (poor, moves) = poor(name, seed, 0.0);
        assert_eq!(moves, 0, "{name}");
        // The χ² and night-mean tests (each at 0.1 %) may still call the odd clean fit poor.
        assert!(poor <= DRAWS / 50, "{name}: {poor}");
    }
}

#[test]
fn a_fourth_night_of_another_object_is_still_a_poor_fit() {
    for (name, seed) in [
        ("near_parabolic_bound_10n", 3),
        ("comet_like_10n", 4),
        ("mainbelt_10n", 5),
    ] {
        let (poor, _) = poor(name, seed, 4.0);
        assert!(poor >= DRAWS * 9 / 10, "{name}: {poor}");
    }
}
