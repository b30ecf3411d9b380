//! A full disk never turns into a lost decision: on a small tmpfs, the journal is filled until appends
//! fail, the space is freed, and more decisions are appended. Every decision that was reported as
//! saved must then replay, readable, and none that failed may appear. (Mounting a tmpfs needs root;
//! CI runs as root. Elsewhere the test says it could not mount and checks nothing else.)
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::journal::{Decision, Journal, Verdict};
use std::process::Command;

fn decision(k: usize) -> Decision {
    Decision {
        note: Some("a note long enough to make every line a few hundred bytes".repeat(3)),
        n_obs: 12,
        obs_digest: "00112233445566778899".into(),
        ..Decision::decision(
            &format!("qkz{k:03}"),
            Verdict::Pursue,
            "2027-02-26T03:00:00Z".into(),
        )
    }
}

struct Mount(std::path::PathBuf);

impl Drop for Mount {
    fn drop(&mut self) {
        let _ = Command::new("umount").arg(&self.0).status();
    }
}

#[test]
fn decisions_saved_around_a_full_disk_all_replay() {
    let dir = tempfile::tempdir().unwrap();
    let ok = Command::new("mount")
        .args(["-t", "tmpfs", "-o", "size=64k", "tmpfs"])
        .arg(dir.path())
        .status()
        .is_ok_and(|s| s.success());
    if !ok {
        eprintln!("could not mount a tmpfs (not root?): full-disk behaviour not exercised here");
        return;
    }
    let _mount = Mount(dir.path().to_path_buf());
    let state = dir.path().join("state");
    let (mut j, _) = Journal::open(&state).unwrap();
    // A few decisions first, so that the journal's last page is part full when the disk fills: the
    // next appends then fit, and then one is cut off part-way.
    let mut saved = Vec::new();
    for k in 0..5 {
        saved.push(j.append(decision(k)).unwrap().object);
    }
    // Fill the file system.
    let filler = dir.path().join("filler");
    {
        use std::io::Write;
        let mut f = std::fs::File::create(&filler).unwrap();
        while f.write_all(&[0u8; 1024]).is_ok() {}
        let _ = f.sync_all();
    }
    let mut failed = Vec::new();
    for k in 5..60 {
        match j.append(decision(k)) {
            Ok(d) => saved.push(d.object),
            Err(_) => failed.push(format!("qkz{k:03}")),
        }
    }
    assert!(!failed.is_empty(), "the disk never filled");
    std::fs::remove_file(&filler).unwrap();
    for k in 60..80 {
        let d = j.append(decision(k)).expect("space is back");
        saved.push(d.object);
    }
    drop(j);
    let (_, replay) = Journal::open(&state).unwrap();
    let objects: Vec<&str> = replay.entries.iter().map(|d| d.object.as_str()).collect();
    eprintln!(
        "{} saved, {} refused while full; replay finds {} with {} warnings",
        saved.len(),
        failed.len(),
        objects.len(),
        replay.warnings.len()
    );
    for s in &saved {
        assert!(
            objects.contains(&s.as_str()),
            "{s} was shown as saved but is lost"
        );
    }
    for f in &failed {
        assert!(!objects.contains(&f.as_str()), "{f} failed but appears");
    }
    assert!(replay.warnings.is_empty(), "{:?}", replay.warnings);
}
