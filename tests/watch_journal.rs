//! The headless watcher fits with the observers' choices: an exclusion in the journal of the state
//! directory it is given leaves that observation out of its fit, as the console's fit does.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::feed::journal::{Entry, Journal, Kind};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::obsid::ObsId;
use std::path::PathBuf;

fn n_obs_of_k27db01(dir: &std::path::Path, state: &std::path::Path) -> u64 {
    let text = util::watch_once(state, dir);
    let fits: Vec<serde_json::Value> = text
        .lines()
        .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        .filter(|v| v["kind"] == "fit" && v["object"] == "qk0f3ra")
        .collect();
    fits.last()
        .and_then(|v| v["n_obs"].as_u64())
        .unwrap_or_else(|| panic!("no fit of qk0f3ra: {text}"))
}

#[test]
fn an_exclusion_in_the_journal_is_left_out_of_the_headless_fit() {
    let demo = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let watched = tempfile::tempdir().unwrap();
    let mut tracklets = Vec::new();
    for e in std::fs::read_dir(&demo).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_name().unwrap().to_string_lossy().to_string();
        if name.contains("qk0f3ra") {
            std::fs::copy(&p, watched.path().join(&name)).unwrap();
            let bytes = std::fs::read(&p).unwrap();
            let intake = read_bytes(&name, &bytes, &SiteTable::builtin(), &Limits::default());
            tracklets.extend(intake.tracklets);
        }
    }
    let t = merge(tracklets).remove(0);
    let state = tempfile::tempdir().unwrap();
    let before = n_obs_of_k27db01(watched.path(), state.path());
    assert_eq!(before, t.obs.len() as u64);
    let (mut j, _) = Journal::open_as(state.path(), "alice").unwrap();
    j.append(Entry {
        obs: Some(ObsId::of(&t.obs[3])),
        ..Entry::new(Kind::Exclude, "qk0f3ra", "2027-02-26T03:00:00Z".into())
    })
    .unwrap();
    let after = n_obs_of_k27db01(watched.path(), state.path());
    assert_eq!(after, before - 1);
}
