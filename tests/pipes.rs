//! A reader that goes away (`| head -1`) ends `fit`, `ephem`, the headless watcher, `completions`, `man`
//! and `config` quietly with exit code 0: no "Broken pipe" error, no panic, no process left running.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::io::{BufRead, BufReader};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// The binary with `args`, its stdout and stderr pipes.
fn spawn(args: &[&str]) -> std::process::Child {
    Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap()
}

fn first_line_then_close(args: &[&str]) -> (Option<i32>, String) {
    let mut child = spawn(args);
    {
        let stdout = child.stdout.take().unwrap();
        let mut line = String::new();
        BufReader::new(stdout).read_line(&mut line).unwrap();
        assert!(!line.is_empty(), "no output from {args:?}");
    } // the read end closes here
    let start = Instant::now();
    loop {
        if let Some(status) = child.try_wait().unwrap() {
            let mut err = String::new();
            if let Some(mut e) = child.stderr.take() {
                std::io::Read::read_to_string(&mut e, &mut err).unwrap();
            }
            return (status.code(), err);
        }
        if start.elapsed() > Duration::from_secs(30) {
            let _ = child.kill();
            panic!("{args:?} kept running after its reader went away");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn feed() -> String {
    format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"))
}

#[test]
fn fit_json_into_a_closed_pipe_exits_zero_quietly() {
    // Six hundred records (megabytes, far beyond a pipe's buffer) from input with no bad line.
    let dir = format!(
        "{}/tests/reference/data/population_sky",
        env!("CARGO_MANIFEST_DIR")
    );
    let (sites, f) = (format!("{dir}/sites.toml"), format!("{dir}/one_night.psv"));
    let (code, err) = first_line_then_close(&["fit", "--json", "--sites", &sites, &f]);
    assert_eq!(code, Some(0), "{err}");
    assert!(!err.contains("Broken pipe"), "{err}");
}

#[test]
fn ephem_into_a_closed_pipe_exits_zero_quietly() {
    let f = feed();
    let (code, err) = first_line_then_close(&[
        "ephem",
        "--site",
        "TV1",
        "--from",
        "2027-02-26T00:00:00Z",
        "--to",
        "2027-03-26T00:00:00Z",
        "--step",
        "1m",
        "--json",
        "--object",
        "qka2e7f",
        &f,
    ]);
    assert_eq!(code, Some(0), "{err}");
    assert!(!err.contains("Broken pipe"), "{err}");
}

#[test]
fn headless_watch_into_a_closed_pipe_stops_with_exit_zero() {
    let dir = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    for e in std::fs::read_dir(feed()).unwrap() {
        let p = e.unwrap().path();
        std::fs::copy(&p, dir.path().join(p.file_name().unwrap())).unwrap();
    }
    let (d, s) = (
        dir.path().display().to_string(),
        state.path().display().to_string(),
    );
    let (code, err) = first_line_then_close(&["watch", "--headless", "--json", "--state", &s, &d]);
    assert_eq!(code, Some(0), "{err}");
}

/// Regression: with one file, the watcher reports it and goes idle, writing nothing more; it ran on
/// after `| head -1` until another file came. It now notices the reader has gone without writing.
#[test]
fn an_idle_headless_watch_notices_its_reader_went_away() {
    let dir = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    let one = format!(
        "{}/tests/reference/data/synthetic/mainbelt_3n.psv",
        env!("CARGO_MANIFEST_DIR")
    );
    std::fs::copy(&one, dir.path().join("mainbelt_3n.psv")).unwrap();
    let (d, s) = (
        dir.path().display().to_string(),
        state.path().display().to_string(),
    );
    let (code, err) = first_line_then_close(&["watch", "--headless", "--json", "--state", &s, &d]);
    assert_eq!(code, Some(0), "{err}");
}

/// Run with stdout a pipe whose reading end is closed before the child starts: every write fails,
/// however soon the child writes.
fn into_a_closed_pipe(args: &[&str]) -> (Option<i32>, String) {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(args)
        .stdout(writer)
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn completions_man_and_config_into_a_closed_pipe_exit_zero_quietly() {
    // Regression: completions and config panicked (exit 101) writing to a closed pipe.
    for args in [
        &["completions", "bash"][..],
        &["man"][..],
        &["config"][..],
        &["config", "--json"][..],
    ] {
        let (code, err) = into_a_closed_pipe(args);
        assert_eq!(code, Some(0), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}
