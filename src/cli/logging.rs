//! Diagnostics through `tracing`: to a daily-rotated file in the state directory (the console never
//! writes to the screen it owns), and for headless runs also to stderr. The level filter is taken from
//! `INTERLOPER_LOG`, else `RUST_LOG` (same syntax: `info`, `warn`, `interloper=debug`…), default `info`.

use std::path::Path;
use tracing_subscriber::EnvFilter;
use tracing_subscriber::layer::SubscriberExt;
use tracing_subscriber::util::SubscriberInitExt;

/// Log files kept in the state directory (one a day).
pub const KEEP_FILES: usize = 7;

/// Where diagnostics go besides the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sink {
    /// The full-screen console: the file only.
    FileOnly,
    /// Headless runs: the file and stderr.
    FileAndStderr,
}

fn filter() -> EnvFilter {
    let spec = std::env::var("INTERLOPER_LOG")
        .or_else(|_| std::env::var("RUST_LOG"))
        .unwrap_or_default();
    EnvFilter::try_new(if spec.trim().is_empty() {
        "info"
    } else {
        &spec
    })
    .unwrap_or_else(|_| EnvFilter::new("info"))
}

/// Start logging for this process (once), to the state directory's log if there is one. A state
/// directory that cannot hold the log leaves stderr (if asked for) and returns why, for the caller to
/// show.
pub fn init(state: Option<&Path>, sink: Sink) -> Option<String> {
    let file = state.map(|state| {
        tracing_appender::rolling::Builder::new()
            .rotation(tracing_appender::rolling::Rotation::DAILY)
            .filename_prefix("interloper")
            .filename_suffix("log")
            .max_log_files(KEEP_FILES)
            .build(state)
            .map_err(|e| format!("cannot log to {}: {e}", state.display()))
    });
    let (file_layer, warning) = match file {
        Some(Ok(f)) => (
            Some(
                tracing_subscriber::fmt::layer()
                    .with_writer(f)
                    .with_ansi(false)
                    .with_target(false),
            ),
            None,
        ),
        Some(Err(e)) => (None, Some(e)),
        None => (None, None),
    };
    let stderr_layer = (sink == Sink::FileAndStderr).then(|| {
        tracing_subscriber::fmt::layer()
            .with_writer(std::io::stderr)
            .with_ansi(false)
            .without_time()
            .with_target(false)
            .with_level(false)
    });
    let _ = tracing_subscriber::registry()
        .with(filter())
        .with(file_layer)
        .with(stderr_layer)
        .try_init();
    warning
}
