//! Command-line entry point: parse arguments, run the subcommand, map errors to exit codes.
//! Exit codes: 0 all inputs fitted, 1 something failed or was rejected (see stderr), 2 usage error.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Cli::parse();
    let code = match &args.command {
        cli::Command::Fit(a) => cli::fit::run(a),
        cli::Command::Watch(a) => cli::watch::run(a),
        cli::Command::Ephem(a) => cli::ephem::run(a),
        cli::Command::Demo(a) => cli::demo::run(a),
        cli::Command::JournalAppend(a) => cli::journal::run(a),
    };
    match code {
        Ok(c) => std::process::exit(c),
        Err(e) => {
            eprintln!("error: {e:#}");
            std::process::exit(1);
        }
    }
}
