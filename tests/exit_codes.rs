//! Usage mistakes exit with 2 and say how to put them right; 1 stays for failed fits and rejected input.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::process::Command;

fn run(args: &[&str]) -> (Option<i32>, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn feed() -> String {
    format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"))
}

const RANGE: [&str; 6] = [
    "--from",
    "2027-02-27T00:00:00Z",
    "--to",
    "2027-02-27T06:00:00Z",
    "--step",
    "1h",
];

#[test]
fn an_unknown_site_code_is_a_usage_error_that_lists_the_known_ones() {
    let f = feed();
    let mut a = vec!["ephem", "--site", "TV7"];
    a.extend(RANGE);
    a.push(&f);
    let (code, err) = run(&a);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("did you mean") && err.contains("TV1"), "{err}");
}

#[test]
fn bad_times_and_ranges_are_usage_errors() {
    let f = feed();
    for args in [
        vec![
            "--from",
            "2027-02-30T00:00:00Z",
            "--to",
            "2027-03-01T00:00:00Z",
            "--step",
            "1h",
        ],
        vec![
            "--from",
            "2027-02-27T06:00:00Z",
            "--to",
            "2027-02-27T00:00:00Z",
            "--step",
            "1h",
        ],
        vec![
            "--from",
            "2027-02-27T00:00:00Z",
            "--to",
            "2027-02-27T06:00:00Z",
            "--step",
            "0h",
        ],
    ] {
        let mut a = vec!["ephem", "--site", "TV1"];
        a.extend(args.iter().copied());
        a.push(&f);
        let (code, err) = run(&a);
        assert_eq!(code, Some(2), "{args:?}: {err}");
    }
}

#[test]
fn an_object_that_matches_nothing_is_a_usage_error() {
    let f = feed();
    let mut a = vec!["ephem", "--site", "TV1", "--object", "NOPE"];
    a.extend(RANGE);
    a.push(&f);
    let (code, err) = run(&a);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("NOPE"), "{err}");
}

#[test]
fn a_missing_watch_directory_and_a_zero_speed_are_usage_errors() {
    let (code, err) = run(&["watch", "--headless", "/nonexistent/interloper-dir"]);
    assert_eq!(code, Some(2), "{err}");
    let (code, err) = run(&["demo", "--headless", "--speed", "0"]);
    assert_eq!(code, Some(2), "{err}");
}

#[test]
fn an_unusable_state_directory_is_a_usage_error_that_names_it() {
    // The console needs a terminal before it looks at the state directory: `script` gives it one.
    let dir = tempfile::tempdir().unwrap();
    let blocker = dir.path().join("a-file");
    std::fs::write(&blocker, "not a folder").unwrap();
    let state = blocker.join("state");
    let cmd = format!(
        "{} watch --state {} {}",
        env!("CARGO_BIN_EXE_interloper"),
        state.display(),
        dir.path().display()
    );
    let out = Command::new("script")
        .args(["-qec", &cmd, "/dev/null"])
        .output()
        .expect("script (util-linux) runs the console on a pseudo-terminal");
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(2), "{text}");
    assert!(
        text.contains(&format!(
            "cannot use {} as the state directory",
            state.display()
        )),
        "{text}"
    );
}

/// Regression: `--v-cap NaN` flipped an answer (P 3e-5 to 0.99) and `--threads 0` was taken; flags
/// are held to what the config file allows.
#[test]
fn absurd_speed_caps_and_thread_counts_are_usage_errors() {
    let f = feed();
    for args in [
        vec!["fit", "--v-cap", "NaN", &f],
        vec!["fit", "--v-cap", "0", &f],
        vec!["fit", "--v-cap", "1e9", &f],
        vec!["fit", "--threads", "0", &f],
        vec!["fit", "--threads", "100000", &f],
        vec!["watch", "--headless", "--threads", "0", &f],
        vec!["origin", "--threads", "0", &f],
    ] {
        let (code, err) = run(&args);
        assert_eq!(code, Some(2), "{args:?}: {err}");
    }
}
