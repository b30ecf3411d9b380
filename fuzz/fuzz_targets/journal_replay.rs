//! Fuzz journal replay: any bytes in the journal file must load (with warnings), never fail or panic.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let dir = std::env::temp_dir().join(format!("interloper-fuzz-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join(interloper::feed::journal::Journal::FILE_NAME);
    if std::fs::write(&path, data).is_ok() {
        let opened = interloper::feed::journal::Journal::open(&dir);
        assert!(opened.is_ok());
    }
});
