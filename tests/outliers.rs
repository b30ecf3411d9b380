//! Outlier rejection against the synthetic reference arcs (tests/reference/make_synthetic.py: invented
//! orbits integrated with scipy DOP853 on JPL DE421, observed with ERFA site vectors). Gaussian noise and
//! wild points are drawn here on the reference's noiseless positions.
//!
//! The two rates below pull against each other: a point displaced by kσ in a random direction has a
//! standardised χ² that is non-central χ²(2) with λ ≈ (1 − h)k², h its leverage (≈ 0.25 for 12 points and
//! 6 parameters). With the threshold that keeps clean tracklets of 12–20 points under 0.5 % (T = 15.6–16.6)
//! that law is above T with probability 0.32–0.37 at 4σ, 0.65–0.69 at 5σ and 0.89–0.91 at 6σ (Marcum's
//! Q₁(√λ, √T), by quadrature of the Rice density); the detection curve printed below follows it. No rule
//! can do much better at 4σ: even one told which point is wild and in which direction (a one-sided test
//! of a unit Gaussian's mean, the most powerful there is) catches a 4σ point Φ(4 − 2.576) = 92 % of the
//! time at a 0.5 % false alarm, and 95 % only at 1 % on that single point with no leverage. The test
//! prints the whole curve and asserts where the statistics allow it.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::input::Tracklet;
use interloper::fitting::ranging::SplitMix;
use interloper::physics::observe::ObserverModel;
use serde_json::Value;

const SIGMA_ARCSEC: f64 = 0.2;

/// The reference arc with noise, cut to `keep` positions spread over every night when it has more.
fn arc(t: &Value, rng: &mut SplitMix, keep: usize) -> Tracklet {
    let tr = util::noisy(t, rng, SIGMA_ARCSEC);
    if tr.obs.len() <= keep {
        return tr;
    }
    let stride = tr.obs.len() as f64 / keep as f64;
    let obs = (0..keep)
        .map(|k| tr.obs[(k as f64 * stride) as usize].clone())
        .collect();
    Tracklet::new(tr.object.clone(), tr.source.clone(), obs)
}

/// Move one position, drawn at random, by `k` σ in a random direction; returns its index.
fn displace_one(tr: &mut Tracklet, rng: &mut SplitMix, k: f64) -> usize {
    let w = (rng.uniform() * tr.obs.len() as f64) as usize % tr.obs.len();
    let angle = std::f64::consts::TAU * rng.uniform();
    let off = k * SIGMA_ARCSEC / 3600.0 * interloper::physics::constants::DEG;
    let o = &mut tr.obs[w];
    o.ra += off * angle.cos() / o.dec.cos();
    o.dec += off * angle.sin();
    w
}

/// Arcs of 12 (three nights) and 20 (ten nights, two a night) positions.
const ARCS: [(&str, usize); 8] = [
    ("mainbelt_3n", 12),
    ("near_earth_3n", 12),
    ("comet_like_3n", 12),
    ("hyp_weak_3n", 12),
    ("mainbelt_10n", 20),
    ("near_earth_10n", 20),
    ("comet_like_10n", 20),
    ("hyp_strong_10n", 20),
];

#[test]
fn clean_gaussian_tracklets_of_12_to_20_points_lose_a_point_less_than_one_time_in_a_hundred() {
    let model = ObserverModel::new();
    let opts = FitOptions::default();
    let mut rng = SplitMix::new(2026);
    let (mut fits, mut lost) = (0, 0);
    for (name, keep) in ARCS {
        let t = util::synthetic(name);
        for _ in 0..200 {
            let tr = arc(&t, &mut rng, keep);
            let r = fit_tracklet(&tr, &model, &opts);
            if r.residuals.is_empty() {
                continue;
            }
            fits += 1;
            if r.n_used < r.n_obs {
                lost += 1;
            }
        }
    }
    let rate = lost as f64 / fits as f64;
    eprintln!(
        "false rejection: {lost} of {fits} clean tracklets lost a point ({:.2} %)",
        100.0 * rate
    );
    assert!(fits >= 1500, "{fits} fits with residuals");
    assert!(rate < 0.01, "{rate}");
}

