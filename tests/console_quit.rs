//! Quitting never loses a decision: lines keyed just before the console closes are on disk once
//! `Runtime::shutdown` returns (it waits for the journal's thread to write everything sent to it).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::runtime::{self, AppEvent};
use interloper::console::state::App;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::FitOptions;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;

/// Regression: the console's process ended right after the quit key while the journal's thread
/// could still hold decisions keyed a moment before (the thread was never waited for).
#[test]
fn decisions_keyed_just_before_quitting_are_all_on_disk_when_shutdown_returns() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let name = std::fs::read_dir(&root)
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.to_string_lossy().contains("qk0f3ra"))
        .unwrap();
    let bytes = std::fs::read(&name).unwrap();
    let intake = read_bytes("qk0f3ra", &bytes, &SiteTable::builtin(), &Limits::default());
    let fits = fit_all(merge(intake.tracklets), &FitOptions::default(), 1);
    assert!(!fits.is_empty());

    let watched = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    let stop = Arc::new(AtomicBool::new(false));
    let (tx, _rx) = std::sync::mpsc::channel();
    let setup = runtime::Setup::new(watched.path().to_path_buf(), state.path().to_path_buf());
    let (mut rt, _, _) = runtime::start(setup, stop.clone(), tx).unwrap();
    let mut app = App::new(Keymap::builtin());
    app.me = "tester".into();
    for f in &fits {
        app.on_fit(1, f.clone(), f.n_obs);
    }
    const KEYED: usize = 40;
    for k in 0..KEYED {
        let c = ['p', 'x', 'w'][k % 3];
        let key = KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE);
        assert!(rt.handle(&mut app, AppEvent::Key(key)));
    }
    stop.store(true, std::sync::atomic::Ordering::Relaxed);
    rt.shutdown();

    let journal = std::fs::read_to_string(state.path().join("decisions.jsonl")).unwrap();
    let lines = journal.lines().filter(|l| !l.trim().is_empty()).count();
    assert_eq!(
        lines, KEYED,
        "keyed {KEYED} changes, found on disk:\n{journal}"
    );
}
