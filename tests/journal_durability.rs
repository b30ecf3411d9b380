//! Journal durability: a process appending decisions is killed (SIGKILL) at random moments, 100 times,
//! into one journal. After each kill the journal must load, and every decision the process acknowledged
//! (printed only after write, flush and fsync) must be in it.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::feed::journal::Journal;
use interloper::fitting::ranging::SplitMix;
use std::collections::HashSet;
use std::process::{Command, Stdio};
use std::time::Duration;

#[test]
fn no_acknowledged_decision_is_lost_across_100_kills() {
    let dir = tempfile::tempdir().unwrap();
    let mut rng = SplitMix::new(42);
    let mut acked: HashSet<u64> = HashSet::new();
    let mut torn = 0;
    for round in 0..100 {
        let mut child = Command::new(env!("CARGO_BIN_EXE_interloper"))
            .args(["journal-append", "--state"])
            .arg(dir.path())
            .args(["--count", "100000"])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let acks = util::ack_stream(&mut child);
        // Every other round kills a writer already appending, however slow the disk's sync (the
        // others kill from the start, so kills while it opens and repairs the journal are covered).
        if round % 2 == 1 {
            let first = acks
                .recv_timeout(Duration::from_secs(60))
                .unwrap_or_else(|e| panic!("round {round}: no acknowledgement in 60 s ({e})"));
            acked.insert(first);
        }
        std::thread::sleep(Duration::from_micros(
            2_000 + (rng.uniform() * 40_000.0) as u64,
        ));
        child.kill().unwrap(); // SIGKILL on Unix
        child.wait().unwrap();
        acked.extend(acks.iter());
        let (_, replay) = Journal::open(dir.path())
            .unwrap_or_else(|e| panic!("round {round}: journal failed to load: {e}"));
        torn += replay.warnings.len();
        let present: HashSet<u64> = replay.entries.iter().map(|d| d.seq).collect();
        let lost: Vec<&u64> = acked.iter().filter(|s| !present.contains(s)).collect();
        assert!(
            lost.is_empty(),
            "round {round}: acknowledged but lost: {lost:?}"
        );
    }
    eprintln!(
        "{} acknowledged decisions over 100 kills, all present; {torn} torn-line warnings seen",
        acked.len()
    );
}
