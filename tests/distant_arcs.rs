//! A distant body over three nights (tests/reference/make_distant.py: an invented centaur-like orbit, q 8
//! au, e 0.3, integrated with scipy DOP853 on JPL DE421 and observed with ERFA site vectors and light
//! time), 200 noise realisations drawn here. Least squares measures its e to ±0.6–1, so its e lies
//! within 3σ of zero: the length of the e vector is not measured, and the least-squares e is biased
//! upwards. Such fits once stood as linear answers, e 2.0 ± 0.9 beside P 3e-6 (a hyperbolic e shown
//! with a bound verdict), the truth outside their 95 % interval in half the draws.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::lsqrecord::LINEAR_DECIDES;
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;

#[test]
fn a_distant_body_whose_e_is_not_measured_gets_no_linear_answer_unless_its_z_settles_the_class() {
    let text = std::fs::read_to_string(util::reference_path("distant/truth.json")).unwrap();
    let truth: Vec<serde_json::Value> = serde_json::from_str(&text).unwrap();
    let t = truth.iter().find(|t| t["object"] == "centaur_3n").unwrap();
    let te = t["e"].as_f64().unwrap();
    let (model, opts) = (ObserverModel::new(), FitOptions::default());
    let mut rng = SplitMix::new(8);
    let (mut fits, mut contradicted, mut linear, mut far_and_clean) = (0, 0, 0, 0);
    let (mut undetermined, mut unsettled) = (0, 0);
    for _ in 0..200 {
        let r = fit_tracklet(&util::noisy(t, &mut rng, 0.2), &model, &opts);
        let (Some(p), Some(e), Some(s)) = (r.p_hyperbolic, r.e, r.e_sigma) else {
            continue;
        };
        fits += 1;
        // The e shown and P tell opposite classes: e more than σ above 1 beside P < 1 %, or more than
        // σ below 1 beside P > 99 %.
        contradicted += usize::from((e - s > 1.0 && p < 0.01) || (e + s < 1.0 && p > 0.99));
        if r.probability_from == "linear" {
            linear += 1;
            // A linear answer whose z does not settle bound or unbound.
            unsettled += usize::from(r.z_linear.is_none_or(|z| z.abs() < LINEAR_DECIDES));
        }
        undetermined += usize::from(r.status == "undetermined");
        far_and_clean += usize::from(
            r.status == "ok" && r.alternatives.is_empty() && ((e - te) / s).abs() > 5.0,
        );
    }
    eprintln!(
        "centaur_3n: {fits} fits, {linear} linear answers ({unsettled} at |z| < {LINEAR_DECIDES}), {undetermined} undetermined, {contradicted} with an e that contradicts P, {far_and_clean} far off yet ok"
    );
    assert!(fits >= 196, "{fits}");
    assert_eq!(far_and_clean, 0);
    // With the linear answers standing (these draws: 73 linear answers, 56 of them at |z| < 6, 82
    // undetermined, 3 contradictions) the status said in most draws that e was measured; now most say
    // it is the model's, and a linear answer whose z does not settle the class is rare (here 1: e 1.64
    // ± 0.46, just beyond 3σ of zero).
    assert!(
        unsettled <= 4,
        "{unsettled} linear answers at |z| < {LINEAR_DECIDES}"
    );
    assert!(contradicted <= 4, "{contradicted} of {fits}");
    assert!(undetermined * 2 >= fits, "{undetermined} of {fits}");
}
