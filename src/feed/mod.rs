//! The feed layer: input formats, the site table, and turning files into tracklets. Reads files; knows
//! nothing of the console.

pub mod ades;
pub mod ades_xml;
pub mod alerts;
pub mod engine;
pub mod journal;
pub mod obs80;
pub mod sanitize;
mod siteentry;
pub mod sites;
pub mod store;
pub mod tracklets;
pub mod watcher;

/// Why one line (or a whole file) was not taken in.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize, thiserror::Error)]
#[error("{file}{}{}: {reason}", if *line > 0 { format!(": line {line}") } else { String::new() }, column.as_ref().map(|c| format!(", column {c}")).unwrap_or_default())]
pub struct InputError {
    pub file: String,
    /// 1-based line number (0 for the whole file).
    pub line: usize,
    pub column: Option<String>,
    pub reason: String,
}

impl InputError {
    /// An error with every text part cleaned (they come from the file and go to a screen or a log).
    pub fn cleaned(file: &str, line: usize, column: Option<&str>, reason: &str) -> InputError {
        InputError {
            file: sanitize::clean(file),
            line,
            column: column.map(sanitize::clean),
            reason: sanitize::clean(reason),
        }
    }
}
