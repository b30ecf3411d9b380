//! The fit engine reports itself idle only once every result has been handed on: headless `watch
//! --stop-after-idle` stops when the engine is idle and its channel is empty, and once stopped
//! before printing the last fit (the pool counted a fit as done before its result reached the
//! engine).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::engine::{Engine, EngineEvent};
use interloper::feed::sites::SiteTable;
use interloper::feed::watcher::WatchEvent;
use interloper::fitting::fit::FitOptions;
use std::sync::Arc;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{Duration, Instant, SystemTime};

/// Hand the engine these demo files as the watcher would.
fn offer(wtx: &std::sync::mpsc::Sender<WatchEvent>, names: &[&str]) {
    let root = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    for name in names {
        wtx.send(WatchEvent::Ready {
            path: root.join(name),
            bytes: std::fs::read(root.join(name)).unwrap(),
            arrived: SystemTime::now(),
        })
        .unwrap();
    }
    // As the watcher does after its first scan: what was offered so far is fitted now.
    wtx.send(WatchEvent::StartScanned).unwrap();
}

#[test]
fn the_engine_is_never_idle_while_a_result_is_still_being_handed_on() {
    let (wtx, events) = std::sync::mpsc::channel();
    let handed = Arc::new(AtomicUsize::new(0));
    let h = handed.clone();
    // A slow listener: each fit takes a while to be handed on, the gap an idle check could fall in.
    let engine = Engine::start(
        events,
        Arc::new(SiteTable::builtin()),
        FitOptions::default(),
        2,
        Default::default(),
        move |ev| {
            if matches!(ev, EngineEvent::Fit { .. }) {
                std::thread::sleep(Duration::from_millis(150));
                h.fetch_add(1, Ordering::SeqCst);
            }
            true
        },
    );
    let files = [
        "001_qk0f3ra_n1.psv",
        "002_qk8w3bs_n1.psv",
        "003_qka2e7f_n1.psv",
    ];
    offer(&wtx, &files);
    // Wait for the first submission, then watch the load until every fit is handed on.
    let deadline = Instant::now() + Duration::from_secs(120);
    while engine.load() == (0, 0) && handed.load(Ordering::SeqCst) == 0 {
        assert!(Instant::now() < deadline, "nothing was ever fitted");
        std::thread::sleep(Duration::from_millis(1));
    }
    // From the first submission on, every fit counts until its result is handed on: the three files
    // are taken in at once, so the engine must not look idle before all three are out.
    let (mut looks, mut idle_looks) = (0, 0);
    while handed.load(Ordering::SeqCst) < files.len() {
        assert!(Instant::now() < deadline, "the fits never finished");
        // Read after the load: a result is counted as handed on before the pool stops counting it.
        if engine.load() == (0, 0) && handed.load(Ordering::SeqCst) < files.len() {
            idle_looks += 1;
        }
        looks += 1;
        std::thread::sleep(Duration::from_millis(1));
    }
    eprintln!("{idle_looks} of {looks} looks found the engine idle with a result on its way");
    assert_eq!(idle_looks, 0, "idle while a result was still on its way");
    engine.shutdown();
}

/// Regression: a result dropped on its way (the engine had stopped listening, so the thread forwarding
/// results dropped the next one) kept counting as running for ever. Now every result carries a token
/// that stops the count wherever it is dropped.
#[test]
fn a_result_dropped_on_its_way_stops_counting_as_running() {
    let (wtx, events) = std::sync::mpsc::channel();
    let fits = Arc::new(AtomicUsize::new(0));
    let f = fits.clone();
    // A listener that goes away at the first fit: the engine stops, later results have nowhere to go.
    let engine = Engine::start(
        events,
        Arc::new(SiteTable::builtin()),
        FitOptions::default(),
        1,
        Default::default(),
        move |ev| {
            if matches!(ev, EngineEvent::Fit { .. }) {
                f.fetch_add(1, Ordering::SeqCst);
                return false;
            }
            true
        },
    );
    offer(&wtx, &["001_qk0f3ra_n1.psv", "003_qka2e7f_n1.psv"]);
    let deadline = Instant::now() + Duration::from_secs(120);
    while fits.load(Ordering::SeqCst) == 0 {
        assert!(Instant::now() < deadline, "nothing was ever fitted");
        std::thread::sleep(Duration::from_millis(5));
    }
    // The second fit runs on, and its result is dropped where it can go no further.
    while engine.load().1 > 0 || engine.load().0 > 0 {
        assert!(
            Instant::now() < deadline,
            "still counted as running after every result was dropped: {:?}",
            engine.load()
        );
        std::thread::sleep(Duration::from_millis(5));
    }
    assert_eq!(fits.load(Ordering::SeqCst), 1, "the listener had gone");
    engine.shutdown();
}
