//! The plan overlay through ratatui's TestBackend: `T` opens it and asks the runtime for a plan, the
//! plan made from the demo night's real fits (at the sites that observed them, the 24 hours after the
//! last position) is drawn as in its snapshots at 80×24 and 160×48, the help lists it, Esc closes it.
//! UPDATE_SNAPSHOTS=1 rewrites the snapshots (review the diff before committing).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::console::panes::overlay::help_lines;
use interloper::console::plantask::plan_sites;
use interloper::console::state::{App, Effect, Mode};
use interloper::feed::sites::SiteTable;
use interloper::fitting::plan::{PlanOptions, plan};
use interloper::physics::observe::ObserverModel;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use util::screens::{check, screen};

fn demo_app() -> App {
    util::screens::demo_app(|_| {})
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
