//! The console lists candidates in the order `fit` ranks them, also where the log-odds run past any
//! fixed range: strongly unbound three-night arcs reach log₁₀ odds of 10⁵ and more, and a clamp in
//! the console's sort once tied them all and put them in id order (a regression test).
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::state::App;
use interloper::fitting::fit::{FitResult, rank};
use interloper::fitting::input::Tracklet;
use interloper::fitting::kinds::FitStatus;

fn record(id: &str, status: FitStatus, log10_odds: Option<f64>) -> FitResult {
    let mut f = FitResult::empty(&Tracklet::new(id.into(), format!("{id}.psv"), Vec::new()));
    f.status = status;
    f.log10_odds = log10_odds;
    f.p_hyperbolic = log10_odds.map(|l| 1.0 / (1.0 + 10f64.powf(-l)));
    f
}

#[test]
fn the_console_ranks_as_fit_does_beyond_any_fixed_range_of_log_odds() {
    let records = vec![
        record("a1", FitStatus::Ok, Some(120_000.0)),
        record("a2", FitStatus::Ok, Some(364_591.7)),
        record("a3", FitStatus::Ok, Some(109_990.7)),
        record("a4", FitStatus::Ok, Some(2.5)),
        record("a5", FitStatus::Ok, Some(-3.0)),
        record("a6", FitStatus::PoorFit, Some(500_000.0)),
        record("a7", FitStatus::Undetermined, Some(421.1)),
        record("a8", FitStatus::Ok, Some(-1.0e6)),
        record("a9", FitStatus::Ok, Some(2.500_001)),
        record("b0", FitStatus::Failed, None),
    ];
    let mut ranked = records.clone();
    rank(&mut ranked);
    let want: Vec<String> = ranked.iter().map(|r| r.object.clone()).collect();
    let mut app = App::new(Keymap::builtin());
    for r in records {
        app.on_fit(1, r, 0);
    }
    let got: Vec<String> = app
        .view
        .iter()
        .map(|&i| app.candidates[i].fit.object.clone())
        .collect();
    assert_eq!(got, want);
    assert_eq!(&want[..3], ["a2", "a1", "a3"], "{want:?}");
}
