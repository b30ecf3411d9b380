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

#[test]
fn the_engine_is_never_idle_while_a_result_is_still_being_handed_on() {
    let root = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
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
    for name in files {
        wtx.send(WatchEvent::Ready {
            path: root.join(name),
            bytes: std::fs::read(root.join(name)).unwrap(),
            arrived: SystemTime::now(),
        })
        .unwrap();
    }
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
