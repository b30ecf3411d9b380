//! The program as a citizen of the shell: completion scripts and manual pages generated from the same
//! command definition as the parser, and a demo that runs from the built-in night and leaves nothing behind.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_interloper"))
}

const COMMANDS: [&str; 6] = ["fit", "watch", "ephem", "plan", "origin", "demo"];

#[test]
fn completion_scripts_name_every_command_for_each_shell() {
    for shell in ["bash", "zsh", "fish"] {
        let out = bin().args(["completions", shell]).output().unwrap();
        assert!(out.status.success(), "{shell}");
        let text = String::from_utf8(out.stdout).unwrap();
        for c in COMMANDS {
            assert!(text.contains(c), "{shell} completion lacks {c}");
        }
        // Nor does it offer the hidden test command that writes fake decisions into a journal.
        assert!(
            !text.contains("journal-append"),
            "{shell} offers journal-append"
        );
        assert!(
            text.contains("--config") || text.contains("-l config"),
            "{shell} completion lacks the global --config"
        );
    }
    let bad = bin().args(["completions", "cmd.exe"]).output().unwrap();
    assert_eq!(bad.status.code(), Some(2));
}

#[test]
fn manual_pages_cover_every_command() {
    let out = bin().arg("man").output().unwrap();
    assert!(out.status.success());
    let page = String::from_utf8(out.stdout).unwrap();
    assert!(page.contains(".TH interloper 1"), "{page}");
    let dir = tempfile::tempdir().unwrap();
    let status = bin()
        .args(["man", "--dir"])
        .arg(dir.path())
        .status()
        .unwrap();
    assert!(status.success());
    for c in COMMANDS {
        let p = dir.path().join(format!("interloper-{c}.1"));
        let text = std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
        assert!(
            text.contains(".SH OPTIONS") || text.contains(".SH SYNOPSIS"),
            "{c}"
        );
    }
}

#[test]
fn the_demo_runs_from_the_built_in_night_and_removes_its_folder() {
    let tmp = tempfile::tempdir().unwrap();
    // From a directory with no sample feeds in sight, as after an install.
    let out = bin()
        .args(["demo", "--headless", "--json", "--speed", "100"])
        .env("TMPDIR", tmp.path())
        .current_dir(tmp.path())
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.code().is_some(), "{out:?}");
    let fits = stdout
        .lines()
        .filter(|l| l.contains("\"p_hyperbolic\""))
        .count();
    assert!(fits >= 10, "{fits} fits in {stdout}");
    let left: Vec<_> = std::fs::read_dir(tmp.path()).unwrap().collect();
    assert!(left.is_empty(), "left behind: {left:?}");
}

#[test]
fn colour_is_chosen_with_color_auto_always_never() {
    for cmd in ["watch", "demo"] {
        let help = bin().args([cmd, "--help"]).output().unwrap();
        let text = String::from_utf8(help.stdout).unwrap();
        assert!(text.contains("--color"), "{cmd}: {text}");
        assert!(
            text.contains("always") && text.contains("never"),
            "{cmd}: {text}"
        );
        let bad = bin().args([cmd, "--color", "rainbow"]).output().unwrap();
        assert_eq!(bad.status.code(), Some(2), "{cmd}");
    }
}
