//! A correlation between a position's RA and Dec errors (the ADES `rmsCorr` column) counts on every
//! path: a one-night arc once gave byte-identical answers with and without it (its night's motion
//! was fitted one coordinate at a time). Without a correlation, or with `rmsCorr` 0, nothing moves.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::fit::{FitOptions, FitResult, fit_tracklet};
use interloper::physics::observe::ObserverModel;

/// The demo night's one-night arc of qk6j1uv, with an `rmsCorr` column of `corr` when given.
fn fit_with(corr: Option<&str>) -> FitResult {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/sample_feeds/demo_night/024_qk6j1uv_n3.psv"
    );
    let text = std::fs::read_to_string(path).unwrap();
    let lines: Vec<String> = text
        .lines()
        .map(|l| match corr {
            Some(_) if l.starts_with('#') || l.trim().is_empty() => l.to_string(),
            Some(_) if l.contains("obsTime") => format!("{l}|rmsCorr"),
            Some(c) => format!("{l}|{c}"),
            None => l.to_string(),
        })
        .collect();
    let intake = read_bytes(
        "n3.psv",
        lines.join("\n").as_bytes(),
        &SiteTable::builtin(),
        &Limits::default(),
    );
    assert!(intake.errors.is_empty(), "{:?}", intake.errors.first());
    let tr = merge(intake.tracklets).remove(0);
    assert_eq!(tr.n_nights(), 1);
    fit_tracklet(&tr, &ObserverModel::new(), &FitOptions::default())
}

#[test]
fn a_one_night_arc_weighs_the_correlation_of_its_positions_errors() {
    let plain = fit_with(None);
    let zero = fit_with(Some("0"));
    let tied = fit_with(Some("0.9"));
    let (lp, lz, lt) = (
        plain.log10_odds.unwrap(),
        zero.log10_odds.unwrap(),
        tied.log10_odds.unwrap(),
    );
    assert!((lp - lz).abs() < 1e-9, "{lp} {lz}");
    assert!(
        (lp - lt).abs() > 0.05,
        "rmsCorr 0.9 changed nothing: {lp} {lt}"
    );
    assert!((plain.chi2_per_dof.unwrap() - tied.chi2_per_dof.unwrap()).abs() > 0.1);
}
