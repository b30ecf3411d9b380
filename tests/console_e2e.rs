//! End to end: the console's event loop runs on a TestBackend against a temporary watched directory into
//! which demo files are written while it runs. Scripted keys then decide and exclude; the test checks
//! that the candidates appear ranked, the decision reaches the journal on disk, and an excluded
//! observation changes the fit; another observer's decision, written to the same journal by another
//! writer, shows within a second with their name; and a console started again on the same state
//! directory fits with the exclusion and shows the decisions.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::panes::Theme;
use interloper::console::runtime::{self, AppEvent};
use interloper::console::state::App;
use interloper::feed::journal::{Entry, Journal, Verdict};
use interloper::feed::watcher::WatchOptions;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

#[derive(Default, Clone, Debug)]
struct Seen {
    order: Vec<String>,
    used: Vec<(String, usize, Option<f64>)>,
    /// (object, verdict, observer) of every standing decision.
    decided: Vec<(String, String, String)>,
}

fn wait_for(seen: &Arc<Mutex<Seen>>, what: &str, f: impl Fn(&Seen) -> bool) -> Seen {
    let deadline = Instant::now() + Duration::from_secs(60);
    loop {
        let s = seen.lock().unwrap().clone();
        if f(&s) {
            return s;
        }
        assert!(
            Instant::now() < deadline,
            "timed out waiting for {what}: {s:?}"
        );
        std::thread::sleep(Duration::from_millis(50));
    }
}

/// A console on `watched` and `state`, its frames summarised in the returned `Seen`.
struct Console {
    tx: std::sync::mpsc::Sender<AppEvent>,
    seen: Arc<Mutex<Seen>>,
    ui: std::thread::JoinHandle<()>,
    stop: Arc<AtomicBool>,
}

fn console(watched: &std::path::Path, state: &std::path::Path) -> Console {
    let stop = Arc::new(AtomicBool::new(false));
    let (tx, rx) = std::sync::mpsc::channel();
    let opts = WatchOptions {
        settle: Duration::from_millis(200),
        scan_interval: Duration::from_millis(50),
        ..WatchOptions::default()
    };
    let setup = runtime::Setup {
        watch: opts,
        observer: "alice".into(),
        ..runtime::Setup::new(watched.to_path_buf(), state.to_path_buf())
    };
    let (mut rt, decisions, _) = runtime::start(setup, stop.clone(), tx.clone()).unwrap();
    let seen = Arc::new(Mutex::new(Seen::default()));
    let seen_loop = seen.clone();
    let stop_loop = stop.clone();
    let ui = std::thread::spawn(move || {
        let mut app = App::new(Keymap::builtin());
        app.me = "alice".into();
        rt.replayed(&mut app, decisions);
        let mut terminal = Terminal::new(TestBackend::new(120, 36)).unwrap();
        runtime::run_loop(
            &mut terminal,
            &mut app,
            &mut rt,
            &rx,
            &stop_loop,
            Theme { color: false },
            |a| {
                let mut s = seen_loop.lock().unwrap();
                s.order = a
                    .view
                    .iter()
                    .map(|&i| a.candidates[i].fit.object.clone())
                    .collect();
                s.used = a
                    .candidates
                    .iter()
                    .map(|c| (c.fit.object.clone(), c.fit.n_used, c.fit.e))
                    .collect();
                s.decided = a
                    .candidates
                    .iter()
                    .filter_map(|c| {
                        c.decision.as_ref().map(|d| {
                            (
                                c.fit.object.clone(),
                                d.verdict_label().to_string(),
                                d.observer().to_string(),
                            )
                        })
                    })
                    .collect();
            },
        )
        .unwrap();
        rt.shutdown();
    });
    Console { tx, seen, ui, stop }
}

impl Console {
    fn key(&self, c: KeyCode) {
        self.tx
            .send(AppEvent::Key(KeyEvent::new(c, KeyModifiers::NONE)))
            .unwrap()
    }

    fn quit(self) {
        self.key(KeyCode::Char('q'));
        self.ui.join().unwrap();
        self.stop.store(true, std::sync::atomic::Ordering::Relaxed);
    }
}

fn decided(s: &Seen, object: &str, verdict: &str, observer: &str) -> bool {
    s.decided
        .iter()
        .any(|(o, v, w)| o == object && v == verdict && w == observer)
}

#[test]
fn files_arrive_candidates_rank_changes_are_journaled_another_observer_shows_and_a_restart_keeps_them()
 {
    let watched = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    let con = console(watched.path(), state.path());
    let seen = con.seen.clone();
    // Files arrive while the console runs: a main-belt object first, then the hyperbolic one.
    let demo = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&demo)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    files.sort();
    for who in ["qk0f3ra", "qka2e7f"] {
        for f in files.iter().filter(|f| f.to_string_lossy().contains(who)) {
            std::fs::copy(f, watched.path().join(f.file_name().unwrap())).unwrap();
            std::thread::sleep(Duration::from_millis(100));
        }
    }
    let s = wait_for(&seen, "both candidates, fully fitted", |s| {
        s.used.iter().any(|(o, n, _)| o == "qka2e7f" && *n == 15)
            && s.used.iter().any(|(o, n, _)| o == "qk0f3ra" && *n == 12)
    });
    assert_eq!(
        s.order.first().map(String::as_str),
        Some("qka2e7f"),
        "ranked first: {:?}",
        s.order
    );
    con.key(KeyCode::Char('g'));
    con.key(KeyCode::Char('p'));
    wait_for(&seen, "the decision", |s| {
        decided(s, "qka2e7f", "pursue", "alice")
    });
    let journal = std::fs::read_to_string(state.path().join("decisions.jsonl")).unwrap();
    assert!(
        journal.contains("\"object\":\"qka2e7f\"") && journal.contains("\"verdict\":\"pursue\""),
        "{journal}"
    );
    let e_before = s.used.iter().find(|u| u.0 == "qka2e7f").unwrap().2;
    con.key(KeyCode::Char(' '));
    let s = wait_for(&seen, "the refit without one observation", |s| {
        s.used.iter().any(|(o, n, _)| o == "qka2e7f" && *n == 14)
    });
    let e_after = s.used.iter().find(|u| u.0 == "qka2e7f").unwrap().2;
    assert_ne!(
        e_before, e_after,
        "excluding an observation changed nothing"
    );
    // Another observer, another writer on the same journal: the console shows it with their name.
    let (mut bob, _) = Journal::open_as(state.path(), "bob").unwrap();
    bob.append(Entry::decision(
        "qk0f3ra",
        Verdict::SetAside,
        "2027-02-26T03:00:00Z".into(),
    ))
    .unwrap();
    let shown = Instant::now();
    wait_for(&seen, "bob's decision", |s| {
        decided(s, "qk0f3ra", "set aside", "bob")
    });
    eprintln!(
        "another writer's decision shown after {:?}",
        shown.elapsed()
    );
    con.quit();
    // A console started again on the same state fits with the exclusion and shows both decisions.
    let again = console(watched.path(), state.path());
    wait_for(
        &again.seen,
        "the restart with the exclusion re-applied",
        |s| {
            s.used.iter().any(|(o, n, _)| o == "qka2e7f" && *n == 14)
                && decided(s, "qka2e7f", "pursue", "alice")
                && decided(s, "qk0f3ra", "set aside", "bob")
        },
    );
    again.quit();
}
