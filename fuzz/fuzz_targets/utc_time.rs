//! Fuzz the ISO 8601 UTC parser and the conversion to TAI/TT/TDB.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        if let Ok(t) = interloper::physics::time::UtcTime::parse(text) {
            assert!(t.second >= 0.0 && t.second < 61.0);
            let _ = t.instant();
        }
    }
});
