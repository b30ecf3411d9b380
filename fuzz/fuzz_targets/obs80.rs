//! Fuzz the 80-column record parser directly (it is reached from read_bytes only when detection agrees).
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let (good, _bad) = interloper::feed::obs80::parse("fuzz.txt", text);
        for r in good {
            assert!((0.0..360.0).contains(&r.ra_deg) && (-90.0..=90.0).contains(&r.dec_deg));
        }
    }
});