#[test]
fn a_wild_point_is_caught_as_often_as_the_threshold_allows_and_always_when_far_off() {
    let model = ObserverModel::new();
    let opts = FitOptions::default();
    let mut rng = SplitMix::new(7);
    let mut curve = Vec::new();
    for k in [4.0, 5.0, 6.0, 8.0, 10.0, 20.0] {
        let (mut tried, mut caught, mut wrong) = (0, 0, 0);
        for (name, keep) in ARCS {
            let t = util::synthetic(name);
            for _ in 0..40 {
                let mut tr = arc(&t, &mut rng, keep);
                let w = displace_one(&mut tr, &mut rng, k);
                let r = fit_tracklet(&tr, &model, &opts);
                if r.residuals.len() != tr.obs.len() {
                    continue;
                }
                tried += 1;
                // Residuals are listed in the tracklet's (time) order.
                let pos = w;
                if !r.residuals[pos].used {
                    caught += 1;
                }
                wrong += r
                    .residuals
                    .iter()
                    .enumerate()
                    .filter(|(i, x)| *i != pos && !x.used)
                    .count();
            }
        }
        let rate = caught as f64 / tried as f64;
        eprintln!(
            "wild point {k:>4}σ: caught {caught} of {tried} ({:.1} %), {wrong} good points rejected with it",
            100.0 * rate
        );
        curve.push((k, rate, tried));
    }
    for (k, rate, tried) in curve {
        assert!(tried >= 300, "{k}σ: {tried} usable fits");
        if k >= 8.0 {
            assert!(rate >= 0.95, "{k}σ caught {rate}");
        }
        // From 10σ (2″ here) every wild point is caught (it was 319 and 317 of 320 at 10σ and 20σ
        // before a seed still falling below a gross misfit was let finish).
        if k >= 10.0 {
            assert!(rate >= 1.0, "{k}σ caught {rate}");
        }
        if k >= 5.0 {
            assert!(rate >= 0.5, "{k}σ caught {rate}");
        }
    }
}

#[test]
fn a_wild_point_on_any_night_of_a_near_earth_ten_night_arc_is_caught() {
    // Regression: a 4″ (20σ) position on the second or third night of this arc (the middle point of
    // those nights, in most of the first Gauss triplets) left the search with nothing but a misfit
    // of χ² 1.5 million: the seeds that led to the right orbit needed 23–27 steps, more than a seed's
    // brief correction, and were given up because the wild point kept them above the bound for an
    // orbit. Three draws with the point on each of the 20 positions.
    let model = ObserverModel::new();
    let opts = FitOptions::default();
    let t = util::synthetic("near_earth_10n");
    let mut rng = SplitMix::new(99);
    let mut missed = Vec::new();
    for trial in 0..60 {
        let mut tr = arc(&t, &mut rng, 20);
        let w = trial % 20;
        let angle = std::f64::consts::TAU * rng.uniform();
        let off = 20.0 * SIGMA_ARCSEC / 3600.0 * interloper::physics::constants::DEG;
        let o = &mut tr.obs[w];
        o.ra += off * angle.cos() / o.dec.cos();
        o.dec += off * angle.sin();
        let r = fit_tracklet(&tr, &model, &opts);
        if r.residuals.get(w).is_none_or(|x| x.used) {
            missed.push((w, r.status.to_string(), r.chi2_per_dof));
        }
    }
    assert!(missed.is_empty(), "{missed:?}");
}

/// A wild point the wrong minimum bends to keep: on the strongly hyperbolic three-night arc (a second
/// valley at e ≈ 17 fits nearly as well as the true one at 2.4), one position moved by 5σ or 8σ (1–1.6″)
/// once left the wrong minimum alone, `ok`, 24σ off (5 and 2 of 150 draws): every other minimum was
/// compared on the positions the best one kept, the wild one among them. No answer may now sit 5σ off
/// the truth as `ok`, and one that far off lists the true solution.
#[test]
fn a_wild_point_a_wrong_minimum_keeps_never_leaves_it_alone_and_ok() {
    let model = ObserverModel::new();
    let opts = FitOptions::default();
    let t = util::synthetic("hyp_strong_3n");
    let te = t["e"].as_f64().unwrap();
    let mut rng = SplitMix::new(51);
    let (mut fits, mut far, mut far_ok, mut far_alone) = (0, 0, 0, 0);
    for k in [5.0, 8.0] {
        for _ in 0..75 {
            let mut tr = arc(&t, &mut rng, 12);
            displace_one(&mut tr, &mut rng, k);
            let r = fit_tracklet(&tr, &model, &opts);
            let (Some(e), Some(s)) = (r.e, r.e_sigma) else {
                continue;
            };
            fits += 1;
            if ((e - te) / s).abs() > 5.0 {
                far += 1;
                far_ok += usize::from(r.status == "ok");
                if std::env::var("WILD_DEBUG").is_ok() {
                    eprintln!(
                        "  e {e:.3} ± {s:.3} {} {:?} 95% {:?} alts {:?}",
                        r.status,
                        r.probability_from,
                        r.e_interval_95,
                        r.alternatives
                            .iter()
                            .map(|a| (a.e, a.delta_chi2, a.probability))
                            .collect::<Vec<_>>()
                    );
                }
                let listed = r.alternatives.iter().any(|a| (a.e - te).abs() < 0.05 * te);
                far_alone += usize::from(!listed);
            }
        }
    }
    eprintln!(
        "{far} of {fits} answers 5σ or more off: {far_ok} of them ok, {far_alone} without the truth listed"
    );
    assert!(fits >= 140, "{fits}");
    assert_eq!((far_ok, far_alone), (0, 0));
}
