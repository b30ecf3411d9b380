//! Two observers on one state directory: two writer processes append journal lines of every kind at
//! once, each killed (SIGKILL) at random moments and restarted, while two followers in this process
//! read the journal as it grows, the way consoles do. Nothing acknowledged is lost (every line
//! reported saved is on disk, readable, with its writer's name), nothing is interleaved (sequence
//! numbers rise line by line; an unreadable line can only be one a kill cut short), and both
//! followers end with the state a replay gives.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::feed::journal::{Journal, Standing};
use interloper::fitting::ranging::SplitMix;
use std::collections::HashMap;
use std::path::Path;
use std::process::{Command, Stdio};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

const PER_WRITER: usize = 10_000;

/// Run one observer's writer until it has `PER_WRITER` acknowledged lines; returns (acked seqs, kills).
fn writer(dir: &Path, name: &str, seed: u64) -> (Vec<u64>, usize) {
    let mut rng = SplitMix::new(seed);
    let (mut acked, mut kills) = (Vec::new(), 0);
    while acked.len() < PER_WRITER {
        let mut child = Command::new(env!("CARGO_BIN_EXE_interloper"))
            .args(["journal-append", "--observer", name, "--state"])
            .arg(dir)
            .args(["--count", &(PER_WRITER - acked.len()).to_string()])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let acks = util::ack_stream(&mut child);
        // Most runs are killed after a random number of acknowledged lines, so every run makes
        // progress however slow the disk's sync; one in four at a random moment from its start (while
        // it opens the journal, or before its first line).
        if rng.uniform() < 0.25 {
            std::thread::sleep(Duration::from_micros(
                5_000 + (rng.uniform() * 150_000.0) as u64,
            ));
        } else {
            let want = 1 + (rng.uniform() * 300.0) as usize;
            for _ in 0..want {
                match acks.recv_timeout(Duration::from_secs(60)) {
                    Ok(seq) => acked.push(seq),
                    Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => break,
                    Err(e) => panic!("{name}: no acknowledgement in 60 s ({e})"),
                }
            }
        }
        if child.try_wait().unwrap().is_none() {
            child.kill().unwrap(); // SIGKILL
            kills += 1;
        }
        child.wait().unwrap();
        acked.extend(acks.iter());
    }
    (acked, kills)
}

/// Follow the journal as a console does until `done`, then read what is left.
fn follower(dir: &Path, done: &AtomicBool) -> (Standing, usize) {
    let (mut j, first) = Journal::open_as(dir, "follower").unwrap();
    let mut s = Standing::from_entries(&first.entries);
    let mut n = first.entries.len();
    loop {
        let finished = done.load(Ordering::Relaxed);
        for e in j.read_new().unwrap().entries {
            s.apply(&e);
            n += 1;
        }
        if finished {
            return (s, n);
        }
        std::thread::sleep(Duration::from_millis(15));
    }
}

#[test]
fn two_writers_killed_at_random_lose_nothing_interleave_nothing_and_followers_converge() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().to_path_buf();
    let done = Arc::new(AtomicBool::new(false));
    let followers: Vec<_> = (0..2)
        .map(|_| {
            let (p, d) = (path.clone(), done.clone());
            std::thread::spawn(move || follower(&p, &d))
        })
        .collect();
    let writers: Vec<_> = [("alice", 1u64), ("bob", 2)]
        .into_iter()
        .map(|(name, seed)| {
            let p = path.clone();
            std::thread::spawn(move || (name, writer(&p, name, seed)))
        })
        .collect();
    let results: Vec<_> = writers.into_iter().map(|w| w.join().unwrap()).collect();
    done.store(true, Ordering::Relaxed);
    let views: Vec<_> = followers.into_iter().map(|f| f.join().unwrap()).collect();

    let (_, replay) = Journal::open(dir.path()).unwrap();
    let kills: usize = results.iter().map(|(_, (_, k))| k).sum();
    let by_seq: HashMap<u64, &str> = replay
        .entries
        .iter()
        .map(|e| (e.seq, e.observer()))
        .collect();
    for (name, (acked, _)) in &results {
        for seq in acked {
            assert_eq!(
                by_seq.get(seq),
                Some(name),
                "{name}'s line {seq}: lost or misattributed"
            );
        }
    }
    let seqs: Vec<u64> = replay.entries.iter().map(|e| e.seq).collect();
    assert!(
        seqs.windows(2).all(|w| w[0] < w[1]),
        "sequence numbers out of file order"
    );
    assert!(
        replay.warnings.len() <= kills,
        "{} unreadable lines from {kills} kills: {:?}",
        replay.warnings.len(),
        &replay.warnings[..replay.warnings.len().min(5)]
    );
    let standing = replay.standing();
    for (k, (view, n)) in views.iter().enumerate() {
        assert_eq!(
            *n,
            replay.entries.len(),
            "follower {k} read a different number of lines"
        );
        assert!(*view == standing, "follower {k} ended in a different state");
    }
    eprintln!(
        "{} lines from two writers over {kills} kills, {} acknowledged, all present; {} unreadable \
         (cut by a kill); both followers agree with the replay",
        replay.entries.len(),
        results.iter().map(|(_, (a, _))| a.len()).sum::<usize>(),
        replay.warnings.len()
    );
}
