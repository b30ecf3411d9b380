//! Console screens as text for the snapshot tests (TestBackend), and the snapshot check itself.

use interloper::console::panes::Theme;
use interloper::console::state::App;
use interloper::console::view;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use std::path::PathBuf;

/// The terminal's buffer as text, one line per row with trailing blanks trimmed.
pub fn text(t: &Terminal<TestBackend>) -> String {
    let b = t.backend().buffer();
    let mut s = String::new();
    for y in 0..b.area.height {
        let mut line = String::new();
        for x in 0..b.area.width {
            line.push_str(b.cell((x, y)).map_or(" ", |c| c.symbol()));
        }
        s.push_str(line.trim_end());
        s.push('\n');
    }
    s
}

/// The whole console drawn at `w`×`h` without colour.
pub fn screen(app: &mut App, w: u16, h: u16) -> String {
    let mut t = Terminal::new(TestBackend::new(w, h)).expect("test terminal");
    t.draw(|f| view::draw(f, app, Theme { color: false }))
        .expect("draw");
    text(&t)
}

/// Compare `got` with tests/snapshots/`name`.txt (UPDATE_SNAPSHOTS=1 writes it instead).
pub fn check(name: &str, got: &str) {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/snapshots")
        .join(format!("{name}.txt"));
    if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, got).expect("write snapshot");
        return;
    }
    let want = std::fs::read_to_string(&path).unwrap_or_else(|_| {
        panic!(
            "missing snapshot {}; run with UPDATE_SNAPSHOTS=1",
            path.display()
        )
    });
    assert_eq!(
        got, want,
        "snapshot {name} differs (UPDATE_SNAPSHOTS=1 to accept)"
    );
}

/// The console after the demo night's files: every file read (refusals recorded), `before_fits` given
/// the app (to add what a test needs), every tracklet fitted, clocks fixed so that the screens do not
/// depend on the machine.
pub fn demo_app(before_fits: impl FnOnce(&mut App)) -> App {
    use interloper::console::keymap::Keymap;
    use interloper::feed::sites::SiteTable;
    use interloper::feed::tracklets::{Limits, merge, read_bytes};
    use interloper::fitting::batch::fit_all;
    use interloper::fitting::fit::FitOptions;
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&root)
        .expect("demo night")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .collect();
    files.sort();
    let sites = SiteTable::builtin();
    let mut tracklets = Vec::new();
    let mut app = App::new(Keymap::builtin());
    // Arrival ages read "just now" whatever the machine's speed.
    app.now = || std::time::SystemTime::UNIX_EPOCH;
    app.clock = || "2027-02-26T12:00:00Z".into();
    for f in &files {
        let name = f.file_name().map(|n| n.to_string_lossy().to_string());
        let bytes = std::fs::read(f).expect("demo file");
        let intake = read_bytes(
            &name.unwrap_or_default(),
            &bytes,
            &sites,
            &Limits::default(),
        );
        for e in intake.errors {
            app.on_rejected(e);
        }
        tracklets.extend(intake.tracklets);
    }
    before_fits(&mut app);
    for r in fit_all(merge(tracklets), &FitOptions::default(), 2) {
        let n = r.n_obs;
        app.on_fit(1, r, n);
    }
    app.status.files_seen = files.len();
    app.status.last_arrival = Some("03:12:55Z".into());
    app.message = None;
    app
}
