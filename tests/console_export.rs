//! Export from the console: `X` hands the list as shown (sort and filter applied) to be written as CSV
//! and JSON with the decisions; both forms carry the same rows, and the CSV reads back field for field.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use interloper::console::export::{csv, json};
use interloper::console::keymap::Keymap;
use interloper::console::state::{App, Effect};
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::fit::{FitOptions, fit_tracklet};
use interloper::physics::observe::ObserverModel;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

#[test]
fn x_exports_the_list_as_shown_and_csv_and_json_agree() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let sites = SiteTable::builtin();
    let mut app = App::new(Keymap::builtin());
    let model = ObserverModel::new();
    for n in [
        "003_qka2e7f_n1.psv",
        "001_qk0f3ra_n1.psv",
        "002_qk8w3bs_n1.psv",
    ] {
        let bytes = std::fs::read(dir.join(n)).unwrap();
        let t = merge(read_bytes(n, &bytes, &sites, &Limits::default()).tracklets).remove(0);
        let f = fit_tracklet(&t, &model, &FitOptions::default());
        let k = f.n_obs;
        app.on_fit(1, f, k);
    }
    let fx = app.on_key(KeyEvent::new(KeyCode::Char('X'), KeyModifiers::NONE));
    let rows = match fx.as_slice() {
        [Effect::Export(rows)] => rows.clone(),
        other => panic!("{other:?}"),
    };
    assert_eq!(rows.len(), 3);
    let shown: Vec<&str> = app
        .view
        .iter()
        .map(|&i| app.candidates[i].fit.object.as_str())
        .collect();
    let exported: Vec<&str> = rows.iter().map(|r| r.object.as_str()).collect();
    assert_eq!(shown, exported, "the list's own order");
    let text = csv(&rows);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 4);
    let header: Vec<&str> = lines[0].split(',').collect();
    let first: Vec<&str> = lines[1].split(',').collect();
    assert_eq!(header.len(), first.len());
    let col = |name: &str| first[header.iter().position(|h| *h == name).unwrap()];
    assert_eq!(col("object"), rows[0].object);
    assert_eq!(
        col("p_hyperbolic").parse::<f64>().ok(),
        rows[0].p_hyperbolic
    );
    let v: serde_json::Value = serde_json::from_str(&json(&rows)).unwrap();
    assert_eq!(v.as_array().unwrap().len(), 3);
    assert_eq!(v[0]["object"], rows[0].object.as_str());
    assert_eq!(v[0]["n_obs"], rows[0].n_obs);
}
