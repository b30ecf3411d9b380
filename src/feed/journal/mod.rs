//! The journal of everything the observer changes (decisions, notes, exclusions and restorations,
//! forced methods): one JSON object per line in the state directory, appended, flushed and synced
//! before a change counts as made. Several processes (consoles, a headless watcher) may share one
//! journal: each append holds an exclusive advisory lock (flock, released by the kernel when a
//! process dies, so a crash never leaves a lock behind), takes the next sequence number after every
//! line already there and writes its line with one write on an append-only descriptor. Readers follow
//! the file's growth and fold the lines in file order. Replay tolerates a torn last line (a power cut
//! or a kill mid-write) and any corrupt line: it is skipped with a warning, never fatal.

mod entry;

pub use entry::{Decision, Entry, Kind, ObjectState, Standing, UNKNOWN_OBSERVER, Verdict};

use std::fs::{File, OpenOptions};
use std::io::Write;
use std::os::unix::fs::FileExt;
use std::path::{Path, PathBuf};

/// How often a follower (a console, a headless watcher) looks for lines other processes added: often
/// enough that another observer's change shows within a second.
pub const POLL: std::time::Duration = std::time::Duration::from_millis(500);

/// The journal file, open for appending and for following.
pub struct Journal {
    file: File,
    path: PathBuf,
    /// Who this process writes lines as.
    observer: String,
    /// Bytes read and handed out as entries (whole lines only).
    read_len: u64,
    /// Lines read so far (for warnings that name a line).
    read_lines: usize,
    /// Bytes scanned for sequence numbers, and the highest number found in them.
    seq_len: u64,
    last_seq: u64,
    /// Set when a failed append could not be undone: nothing more is written.
    broken: Option<String>,
}

/// Lines read: the entries in file order, and what could not be read.
#[derive(Debug, Default)]
pub struct Replay {
    pub entries: Vec<Entry>,
    pub warnings: Vec<String>,
}

impl Replay {
    /// What stands for each object after every line.
    pub fn standing(&self) -> Standing {
        Standing::from_entries(&self.entries)
    }
}

/// An observer's name as the journal keeps it: cleaned of anything a terminal would act on, at most
/// 32 characters, `$USER` when none is given, "unknown" when that is empty too.
pub fn observer_name(given: Option<&str>) -> String {
    let raw = given
        .map(str::to_string)
        .or_else(|| std::env::var("USER").ok())
        .unwrap_or_default();
    let name: String = super::sanitize::clean_id(raw.trim())
        .chars()
        .map(|c| if c.is_whitespace() { '_' } else { c })
        .take(32)
        .collect();
    if name.is_empty() {
        UNKNOWN_OBSERVER.to_string()
    } else {
        name
    }
}

/// FNV-1a digest of observation identities (order-independent: the keys are sorted first).
pub fn digest(keys: &mut [String]) -> String {
    keys.sort_unstable();
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for k in keys.iter() {
        for b in k.bytes().chain(std::iter::once(0u8)) {
            h ^= u64::from(b);
            h = h.wrapping_mul(0x0100_0000_01b3);
        }
    }
    format!("{h:016x}")
}

/// Holds the advisory lock until dropped.
struct Locked<'a>(&'a File);

impl Drop for Locked<'_> {
    fn drop(&mut self) {
        let _ = self.0.unlock();
    }
}

fn exclusive(file: &File) -> std::io::Result<Locked<'_>> {
    file.lock()?;
    Ok(Locked(file))
}

fn shared(file: &File) -> std::io::Result<Locked<'_>> {
    file.lock_shared()?;
    Ok(Locked(file))
}

impl Journal {
    pub const FILE_NAME: &'static str = "decisions.jsonl";

    /// Open (creating) the journal in `dir` as the `$USER` observer and replay it.
    pub fn open(dir: &Path) -> std::io::Result<(Journal, Replay)> {
        Journal::open_as(dir, &observer_name(None))
    }

    /// Open (creating) the journal in `dir`, writing as `observer` (used as given: see
    /// [`observer_name`]), and replay it.
    pub fn open_as(dir: &Path, observer: &str) -> std::io::Result<(Journal, Replay)> {
        std::fs::create_dir_all(dir)?;
        let path = dir.join(Self::FILE_NAME);
        let file = OpenOptions::new()
            .create(true)
            .read(true)
            .append(true)
            .open(&path)?;
        let mut j = Journal {
            file,
            path,
            observer: observer.to_string(),
            read_len: 0,
            read_lines: 0,
            seq_len: 0,
            last_seq: 0,
            broken: None,
        };
        let replay = {
            let file = j.file.try_clone()?;
            let _lock = exclusive(&file)?;
            // A torn tail is ended now, so that it is reported once and no later line glues onto it.
            let len = j.file.metadata()?.len();
            if len > 0 && !ends_with_newline(&j.file, len)? {
                (&j.file).write_all(b"\n")?;
                j.file.sync_data()?;
            }
            j.read_new_locked()?
        };
        j.seq_len = j.read_len;
        j.last_seq = replay.entries.iter().map(|e| e.seq).max().unwrap_or(0);
        Ok((j, replay))
    }

