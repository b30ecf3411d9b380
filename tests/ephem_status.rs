//! A follow-up table says how far its orbit can be trusted: every `ephem --json` row and every target of
//! a request carries the fit's status and, where it is not a sound fit, why; the text table and the
//! request's text say it under the object's table. (A false linkage, χ²/dof 6 × 10⁸, once got a request
//! as confident-looking as any, and its table note said the prior had set an answer it never computed.)
//! Arcs: the synthetic references of tests/reference/make_synthetic.py (scipy DOP853 on JPL DE421).
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use std::process::Command;

#[test]
fn rows_and_requests_carry_the_fits_status_and_why() {
    let data = format!(
        "{}/tests/reference/data/synthetic",
        env!("CARGO_MANIFEST_DIR")
    );
    let dir = tempfile::tempdir().unwrap();
    let prefix = dir.path().join("night.tv1");
    let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
        .args(["ephem", "--site", "TV1", "--json", "--step", "25m"])
        .args([
            "--from",
            "2026-12-01T00:00:00Z",
            "--to",
            "2026-12-01T01:00:00Z",
        ])
        .arg("--request")
        .arg(&prefix)
        .arg(format!("{data}/false_link_3n.psv"))
        .arg(format!("{data}/mainbelt_3n.psv"))
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    let rows: Vec<serde_json::Value> = stdout
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    // Both ends of the range, the step not landing on the last: 00:00, 00:25, 00:50, 01:00.
    assert_eq!(rows.len(), 8, "{stdout}");
    for r in &rows {
        match r["object"].as_str().unwrap() {
            "false_link_3n" => {
                assert_eq!(r["status"], "poor-fit");
                let note = r["note"].as_str().unwrap();
                assert!(note.contains("no orbit fits"), "{note}");
                assert!(!note.contains("prior"), "{note}");
            }
            "mainbelt_3n" => {
                assert_eq!(r["status"], "ok");
                assert!(r["note"].is_null(), "{}", r["note"]);
            }
            other => panic!("{other}"),
        }
    }
    assert_eq!(rows.last().unwrap()["time_utc"], "2026-12-01T01:00:00.000Z");
    // The prefix keeps its dot; the request names each target's status.
    let text = std::fs::read_to_string(dir.path().join("night.tv1.txt")).unwrap();
    assert!(text.contains("note: fit is poor-fit"), "{text}");
    let req: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("night.tv1.json")).unwrap())
            .unwrap();
    let status: Vec<(String, String)> = req["targets"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| {
            (
                t["object"].as_str().unwrap().into(),
                t["status"].as_str().unwrap().into(),
            )
        })
        .collect();
    assert_eq!(
        status,
        vec![
            ("false_link_3n".into(), "poor-fit".into()),
            ("mainbelt_3n".into(), "ok".into())
        ]
    );
}
