//! `interloper completions SHELL` and `interloper man`: shell completion scripts and the manual page,
//! both generated from the same command definition the parser uses, so they cannot drift from it.

use clap::CommandFactory;
use std::io::Write;

#[derive(Debug, clap::Args)]
pub struct CompletionsArgs {
    /// The shell to write a completion script for (to standard output).
    pub shell: clap_complete::Shell,
}

/// Print a completion script, e.g. `interloper completions bash > ~/.local/share/bash-completion/completions/interloper`.
pub fn completions(args: &CompletionsArgs) -> anyhow::Result<i32> {
    let mut cmd = visible_command();
    // Into a buffer first: written straight to a closed pipe (`| head`) the generator panics.
    let mut out = Vec::new();
    clap_complete::generate(args.shell, &mut cmd, "interloper", &mut out);
    std::io::stdout().write_all(&out)?;
    Ok(0)
}

/// The command as completions offer it: the root's own arguments and its subcommands less the hidden
/// ones (the generator offers hidden subcommands too; the test command that writes fake decisions into
/// a journal was offered at every <Tab>). Assembled from the parser's own definition, so it cannot drift.
fn visible_command() -> clap::Command {
    let full = super::Cli::command();
    let mut cmd = clap::Command::new("interloper").version(env!("CARGO_PKG_VERSION"));
    if let Some(a) = full.get_about() {
        cmd = cmd.about(a.clone());
    }
    for arg in full.get_arguments() {
        cmd = cmd.arg(arg.clone());
    }
    for sub in full.get_subcommands().filter(|s| !s.is_hide_set()) {
        cmd = cmd.subcommand(sub.clone());
    }
    cmd.subcommand_required(full.is_subcommand_required_set())
}

#[derive(Debug, clap::Args)]
pub struct ManArgs {
    /// Write interloper.1 and one page per command (interloper-fit.1, …) into DIR instead of printing
    /// the main page.
    #[arg(long, value_name = "DIR")]
    pub dir: Option<std::path::PathBuf>,
}

/// Print the manual page (roff), e.g. `interloper man > ~/.local/share/man/man1/interloper.1`, or write
/// every page with `--dir`.
pub fn man(args: &ManArgs) -> anyhow::Result<i32> {
    let cmd = super::Cli::command();
    match &args.dir {
        Some(dir) => {
            std::fs::create_dir_all(dir)
                .map_err(|e| super::Usage(format!("cannot create {}: {e}", dir.display())))?;
            clap_mangen::generate_to(cmd, dir)?;
            eprintln!("manual pages written to {}", dir.display());
        }
        None => {
            let mut out = Vec::new();
            clap_mangen::Man::new(cmd).render(&mut out)?;
            std::io::stdout().write_all(&out)?;
        }
    }
    Ok(0)
}
