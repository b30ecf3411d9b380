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

/// The first `max + 1` bytes of a file at most: one more than `max` tells the caller the file is over
/// it, without reading a runaway file or a device to its end.
pub fn read_at_most(path: &std::path::Path, max: u64) -> std::io::Result<Vec<u8>> {
    use std::io::Read;
    let mut bytes = Vec::new();
    std::fs::File::open(path)?
        .take(max.saturating_add(1))
        .read_to_end(&mut bytes)?;
    Ok(bytes)
}
