//! Alerts in the console: `!` opens the night's alerts (newest first, with the rule), `Q` makes them
//! quiet (still listed, no bell, flash or command) and back; Esc closes the list. Drawn at 80×24 on a
//! TestBackend with an alert raised by a fit of the demo night's unbound candidate.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::panes::Theme;
use interloper::console::state::{App, Mode};
use interloper::console::view;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::physics::observe::ObserverModel;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

fn key(c: char) -> KeyEvent {
    KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE)
}

fn screen(app: &mut App) -> String {
    let mut t = Terminal::new(TestBackend::new(80, 24)).unwrap();
    t.draw(|f| view::draw(f, app, Theme { color: false }))
        .unwrap();
    let buf = t.backend().buffer().clone();
    let mut s = String::new();
    for y in 0..24 {
        for x in 0..80 {
            s.push_str(buf[(x, y)].symbol());
        }
        s.push('\n');
    }
    s
}

#[test]
fn the_alert_list_opens_names_the_candidate_and_quiet_silences_the_next_alert() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let sites = SiteTable::builtin();
    let mut tr = Vec::new();
    for n in [
        "003_qka2e7f_n1.psv",
        "015_qka2e7f_n2.psv",
        "023_qka2e7f_n3.psv",
    ] {
        let bytes = std::fs::read(dir.join(n)).unwrap();
        tr.extend(read_bytes(n, &bytes, &sites, &Limits::default()).tracklets);
    }
    let t = merge(tr).remove(0);
    let fit = fit_tracklet(&t, &ObserverModel::new(), &FitOptions::default());
    assert!(fit.p_hyperbolic.unwrap() > 0.99);

    let mut app = App::new(Keymap::builtin());
    let (alert, fx) = app.alerts.on_fit(&fit).unwrap();
    assert_eq!(alert.object, "qka2e7f");
    assert!(fx.bell && fx.flash, "loud by default");
    app.on_fit(1, fit.clone(), t.obs.len());
    let s = screen(&mut app);
    assert!(s.contains(" ALERT "), "the status line flashes:\n{s}");

    app.on_key(key('!'));
    assert_eq!(app.mode, Mode::Alerts);
    let s = screen(&mut app);
    assert!(s.contains("1 alert"), "{s}");
    assert!(s.contains("qka2e7f: P(unbound) crossed"), "{s}");
    app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
    assert_eq!(app.mode, Mode::List);

    app.on_key(key('Q'));
    assert!(app.alerts.quiet);
    assert!(app.message.as_deref().unwrap().contains("quiet"));
    let mut low = fit.clone();
    low.p_hyperbolic = Some(0.2);
    assert!(app.alerts.on_fit(&low).is_none());
    let (_, fx) = app.alerts.on_fit(&fit).unwrap();
    assert!(
        !fx.bell && !fx.flash && fx.command.is_none(),
        "quiet: listed only"
    );
    assert_eq!(app.alerts.list.len(), 2);
    app.on_key(key('Q'));
    assert!(!app.alerts.quiet);
}
