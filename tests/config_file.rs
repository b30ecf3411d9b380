//! The configuration file: every invalid file in tests/corpus/config_invalid is refused with exit 2 and
//! the file, line and reason its first line expects; a valid file's values reach the commands and
//! `interloper config` says where each came from; a flag wins over the file.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::path::Path;
use std::process::Command;

fn run(args: &[&str], env: &[(&str, &Path)]) -> (Option<i32>, String, String) {
    let mut c = Command::new(env!("CARGO_BIN_EXE_interloper"));
    c.args(args).env_remove("INTERLOPER_CONFIG");
    for (k, v) in env {
        c.env(k, v);
    }
    let out = c.output().unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn every_invalid_config_is_refused_with_its_file_line_and_reason() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/corpus/config_invalid");
    let mut n = 0;
    for e in std::fs::read_dir(&dir).unwrap() {
        let p = e.unwrap().path();
        let text = std::fs::read_to_string(&p).unwrap();
        let expect = text
            .lines()
            .next()
            .and_then(|l| l.strip_prefix("# expect: "))
            .unwrap_or_else(|| panic!("{} has no expectation", p.display()));
        let (line, reason) = expect.split_once(": ").unwrap();
        let (code, _, err) = run(&["--config", p.to_str().unwrap(), "config"], &[]);
        assert_eq!(code, Some(2), "{}: {err}", p.display());
        let want = format!("{}:{line}: {reason}", p.display());
        assert!(
            err.contains(&want),
            "{}\nwanted: {want}\ngot: {err}",
            p.display()
        );
        n += 1;
    }
    assert!(n >= 12, "{n} files in the corpus");
}

#[test]
fn a_missing_named_config_is_a_usage_error() {
    let (code, _, err) = run(&["--config", "/nonexistent/config.toml", "config"], &[]);
    assert_eq!(code, Some(2));
    assert!(
        err.contains("/nonexistent/config.toml does not exist"),
        "{err}"
    );
}

#[test]
fn values_come_from_the_file_named_by_the_environment_and_say_where_they_came_from() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = dir.path().join("night.toml");
    std::fs::write(
        &cfg,
        "# night setup\nthreads = 3\nobserver = \"second shift\"\nstate_dir = \"state\"\n",
    )
    .unwrap();
    let (code, out, err) = run(&["config", "--json"], &[("INTERLOPER_CONFIG", &cfg)]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let at = |line: usize| format!("{}:{line}", cfg.display());
    assert_eq!(v["values"]["threads"]["value"], 3);
    assert_eq!(v["values"]["threads"]["from"], at(2));
    assert_eq!(v["values"]["observer"]["value"], "second_shift");
    assert_eq!(v["values"]["observer"]["from"], at(3));
    let state = dir.path().join("state");
    assert_eq!(v["values"]["state_dir"]["value"], state.to_str().unwrap());
    assert_eq!(v["values"]["min_alt_deg"]["from"], "default");
}

#[test]
fn a_site_table_named_in_the_config_is_used_and_a_flag_wins_over_it() {
    let dir = tempfile::tempdir().unwrap();
    let feed = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    // A tracklet from a site that only the configured table knows.
    let text = std::fs::read_to_string(feed.join("001_qk0f3ra_n1.psv"))
        .unwrap()
        .replace("|TV2|", "|QQ5|");
    let trk = dir.path().join("t.psv");
    std::fs::write(&trk, text).unwrap();
    let sites = dir.path().join("sites.toml");
    std::fs::write(
        &sites,
        "[[site]]\ncode = \"QQ5\"\nlongitude_deg = 10.0\nlatitude_deg = -30.0\nalt_m = 2000\n",
    )
    .unwrap();
    let cfg = dir.path().join("c.toml");
    std::fs::write(&cfg, "sites = \"sites.toml\"\n").unwrap();
    let trk = trk.to_str().unwrap();
    let (code, _, err) = run(&["fit", trk], &[]);
    assert_eq!(code, Some(1), "unknown site without the config: {err}");
    assert!(err.contains("QQ5"), "{err}");
    let (code, out, err) = run(
        &["--config", cfg.to_str().unwrap(), "fit", "--json", trk],
        &[],
    );
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(out.lines().count(), 1);
    // The flag names a table without QQ5, and wins.
    let other = dir.path().join("other.toml");
    std::fs::write(&other, "site = []\n").unwrap();
    let (code, _, _) = run(
        &[
            "--config",
            cfg.to_str().unwrap(),
            "fit",
            "--sites",
            other.to_str().unwrap(),
            trk,
        ],
        &[],
    );
    assert_eq!(code, Some(1));
}

#[test]
fn an_unknown_key_in_a_site_table_is_refused_with_its_line() {
    let dir = tempfile::tempdir().unwrap();
    let sites = dir.path().join("sites.toml");
    std::fs::write(
        &sites,
        "[[site]]\ncode = \"QQ5\"\nlongitude_deg = 10.0\nlatitude_deg = -30.0\nalt = 2000\n",
    )
    .unwrap();
    let feed = format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"));
    let (code, _, err) = run(&["fit", "--sites", sites.to_str().unwrap(), &feed], &[]);
    // A faulty side file is a usage error, as a faulty configuration file is.
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("line 5") || err.contains(":5"), "{err}");
    assert!(err.contains("unknown field `alt`"), "{err}");
}

#[test]
fn a_missing_site_table_or_population_model_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("nowhere.toml");
    let feed = format!("{}/sample_feeds/demo_night", env!("CARGO_MANIFEST_DIR"));
    for flag in ["--sites", "--site-codes", "--population"] {
        let (code, _, err) = run(&["fit", flag, missing.to_str().unwrap(), &feed], &[]);
        assert_eq!(code, Some(2), "{flag}: {err}");
        assert!(err.contains("nowhere.toml"), "{flag}: {err}");
    }
}
