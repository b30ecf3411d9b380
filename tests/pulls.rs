//! Calibration of the reported eccentricity and its σ on every orbit type of the synthetic reference set
//! (tests/reference/make_synthetic.py: invented orbits integrated with scipy DOP853 on JPL DE421 and
//! observed with ERFA site vectors and light time), 250 noise realisations each, noise drawn here. The
//! pulls (e − e_true)/σ_e of fits with one solution must have sd in [0.9, 1.1] and ≥ 99 % within 3σ,
//! and no fit far off (|pull| > 5) may be reported as a clean answer; a fit whose scan found a second
//! valley lists it (and its weight in P), and is counted apart; over all fits, ≥ 97 % lie within 3σ.
//!
//! Where e curves within 1σ (short main-belt arcs), σ_e is the spread of the likelihood over orbits
//! drawn about the fit, a Bayesian interval: it covers at least its nominal share but is wider than the
//! scatter of the estimate where the estimate is off, so there only sd ≤ 1.1 is asserted, with coverage
//! at 1σ and 2σ. The same orbits' central 68 % and 95 % intervals of e (`e_interval_68`,
//! `e_interval_95`) follow the lopsided e and must hold the truth in their nominal share on every type.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::covariance::eccentricity_gradient;
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::fitting::ranging::SplitMix;
use interloper::physics::constants::MU_SUN;
use interloper::physics::observe::ObserverModel;

const REALISATIONS: usize = 250;

struct Summary {
    n: usize,
    two_solutions: usize,
    within1: f64,
    within2: f64,
    mean: f64,
    sd: f64,
    within3: f64,
    far_and_clean: usize,
    /// Shares of the fits whose central 68.27 % and 95 % intervals of e hold the true e.
    covered: [f64; 2],
    /// Pull sd and share within 3σ over every fit, those listing another solution included.
    every: (f64, f64),
}

