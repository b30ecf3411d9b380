//! Console benchmarks: drawing a frame with 10,000 candidates; the memory they take; and the time from a
//! key press to the redrawn frame while 1,000 files are being fitted (median from criterion, the 99th
//! percentile printed at the end).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use criterion::{Criterion, criterion_group, criterion_main};
use interloper::console::keymap::Keymap;
use interloper::console::panes::Theme;
use interloper::console::runtime::{self, AppEvent};
use interloper::console::state::App;
use interloper::console::view;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::feed::watcher::WatchOptions;
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::physics::observe::ObserverModel;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

fn rss_mb() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmRSS:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

fn demo_fit() -> interloper::fitting::fit::FitResult {
    let f = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("sample_feeds/demo_night/003_qka2e7f_n1.psv");
    let t = read_bytes(
        "x",
        &std::fs::read(f).unwrap(),
        &SiteTable::builtin(),
        &Limits::default(),
    )
    .tracklets
    .remove(0);
    fit_tracklet(&t, &ObserverModel::new(), &FitOptions::default())
}

fn benches(c: &mut Criterion) {
    // Each candidate is kept as its fit returns it, samples and all (a one-night ranging fit, the
    // heaviest kind).
    let base = demo_fit();
    let before = rss_mb();
    let mut app = App::new(Keymap::builtin());
    for k in 0..10_000 {
        let mut f = base.clone();
        f.object = format!("qkm{k:05}");
        f.z_hyperbolic = Some(((k * 7919) % 1000) as f64 / 100.0 - 5.0);
        app.on_fit(1, f, 5);
    }
    eprintln!(
        "memory: {:.0} MB resident with 10,000 candidates ({:.0} MB before)",
        rss_mb(),
        before
    );
    let mut term = Terminal::new(TestBackend::new(160, 48)).unwrap();
    c.bench_function("render_frame_10000_candidates_160x48", |b| {
        b.iter(|| {
            term.draw(|f| view::draw(f, &mut app, Theme { color: true }))
                .unwrap();
        })
    });

    // Key latency while 1,000 one-night files (ranging, the most expensive fits) are being fitted.
    let watched = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    let src = std::fs::read_to_string(
        PathBuf::from(env!("CARGO_MANIFEST_DIR"))
            .join("sample_feeds/demo_night/003_qka2e7f_n1.psv"),
    )
    .unwrap();
    let stop = Arc::new(AtomicBool::new(false));
    let (tx, rx) = std::sync::mpsc::channel();
    let setup = runtime::Setup {
        watch: WatchOptions {
            settle: Duration::from_millis(100),
            scan_interval: Duration::from_millis(50),
            ..WatchOptions::default()
        },
        ..runtime::Setup::new(watched.path().to_path_buf(), state.path().to_path_buf())
    };
    let (mut rt, _, _) = runtime::start(setup, stop.clone(), tx.clone()).unwrap();
    let frames: Arc<Mutex<(Option<String>, Vec<Instant>)>> = Arc::default();
    let f2 = frames.clone();
    let stop_ui = stop.clone();
    let ui = std::thread::spawn(move || {
        let mut app = App::new(Keymap::builtin());
        let mut t = Terminal::new(TestBackend::new(160, 48)).unwrap();
        let _ = runtime::run_loop(
            &mut t,
            &mut app,
            &mut rt,
            &rx,
            &stop_ui,
            Theme { color: true },
            |a| {
                let mut g = f2.lock().unwrap();
                if g.0 != a.selected {
                    g.0 = a.selected.clone();
                    g.1.push(Instant::now());
                }
            },
        );
        rt.shutdown();
    });
    for k in 0..1000 {
        std::fs::write(
            watched.path().join(format!("m{k:04}.psv")),
            src.replace("qka2e7f", &format!("qkm{k:04}")),
        )
        .unwrap();
    }
    std::thread::sleep(Duration::from_secs(2)); // let the first candidates in, so there is something to move over
    let mut lat = Vec::new();
    let mut group = c.benchmark_group("console");
    group.sample_size(100);
    group.bench_function("key_to_frame_while_fitting_1000_files", |b| {
        b.iter_custom(|iters| {
            let mut total = Duration::ZERO;
            for i in 0..iters {
                let n0 = frames.lock().unwrap().1.len();
                let code = if i % 2 == 0 {
                    KeyCode::Char('j')
                } else {
                    KeyCode::Char('k')
                };
                let sent = Instant::now();
                tx.send(AppEvent::Key(KeyEvent::new(code, KeyModifiers::NONE)))
                    .unwrap();
                let deadline = sent + Duration::from_secs(2);
                let done = loop {
                    if let Some(t) = frames.lock().unwrap().1.get(n0).copied() {
                        break t;
                    }
                    if Instant::now() > deadline {
                        break Instant::now();
                    }
                    std::thread::sleep(Duration::from_micros(200));
                };
                let d = done.saturating_duration_since(sent);
                lat.push(d);
                total += d;
            }
            total
        })
    });
    group.finish();
    stop.store(true, std::sync::atomic::Ordering::Relaxed);
    let _ = ui.join();
    lat.sort();
    if !lat.is_empty() {
        let p = |q: f64| lat[((lat.len() as f64 * q) as usize).min(lat.len() - 1)];
        eprintln!(
            "key-to-frame latency over {} presses: p50 {:?}, p99 {:?}, max {:?}",
            lat.len(),
            p(0.5),
            p(0.99),
            lat[lat.len() - 1]
        );
    }
}

criterion_group!(console, benches);
criterion_main!(console);
