//! The feed layer: input formats, the site table, and turning files into tracklets. Reads files; knows
//! nothing of the console.

pub mod ades;
pub mod ades_xml;
pub mod alertlog;
pub mod alerts;
pub mod engine;
pub mod journal;
mod merge;
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

/// Which files a read takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Accept {
    /// Whatever the path is: a file the user named (`<(…)` is a pipe, and meant).
    AnyFile,
    /// Regular files only, as the opened descriptor shows: files found by listing a directory,
    /// where a FIFO or device put in a file's place after the listing must not block the open or
    /// the read for ever.
    RegularOnly,
}

/// The first `max + 1` bytes of a file at most: one more than `max` tells the caller the file is over
/// it, without reading a runaway file or a device to its end.
pub fn read_at_most(path: &std::path::Path, max: u64, accept: Accept) -> std::io::Result<Vec<u8>> {
    use std::io::Read;
    let file = match accept {
        Accept::AnyFile => std::fs::File::open(path)?,
        Accept::RegularOnly => open_regular(path)?,
    };
    let mut bytes = Vec::new();
    file.take(max.saturating_add(1)).read_to_end(&mut bytes)?;
    Ok(bytes)
}

/// A path opened for reading if it is a regular file. The open does not wait for a FIFO's writer
/// (O_NONBLOCK, which reads of a regular file ignore); the type is judged on the descriptor, so a
/// swap between a check by name and the open cannot slip past it.
fn open_regular(path: &std::path::Path) -> std::io::Result<std::fs::File> {
    let mut options = std::fs::OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        // Nor does a terminal put in a file's place become the reader's controlling terminal.
        options.custom_flags(libc::O_NONBLOCK | libc::O_NOCTTY);
    }
    let file = options.open(path)?;
    if !file.metadata()?.is_file() {
        return Err(std::io::Error::new(
            std::io::ErrorKind::InvalidInput,
            "not a regular file (a FIFO, device or socket)",
        ));
    }
    Ok(file)
}

#[cfg(all(test, unix))]
mod tests {
    use super::{Accept, read_at_most};

    #[test]
    fn a_fifo_or_device_in_a_files_place_is_refused_without_waiting() {
        let dir = std::env::temp_dir().join(format!("interloper-fifo-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let fifo = dir.join("swapped.psv");
        let _ = std::fs::remove_file(&fifo);
        // A FIFO with no writer: a plain open for reading would block here until one appeared.
        let status = std::process::Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap();
        assert!(status.success());
        let err = read_at_most(&fifo, 100, Accept::RegularOnly).unwrap_err();
        assert_eq!(err.kind(), std::io::ErrorKind::InvalidInput, "{err}");
        // A character device that never ends.
        let zero = std::path::Path::new("/dev/zero");
        let err = read_at_most(zero, 100, Accept::RegularOnly).unwrap_err();
        assert_eq!(err.kind(), std::io::ErrorKind::InvalidInput, "{err}");
        // Named by the user, the device is read, but only to one byte past the limit.
        assert_eq!(read_at_most(zero, 100, Accept::AnyFile).unwrap().len(), 101);
        // A regular file is read either way, to one byte past the limit.
        let file = dir.join("plain.psv");
        std::fs::write(&file, b"0123456789").unwrap();
        for accept in [Accept::RegularOnly, Accept::AnyFile] {
            assert_eq!(read_at_most(&file, 4, accept).unwrap(), b"01234");
            assert_eq!(read_at_most(&file, 100, accept).unwrap(), b"0123456789");
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
