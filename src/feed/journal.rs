//! The decision journal: one JSON object per line in the state directory, appended, flushed and synced
//! before a decision counts as made. Replay tolerates a torn last line (a power cut mid-write) and any
//! corrupt line: it is skipped with a warning, never fatal.

use serde::{Deserialize, Serialize};
use std::fs::{File, OpenOptions};
use std::io::{BufRead, BufReader, Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

/// What the observer decided about a candidate (our own words).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    /// Worth telescope time: hand on for follow-up.
    Pursue,
    /// Not interesting: ordinary object, artefact or false linkage.
    SetAside,
    /// Undecided: look again when more observations arrive.
    KeepWatching,
    /// Withdraws the object's previous decision.
    Undo,
}

impl Verdict {
    pub fn label(self) -> &'static str {
        match self {
            Verdict::Pursue => "pursue",
            Verdict::SetAside => "set aside",
            Verdict::KeepWatching => "keep watching",
            Verdict::Undo => "undo",
        }
    }
}

/// One journal line.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Decision {
    pub seq: u64,
    pub time_utc: String,
    pub object: String,
    pub verdict: Verdict,
    #[serde(default)]
    pub note: Option<String>,
    /// The observations the decision was made on: how many, and a digest of their identities.
    pub n_obs: usize,
    pub obs_digest: String,
}

/// The journal file, open for appending.
pub struct Journal {
    /// Length of the file up to its last whole line: a failed append is truncated back to it.
    good_len: u64,
    /// Set when a failed append could not be undone: nothing more is written.
    broken: Option<String>,
    file: File,
    path: PathBuf,
    next_seq: u64,
}

/// What replay found.
#[derive(Debug, Default)]
pub struct Replay {
    pub decisions: Vec<Decision>,
    pub warnings: Vec<String>,
}

impl Replay {
    /// The standing decision of each object after undos, in journal order.
    pub fn standing(&self) -> std::collections::BTreeMap<String, Decision> {
        let mut stacks: std::collections::BTreeMap<String, Vec<Decision>> = Default::default();
        for d in &self.decisions {
            let s = stacks.entry(d.object.clone()).or_default();
            if d.verdict == Verdict::Undo {
                s.pop();
            } else {
                s.push(d.clone());
            }
        }
        stacks
            .into_iter()
            .filter_map(|(k, mut v)| v.pop().map(|d| (k, d)))
            .collect()
    }
}

