//! Shared helpers for the integration tests: reading the committed reference vectors.
#![allow(dead_code)]

use std::collections::HashMap;
use std::path::PathBuf;

pub fn reference_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference/data")
        .join(name)
}

/// Rows of a reference CSV as maps from column name to the raw text.
pub fn read_csv(name: &str) -> Vec<HashMap<String, String>> {
    let text = std::fs::read_to_string(reference_path(name)).expect("reference file");
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .expect("header")
        .split(',')
        .map(str::to_owned)
        .collect();
    lines
        .filter(|l| !l.trim().is_empty())
        .map(|l| {
            header
                .iter()
                .cloned()
                .zip(l.split(',').map(str::to_owned))
                .collect()
        })
        .collect()
}

pub fn f(row: &HashMap<String, String>, key: &str) -> f64 {
    row[key]
        .parse()
        .unwrap_or_else(|_| panic!("{key} = {}", row[key]))
}