/// Sample sd and share within 3 of a set of pulls.
fn spread(p: &[f64]) -> (f64, f64) {
    assert!(p.len() >= 2, "{} pulls", p.len());
    let n = p.len() as f64;
    let mean = p.iter().sum::<f64>() / n;
    let sd = (p.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    (sd, p.iter().filter(|x| x.abs() <= 3.0).count() as f64 / n)
}

fn pulls(name: &str, seed: u64) -> Summary {
    let t = util::synthetic(name);
    let te = t["e"].as_f64().unwrap();
    let model = ObserverModel::new();
    let opts = FitOptions::default();
    let mut rng = SplitMix::new(seed);
    let mut p = Vec::new();
    let mut every = Vec::new();
    let mut far_and_clean = 0;
    let mut two_solutions = 0;
    let mut missed = 0;
    let mut held = [0usize; 2];
    for _ in 0..REALISATIONS {
        let r = fit_tracklet(&util::noisy(&t, &mut rng, 0.2), &model, &opts);
        let (Some(e), Some(s)) = (r.e, r.e_sigma) else {
            continue;
        };
        let pull = (e - te) / s;
        every.push(pull);
        if std::env::var("PULL_ALL").is_ok() {
            eprintln!(
                "  ALL {pull:.2} {} {:?} {} e {:?} {:?}",
                r.probability_from, r.distrust_linear, r.n_used, r.e, r.e_sigma
            );
        }
        if std::env::var("PULL_DEBUG").is_ok() && pull.abs() > 3.0 {
            eprintln!(
                "  e {e:.4} ± {s:.4} (truth {te:.4}) status {} alts {:?} method {} from {} dyn {} chi2 {:?} alts {} distrust {:?} poor {:?}",
                r.status,
                r.alternatives
                    .iter()
                    .map(|a| (a.e, a.probability))
                    .collect::<Vec<_>>(),
                r.method,
                r.probability_from,
                r.dynamics,
                r.chi2_per_dof,
                r.alternatives.len(),
                r.distrust_linear,
                r.poor_fit
            );
        }
        // Reported as a clean single answer: status ok and no other solution listed (the list of
        // reasons to distrust the linear answer is no excuse: it holds notes such as an assumed
        // magnitude on every fit here, which once hid such fits from this count).
        if pull.abs() > 5.0 && r.status == "ok" && r.alternatives.is_empty() {
            far_and_clean += 1;
        }
        if r.alternatives.is_empty() {
            p.push(pull);
            for (h, interval) in held.iter_mut().zip([r.e_interval_68, r.e_interval_95]) {
                let [lo, hi] = interval.unwrap();
                *h += usize::from((lo..=hi).contains(&te));
            }
        } else {
            two_solutions += 1;
            // One of the listed solutions must be the true one.
            let near = |x: f64| (x - te).abs() <= 0.05 * te.max(0.1);
            if !(near(e) || r.alternatives.iter().any(|a| near(a.e))) {
                eprintln!(
                    "{name}: e {e} and alternatives {:?}, truth {te}",
                    r.alternatives
                );
                missed += 1;
            }
        }
    }
    // Regression: a strongly hyperbolic realisation once listed two minima of one wrong valley and not
    // the true one (the headline came from the valley the posterior favoured, the list from another).
    assert_eq!(
        missed, 0,
        "{name}: the true solution not among those listed in {missed} fits"
    );
    let n = p.len() as f64;
    let mean = p.iter().sum::<f64>() / n;
    let sd = (p.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    let within = |k: f64| p.iter().filter(|x| x.abs() <= k).count() as f64 / n;
    let within3 = within(3.0);
    let s = Summary {
        n: p.len(),
        two_solutions,
        within1: within(1.0),
        within2: within(2.0),
        mean,
        sd,
        within3,
        far_and_clean,
        covered: held.map(|h| h as f64 / n),
        every: spread(&every),
    };
    eprintln!(
        "{name}: {} fits with one solution ({} more listing a second), pull mean {:+.3} sd {:.3}, within 1σ/2σ/3σ {:.1}/{:.1}/{:.1} %, max |pull| {:.2}, {} far off yet clean; the 68 % and 95 % intervals of e hold the truth in {:.1} and {:.1} %; over all {} fits pull sd {:.3}, within 3σ {:.1} %",
        s.n,
        s.two_solutions,
        s.mean,
        s.sd,
        100.0 * s.within1,
        100.0 * s.within2,
        100.0 * s.within3,
        p.iter().fold(0.0f64, |m, x| m.max(x.abs())),
        s.far_and_clean,
        100.0 * s.covered[0],
        100.0 * s.covered[1],
        every.len(),
        s.every.0,
        100.0 * s.every.1
    );
    s
}

fn check(name: &str, seed: u64) {
    let s = common_checks(name, seed);
    assert!(s.mean.abs() <= 0.2, "{name}: mean {}", s.mean);
    assert!((0.9..=1.1).contains(&s.sd), "{name}: sd {}", s.sd);
}

fn common_checks(name: &str, seed: u64) -> Summary {
    let s = pulls(name, seed);
    assert!(
        s.n + s.two_solutions >= REALISATIONS * 98 / 100,
        "{name}: {} fits",
        s.n
    );
    assert_eq!(s.far_and_clean, 0, "{name}");
    assert!(s.sd <= 1.1, "{name}: sd {}", s.sd);
    assert!(s.within3 >= 0.99, "{name}: within 3σ {}", s.within3);
    // Over every fit, those listing another solution too: a solution holding 95 % of the posterior
    // has its own σ (a far valley of 0.04 % once widened σ_e forty times, pull sd 0.71 over all), and
    // the truth lies in a listed minor solution about as often as the shares say.
    assert!(
        s.every.1 >= 0.97,
        "{name}: within 3σ over all fits {}",
        s.every.1
    );
    // The central intervals hold the truth in their nominal share, within three binomial standard
    // errors over up to 250 fits (68.27 ± 8.8 %, 95 ± 4.1 %), lopsided e included.
    let [c68, c95] = s.covered;
    assert!((c68 - 0.6827).abs() <= 0.088, "{name}: 68 % interval {c68}");
    assert!((c95 - 0.95).abs() <= 0.041, "{name}: 95 % interval {c95}");
    s
}

#[test]
fn three_night_main_belt_intervals_cover_at_least_their_nominal_share() {
    let s = common_checks("mainbelt_3n", 1);
    // Normal coverage at 1σ and 2σ (68.3 %, 95.4 %), less three binomial standard errors over 250.
    assert!(s.within1 >= 0.683 - 0.09, "{}", s.within1);
    assert!(s.within2 >= 0.954 - 0.04, "{}", s.within2);
    assert!(s.mean.abs() <= 0.3, "mean {}", s.mean);
}

#[test]
fn three_night_near_earth_pulls_are_calibrated() {
    check("near_earth_3n", 2);
}

#[test]
fn three_night_comet_like_pulls_are_calibrated() {
    check("comet_like_3n", 3);
}

#[test]
fn three_night_weakly_hyperbolic_pulls_are_calibrated() {
    check("hyp_weak_3n", 4);
}

#[test]
fn three_night_strongly_hyperbolic_pulls_are_calibrated() {
    check("hyp_strong_3n", 5);
}

#[test]
fn three_night_near_parabolic_pulls_are_calibrated() {
    check("near_parabolic_bound_3n", 6);
}

#[test]
fn a_strongly_hyperbolic_draw_whose_true_minimum_fits_worse_still_lists_it() {
    // Regression: in these two noise draws (of seeds other than the calibration's) a wrong minimum,
    // e ≈ 18.4, fits better than the true one (e 2.4) by Δχ² ≈ 10.6. The true one was dropped as
    // beyond Δχ² 9 and the wrong one reported alone with status ok, 24σ off.
    let t = util::synthetic("hyp_strong_3n");
    let te = t["e"].as_f64().unwrap();
    let near = |x: f64| (x - te).abs() <= 0.05 * te;
    for (seed, draw) in [(105, 200), (205, 102)] {
        let mut rng = SplitMix::new(seed);
        let tr = (0..=draw)
            .map(|_| util::noisy(&t, &mut rng, 0.2))
            .last()
            .unwrap();
        let r = fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default());
        let listed: Vec<(f64, f64)> = r.alternatives.iter().map(|a| (a.e, a.delta_chi2)).collect();
        assert!(
            !listed.is_empty(),
            "seed {seed} draw {draw}: e {:?} alone",
            r.e
        );
        assert!(
            near(r.e.unwrap()) || listed.iter().any(|(e, _)| near(*e)),
            "seed {seed} draw {draw}: e {:?}, others {listed:?}, truth {te}",
            r.e
        );
        assert!(
            r.distrust_linear
                .iter()
                .any(|w| w.contains("other solution(s) the positions also allow")),
            "{:?}",
            r.distrust_linear
        );
    }
}

#[test]
fn ten_night_main_belt_pulls_are_calibrated() {
    check("mainbelt_10n", 7);
}

#[test]
fn three_night_main_belt_state_covariance_is_calibrated_along_every_axis_and_along_e() {
    // Where the e pulls of the short main-belt arc are narrower than unit width, the cause is not the
    // covariance: the fitted state's Mahalanobis distance² from the true state (the reference state at
    // the same epoch) averages 6, as a χ²(6) must; along each principal axis of the covariance the
    // squared whitened error averages 1; and the error projected on the gradient of e at the truth,
    // in units of its linear σ, has unit spread. The e pulls are narrower only because e curves: ê
    // lands higher along the weak direction, where e's σ is larger too.
    let t = util::synthetic("mainbelt_3n");
    let true_state: Vec<f64> = t["state_helio"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let truth_x = nalgebra::Vector6::from_column_slice(&true_state);
    let (tr, tv) = interloper::physics::split_state(&truth_x);
    let grad = eccentricity_gradient(&tr, &tv, MU_SUN).transpose();
    let epoch = t["epoch_tdb"].as_f64().unwrap();
    let mut rng = SplitMix::new(1);
    let mut d2 = Vec::new();
    let mut axes = [0.0; 6];
    let mut along_e = Vec::new();
    for _ in 0..200 {
        let r = fit_tracklet(
            &util::noisy(&t, &mut rng, 0.2),
            &ObserverModel::new(),
            &FitOptions::default(),
        );
        assert!((r.epoch_jd_tdb.unwrap() - epoch).abs() < 1e-6);
        let (x, c) = (r.state.unwrap(), r.covariance.unwrap());
        let cov = nalgebra::Matrix6::from_fn(|i, j| c[i][j]);
        let d = nalgebra::Vector6::from_fn(|i, _| x[i] - true_state[i]);
        d2.push((d.transpose() * cov.try_inverse().unwrap() * d)[0]);
        let eig = cov.symmetric_eigen();
        for (k, a) in axes.iter_mut().enumerate() {
            *a += eig.eigenvectors.column(k).dot(&d).powi(2) / eig.eigenvalues[k];
        }
        along_e.push(grad.dot(&d) / (grad.transpose() * cov * grad)[0].sqrt());
    }
    let n = d2.len() as f64;
    let mean = d2.iter().sum::<f64>() / n;
    let axes = axes.map(|a| a / n);
    let m_e = along_e.iter().sum::<f64>() / n;
    let sd_e = (along_e.iter().map(|x| (x - m_e).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    eprintln!(
        "mainbelt_3n: mean Mahalanobis² of the state {mean:.2} over {n} fits (χ²(6): 6); per axis \
         {axes:.2?}; error along e's gradient at the truth: mean {m_e:+.3} sd {sd_e:.3}"
    );
    // χ²(6) has variance 12 and χ²(1) variance 2: three standard errors of the mean over 200 fits.
    assert!((mean - 6.0).abs() <= 3.0 * (12.0 / n).sqrt(), "{mean}");
    for a in axes {
        assert!((a - 1.0).abs() <= 3.0 * (2.0 / n).sqrt(), "{axes:?}");
    }
    assert!((0.9..=1.1).contains(&sd_e), "{sd_e}");
    assert!(m_e.abs() <= 0.2, "{m_e}");
}
