//! The malformed-input corpus (tests/corpus/malformed/, made by make_malformed.py): every file gives the
//! error it must, with its line and column, keeps the good lines it has, and nothing from a file reaches
//! an error message or an object id with a control character in it.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use std::path::PathBuf;

fn corpus() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/corpus/malformed")
}

#[test]
fn every_malformed_file_gives_its_error_with_line_and_column() {
    let table = std::fs::read_to_string(corpus().join("expected.tsv")).unwrap();
    let sites = SiteTable::builtin();
    let mut n = 0;
    for row in table.lines().skip(1) {
        let f: Vec<&str> = row.split('\t').collect();
        let (name, line, column, expect) = (f[0], f[1], f[2], f[3]);
        let bytes = std::fs::read(corpus().join(name)).unwrap();
        let intake = read_bytes(name, &bytes, &sites, &Limits::default());
        n += 1;
        for e in &intake.errors {
            let text = e.to_string();
            assert!(
                !text.chars().any(|c| c.is_control()),
                "{name}: control character in {text:?}"
            );
        }
        for t in &intake.tracklets {
            assert!(!t.object.chars().any(|c| c.is_control()), "{name}");
        }
        if line == "OK" {
            assert!(intake.errors.is_empty(), "{name}: {:?}", intake.errors);
            let obs: usize = intake.tracklets.iter().map(|t| t.obs.len()).sum();
            assert_eq!(obs.to_string(), expect, "{name}");
            continue;
        }
        let e = intake
            .errors
            .iter()
            .find(|e| e.reason.contains(expect))
            .unwrap_or_else(|| {
                panic!(
                    "{name}: no error containing {expect:?} in {:?}",
                    intake.errors
                )
            });
        assert_eq!(e.line.to_string(), line, "{name}: {e}");
        if !column.is_empty() {
            assert_eq!(e.column.as_deref(), Some(column), "{name}: {e}");
        }
    }
    assert!(n >= 50, "only {n} corpus files");
}

#[test]
fn a_file_with_some_bad_lines_keeps_its_good_ones() {
    let text = "trkSub|stn|obsTime|ra|dec\nK1|TV1|2027-02-26T03:00:00Z|10|20\nK1|TV1|2027-02-30T03:00:00Z|10|20\nK1|TV1|2027-02-26T03:30:00Z|10.01|20.01\n";
    let intake = read_bytes(
        "mixed.psv",
        text.as_bytes(),
        &SiteTable::builtin(),
        &Limits::default(),
    );
    assert_eq!(intake.errors.len(), 1);
    assert_eq!(intake.tracklets[0].obs.len(), 2);
    assert!(!intake.rejected);
}

#[test]
fn a_200_megabyte_file_is_refused_without_being_read() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("huge.psv");
    let f = std::fs::File::create(&path).unwrap();
    f.set_len(200 * 1024 * 1024).unwrap(); // sparse: costs no disk
    let meta = std::fs::metadata(&path).unwrap();
    let limits = Limits::default();
    assert!(meta.len() > limits.max_bytes);
    // The CLI and the watcher check the size before reading; the byte-level check agrees.
    let intake = read_bytes(
        "huge.psv",
        &vec![b'a'; (limits.max_bytes + 1) as usize],
        &SiteTable::builtin(),
        &limits,
    );
    assert!(intake.rejected);
    assert!(
        intake.errors[0].reason.contains("over the"),
        "{:?}",
        intake.errors
    );
}

#[test]
fn psv_round_trip_keeps_every_field() {
    let bytes = std::fs::read(
        PathBuf::from(env!("CARGO_MANIFEST_DIR"))
            .join("sample_feeds/demo_night/001_qk0f3ra_n1.psv"),
    )
    .unwrap();
    let text = String::from_utf8(bytes).unwrap();
    let (records, bad) = interloper::feed::ades::parse("a.psv", &text);
    assert!(bad.is_empty());
    let again = interloper::feed::ades::write(&records);
    let (back, bad) = interloper::feed::ades::parse("b.psv", &again);
    assert!(bad.is_empty());
    for (a, b) in records.iter().zip(&back) {
        assert_eq!(
            (
                a.time, a.ra_deg, a.dec_deg, a.rms_ra, a.mag, &a.band, &a.stn
            ),
            (
                b.time, b.ra_deg, b.dec_deg, b.rms_ra, b.mag, &b.band, &b.stn
            )
        );
    }
}
