//! A headless watcher stopped by SIGTERM with fits still queued names every object it took in but did
//! not report a fit for (`"kind": "unfitted"`), so a pipeline knows what to fit again: the fitted and
//! the named together are exactly the objects it took in (its closing line counts them), and none is
//! both.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use std::collections::BTreeSet;
use std::io::BufRead;
use std::process::{Command, Stdio};

/// The two-night arcs of the population-model sky, one object per file (each fit takes milliseconds,
/// so a few hundred keep one worker busy for seconds).
fn write_objects(dir: &std::path::Path) -> BTreeSet<String> {
    let text =
        std::fs::read_to_string(util::reference_path("population_sky/two_night.psv")).unwrap();
    let header = "# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|astCat|mag|band\n";
    let mut files: std::collections::BTreeMap<String, String> = Default::default();
    for line in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("trkSub"))
    {
        let id = line.split('|').next().unwrap().to_string();
        files
            .entry(id)
            .or_insert_with(|| header.to_string())
            .push_str(&format!("{line}\n"));
    }
    for (id, body) in &files {
        std::fs::write(dir.join(format!("{id}.psv")), body).unwrap();
    }
    files.into_keys().collect()
}

#[test]
fn sigterm_names_every_object_whose_fit_was_not_reported() {
    let dir = tempfile::tempdir().unwrap();
    let state = tempfile::tempdir().unwrap();
    let all = write_objects(dir.path());
    assert!(all.len() >= 200, "{}", all.len());
    let sites = util::reference_path("population_sky/sites.toml");
    let mut child = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["watch", "--headless", "--json", "--threads", "1", "--state"])
        .arg(state.path())
        .arg("--sites")
        .arg(&sites)
        .arg(dir.path())
        // The closing line read below is logged at info.
        .env("INTERLOPER_LOG", "info")
        .env_remove("RUST_LOG")
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut lines = std::io::BufReader::new(child.stdout.take().unwrap()).lines();
    let mut records: Vec<serde_json::Value> = Vec::new();
    // Stopped as soon as the first fit is out, with hundreds still to come.
    for line in lines.by_ref() {
        let v: serde_json::Value = serde_json::from_str(&line.unwrap()).unwrap();
        let first_fit = v["kind"] == "fit";
        records.push(v);
        if first_fit {
            break;
        }
    }
    let status = Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(status.success());
    records.extend(lines.map(|l| serde_json::from_str(&l.unwrap()).unwrap()));
    let mut stderr = String::new();
    std::io::Read::read_to_string(&mut child.stderr.take().unwrap(), &mut stderr).unwrap();
    let exit = child.wait().unwrap();
    assert_eq!(exit.code(), Some(0), "SIGTERM is a clean stop");
    let fitted: BTreeSet<String> = records
        .iter()
        .filter(|v| v["kind"] == "fit")
        .map(|v| v["object"].as_str().unwrap().to_string())
        .collect();
    let named: Vec<&serde_json::Value> =
        records.iter().filter(|v| v["kind"] == "unfitted").collect();
    // At most one closing record, and none only where every object taken in was fitted (the signal can
    // land while the intake has just begun).
    assert!(named.len() <= 1, "{} closing records", named.len());
    let unfitted: BTreeSet<String> = named
        .first()
        .map(|v| {
            assert_eq!(v["n_objects"], v["objects"].as_array().unwrap().len());
            v["objects"]
                .as_array()
                .unwrap()
                .iter()
                .map(|o| o.as_str().unwrap().to_string())
                .collect()
        })
        .unwrap_or_default();
    assert!(named.is_empty() || !unfitted.is_empty());
    assert!(fitted.is_disjoint(&unfitted));
    // Every object taken in is either fitted or named; files not yet read when the signal came
    // were never taken in, and are neither. The closing line on stderr counts the objects taken in:
    // none was lost between intake and the stop.
    let taken: BTreeSet<String> = fitted.union(&unfitted).cloned().collect();
    assert!(taken.is_subset(&all));
    // The stop stopped something: with hundreds of files and one worker, not everything was fitted.
    assert!(
        fitted.len() < all.len(),
        "every file fitted: the signal did nothing"
    );
    let intake: usize = stderr
        .lines()
        .find_map(|l| {
            let rest = l.split("watch: stopped; ").nth(1)?;
            let (_, after) = rest.split_once(" file versions read, ")?;
            after.split(' ').next()?.parse().ok()
        })
        .unwrap_or_else(|| panic!("no closing line in {stderr}"));
    assert_eq!(taken.len(), intake, "objects taken in: {intake}; {stderr}");
    eprintln!(
        "stopped after {} fits with {} named unfitted, {} files not yet read",
        fitted.len(),
        unfitted.len(),
        all.len() - taken.len()
    );
}
