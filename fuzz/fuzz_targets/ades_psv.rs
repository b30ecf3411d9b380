//! Fuzz the whole intake of one file (format detection, ADES PSV, sites, grouping): it must never panic,
//! and nothing it reports may carry a control character.
#![no_main]
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let intake = read_bytes("fuzz.psv", data, &SiteTable::builtin(), &Limits::default());
    for e in &intake.errors {
        assert!(!e.to_string().chars().any(|c| c.is_control() && c != '\n'));
    }
    for t in &intake.tracklets {
        assert!(!t.object.chars().any(char::is_control));
    }
});
