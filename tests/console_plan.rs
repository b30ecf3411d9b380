//! The plan overlay through ratatui's TestBackend: `T` opens it and asks the runtime for a plan, the
//! plan made from the demo night's real fits (at the sites that observed them, the 24 hours after the
//! last position) is drawn as in its snapshots at 80×24 and 160×48, the help lists it, Esc closes it.
//! UPDATE_SNAPSHOTS=1 rewrites the snapshots (review the diff before committing).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::panes::Theme;
use interloper::console::panes::overlay::help_lines;
use interloper::console::plantask::plan_sites;
use interloper::console::state::{App, Effect, Mode};
use interloper::console::view;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::FitOptions;
use interloper::fitting::plan::{PlanOptions, plan};
use interloper::physics::observe::ObserverModel;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::path::PathBuf;

fn demo_app() -> App {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&root)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    files.sort();
    let sites = SiteTable::builtin();
    let mut tracklets = Vec::new();
    let mut app = App::new(Keymap::builtin());
    // Arrival ages read "just now" whatever the machine's speed.
    app.now = || std::time::SystemTime::UNIX_EPOCH;
    app.clock = || "2027-02-26T12:00:00Z".into();
    for f in &files {
        let name = f.file_name().unwrap().to_string_lossy().to_string();
        let bytes = std::fs::read(f).unwrap();
        tracklets.extend(read_bytes(&name, &bytes, &sites, &Limits::default()).tracklets);
    }
    for r in fit_all(merge(tracklets), &FitOptions::default(), 2) {
        let n = r.n_obs;
        app.on_fit(1, r, n);
    }
    app.status.files_seen = files.len();
    app.status.last_arrival = Some("03:12:55Z".into());
    app.message = None;
    app
}

fn screen(app: &mut App, w: u16, h: u16) -> String {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| view::draw(f, app, Theme { color: false }))
        .unwrap();
    let b = t.backend().buffer();
    let mut s = String::new();
    for y in 0..b.area.height {
        let mut line = String::new();
        for x in 0..b.area.width {
            line.push_str(b.cell((x, y)).map_or(" ", |c| c.symbol()));
        }
        s.push_str(line.trim_end());
        s.push('\n');
    }
    s
}

fn check(name: &str, got: &str) {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/snapshots")
        .join(format!("{name}.txt"));
    if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, got).unwrap();
        return;
    }
    let want = std::fs::read_to_string(&path)
        .unwrap_or_else(|_| panic!("missing snapshot {}; UPDATE_SNAPSHOTS=1", path.display()));
    assert_eq!(
        got, want,
        "snapshot {name} differs (UPDATE_SNAPSHOTS=1 to accept)"
    );
}

#[test]
fn the_plan_overlay_opens_draws_and_closes() {
    let mut app = demo_app();
    assert!(
        help_lines(&app)
            .iter()
            .any(|l| l.contains("plan") && l.contains('T'))
    );
    let effects = app.on_key(KeyEvent::new(KeyCode::Char('T'), KeyModifiers::NONE));
    assert_eq!(effects, vec![Effect::Plan]);
    assert_eq!(app.mode, Mode::Plan);
    assert!(screen(&mut app, 80, 24).contains("planning…"));
    // The plan, made here as the runtime's worker would.
    let fits: Vec<_> = app.candidates.iter().map(|c| c.fit.clone()).collect();
    let sites = plan_sites(&fits, &SiteTable::builtin());
    assert!(!sites.is_empty());
    let p = plan(
        &fits,
        &sites,
        &PlanOptions::default(),
        &ObserverModel::new(),
    );
    assert!(!p.items.is_empty());
    app.plan = Some(p);
    for (w, h) in [(80u16, 24u16), (100, 30), (160, 48)] {
        check(&format!("plan_{w}x{h}"), &screen(&mut app, w, h));
    }
    app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
    assert_eq!(app.mode, Mode::List);
}
