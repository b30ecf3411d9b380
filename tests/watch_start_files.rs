//! Files already in the directory when `watch` starts are all read before any object is fitted: an
//! object whose positions are split over two such files is fitted once, whole. (Each file was once
//! fitted as it was read, so the first half of an object could be fitted and reported alone, and an
//! alert raised on it, before the rest arrived a moment later: in 5 of 8 runs over 100 split objects.)
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

mod util;

use std::collections::HashMap;

#[test]
fn an_object_split_over_files_present_at_start_is_fitted_once_with_every_position() {
    let text =
        std::fs::read_to_string(util::reference_path("population_sky/three_night.psv")).unwrap();
    let header: Vec<&str> = text
        .lines()
        .take_while(|l| l.starts_with('#') || l.starts_with("trkSub"))
        .collect();
    let rows: Vec<&str> = text.lines().skip(header.len()).collect();
    let mut objects: Vec<&str> = rows.iter().map(|l| l.split('|').next().unwrap()).collect();
    objects.dedup();
    let objects = &objects[..40];
    let dir = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    let write = |name: &str, lines: Vec<&str>| {
        let body = header
            .iter()
            .chain(&lines)
            .fold(String::new(), |a, l| a + l + "\n");
        std::fs::write(dir.path().join(name), body).unwrap();
    };
    // The first four positions of each object in one file, the rest in another, and files of other
    // objects between them in the directory's order.
    let mut first = Vec::new();
    let mut rest = Vec::new();
    let mut n_of: HashMap<&str, usize> = HashMap::new();
    for l in &rows {
        let id = l.split('|').next().unwrap();
        if !objects.contains(&id) {
            continue;
        }
        let k = n_of.entry(id).or_insert(0);
        *k += 1;
        if *k <= 4 {
            first.push(*l)
        } else {
            rest.push(*l)
        }
    }
    write("a_first.psv", first);
    // Between them, files that take a while to read (the same one-night arcs again and again: after
    // the first, they change nothing), so that fits of the first file's objects could finish first.
    let filler = std::fs::read(util::reference_path("population_sky/one_night.psv")).unwrap();
    for k in 0..30 {
        std::fs::write(dir.path().join(format!("m{k:02}.psv")), &filler).unwrap();
    }
    write("z_last.psv", rest);
    let sites = util::reference_path("population_sky/sites.toml");
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(util::WATCH_ONCE)
        .arg(state.path())
        .arg("--sites")
        .arg(&sites)
        .arg(dir.path())
        .output()
        .unwrap();
    let out = String::from_utf8_lossy(&out.stdout);
    let mut fits: HashMap<String, Vec<u64>> = HashMap::new();
    for line in out.lines() {
        let v: serde_json::Value = serde_json::from_str(line).unwrap();
        // Fit records (alerts and input errors carry no n_obs).
        if let (Some(obj), Some(n)) = (v["object"].as_str(), v["n_obs"].as_u64()) {
            fits.entry(obj.to_string()).or_default().push(n);
        }
    }
    for id in objects {
        let n = n_of[id] as u64;
        assert_eq!(
            fits.get(*id),
            Some(&vec![n]),
            "{id}: fits of {:?} positions, {n} known",
            fits.get(*id)
        );
    }
}
