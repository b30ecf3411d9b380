//! `--perturbations on` (and `off`) hold on every path: an answer from the range profile (two nights)
//! once came out two-body whatever was asked. Synthetic reference arcs of
//! tests/reference/make_synthetic.py (scipy DOP853 on JPL DE421).
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, PerturbChoice, fit_tracklet};
use interloper::fitting::forcemodel::ForceModel;
use interloper::fitting::kinds::ProbabilitySource;
use interloper::physics::observe::ObserverModel;

#[test]
fn the_users_choice_of_perturbations_holds_on_the_range_profile_path() {
    let tr = util::synthetic_file("mainbelt_2n.psv");
    for (choice, model) in [
        (PerturbChoice::On, ForceModel::SunPlanetsMoon),
        (PerturbChoice::Off, ForceModel::TwoBody),
        (PerturbChoice::Auto, ForceModel::TwoBody),
    ] {
        let opts = FitOptions {
            perturbations: choice,
            ..FitOptions::default()
        };
        let r = fit_tracklet(&tr, &ObserverModel::new(), &opts);
        assert_eq!(
            r.probability_from,
            ProbabilitySource::RangeProfile,
            "{choice:?}"
        );
        assert_eq!(r.dynamics, model, "{choice:?}");
    }
}
