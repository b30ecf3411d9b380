//! `fit --shard K/N` over a directory tree: the shards' records together are exactly the records of one
//! unsharded run (the unit is the object, so an object whose nights sit in different folders is fitted
//! whole by one shard), and `fit DIR` walks folders, skipping what is clearly not a tracklet file.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::path::Path;

mod util;

fn fit(args: &[&str]) -> (Option<i32>, String, String) {
    let mut all = vec!["fit"];
    all.extend_from_slice(args);
    util::run_bin(&all)
}

/// The demo night's good files, each night in its own folder, plus three renamed copies of every object
/// (about 40 objects of one to three nights), and a truth table and a note beside them.
fn tree(root: &Path) {
    let feed = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    for e in std::fs::read_dir(&feed).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_name().unwrap().to_str().unwrap().to_string();
        let Some(night) = ["_n1", "_n2", "_n3"].iter().find(|n| name.contains(*n)) else {
            continue;
        };
        let text = std::fs::read_to_string(&p).unwrap();
        for (copy, prefix) in ["qk", "w1", "w2", "w3"].iter().enumerate() {
            let dir = root
                .join(format!("night{}", &night[2..]))
                .join(format!("c{copy}"));
            std::fs::create_dir_all(&dir).unwrap();
            std::fs::write(dir.join(&name), text.replace("qk", prefix)).unwrap();
        }
    }
    std::fs::write(root.join("truth.json"), "{\"not\": \"tracklets\"}\n").unwrap();
    std::fs::write(root.join("night1").join("README.md"), "# notes\n").unwrap();
}

fn sorted_lines(s: &str) -> Vec<String> {
    let mut v: Vec<String> = s.lines().map(str::to_string).collect();
    v.sort();
    v
}

#[test]
fn the_shards_together_give_exactly_the_unsharded_records() {
    let dir = tempfile::tempdir().unwrap();
    tree(dir.path());
    let root = dir.path().to_str().unwrap();
    let (code, all, err) = fit(&["--json", "--threads", "2", root]);
    assert_eq!(code, Some(0), "{err}");
    let all = sorted_lines(&all);
    assert!(all.len() >= 36, "{} records", all.len());
    let mut union = Vec::new();
    let mut sizes = Vec::new();
    for k in 1..=4 {
        let shard = format!("{k}/4");
        let (code, out, err) = fit(&["--json", "--threads", "1", "--shard", &shard, root]);
        assert_eq!(code, Some(0), "{shard}: {err}");
        sizes.push(out.lines().count());
        union.extend(out.lines().map(str::to_string));
    }
    union.sort();
    assert!(
        sizes.iter().all(|&n| n > 0),
        "every shard got work: {sizes:?}"
    );
    assert_eq!(union.len(), all.len(), "shard sizes {sizes:?}");
    assert_eq!(union, all);
}

#[test]
fn a_directory_is_walked_to_the_bottom_and_non_tracklet_files_are_counted_not_read() {
    let dir = tempfile::tempdir().unwrap();
    tree(dir.path());
    let (code, out, err) = fit(&["--json", dir.path().to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    assert!(
        err.contains("skipped 2 files that are not tracklet files (1 .json, 1 .md)"),
        "{err}"
    );
    assert!(!err.contains("rejected"), "{err}");
    // Files two folders down were read: a three-night object has all three nights.
    let rec = out
        .lines()
        .map(|l| serde_json::from_str::<serde_json::Value>(l).unwrap())
        .find(|v| v["object"] == "w2a2e7f")
        .expect("a renamed copy from a nested folder");
    assert_eq!(rec["n_nights"], 3, "{rec}");
}

#[test]
fn a_named_file_is_read_whatever_its_extension_and_a_missing_path_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    let feed = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let named = dir.path().join("tracklet.json");
    std::fs::copy(feed.join("001_qk0f3ra_n1.psv"), &named).unwrap();
    let (code, out, err) = fit(&["--json", named.to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(out.lines().count(), 1);
    let (code, _, err) = fit(&["/nonexistent/interloper-input"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("no such file or directory"), "{err}");
}

#[test]
fn a_malformed_shard_is_a_usage_error() {
    for bad in ["0/4", "5/4", "2", "a/b"] {
        let (code, _, err) = fit(&["--shard", bad, "sample_feeds/demo_night"]);
        assert_eq!(code, Some(2), "{bad}: {err}");
        assert!(err.contains("--shard"), "{err}");
    }
}
