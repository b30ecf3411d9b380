//! `interloper journal-append` (hidden): append journal lines of every kind (decisions, exclusions,
//! restorations, forced methods) and acknowledge each once it is on disk. Used by the durability
//! tests, which kill this process at random moments, also with two of them on one journal.

use interloper::feed::journal::{Entry, Journal, Kind, Verdict, observer_name};
use interloper::fitting::fit::MethodChoice;
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct JournalArgs {
    #[arg(long, value_name = "DIR")]
    pub state: PathBuf,
    #[arg(long, default_value_t = 1000)]
    pub count: usize,
    /// Who the lines are from (default: $USER).
    #[arg(long, value_name = "NAME")]
    pub observer: Option<String>,
}

/// The k-th line: the kinds take turns.
fn line(k: usize) -> Entry {
    let object = format!("qkt{:04}", k % 500);
    let time = chrono::Utc::now().to_rfc3339();
    let obs = || {
        format!("{}/1/2/F51", 246_109_800_000_000u64 + (k as u64 % 7) * 1000)
            .parse()
            .ok()
    };
    match k % 4 {
        0 => Entry {
            note: Some(format!("note {k}")),
            n_obs: k,
            obs_digest: format!("{k:016x}"),
            ..Entry::decision(
                &object,
                [Verdict::Pursue, Verdict::SetAside, Verdict::Undo][(k / 4) % 3],
                time,
            )
        },
        1 => Entry {
            obs: obs(),
            ..Entry::new(Kind::Exclude, &object, time)
        },
        2 => Entry {
            obs: obs(),
            ..Entry::new(Kind::Restore, &object, time)
        },
        _ => Entry {
            method: Some(MethodChoice::Ranging),
            ..Entry::new(Kind::Method, &object, time)
        },
    }
}

pub fn run(args: &JournalArgs) -> anyhow::Result<i32> {
    let (mut j, replay) = Journal::open_as(&args.state, &observer_name(args.observer.as_deref()))?;
    for w in &replay.warnings {
        eprintln!("warning: {w}");
    }
    let mut out = std::io::stdout().lock();
    for k in 0..args.count {
        let e = j.append(line(k))?;
        writeln!(out, "ack {}", e.seq)?;
        out.flush()?;
    }
    Ok(0)
}
