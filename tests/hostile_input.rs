//! Input that parses but cannot be an observation of a moving object is refused with its reason
//! instead of being fitted and scored (the per-line refusals are in the malformed corpus).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::physics::observe::ObserverModel;

#[test]
fn three_identical_positions_at_the_pole_are_refused_not_scored() {
    let text = "# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|mag|band\n\
                P1|CCD|TV1|2027-02-26T03:00:00Z|120.0|+89.99999|0.2|0.2|20|G\n\
                P1|CCD|TV1|2027-02-26T03:20:00Z|120.0|+89.99999|0.2|0.2|20|G\n\
                P1|CCD|TV1|2027-02-26T03:40:00Z|120.0|+89.99999|0.2|0.2|20|G\n";
    let t = read_bytes(
        "pole.psv",
        text.as_bytes(),
        &SiteTable::builtin(),
        &Limits::default(),
    )
    .tracklets
    .remove(0);
    let r = fit_tracklet(&t, &ObserverModel::new(), &FitOptions::default());
    assert_eq!(r.status, "failed");
    assert!(r.p_hyperbolic.is_none());
    assert!(r.error.unwrap().contains("do not move"));
}

/// Regression: a PSV file of twice the observation limit (one record a line) was parsed in full, and
/// only then refused; the line count allowed two lines a record, as 80-column files may take.
#[test]
fn a_file_with_too_many_lines_is_refused_before_parsing() {
    let mut text = String::from("# version=2022\ntrkSub|mode|stn|obsTime|ra|dec\n");
    for k in 0..Limits::default().max_observations + 2_000 {
        text.push_str(&format!(
            "B{:05}|CCD|TV1|2027-02-26T03:00:00Z|120.5|+10.25\n",
            k % 1000
        ));
    }
    let intake = read_bytes(
        "big.psv",
        text.as_bytes(),
        &SiteTable::builtin(),
        &Limits::default(),
    );
    assert!(intake.rejected);
    assert!(intake.tracklets.is_empty());
    assert!(
        intake.errors[0].reason.contains("refused before parsing"),
        "{}",
        intake.errors[0].reason
    );
}

/// Regression: one position of the strongly hyperbolic three-night arc (the synthetic reference of
/// tests/reference/make_synthetic.py) dated a year early sent the fit through range profiles with the
/// planets over the whole year: over seven minutes for one tracklet at five years, holding a watcher's
/// worker. The fit now stops at its time budget, says so and shows no probability; the rest of the
/// batch is answered as ever.
#[test]
fn a_position_a_year_from_the_others_stops_at_the_time_budget_and_says_so() {
    let path = format!(
        "{}/tests/reference/data/synthetic/hyp_strong_3n.psv",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(path).unwrap();
    let mut moved = false;
    let shifted: String = text
        .lines()
        .map(|l| {
            if !moved && l.contains("|2026-11-26T") {
                moved = true;
                format!("{}\n", l.replacen("|2026-11-26T", "|2025-11-26T", 1))
            } else {
                format!("{l}\n")
            }
        })
        .collect();
    assert!(moved);
    let t = read_bytes(
        "year.psv",
        shifted.as_bytes(),
        &SiteTable::builtin(),
        &Limits::default(),
    )
    .tracklets
    .remove(0);
    let r = fit_tracklet(&t, &ObserverModel::new(), &FitOptions::default());
    let said = r
        .poor_fit
        .iter()
        .chain(r.error.iter())
        .any(|w| w.contains("time budget"));
    assert!(said, "{:?} {:?} {:?}", r.status, r.poor_fit, r.error);
    assert!(r.p_hyperbolic.is_none() && r.log10_odds.is_none());
    assert_ne!(r.status, "ok");
}

/// Regression: one observation dated past the Earth model (2150) failed its whole tracklet when fitted,
/// eleven good positions with it; it is refused as its own line, as one before 1972 is.
#[test]
fn an_observation_past_the_earth_model_is_refused_as_its_own_line() {
    let text = "# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|mag|band\n\
                F1|CCD|TV1|2027-02-26T03:00:00Z|120.0|10.0|0.2|0.2|20|G\n\
                F1|CCD|TV1|2150-02-26T03:20:00Z|120.01|10.0|0.2|0.2|20|G\n\
                F1|CCD|TV1|2027-02-26T03:40:00Z|120.02|10.0|0.2|0.2|20|G\n";
    let intake = read_bytes(
        "future.psv",
        text.as_bytes(),
        &SiteTable::builtin(),
        &Limits::default(),
    );
    assert_eq!(intake.errors.len(), 1, "{:?}", intake.errors);
    let e = &intake.errors[0];
    assert_eq!((e.line, e.column.as_deref()), (4, Some("obsTime")), "{e}");
    assert_eq!(intake.tracklets[0].obs.len(), 2);
}
