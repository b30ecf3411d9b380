//! Watching a directory for tracklet files. A periodic scan is the source of truth (so a lost or
//! overflowed event only delays a file, never loses it); file-system events wake the scan early and
//! tell it when a file was closed after writing or renamed into place. A file is handed on only when
//! complete: closed after writing and ending in a newline, renamed into place, or unchanged for the
//! settle time. Files that grow are handed on again. The directory is only ever read.

use notify::event::{AccessKind, AccessMode, CreateKind, ModifyKind, RenameMode};
use notify::{EventKind, RecursiveMode, Watcher as _};
use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::mpsc::{Receiver, RecvTimeoutError, Sender, channel};
use std::time::{Duration, Instant, SystemTime};

#[derive(Debug, Clone)]
pub struct WatchOptions {
    /// A file unchanged for this long is taken as complete.
    pub settle: Duration,
    /// Scan only, without file-system events (network file systems).
    pub poll: bool,
    /// Interval between scans (a safety net with events, the only mechanism when polling).
    pub scan_interval: Duration,
    /// Files larger than this are rejected without being read.
    pub max_bytes: u64,
}

impl Default for WatchOptions {
    fn default() -> Self {
        WatchOptions {
            settle: Duration::from_millis(500),
            poll: false,
            scan_interval: Duration::from_millis(250),
            max_bytes: super::tracklets::Limits::default().max_bytes,
        }
    }
}

/// What the watcher reports.
#[derive(Debug)]
pub enum WatchEvent {
    /// A complete file (or a complete new version of a grown file), with its bytes.
    Ready {
        path: PathBuf,
        bytes: Vec<u8>,
        arrived: SystemTime,
    },
    /// A file refused without reading it (over the size limit, unreadable).
    Refused {
        path: PathBuf,
        reason: String,
        arrived: SystemTime,
    },
    /// The watcher could not start or lost the directory.
    Failed(String),
    /// Every file present at start has been handed on (or refused), sent once: what was already in
    /// the directory can be fitted as a whole. A file still being written at start is waited for, at
    /// most `START_HOLD_MAX`.
    StartScanned,
}

