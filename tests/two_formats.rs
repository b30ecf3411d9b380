//! One night reported twice, as an ADES PSV file and as 80-column records of the same exposures
//! (tests/corpus/two_formats: the demo night's first night of qka2e7f, the records written from it
//! at the format's precision), is one night on every path: `fit`, headless `watch` and so the
//! console (its store). It was counted twice, and after a first mend only by `fit`.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

fn n_obs(out: &str) -> Vec<u64> {
    out.lines()
        .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        .filter(|v| v["object"] == "qka2e7f" && v["n_obs"].is_u64())
        .map(|v| v["n_obs"].as_u64().unwrap())
        .collect()
}

#[test]
fn a_night_reported_in_two_formats_counts_once_in_fit_and_in_watch() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/corpus/two_formats");
    let (code, out, err) = util::run_bin(&["fit", "--json", dir.to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(n_obs(&out), vec![5]);
    let state = tempfile::tempdir().unwrap();
    let watched = n_obs(&util::watch_once(state.path(), &dir));
    assert_eq!(watched.last(), Some(&5), "{watched:?}");
}
