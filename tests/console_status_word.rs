//! The console's word for an undetermined fit (`model`) is what the filter finds, and sorting by status
//! keeps usable fits (ok and undetermined) before poor ones, as the ranking does.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::console::keymap::Keymap;
use interloper::console::state::{App, SortKey};
use interloper::fitting::fit::FitResult;
use interloper::fitting::kinds::FitStatus;

fn record(object: &str, status: FitStatus) -> FitResult {
    let mut r = FitResult::failed(
        &util::synthetic_file("mainbelt_3n.psv"),
        "made for the test",
    );
    r.object = object.into();
    r.error = None;
    r.status = status;
    r
}

fn shown(app: &App) -> Vec<String> {
    app.view
        .iter()
        .map(|&i| app.candidates[i].fit.object.clone())
        .collect()
}

#[test]
fn the_filter_finds_an_undetermined_fit_by_its_shown_word_and_the_status_sort_keeps_it_usable() {
    let mut app = App::new(Keymap::builtin());
    app.on_fit(1, record("c-poor", FitStatus::PoorFit), 3);
    app.on_fit(1, record("b-open", FitStatus::Undetermined), 3);
    app.on_fit(1, record("a-ok", FitStatus::Ok), 3);
    app.filter = "model".into();
    app.refresh_view();
    assert_eq!(shown(&app), ["b-open"]);
    app.filter = "undetermined".into();
    app.refresh_view();
    assert_eq!(shown(&app), ["b-open"]);
    app.filter.clear();
    app.sort = SortKey::Status;
    app.refresh_view();
    // Alphabetically "poor-fit" would come before "undetermined".
    assert_eq!(shown(&app), ["a-ok", "b-open", "c-poor"]);
}
