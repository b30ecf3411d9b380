//! `ephem` bounds a run, not a range: the row cap counts every object's rows together (asking for more
//! is a usage error, exit 2); and a time it cannot compute is an error with the time named, not a table
//! that silently stops.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::process::Command;

fn ephem(args: &[&str]) -> (Option<i32>, String, usize) {
    let feed = format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"));
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["ephem", "--site", "TV1", "--json"])
        .args(args)
        .arg(&feed)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
        String::from_utf8_lossy(&out.stdout).lines().count(),
    )
}

#[test]
fn the_row_cap_counts_all_objects_together() {
    let (code, err, rows) = ephem(&[
        "--from",
        "2027-02-26T00:00:00Z",
        "--to",
        "2027-03-26T00:00:00Z",
        "--step",
        "1m",
    ]);
    // Asking for more rows than a run writes is a usage mistake: exit 2.
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("more than the 200000 of one run"), "{err}");
    assert_eq!(rows, 0);
}

#[test]
fn times_beyond_the_models_are_an_error_not_a_silent_stop() {
    let (code, err, rows) = ephem(&[
        "--from",
        "2099-12-30T00:00:00Z",
        "--to",
        "2100-01-03T00:00:00Z",
        "--step",
        "1d",
        "--object",
        "qka2e7f",
    ]);
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("could not be computed"), "{err}");
    assert!(err.contains("2100-01-0"), "{err}");
    assert!(rows >= 1, "the computable times are still written");
}
