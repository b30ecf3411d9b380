//! Command-line entry point: parse arguments, run the subcommand, map errors to exit codes.
//! Exit codes: 0 all inputs fitted, 1 something failed or was rejected (see stderr), 2 usage error.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Cli::parse();
    match cli::config::Config::load(args.config.as_deref()) {
        Ok(c) => cli::config::install(c),
        Err(e) => {
            eprintln!("error: {e:#}");
            std::process::exit(2);
        }
    }
    let code = match &args.command {
        cli::Command::Config(a) => cli::config_show::run(a),
        cli::Command::Fit(a) => cli::fit::run(a),
        cli::Command::Watch(a) => cli::watch::run(a),
        cli::Command::Ephem(a) => cli::ephem::run(a),
        cli::Command::Plan(a) => cli::plan::run(a),
        cli::Command::Origin(a) => cli::origin::run(a),
        cli::Command::Demo(a) => cli::demo::run(a),
        cli::Command::Completions(a) => cli::shell::completions(a),
        cli::Command::Man(a) => cli::shell::man(a),
        cli::Command::JournalAppend(a) => cli::journal::run(a),
    };
    match code {
        Ok(c) => std::process::exit(c),
        // The reader of our output went away (`| head`): nothing is wrong and nothing more to say.
        Err(e) if broken_pipe(&e) => std::process::exit(0),
        Err(e) if e.downcast_ref::<cli::Usage>().is_some() => {
            eprintln!("error: {e:#}");
            std::process::exit(2);
        }
        Err(e) => {
            eprintln!("error: {e:#}");
            std::process::exit(1);
        }
    }
}

fn broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
            || c.downcast_ref::<serde_json::Error>()
                .and_then(|j| j.io_error_kind())
                .is_some_and(|k| k == std::io::ErrorKind::BrokenPipe)
    })
}