    /// Open an existing journal in `dir` only to follow it (a headless watcher fitting with the
    /// observers' choices): nothing is created or repaired, and appending fails. None when there is
    /// no journal there.
    pub fn follow(dir: &Path) -> std::io::Result<Option<(Journal, Replay)>> {
        let path = dir.join(Self::FILE_NAME);
        let file = match OpenOptions::new().read(true).open(&path) {
            Ok(f) => f,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(None),
            Err(e) => return Err(e),
        };
        let mut j = Journal {
            file,
            path,
            observer: UNKNOWN_OBSERVER.to_string(),
            read_len: 0,
            read_lines: 0,
            seq_len: 0,
            last_seq: 0,
            broken: Some("opened only to follow".into()),
        };
        let replay = j.read_new()?;
        Ok(Some((j, replay)))
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    pub fn observer(&self) -> &str {
        &self.observer
    }

    /// Lines appended since the last call (by any process, this one included), in file order.
    pub fn read_new(&mut self) -> std::io::Result<Replay> {
        let file = self.file.try_clone()?;
        let _lock = shared(&file)?;
        self.read_new_locked()
    }

    fn read_new_locked(&mut self) -> std::io::Result<Replay> {
        let len = self.file.metadata()?.len();
        let mut out = Replay::default();
        if len < self.read_len {
            out.warnings.push(format!(
                "{}: the journal shrank from {} to {len} bytes (replaced?); reading on from its end",
                self.path.display(),
                self.read_len
            ));
            self.read_len = len;
        }
        let mut buf = vec![0u8; (len - self.read_len) as usize];
        self.file.read_exact_at(&mut buf, self.read_len)?;
        // Only whole lines: a line still without its newline is read once it has one.
        let whole = buf.iter().rposition(|&b| b == b'\n').map_or(0, |p| p + 1);
        for line in buf[..whole].split(|&b| b == b'\n') {
            if line.is_empty() {
                continue;
            }
            self.read_lines += 1;
            let text = String::from_utf8_lossy(line);
            match serde_json::from_str::<Entry>(text.trim()) {
                Ok(e) => out.entries.push(e),
                Err(e) => out.warnings.push(format!(
                    "{}: line {}: unreadable line skipped (an interrupted write?) ({e})",
                    self.path.display(),
                    self.read_lines
                )),
            }
        }
        self.read_len += whole as u64;
        Ok(out)
    }

    /// Append a line, numbered after every line already in the journal and signed with this
    /// journal's observer unless it names one; returns only after the line is on disk (one write,
    /// then fsync), under the journal's exclusive lock. A failed write (a full disk) is cut back to
    /// where the file ended, so no torn fragment is left for the next line to be glued onto; if even
    /// that fails, the journal refuses every later line until it is reopened, rather than report one
    /// as saved that could not be read back.
    pub fn append(&mut self, mut e: Entry) -> std::io::Result<Entry> {
        if let Some(why) = &self.broken {
            return Err(std::io::Error::other(format!(
                "the journal {} needs attention ({why}); restart to repair it",
                self.path.display()
            )));
        }
        let file = self.file.try_clone()?;
        let _lock = exclusive(&file)?;
        let len = file.metadata()?.len();
        self.catch_up_seq(len)?;
        e.seq = self.last_seq + 1;
        if e.observer.is_none() {
            e.observer = Some(self.observer.clone());
        }
        let mut line = Vec::with_capacity(256);
        // A line torn by a process killed mid-write is ended first, in the same write.
        if len > 0 && !ends_with_newline(&file, len)? {
            line.push(b'\n');
        }
        serde_json::to_writer(&mut line, &e).map_err(std::io::Error::other)?;
        line.push(b'\n');
        let written = (&file)
            .write_all(&line)
            .and_then(|_| (&file).flush())
            .and_then(|_| file.sync_data());
        if let Err(err) = written {
            let repaired = file.set_len(len).and_then(|_| file.sync_data());
            if let Err(r) = repaired {
                self.broken = Some(format!("a failed write could not be undone: {r}"));
            }
            return Err(err);
        }
        self.last_seq = e.seq;
        self.seq_len = len + line.len() as u64;
        Ok(e)
    }

    /// Find the highest sequence number among lines other processes added since we last looked.
    fn catch_up_seq(&mut self, len: u64) -> std::io::Result<()> {
        if len < self.seq_len {
            self.seq_len = 0;
        }
        let mut buf = vec![0u8; (len - self.seq_len) as usize];
        self.file.read_exact_at(&mut buf, self.seq_len)?;
        #[derive(serde::Deserialize)]
        struct Seq {
            seq: u64,
        }
        for line in buf.split(|&b| b == b'\n') {
            if let Ok(s) = serde_json::from_slice::<Seq>(line) {
                self.last_seq = self.last_seq.max(s.seq);
            }
        }
        self.seq_len = len;
        Ok(())
    }
}

fn ends_with_newline(file: &File, len: u64) -> std::io::Result<bool> {
    let mut last = [0u8; 1];
    file.read_exact_at(&mut last, len - 1)?;
    Ok(last[0] == b'\n')
}

#[cfg(test)]
mod tests;
