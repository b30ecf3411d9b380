//! The console refuses to start without a terminal, saying what to use instead, with exit code 2 (it used
//! to panic inside the terminal set-up).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::process::{Command, Stdio};

#[test]
fn watch_without_a_terminal_suggests_headless_and_exits_two() {
    let dir = tempfile::tempdir().unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .arg("watch")
        .arg(dir.path())
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("--headless"), "{err}");
    assert!(!err.contains("panicked"), "{err}");
}
