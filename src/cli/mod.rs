//! The command line: argument definitions and one module per subcommand. Only glue lives here.

pub mod fit;
pub mod inputs;

use clap::{Parser, Subcommand};

/// Triage console and batch tools for incoming tracklets: orbit fits, hyperbolicity score, follow-up.
#[derive(Debug, Parser)]
#[command(name = "interloper", version, about)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Fit every tracklet in the given files and print them ranked by hyperbolicity score.
    Fit(fit::FitArgs),
}
