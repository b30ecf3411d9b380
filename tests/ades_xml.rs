//! ADES XML beside PSV: every demo file converted to XML reads back to the same records and the same
//! fits; PSV → XML → PSV is lossless for the fields we use; every element and attribute name we read or
//! write is one of the ADES schema's own (tests/reference/ades/schema_names.txt, taken from the
//! schema file named there).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::feed::ades_xml::{FIELDS_READ, STRUCTURE};
use interloper::feed::{ades, ades_xml};
use std::path::Path;
use std::process::Command;

fn demo_files() -> Vec<std::path::PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let mut v: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "psv"))
        .collect();
    v.sort();
    v
}

fn without_line(mut r: Vec<ades::AdesRecord>) -> Vec<ades::AdesRecord> {
    for x in &mut r {
        x.line = 0;
    }
    r
}

#[test]
fn psv_to_xml_to_psv_keeps_every_record_of_the_demo_night() {
    let mut n = 0;
    for f in demo_files() {
        let text = std::fs::read_to_string(&f).unwrap();
        let (from_psv, _) = ades::parse("a.psv", &text);
        if from_psv.is_empty() {
            continue; // a deliberately broken upload with no good line
        }
        let xml = ades_xml::write(&from_psv);
        let (from_xml, bad) = ades_xml::parse("a.xml", &xml, 100_000);
        assert!(bad.is_empty(), "{}: {bad:?}", f.display());
        assert_eq!(
            without_line(from_xml.clone()),
            without_line(from_psv.clone())
        );
        let (again, bad) = ades::parse("b.psv", &ades::write(&from_xml));
        assert!(bad.is_empty(), "{bad:?}");
        assert_eq!(without_line(again), without_line(from_psv.clone()));
        n += from_psv.len();
    }
    assert!(n > 100, "{n} records");
}

#[test]
fn the_demo_night_in_xml_fits_exactly_as_in_psv() {
    let dir = tempfile::tempdir().unwrap();
    for f in demo_files() {
        let text = std::fs::read_to_string(&f).unwrap();
        let (records, bad) = ades::parse("a.psv", &text);
        if !bad.is_empty() {
            continue; // the demo's deliberately broken uploads
        }
        let name = f.file_stem().unwrap().to_str().unwrap();
        std::fs::write(
            dir.path().join(format!("{name}.xml")),
            ades_xml::write(&records),
        )
        .unwrap();
        std::fs::copy(&f, dir.path().join(format!("{name}.psv"))).unwrap();
    }
    let fit = |ext: &str| {
        let files: Vec<String> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|x| x == ext))
            .map(|p| p.to_str().unwrap().to_string())
            .collect();
        let out = Command::new(env!("CARGO_BIN_EXE_interloper"))
            .args(["fit", "--json"])
            .args(&files)
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let mut recs: Vec<serde_json::Value> = String::from_utf8(out.stdout)
            .unwrap()
            .lines()
            .map(|l| serde_json::from_str(l).unwrap())
            .collect();
        for r in &mut recs {
            r["source"] = serde_json::Value::Null;
        }
        recs.sort_by_key(|r| r["object"].as_str().unwrap().to_string());
        recs
    };
    let (psv, xml) = (fit("psv"), fit("xml"));
    assert!(psv.len() >= 10);
    assert_eq!(psv, xml);
}

#[test]
fn every_name_read_or_written_is_an_ades_schema_name() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/ades/schema_names.txt");
    let schema: std::collections::HashSet<String> = std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| l.trim().to_string())
        .collect();
    assert!(schema.len() > 100);
    for n in FIELDS_READ.iter().chain(STRUCTURE.iter()) {
        assert!(schema.contains(*n), "{n} is not in the schema");
    }
    // Names in a written document (a roving observer, so the position fields appear too).
    let text = "trkSub|mode|stn|sys|ctr|pos1|pos2|pos3|obsTime|ra|dec|rmsRA|rmsDec|rmsCorr|astCat|mag|rmsMag|band\n\
                abc|CCD|TV1|ICRF_KM|399|7000|0|0|2026-01-02T03:04:05Z|10|20|0.1|0.1|0.2|Gaia3|20|0.1|G\n";
    let (recs, bad) = ades::parse("r.psv", text);
    assert!(bad.is_empty(), "{bad:?}");
    let xml = ades_xml::write(&recs);
    let mut names = 0;
    for tag in xml.split('<').skip(1) {
        let name: String = tag
            .trim_start_matches('/')
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric())
            .collect();
        if name.is_empty() || tag.starts_with('?') {
            continue;
        }
        assert!(
            schema.contains(&name),
            "written element {name} is not in the schema"
        );
        names += 1;
    }
    assert!(names > 30);
    assert!(xml.contains("<ades version=\"2022\">"));
}