/// The default state directory: $XDG_STATE_HOME/interloper, else ~/.local/state/interloper.
pub fn default_state_dir() -> PathBuf {
    if let Some(x) = std::env::var_os("XDG_STATE_HOME").filter(|v| !v.is_empty()) {
        return PathBuf::from(x).join("interloper");
    }
    let home = std::env::var_os("HOME").map_or_else(|| PathBuf::from("."), PathBuf::from);
    home.join(".local/state/interloper")
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

impl Journal {
    pub const FILE_NAME: &'static str = "decisions.jsonl";

    /// Open (creating) the journal in `dir` and replay it.
    pub fn open(dir: &Path) -> std::io::Result<(Journal, Replay)> {
        std::fs::create_dir_all(dir)?;
        let path = dir.join(Self::FILE_NAME);
        let mut file = OpenOptions::new()
            .create(true)
            .read(true)
            .append(true)
            .open(&path)?;
        let replay = replay(&mut file, &path)?;
        // A torn tail stays a line of its own: later appends must not glue onto it.
        let len = file.metadata()?.len();
        if len > 0 {
            let mut last = [0u8; 1];
            file.seek(SeekFrom::Start(len - 1))?;
            file.read_exact(&mut last)?;
            if last[0] != b'\n' {
                file.write_all(b"\n")?;
                file.sync_data()?;
            }
        }
        let next_seq = replay
            .decisions
            .iter()
            .map(|d| d.seq + 1)
            .max()
            .unwrap_or(1);
        let good_len = file.metadata()?.len();
        Ok((
            Journal {
                file,
                path,
                next_seq,
                good_len,
                broken: None,
            },
            replay,
        ))
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Append a decision; returns only after the line is on disk (write, flush, fsync). A failed
    /// write (a full disk) is cut back to the last whole line, so no torn fragment is left for the
    /// next decision to be glued onto; if even that fails, the journal refuses every later decision
    /// until it is reopened, rather than report one as saved that could not be read back.
    pub fn append(&mut self, mut d: Decision) -> std::io::Result<Decision> {
        if let Some(why) = &self.broken {
            return Err(std::io::Error::other(format!(
                "the journal {} needs attention ({why}); restart to repair it",
                self.path.display()
            )));
        }
        d.seq = self.next_seq;
        let mut line = serde_json::to_vec(&d).map_err(std::io::Error::other)?;
        line.push(b'\n');
        let written = self
            .file
            .write_all(&line)
            .and_then(|_| self.file.flush())
            .and_then(|_| self.file.sync_data());
        if let Err(e) = written {
            let repaired = self
                .file
                .set_len(self.good_len)
                .and_then(|_| self.file.sync_data());
            if let Err(r) = repaired {
                self.broken = Some(format!("a failed write could not be undone: {r}"));
            }
            return Err(e);
        }
        self.good_len += line.len() as u64;
        self.next_seq += 1;
        Ok(d)
    }
}

fn replay(file: &mut File, path: &Path) -> std::io::Result<Replay> {
    file.seek(SeekFrom::Start(0))?;
    let mut out = Replay::default();
    let mut reader = BufReader::new(file);
    let mut buf = Vec::new();
    let mut n = 0;
    loop {
        buf.clear();
        let read = reader.read_until(b'\n', &mut buf)?;
        if read == 0 {
            break;
        }
        n += 1;
        let complete = buf.last() == Some(&b'\n');
        let text = String::from_utf8_lossy(&buf);
        let text = text.trim();
        if text.is_empty() {
            continue;
        }
        match serde_json::from_str::<Decision>(text) {
            Ok(d) if complete => out.decisions.push(d),
            Ok(_) | Err(_) if !complete => out.warnings.push(format!(
                "{}: line {n}: torn last line (interrupted write) skipped",
                path.display()
            )),
            Ok(_) => {}
            Err(e) => out.warnings.push(format!(
                "{}: line {n}: unreadable decision skipped ({e})",
                path.display()
            )),
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn decision(object: &str, verdict: Verdict) -> Decision {
        Decision {
            seq: 0,
            time_utc: "2027-02-26T03:00:00Z".into(),
            object: object.into(),
            verdict,
            note: Some("bright, moving fast".into()),
            n_obs: 12,
            obs_digest: "00".into(),
        }
    }

    #[test]
    fn decisions_survive_a_restart_and_undo_withdraws() {
        let dir = tempfile::tempdir().unwrap();
        {
            let (mut j, r) = Journal::open(dir.path()).unwrap();
            assert!(r.decisions.is_empty());
            j.append(decision("A", Verdict::KeepWatching)).unwrap();
            j.append(decision("A", Verdict::Pursue)).unwrap();
            j.append(decision("B", Verdict::SetAside)).unwrap();
            j.append(decision("B", Verdict::Undo)).unwrap();
        }
        let (_, r) = Journal::open(dir.path()).unwrap();
        assert_eq!(r.decisions.len(), 4);
        let s = r.standing();
        assert_eq!(s["A"].verdict, Verdict::Pursue);
        assert!(!s.contains_key("B"));
    }

    #[test]
    fn a_torn_last_line_is_skipped_with_a_warning_and_later_appends_stay_whole() {
        let dir = tempfile::tempdir().unwrap();
        {
            let (mut j, _) = Journal::open(dir.path()).unwrap();
            j.append(decision("A", Verdict::Pursue)).unwrap();
        }
        let path = dir.path().join(Journal::FILE_NAME);
        let mut f = OpenOptions::new().append(true).open(&path).unwrap();
        f.write_all(b"{\"seq\":2,\"time_utc\":\"2027-02-26T03:0")
            .unwrap();
        drop(f);
        let (mut j, r) = Journal::open(dir.path()).unwrap();
        assert_eq!(r.decisions.len(), 1);
        assert_eq!(r.warnings.len(), 1, "{:?}", r.warnings);
        j.append(decision("C", Verdict::SetAside)).unwrap();
        let (_, r) = Journal::open(dir.path()).unwrap();
        assert_eq!(r.decisions.len(), 2);
        assert_eq!(r.decisions[1].object, "C");
    }
}
