//! Fuzz the TOML site table and the fixed-column site-code table.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let mut t = interloper::feed::sites::SiteTable::default();
        let _ = t.load_toml("fuzz.toml", text);
        let _ = t.load_site_codes("fuzz.txt", text);
    }
});
