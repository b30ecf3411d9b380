//! The command line: argument definitions and one module per subcommand. Only glue lives here.

pub mod config;
pub mod config_show;
pub mod console;
pub mod demo;
pub mod ephem;
mod ephem_request;
pub mod fit;
pub mod inputs;
pub mod journal;
pub mod logging;
pub mod origin;
pub mod plan;
pub mod plantext;
pub mod shard;
pub mod shell;
pub mod watch;
pub mod watch_alerts;
mod watch_report;

use clap::{Parser, Subcommand};

/// A mistake in how the command was called (exit code 2), as opposed to a failure of the work (1).
#[derive(Debug)]
pub struct Usage(pub String);

impl std::fmt::Display for Usage {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for Usage {}

/// Return early with a usage error.
#[macro_export]
macro_rules! usage {
    ($($arg:tt)*) => {
        return Err($crate::cli::Usage(format!($($arg)*)).into())
    };
}

/// Triage console and batch tools for incoming tracklets: orbit fits, hyperbolicity score, follow-up.
#[derive(Debug, Parser)]
#[command(name = "interloper", version, about)]
pub struct Cli {
    /// Configuration file (default: $INTERLOPER_CONFIG, else config.toml in the platform's
    /// configuration directory; `interloper config` shows which).
    #[arg(long, global = true, value_name = "FILE")]
    pub config: Option<std::path::PathBuf>,
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Fit every tracklet in the given files and print them ranked by hyperbolicity score.
    Fit(fit::FitArgs),
    /// Replay the bundled demo night into a temporary directory while the console watches it.
    Demo(demo::DemoArgs),
    /// Follow-up ephemeris of fitted tracklets from a site over a time range.
    Ephem(ephem::EphemArgs),
    /// Tonight's follow-up plan over the candidates at one or more telescopes.
    Plan(plan::PlanArgs),
    /// Fit the given tracklets and print where each unbound candidate comes from.
    Origin(origin::OriginArgs),
    /// Watch a directory: fit every tracklet file as it arrives.
    Watch(watch::WatchArgs),
    /// Show the effective configuration and where each value came from.
    Config(config_show::ConfigArgs),
    /// Write a shell completion script (bash, zsh, fish, elvish, powershell) to standard output.
    Completions(shell::CompletionsArgs),
    /// Write the manual page (roff) to standard output, or every page into a directory.
    Man(shell::ManArgs),
    /// Append test decisions to a journal, acknowledging each once synced (durability tests).
    #[command(hide = true)]
    JournalAppend(journal::JournalArgs),
}
