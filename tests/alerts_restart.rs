//! A watcher started again on the same state directory does not raise again the alerts it raised
//! before (every restart once paged the desk again for every candidate it refitted); a state
//! directory of its own starts afresh.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

fn alerts(out: &str) -> Vec<String> {
    out.lines()
        .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        .filter(|v| v["kind"] == "alert")
        .map(|v| format!("{} {}", v["object"], v["alert"]))
        .collect()
}

#[test]
fn a_restarted_watcher_does_not_raise_the_same_alerts_again() {
    let demo = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let feed = tempfile::tempdir().unwrap();
    for entry in std::fs::read_dir(&demo).unwrap() {
        let p = entry.unwrap().path();
        if p.file_name().unwrap().to_string_lossy().contains("qka2e7f") {
            std::fs::copy(&p, feed.path().join(p.file_name().unwrap())).unwrap();
        }
    }
    let state = tempfile::tempdir().unwrap();
    let first = alerts(&util::watch_once(state.path(), feed.path()));
    assert!(
        !first.is_empty(),
        "the demo's unbound candidate raises an alert"
    );
    let again = alerts(&util::watch_once(state.path(), feed.path()));
    assert!(again.is_empty(), "raised again after a restart: {again:?}");
    let fresh = tempfile::tempdir().unwrap();
    assert_eq!(alerts(&util::watch_once(fresh.path(), feed.path())), first);
}
