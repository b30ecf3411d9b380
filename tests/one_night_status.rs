//! A night seen from one place is a poor fit only where its positions stray from the smooth path fitted
//! to them by more than their errors allow: on the synthetic one-night arcs (tests/reference/
//! make_synthetic.py: four positions from one site, scipy DOP853 on JPL DE421, ERFA sites, light time)
//! clean draws are almost never poor (χ²/dof above 3 alone called 5 % of them poor: two degrees of
//! freedom, P(χ²(2) > 6) = e⁻³), while a position moved by 3″ still makes the night poor.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::constants::ARCSEC;
use interloper::physics::observe::ObserverModel;

const ARCS: [&str; 5] = [
    "mainbelt_1n",
    "near_earth_1n",
    "comet_like_1n",
    "hyp_weak_1n",
    "hyp_strong_1n",
];
const DRAWS: usize = 200;

/// Poor fits among `DRAWS` noisy copies of each one-night arc, the third position moved by `shift`
/// arcsec in declination.
fn poor_fits(seed: u64, shift: f64) -> (usize, usize) {
    poor_fits_of(&ARCS, seed, shift, 4)
}

/// The same over the first `keep` positions of each night (3 or 4), the middle one (of three) or the
/// third (of four) moved.
fn poor_fits_of(arcs: &[&str], seed: u64, shift: f64, keep: usize) -> (usize, usize) {
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let mut rng = SplitMix::new(seed);
    let (mut fits, mut poor) = (0, 0);
    for name in arcs {
        let t = util::synthetic(name);
        for _ in 0..DRAWS {
            let mut tr = util::noisy(&t, &mut rng, 0.2);
            assert_eq!((tr.n_nights(), tr.obs.len()), (1, 4));
            tr.obs.truncate(keep);
            tr.obs[keep / 2].dec += shift * ARCSEC;
            let r = fit_tracklet(&tr, &model, &opts);
            fits += 1;
            poor += usize::from(r.status == "poor-fit");
        }
    }
    eprintln!("one-night arcs of {keep}, a position moved {shift}″: {poor} poor fits of {fits}");
    (fits, poor)
}

#[test]
fn clean_one_night_arcs_are_almost_never_poor_fits() {
    let (fits, poor) = poor_fits(1, 0.0);
    // At 0.1 % a night, 1 expected in 1,000; 5 is far beyond chance. χ²/dof alone made 45 of these
    // 1,000 poor.
    assert!(poor <= 5, "{poor} of {fits}");
}

#[test]
fn a_night_with_a_position_moved_by_3_arcsec_is_still_a_poor_fit() {
    let (fits, poor) = poor_fits(2, 3.0);
    assert!(poor >= fits * 9 / 10, "{poor} of {fits}");
}

#[test]
fn clean_three_position_nights_are_almost_never_poor_fits() {
    // Three positions fit their parabola exactly; the test is whether some orbit bends as they do.
    let (fits, poor) = poor_fits_of(&ARCS, 3, 0.0, 3);
    assert!(poor <= 5, "{poor} of {fits}");
}

#[test]
fn a_three_position_night_bent_by_3_arcsec_is_a_poor_fit_unless_a_close_orbit_bends_so() {
    // For the four bodies other than the near-Earth one, no orbit bends a night of three by 3″: 96 % of these
    // are poor (the main-belt night alone 84 %).
    let far = [
        "mainbelt_1n",
        "comet_like_1n",
        "hyp_weak_1n",
        "hyp_strong_1n",
    ];
    let (fits, poor) = poor_fits_of(&far, 4, 3.0, 3);
    assert!(poor >= fits * 9 / 10, "{poor} of {fits}");
    // A near-Earth body curves within the hour by diurnal parallax and its own pull: some distance
    // and radial speed bend the path as the moved position does, and three positions cannot tell.
    // (A straight line told, and called close, fast interstellar nights poor as well.)
    let (fits, poor) = poor_fits_of(&["near_earth_1n"], 5, 3.0, 3);
    eprintln!("near-Earth night of three bent by 3″: {poor} of {fits} poor");
    // The limit, measured (0 of 200): such a night is kept, its bend read as closeness.
    assert!(poor < fits / 10, "{poor} of {fits}");
}

#[test]
fn no_night_of_the_population_sky_is_a_poor_fit_close_fast_interstellars_included() {
    // Regression: the 600 one-night arcs of the population-model sky (tests/reference/
    // make_population_sky.py: DE421 through jplephem, ERFA sites, light time) are clean, yet ten
    // interstellar nights of three positions (v∞ 13–142 km/s, some within a few hundredths of an au)
    // were poor fits: a straight line through three positions called their bend in the hour a stray
    // path, and ranked them under all 300 bound nights.
    let records = util::fit_population_sky("one_night.psv");
    assert_eq!(records.len(), 600);
    let poor: Vec<(&str, &[String])> = records
        .iter()
        .filter(|r| r.status != "ok" && r.status != "undetermined")
        .map(|r| (r.object.as_str(), r.poor_fit.as_slice()))
        .collect();
    assert!(poor.is_empty(), "{poor:?}");
}
