//! `interloper journal-append` (hidden): append decisions and acknowledge each once it is on disk. Used by
//! the durability test, which kills this process at random moments.

use interloper::feed::journal::{Decision, Journal, Verdict};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct JournalArgs {
    #[arg(long, value_name = "DIR")]
    pub state: PathBuf,
    #[arg(long, default_value_t = 1000)]
    pub count: usize,
}

pub fn run(args: &JournalArgs) -> anyhow::Result<i32> {
    let (mut j, replay) = Journal::open(&args.state)?;
    for w in &replay.warnings {
        eprintln!("warning: {w}");
    }
    let mut out = std::io::stdout().lock();
    for k in 0..args.count {
        let d = j.append(Decision {
            seq: 0,
            time_utc: chrono::Utc::now().to_rfc3339(),
            object: format!("qkt{k:04}"),
            verdict: [Verdict::Pursue, Verdict::SetAside, Verdict::KeepWatching][k % 3],
            note: Some(format!("note {k}")),
            n_obs: k,
            obs_digest: format!("{k:016x}"),
        })?;
        writeln!(out, "ack {}", d.seq)?;
        out.flush()?;
    }
    Ok(0)
}
