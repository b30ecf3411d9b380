//! Fuzz the ADES XML reader through the whole intake of one file (the bytes are made to look like XML
//! so the reader is always the one exercised): it must never panic, never exceed the record limit, and
//! nothing it reports may carry a control character.
#![no_main]
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let mut bytes = b"<".to_vec();
    bytes.extend_from_slice(data);
    let limits = Limits {
        max_observations: 1000,
        ..Limits::default()
    };
    let intake = read_bytes("fuzz.xml", &bytes, &SiteTable::builtin(), &limits);
    let n: usize = intake.tracklets.iter().map(|t| t.obs.len()).sum();
    assert!(n <= 1000);
    for e in &intake.errors {
        assert!(!e.to_string().chars().any(|c| c.is_control() && c != '\n'));
    }
    for t in &intake.tracklets {
        assert!(!t.object.chars().any(char::is_control));
    }
});
