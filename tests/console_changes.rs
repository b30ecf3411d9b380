//! What changed since the observer looked: a row is marked new (`+`) until the cursor has been on it,
//! updated (`~`) after a refit it has not seen, and `c` jumps to the next such row; the orbit pane says
//! when the candidate arrived and how its answer moved refit by refit.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::state::App;
use interloper::console::state::fresh::Mark;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::physics::observe::ObserverModel;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

fn fit_of(files: &[&str]) -> interloper::fitting::fit::FitResult {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let sites = SiteTable::builtin();
    let mut tr = Vec::new();
    for n in files {
        let bytes = std::fs::read(dir.join(n)).unwrap();
        tr.extend(read_bytes(n, &bytes, &sites, &Limits::default()).tracklets);
    }
    let t = interloper::feed::tracklets::merge(tr).remove(0);
    fit_tracklet(&t, &ObserverModel::new(), &FitOptions::default())
}

fn mark(app: &App, object: &str) -> Mark {
    app.candidates
        .iter()
        .find(|c| c.fit.object == object)
        .unwrap()
        .fresh
        .mark()
}

#[test]
fn new_and_updated_rows_are_marked_until_visited_and_c_jumps_to_them() {
    let mut app = App::new(Keymap::builtin());
    let a = fit_of(&["003_qka2e7f_n1.psv"]);
    let b = fit_of(&["001_qk0f3ra_n1.psv"]);
    app.on_fit(1, a, 5);
    app.on_fit(1, b, 4);
    assert_eq!(mark(&app, "qka2e7f"), Mark::New);
    assert_eq!(mark(&app, "qk0f3ra"), Mark::New);
    let key = |c: char| KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE);
    app.on_key(key('g'));
    let first = app.selected.clone().unwrap();
    assert_eq!(
        mark(&app, &first),
        Mark::Seen,
        "the row under the cursor is seen"
    );
    app.on_key(key('c'));
    let second = app.selected.clone().unwrap();
    assert_ne!(first, second, "c went to the other new row");
    assert_eq!(mark(&app, &second), Mark::Seen);
    app.on_key(key('c'));
    assert!(app.message.as_deref().unwrap().contains("nothing new"));

    // A second night refits qka2e7f: updated until visited, and its history shows both answers.
    let a2 = fit_of(&["003_qka2e7f_n1.psv", "015_qka2e7f_n2.psv"]);
    app.on_fit(2, a2, 10);
    assert_eq!(mark(&app, "qka2e7f"), Mark::Updated);
    let c = app
        .candidates
        .iter()
        .find(|c| c.fit.object == "qka2e7f")
        .unwrap();
    let h = c.fresh.history_line(200);
    assert!(h.contains("(1n,5) → ") && h.contains("(2n,10)"), "{h}");
    assert!(
        c.fresh
            .age_line(std::time::SystemTime::now())
            .contains("2 fits")
    );
    while app.selected.as_deref() != Some("qka2e7f") {
        app.on_key(key('c'));
    }
    assert_eq!(mark(&app, "qka2e7f"), Mark::Seen);
}

#[test]
fn the_cursor_starts_on_the_top_row_and_follows_its_candidate_once_moved() {
    let mut app = App::new(Keymap::builtin());
    // The first fit to arrive is an ordinary asteroid; the unbound one arrives later and ranks first.
    app.on_fit(1, fit_of(&["001_qk0f3ra_n1.psv"]), 4);
    app.on_fit(
        1,
        fit_of(&[
            "003_qka2e7f_n1.psv",
            "015_qka2e7f_n2.psv",
            "023_qka2e7f_n3.psv",
        ]),
        15,
    );
    let top = app.candidates[app.view[0]].fit.object.clone();
    assert_eq!(top, "qka2e7f");
    assert_eq!(
        app.selected.as_deref(),
        Some("qka2e7f"),
        "on the top row, not the first fitted"
    );
    // Once the observer moves, the cursor stays on its candidate as the list re-ranks.
    app.on_key(KeyEvent::new(KeyCode::Char('j'), KeyModifiers::NONE));
    assert_eq!(app.selected.as_deref(), Some("qk0f3ra"));
    app.on_fit(1, fit_of(&["002_qk8w3bs_n1.psv"]), 4);
    assert_eq!(app.selected.as_deref(), Some("qk0f3ra"));
}

#[test]
fn the_row_the_cursor_starts_on_is_seen_once_the_observer_moves_off_it() {
    // The cursor starts on the top row; moving down once left that row marked new.
    let mut app = App::new(Keymap::builtin());
    app.on_fit(1, fit_of(&["003_qka2e7f_n1.psv"]), 5);
    app.on_fit(1, fit_of(&["001_qk0f3ra_n1.psv"]), 4);
    let top = app.candidates[app.view[0]].fit.object.clone();
    assert_eq!(app.selected.as_deref(), Some(top.as_str()));
    assert_eq!(mark(&app, &top), Mark::New, "nobody has pressed a key yet");
    app.on_key(KeyEvent::new(KeyCode::Char('j'), KeyModifiers::NONE));
    assert_ne!(app.selected.as_deref(), Some(top.as_str()));
    assert_eq!(mark(&app, &top), Mark::Seen);
}
