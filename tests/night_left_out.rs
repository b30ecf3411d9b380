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

/// Of `DRAWS` fits: how many are poor fits, how many of those for e moving without a night, and how
/// many for that reason alone.
struct Counts {
    poor: usize,
    moves: usize,
    only_moves: usize,
}

fn poor(name: &str, seed: u64, offset: f64) -> Counts {
    let mut rng = SplitMix::new(seed);
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let mut c = Counts {
        poor: 0,
        moves: 0,
        only_moves: 0,
    };
    for _ in 0..DRAWS {
        let tr = four_nights(name, &mut rng, offset);
        assert_eq!(tr.n_nights(), 4);
        let r = fit_tracklet(&tr, &model, &opts);
        c.poor += usize::from(r.status == "poor-fit");
        let moves = r.poor_fit.iter().any(|w| w.starts_with("e moves"));
        c.moves += usize::from(moves);
        c.only_moves += usize::from(moves && r.poor_fit.len() == 1);
    }
    eprintln!(
        "{name}, fourth night moved {offset}″: {} of {DRAWS} poor fits, {} for e moving, {} for that alone",
        c.poor, c.moves, c.only_moves
    );
    c
}

#[test]
fn clean_four_night_arcs_are_not_poor_fits_because_three_nights_leave_e_open() {
    // Without the test of the other nights, 19 of these 150 clean near-parabolic arcs were poor fits
    // for "e moves" (their first three nights alone are a range-profile case).
    for (name, seed) in [("near_parabolic_bound_10n", 1), ("comet_like_10n", 2)] {
        let c = poor(name, seed, 0.0);
        assert_eq!(c.moves, 0, "{name}");
        // χ²/dof above 3 and a night's mean beyond its χ²(2) 0.1 % point (about 0.4 % of four-night
        // arcs) may still call the odd clean fit poor.
        assert!(c.poor <= DRAWS / 50, "{name}: {}", c.poor);
    }
}

#[test]
fn a_fourth_night_of_another_object_is_still_a_poor_fit() {
    for (name, seed) in [
        ("near_parabolic_bound_10n", 3),
        ("comet_like_10n", 4),
        ("mainbelt_10n", 5),
    ] {
        let c = poor(name, seed, 4.0);
        assert!(c.poor >= DRAWS * 9 / 10, "{name}: {}", c.poor);
    }
}

#[test]
fn e_moving_without_a_night_still_catches_a_foreign_night_nothing_else_sees() {
    // A fourth night 2″ off, drifting to 4″ (10–20σ a position): the χ² and night-mean tests miss
    // many, and e moving without that night, with the other nights rejecting the full orbit, is the
    // only reason given for some (measured: 56 and 15 of 150 on the main-belt arc, 73 and 7 on the
    // near-Earth one).
    for (name, seed) in [("mainbelt_10n", 9), ("near_earth_10n", 9)] {
        let c = poor(name, seed, 2.0);
        assert!(c.moves >= DRAWS / 4, "{name}: {}", c.moves);
        assert!(c.only_moves >= 4, "{name}: {}", c.only_moves);
    }
}
