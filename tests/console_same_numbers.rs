//! The console's own fits of the demo night (its event loop on a TestBackend, fed by its watcher) carry
//! every field of the record `fit` computes for the same files: probability, odds, elements and their
//! σ, alternatives, residuals and the rest (all but the path the files were read from).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::console::keymap::Keymap;
use interloper::console::panes::Theme;
use interloper::console::runtime;
use interloper::console::state::App;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::feed::watcher::WatchOptions;
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::FitOptions;
use interloper::fitting::result::FitResult;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use std::collections::HashMap;
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

type Numbers = serde_json::Value;

/// Every field of a record but where its files were read from (the console watches a copy).
fn numbers(r: &FitResult) -> Numbers {
    let mut v = serde_json::to_value(r).unwrap();
    v.as_object_mut().unwrap().remove("source");
    v
}

#[test]
fn the_console_and_fit_agree_on_every_number() {
    let demo = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&demo)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    files.sort();
    // What `fit` says.
    let sites = SiteTable::builtin();
    let tracklets: Vec<_> = files
        .iter()
        .flat_map(|f| {
            let bytes = std::fs::read(f).unwrap();
            read_bytes(&f.display().to_string(), &bytes, &sites, &Limits::default()).tracklets
        })
        .collect();
    let batch: HashMap<String, Numbers> = fit_all(merge(tracklets), &FitOptions::default(), 2)
        .into_iter()
        .map(|r| (r.object.clone(), numbers(&r)))
        .collect();
    // What the console shows, once every file is in and fitted.
    let watched = tempfile::tempdir().unwrap();
    for f in &files {
        std::fs::copy(f, watched.path().join(f.file_name().unwrap())).unwrap();
    }
    let state = tempfile::tempdir().unwrap();
    let stop = Arc::new(AtomicBool::new(false));
    let (tx, rx) = std::sync::mpsc::channel();
    let opts = WatchOptions {
        settle: Duration::from_millis(200),
        scan_interval: Duration::from_millis(50),
        ..WatchOptions::default()
    };
    let setup = runtime::Setup {
        watch: opts,
        ..runtime::Setup::new(watched.path().to_path_buf(), state.path().to_path_buf())
    };
    let (mut rt, decisions, _) = runtime::start(setup, stop.clone(), tx).unwrap();
    let seen: Arc<Mutex<HashMap<String, Numbers>>> = Arc::default();
    let (seen_loop, stop_loop) = (seen.clone(), stop.clone());
    let ui = std::thread::spawn(move || {
        let mut app = App::new(Keymap::builtin());
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
                *seen_loop.lock().unwrap() = a
                    .candidates
                    .iter()
                    .map(|c| (c.fit.object.clone(), numbers(&c.fit)))
                    .collect();
            },
        )
        .unwrap();
        rt.shutdown();
    });
    let deadline = Instant::now() + Duration::from_secs(90);
    let shown = loop {
        let s = seen.lock().unwrap().clone();
        let complete = batch
            .iter()
            .all(|(k, v)| s.get(k).is_some_and(|c| c["n_obs"] == v["n_obs"]));
        if complete && s.len() == batch.len() {
            // Let any refit in flight land, then take the final numbers.
            std::thread::sleep(Duration::from_millis(500));
            break seen.lock().unwrap().clone();
        }
        assert!(
            Instant::now() < deadline,
            "the console never showed every object: {s:?}"
        );
        std::thread::sleep(Duration::from_millis(50));
    };
    stop.store(true, Ordering::Relaxed);
    ui.join().unwrap();
    assert!(batch.len() >= 10);
    for (obj, b) in &batch {
        assert_eq!(&shown[obj], b, "{obj}: console and fit differ");
    }
}
