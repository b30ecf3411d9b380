//! P(unbound) responds to the population model as Bayes' rule says it must: multiplying the
//! interstellar density by ten multiplies the posterior odds by ten (within the estimate's own
//! numerical error) on every path — the one-night quadrature, the range profile of two nights or of
//! an untrusted longer arc, and the energy line of a trusted least-squares fit — while the Bayes
//! factor, the data's own evidence, stays where it was.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::fit::{FitOptions, FitResult, fit_tracklet};
use interloper::fitting::input::Tracklet;
use interloper::physics::observe::ObserverModel;
use std::sync::Arc;

mod util;

fn tracklets(file: &str, sites_file: Option<&str>) -> Vec<Tracklet> {
    let mut sites = SiteTable::builtin();
    if let Some(s) = sites_file {
        let text = std::fs::read_to_string(util::reference_path(s)).unwrap();
        sites.load_toml(s, &text).unwrap();
    }
    let bytes = std::fs::read(util::reference_path(file)).unwrap();
    merge(read_bytes(file, &bytes, &sites, &Limits::default()).tracklets)
}

fn both(tr: &Tracklet) -> (FitResult, FitResult) {
    let model = ObserverModel::new();
    let base = FitOptions::default();
    let scaled = FitOptions {
        population: Arc::new(base.population.with_interstellar_scaled(10.0)),
        ..FitOptions::default()
    };
    (
        fit_tracklet(tr, &model, &base),
        fit_tracklet(tr, &model, &scaled),
    )
}

/// Checks one tracklet and returns the path its answer took.
fn check(tr: &Tracklet) -> &'static str {
    let (a, b) = both(tr);
    let (la, lb) = (a.log10_odds.unwrap(), b.log10_odds.unwrap());
    // One-sigma errors of the odds, in log10, from each estimate; a little slack for rounding.
    let err = |r: &FitResult| {
        let p = r.p_hyperbolic.unwrap();
        let spread = p * (1.0 - p);
        if spread > 0.0 {
            r.p_hyperbolic_error.unwrap_or(0.0) / spread / std::f64::consts::LN_10
        } else {
            0.0
        }
    };
    let tol = 3.0 * (err(&a) + err(&b)) + 1e-6;
    eprintln!(
        "{} via {}: log10 odds {la:.4} → {lb:.4} (tolerance {tol:.4})",
        tr.object, a.probability_from
    );
    assert_eq!(a.probability_from, b.probability_from);
    assert!(((lb - la) - 1.0).abs() <= tol, "{}: {la} → {lb}", tr.object);
    if let (Some(ka), Some(kb)) = (a.log10_bayes_factor, b.log10_bayes_factor) {
        assert!(
            (ka - kb).abs() <= tol,
            "{}: Bayes factor moved {ka} → {kb}",
            tr.object
        );
    }
    a.probability_from.as_str()
}

#[test]
fn ten_times_the_interstellar_density_is_ten_times_the_odds_on_every_path() {
    let mut paths = std::collections::BTreeSet::new();
    for f in [
        "synthetic/mainbelt_1n.psv",
        "synthetic/hyp_strong_1n.psv",
        "synthetic/mainbelt_3n.psv",
        "synthetic/hyp_weak_3n.psv",
        "synthetic/comet_like_3n.psv",
    ] {
        for t in tracklets(f, None) {
            paths.insert(check(&t));
        }
    }
    let sky = "population_sky/sites.toml";
    for t in tracklets("population_sky/two_night.psv", Some(sky))
        .iter()
        .take(6)
    {
        paths.insert(check(t));
    }
    eprintln!("paths covered: {paths:?}");
    for p in ["short-arc-quadrature", "range-profile", "linear"] {
        assert!(paths.contains(p), "{p} not covered: {paths:?}");
    }
}