/// Hidden, editor and partial-download files are never read.
pub fn ignored(path: &Path) -> bool {
    // A name that is not UTF-8 is judged by its readable part (and read: it may hold tracklets).
    let Some(name) = path.file_name().map(|n| n.to_string_lossy()) else {
        return true;
    };
    name.starts_with('.')
        || name.starts_with('#')
        || name.ends_with('~')
        || [".tmp", ".part", ".partial", ".swp", ".crdownload", ".lock"]
            .iter()
            .any(|s| name.to_ascii_lowercase().ends_with(s))
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Stamp {
    size: u64,
    mtime: SystemTime,
}

struct FileState {
    stamp: Stamp,
    changed_at: Instant,
    hinted: bool,
    delivered: Option<Stamp>,
}

/// Start watching `dir` on a thread of its own; events arrive on the returned channel until `stop`.
pub fn spawn(dir: PathBuf, opts: WatchOptions, stop: Arc<AtomicBool>) -> Receiver<WatchEvent> {
    spawn_counted(dir, opts, stop).0
}

/// As [`spawn`], with a counter of directory scans (how an idle watcher proves it sleeps).
pub fn spawn_counted(
    dir: PathBuf,
    opts: WatchOptions,
    stop: Arc<AtomicBool>,
) -> (Receiver<WatchEvent>, Arc<AtomicU64>) {
    let (tx, rx) = channel();
    let scans = Arc::new(AtomicU64::new(0));
    let counter = scans.clone();
    std::thread::spawn(move || run(&dir, &opts, &stop, &tx, &counter));
    (rx, scans)
}

fn run(
    dir: &Path,
    opts: &WatchOptions,
    stop: &AtomicBool,
    tx: &Sender<WatchEvent>,
    scans: &AtomicU64,
) {
    let (ntx, nrx) = channel::<notify::Result<notify::Event>>();
    let _keep = if opts.poll {
        None
    } else {
        match notify::recommended_watcher(ntx) {
            Ok(mut w) => match w.watch(dir, RecursiveMode::NonRecursive) {
                Ok(()) => Some(w),
                Err(e) => {
                    let _ = tx.send(WatchEvent::Failed(format!(
                        "cannot watch {}: {e} (scanning only)",
                        dir.display()
                    )));
                    None
                }
            },
            Err(_) => None,
        }
    };
    let mut files: HashMap<PathBuf, FileState> = HashMap::new();
    let mut hints: HashSet<PathBuf> = HashSet::new();
    let mut first = true;
    // The files present at start, until every one has been handed on (or refused, or has gone).
    let mut start_files: Option<(HashSet<PathBuf>, Instant)> = None;
    while !stop.load(Ordering::Relaxed) {
        if !first {
            // Sleep until the next scan is due, waking early only for an event that can complete a
            // file (closed after writing, renamed into place). Everything else — including the
            // access events the scan's own reading of the directory raises — is drained and ignored,
            // so an idle watcher scans at its interval and no faster.
            let deadline = Instant::now() + opts.scan_interval;
            loop {
                let left = deadline.saturating_duration_since(Instant::now());
                if left.is_zero() || stop.load(Ordering::Relaxed) {
                    break;
                }
                match nrx.recv_timeout(left) {
                    Ok(ev) => {
                        if collect_hint(ev, &mut hints) {
                            break;
                        }
                    }
                    Err(RecvTimeoutError::Timeout) => break,
                    // No event source (polling, or the watcher could not start): a plain sleep.
                    Err(RecvTimeoutError::Disconnected) => {
                        std::thread::sleep(left);
                        break;
                    }
                }
            }
        }
        scans.fetch_add(1, Ordering::Relaxed);
        if scan(dir, opts, &mut files, &mut hints, tx).is_err() {
            return;
        }
        if first {
            start_files = Some((files.keys().cloned().collect(), Instant::now()));
        }
        if let Some((initial, since)) = &start_files
            && (since.elapsed() >= START_HOLD_MAX || all_handed_on(initial, &files))
        {
            start_files = None;
            if tx.send(WatchEvent::StartScanned).is_err() {
                return;
            }
        }
        first = false;
    }
}

/// Record a completion hint; true when the event is worth scanning early for (a completion hint or a
/// new file). Opens, reads and closes without writing — the scan's own among them — are not.
fn collect_hint(ev: notify::Result<notify::Event>, hints: &mut HashSet<PathBuf>) -> bool {
    let Ok(ev) = ev else {
        return false; // an error or overflow: the next scan catches up
    };
    let complete = matches!(
        ev.kind,
        EventKind::Access(AccessKind::Close(AccessMode::Write))
            | EventKind::Modify(ModifyKind::Name(RenameMode::To))
            | EventKind::Modify(ModifyKind::Name(RenameMode::Both))
    );
    if complete {
        // For a rename with both ends, the destination is the last path.
        if let Some(p) = ev.paths.last() {
            hints.insert(p.clone());
        }
    }
    // A new name (a hard link put into place, a file being written) is worth a look: a linked file is
    // whole already and its age settles it at once. It is no completion hint: a file still being
    // written waits for its close or its settle time.
    complete
        || matches!(
            ev.kind,
            EventKind::Create(CreateKind::File | CreateKind::Any)
        )
}

/// `StartScanned` waits at most this long for the files present at start (one still being written when
/// the watcher starts is read when complete; the objects held meanwhile must not wait for ever).
const START_HOLD_MAX: Duration = Duration::from_secs(30);

/// Whether every file of `initial` has been handed on or refused, or is gone.
fn all_handed_on(initial: &HashSet<PathBuf>, files: &HashMap<PathBuf, FileState>) -> bool {
    initial
        .iter()
        .all(|p| files.get(p).is_none_or(|s| s.delivered.is_some()) || !p.exists())
}

fn stamp(meta: &std::fs::Metadata) -> Stamp {
    Stamp {
        size: meta.len(),
        mtime: meta.modified().unwrap_or(SystemTime::UNIX_EPOCH),
    }
}

/// Report a file that cannot be read, once for as long as it stays (it is kept as delivered at its
/// stamp: should it become readable, its new stamp makes it a change like any other). Err only when
/// the receiver is gone.
fn refuse_once(
    files: &mut HashMap<PathBuf, FileState>,
    path: &Path,
    st: Stamp,
    now: Instant,
    reason: String,
    tx: &Sender<WatchEvent>,
) -> Result<(), ()> {
    if files.contains_key(path) {
        return Ok(());
    }
    files.insert(
        path.to_path_buf(),
        FileState {
            stamp: st,
            changed_at: now,
            hinted: false,
            delivered: Some(st),
        },
    );
    tx.send(WatchEvent::Refused {
        path: path.to_path_buf(),
        reason,
        arrived: SystemTime::now(),
    })
    .map_err(|_| ())
}

/// One pass over the directory. Returns Err only when the receiver is gone.
fn scan(
    dir: &Path,
    opts: &WatchOptions,
    files: &mut HashMap<PathBuf, FileState>,
    hints: &mut HashSet<PathBuf>,
    tx: &Sender<WatchEvent>,
) -> Result<(), ()> {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return tx
            .send(WatchEvent::Failed(format!("cannot list {}", dir.display())))
            .map_err(|_| ());
    };
    let mut paths: Vec<PathBuf> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| !ignored(p))
        .collect();
    paths.sort();
    let now = Instant::now();
    for path in paths {
        let meta = match std::fs::metadata(&path) {
            Ok(m) => m,
            Err(e) => {
                // Gone since the listing: nothing to say. Still there but unreadable (a dangling
                // link, a link loop, a link into a folder we may not enter): said once.
                if let Ok(link) = std::fs::symlink_metadata(&path) {
                    refuse_once(
                        files,
                        &path,
                        stamp(&link),
                        now,
                        format!("cannot read: {e}"),
                        tx,
                    )?;
                }
                continue;
            }
        };
        if meta.is_dir() {
            continue;
        }
        if !meta.is_file() {
            // A FIFO, socket or device (or a link to one): reading it could block or never end.
            // Said once, as long as it stays there.
            refuse_once(
                files,
                &path,
                stamp(&meta),
                now,
                "not a regular file (a pipe, socket or device): not read".into(),
                tx,
            )?;
            continue;
        }
        let st = stamp(&meta);
        let hinted = hints.remove(&path);
        let state = files.entry(path.clone()).or_insert_with(|| {
            // A file first seen has been unchanged since its modification time (a file present at
            // start may still be being written, so start-up is no exception).
            let age = SystemTime::now()
                .duration_since(st.mtime)
                .unwrap_or(Duration::ZERO);
            FileState {
                stamp: st,
                changed_at: now.checked_sub(age.min(opts.settle)).unwrap_or(now),
                hinted: false,
                delivered: None,
            }
        });
        if state.stamp != st {
            state.stamp = st;
            state.changed_at = now;
            state.hinted = false;
        }
        state.hinted |= hinted;
        if state.delivered == Some(st) {
            continue;
        }
        let settled = now.duration_since(state.changed_at) >= opts.settle;
        if !(settled || state.hinted) {
            continue;
        }
        if st.size > opts.max_bytes {
            state.delivered = Some(st);
            tx.send(WatchEvent::Refused {
                path: path.clone(),
                reason: format!(
                    "{} bytes is over the {}-byte limit",
                    st.size, opts.max_bytes
                ),
                arrived: SystemTime::now(),
            })
            .map_err(|_| ())?;
            continue;
        }
        // No more than the size just seen (and one byte to tell it grew): a file growing between
        // the look and the read is not read beyond the limit.
        let read = super::read_at_most(&path, st.size, super::Accept::RegularOnly);
        let bytes = match read {
            Ok(b) => b,
            // Gone between the listing and the read: nothing to say.
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => continue,
            // Unreadable (permissions, an I/O error): said once; a changed file is tried again.
            Err(e) => {
                state.delivered = Some(st);
                tx.send(WatchEvent::Refused {
                    path: path.clone(),
                    reason: format!("cannot be read: {e}"),
                    arrived: SystemTime::now(),
                })
                .map_err(|_| ())?;
                continue;
            }
        };
        // Changed while we read it: not complete yet.
        match std::fs::metadata(&path) {
            Ok(m) if stamp(&m) == st && bytes.len() as u64 == st.size => {}
            _ => continue,
        }
        // A close without a final newline may be a writer that closes between chunks: let it settle.
        if !settled && !bytes.is_empty() && bytes.last() != Some(&b'\n') {
            state.hinted = false;
            continue;
        }
        state.delivered = Some(st);
        tx.send(WatchEvent::Ready {
            path,
            bytes,
            arrived: SystemTime::now(),
        })
        .map_err(|_| ())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn temporary_and_hidden_files_are_ignored() {
        for n in [".x.psv", "a.psv~", "#a#", "a.psv.part", "b.TMP", "c.swp"] {
            assert!(ignored(Path::new(n)), "{n}");
        }
        assert!(!ignored(Path::new("001_K27.psv")));
    }
}
