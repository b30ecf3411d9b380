//! The follow-up request `ephem --request PREFIX` writes: PREFIX.txt for people (each object's table
//! and note) and PREFIX.json for scheduling tools (targets with status, note, observable windows and
//! rows).

use super::ephem::{EphemArgs, Standing, table};
use anyhow::Context;
use interloper::feed::sanitize::clean;
use interloper::fitting::ephemeris::EphemerisPoint;

/// The follow-up request: `PREFIX.txt` (the tables, each with its note) and `PREFIX.json` (targets
/// with status, note, observable windows and rows).
pub(super) fn write_request(
    args: &EphemArgs,
    prefix: &std::path::Path,
    all: &[EphemerisPoint],
    standing: &[Standing],
) -> anyhow::Result<()> {
    let (txt, json) = (with_suffix(prefix, ".txt"), with_suffix(prefix, ".json"));
    let mut text = String::from(
        "Follow-up request (advisory: a high hyperbolicity score is a reason for follow-up, not a discovery)\n",
    );
    text.push_str(&format!(
        "site {} from {} to {} step {}\n\n",
        clean(&args.site),
        args.from,
        args.to,
        args.step
    ));
    let mut objects: Vec<&str> = all.iter().map(|p| p.object.as_str()).collect();
    objects.dedup();
    let about = |o: &str| standing.iter().find(|s| s.0 == o);
    let rows_of = |o: &str| -> Vec<EphemerisPoint> {
        all.iter().filter(|p| p.object == o).cloned().collect()
    };
    for o in &objects {
        text.push_str(&table(&rows_of(o)));
        if let Some((_, _, Some(n))) = about(o) {
            text.push_str(&format!("note: {n}\n"));
        }
        text.push('\n');
    }
    std::fs::write(&txt, text).with_context(|| format!("writing {}", txt.display()))?;
    let req = serde_json::json!({
        "site": args.site, "from": args.from, "to": args.to, "step": args.step,
        "advisory": "a hyperbolicity score is a reason for follow-up, not a discovery; check the site's own solar-avoidance limits",
        "targets": objects.iter().map(|o| serde_json::json!({
            "object": o,
            "status": about(o).map(|s| s.1),
            "note": about(o).and_then(|s| s.2.clone()),
            "windows": windows(&rows_of(o)),
            "points": all.iter().filter(|p| p.object == *o).collect::<Vec<_>>(),
        })).collect::<Vec<_>>(),
    });
    std::fs::write(&json, serde_json::to_string_pretty(&req)?)
        .with_context(|| format!("writing {}", json.display()))?;
    eprintln!(
        "request written to {} and {}",
        txt.display(),
        json.display()
    );
    Ok(())
}

pub(super) fn windows(points: &[EphemerisPoint]) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut start: Option<&str> = None;
    let mut last = "";
    for p in points {
        match (p.observable, start) {
            (true, None) => start = Some(&p.time_utc),
            (false, Some(s)) => {
                out.push((s.to_string(), last.to_string()));
                start = None;
            }
            _ => {}
        }
        last = &p.time_utc;
    }
    if let Some(s) = start {
        out.push((s.to_string(), last.to_string()));
    }
    out
}

/// `PREFIX` with `suffix` appended (a dot in the prefix is part of the name: `req/a.tv1` gives
/// `req/a.tv1.txt`, never `req/a.txt`).
fn with_suffix(prefix: &std::path::Path, suffix: &str) -> std::path::PathBuf {
    let mut name = prefix.as_os_str().to_os_string();
    name.push(suffix);
    std::path::PathBuf::from(name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_request_prefix_keeps_its_dots() {
        let p = std::path::Path::new("req/a.tv1");
        assert_eq!(
            with_suffix(p, ".txt"),
            std::path::PathBuf::from("req/a.tv1.txt")
        );
        assert_eq!(
            with_suffix(p, ".json"),
            std::path::PathBuf::from("req/a.tv1.json")
        );
    }
}
