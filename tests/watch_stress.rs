//! Watcher stress: 10,000 files written by 8 concurrent threads in two styles (in place in several chunks
//! with pauses; to a hidden name then renamed into place), then 500 appends to existing files. Every
//! version the watcher hands on must be one the writer completed (never half-written), and every
//! observation must be ingested exactly once.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::sites::SiteTable;
use interloper::feed::store::Store;
use interloper::feed::tracklets::Limits;
use interloper::feed::watcher::{self, WatchEvent, WatchOptions};
use std::collections::{HashMap, HashSet};
use std::io::Write;
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

const FILES: usize = 10_000;
const APPENDS: usize = 500;
const WRITERS: usize = 8;
const HEADER: &str = "trkSub|stn|obsTime|ra|dec\n";

fn line(file: usize, k: usize) -> String {
    let minutes = (file * 7 + k * 3) % 1440;
    format!(
        "S{file:05}|TV1|2027-02-{:02}T{:02}:{:02}:{:02}Z|{:.6}|{:.6}\n",
        1 + (file % 27),
        minutes / 60,
        minutes % 60,
        k % 60,
        (file as f64 * 0.03) % 360.0,
        -40.0 + (k as f64) * 0.001
    )
}

#[test]
fn ten_thousand_files_and_500_appends_are_ingested_exactly_once_and_never_half_written() {
    let dir = tempfile::tempdir().unwrap();
    let root: PathBuf = dir.path().to_path_buf();
    let versions: Arc<Mutex<HashMap<PathBuf, HashSet<Vec<u8>>>>> = Arc::default();
    let stop = Arc::new(AtomicBool::new(false));
    let opts = WatchOptions {
        // Long enough that a writer stalled by a loaded machine is not read half-way; files closed or
        // renamed are taken at once anyway.
        settle: Duration::from_secs(2),
        scan_interval: Duration::from_millis(100),
        ..WatchOptions::default()
    };
    let events = watcher::spawn(root.clone(), opts, stop.clone());
    let start = Instant::now();
    let writers: Vec<_> = (0..WRITERS)
        .map(|w| {
            let root = root.clone();
            let versions = versions.clone();
            std::thread::spawn(move || {
                for f in (w..FILES).step_by(WRITERS) {
                    let name = root.join(format!("f{f:05}.psv"));
                    let content = format!("{HEADER}{}{}", line(f, 0), line(f, 1));
                    versions
                        .lock()
                        .unwrap()
                        .entry(name.clone())
                        .or_default()
                        .insert(content.clone().into_bytes());
                    if f % 2 == 0 {
                        // In place, in three chunks with pauses, kept open until complete.
                        let mut fh = std::fs::File::create(&name).unwrap();
                        let cut = HEADER.len() + 7;
                        fh.write_all(&content.as_bytes()[..cut]).unwrap();
                        std::thread::sleep(Duration::from_millis(2 + (f % 5) as u64));
                        fh.write_all(&content.as_bytes()[cut..cut + 20]).unwrap();
                        std::thread::sleep(Duration::from_millis(1 + (f % 3) as u64));
                        fh.write_all(&content.as_bytes()[cut + 20..]).unwrap();
                    } else {
                        let tmp = root.join(format!(".f{f:05}.psv.tmp"));
                        std::fs::write(&tmp, &content).unwrap();
                        std::fs::rename(&tmp, &name).unwrap();
                    }
                }
            })
        })
        .collect();
    for w in writers {
        w.join().unwrap();
    }
    // Appends: one whole new line each, to files already there.
    for a in 0..APPENDS {
        let f = (a * 19) % FILES;
        let name = root.join(format!("f{f:05}.psv"));
        let mut set = versions.lock().unwrap();
        let previous: Vec<u8> = set[&name].iter().max_by_key(|v| v.len()).unwrap().clone();
        let mut next = previous.clone();
        next.extend_from_slice(line(f, 2 + a).as_bytes());
        set.get_mut(&name).unwrap().insert(next);
        drop(set);
        let mut fh = std::fs::OpenOptions::new()
            .append(true)
            .open(&name)
            .unwrap();
        fh.write_all(line(f, 2 + a).as_bytes()).unwrap();
    }
    let written = start.elapsed();
    let expected = 2 * FILES + APPENDS;
    let mut store = Store::new();
    let sites = SiteTable::builtin();
    let mut half_written = Vec::new();
    let mut deliveries = 0;
    let deadline = Instant::now() + Duration::from_secs(240);
    while store.n_observations() < expected && Instant::now() < deadline {
        match events.recv_timeout(Duration::from_millis(200)) {
            Ok(WatchEvent::Ready { path, bytes, .. }) => {
                deliveries += 1;
                if !versions
                    .lock()
                    .unwrap()
                    .get(&path)
                    .is_some_and(|v| v.contains(&bytes))
                {
                    half_written.push(path.clone());
                }
                let ing = store.ingest(
                    &path.display().to_string(),
                    &bytes,
                    &sites,
                    &Limits::default(),
                );
                assert!(ing.errors.is_empty(), "{:?}", ing.errors);
            }
            Ok(WatchEvent::StartScanned) => {}
            Ok(other) => panic!("unexpected {other:?}"),
            Err(_) => {}
        }
    }
    stop.store(true, std::sync::atomic::Ordering::Relaxed);
    let took = start.elapsed();
    eprintln!(
        "watch stress: {FILES} files + {APPENDS} appends written in {:.1} s, all {} observations ingested after {:.1} s ({deliveries} deliveries)",
        written.as_secs_f64(),
        store.n_observations(),
        took.as_secs_f64()
    );
    assert!(
        half_written.is_empty(),
        "{} half-written deliveries, e.g. {:?}",
        half_written.len(),
        &half_written[..half_written.len().min(3)]
    );
    assert_eq!(
        store.n_observations(),
        expected,
        "each observation exactly once"
    );
    assert_eq!(store.n_objects(), FILES);
}
