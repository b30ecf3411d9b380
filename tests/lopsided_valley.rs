//! A strongly hyperbolic orbit seen on three consecutive dates from three sites, an arc of 1.6 days
//! whose last two nights are 6 h apart (tests/reference/make_synthetic.py, `consecutive/`: scipy DOP853
//! on JPL DE421, ERFA site vectors, light time), 300 noise draws drawn here. Its χ² along the distance is lopsided within a few σ: steep towards the Sun, flat outwards,
//! where the truth lies. Where noise put the minimum on the steep side the range looked known to 2 %
//! and the linear answer stood, e 2.13–2.22 ± 0.09 for a true 2.4: in a probe of 300 draws, 10 such
//! answers, and the 95 % interval of none held the truth. χ² is now probed 3σ out on both sides
//! before a linear answer stands; a lopsided valley goes to the range profile.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::kinds::ProbabilitySource;
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;

const DRAWS: usize = 300;

#[test]
fn a_linear_answer_never_stands_on_a_lopsided_valley_that_excludes_the_truth() {
    let text = std::fs::read_to_string(util::reference_path("consecutive/truth.json")).unwrap();
    let all: Vec<serde_json::Value> = serde_json::from_str(&text).unwrap();
    let t = &all[0];
    let te = t["e"].as_f64().unwrap();
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let mut rng = SplitMix::new(31);
    let (mut linear, mut linear_missed, mut held) = (0, 0, 0);
    for _ in 0..DRAWS {
        let r = fit_tracklet(&util::noisy(t, &mut rng, 0.2), &model, &opts);
        let holds = r
            .e_interval_95
            .is_some_and(|[lo, hi]| (lo..=hi).contains(&te));
        held += usize::from(holds);
        if r.probability_from == ProbabilitySource::Linear {
            linear += 1;
            linear_missed += usize::from(!holds);
        }
    }
    eprintln!(
        "hyp_strong_3c: {linear} of {DRAWS} linear answers, {linear_missed} of them missing the truth \
         with their 95 % interval; all answers' 95 % intervals hold it in {held}"
    );
    // A calibrated linear answer misses 5 % of the time: at most one of the few left here.
    assert!(linear_missed <= 1, "{linear_missed} of {linear}");
    // The posterior's intervals lean on the model and fall a little short of 95 % on this arc (the
    // positions' own range holds the truth at its nominal rate); far short would be a regression.
    assert!(held as f64 >= 0.86 * DRAWS as f64, "{held}");
}
