//! Snapshots of every screen and pane through ratatui's TestBackend at 80×24 and 160×48, from the demo
//! night's real fits (fixed clock and status so nothing volatile reaches the files). A missing or
//! changed snapshot fails; UPDATE_SNAPSHOTS=1 rewrites them (review the diff before committing).
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::console::panes::{Theme, elements, residuals, status, table};
use interloper::console::state::{App, Effect, Mode};
use interloper::feed::sites::SiteTable;
use interloper::fitting::ephemeris::point;
use interloper::physics::observe::ObserverModel;
use interloper::physics::time::{UtcTime, tt_to_utc};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use util::screens::{check, screen, text};

fn demo_app() -> App {
    util::screens::demo_app(|app| {
        // A rejection from deep inside a survey's folder tree, with a long reason: the panel shows the file's
        // name and wraps the reason.
        app.on_rejected(interloper::feed::InputError {
            file: "/data/survey/partner-stations/2027/02/26/incoming/night-3/batch-0041/upload_0041_partial.psv"
                .into(),
            line: 17,
            column: Some("rmsRA".into()),
            reason: "5e-324 is below the smallest accepted uncertainty (0.001 arcsec); astrometry cannot be that good, \
                     so the line is refused rather than given an absurd weight"
                .into(),
        });
    })
}

/// Move the cursor from the top to the candidate `name`, as an observer would, row by row.
fn select(app: &mut App, name: &str) {
    app.on_key(key('g'));
    for _ in 0..app.candidates.len() {
        if app.selected.as_deref() == Some(name) {
            break;
        }
        app.on_key(key('j'));
    }
    assert_eq!(app.selected.as_deref(), Some(name));
}

fn key(c: char) -> KeyEvent {
    KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE)
}

#[test]
fn every_screen_at_80x24_100x30_and_160x48_matches_its_snapshot() {
    for (w, h) in [(80u16, 24u16), (100, 30), (160, 48)] {
        let mut app = demo_app();
        // One alert in the list (raised quietly, so no status line flashes; its time fixed).
        let top = app.candidates[app.view[0]].fit.clone();
        app.alerts.quiet = true;
        app.alerts.on_fit(&top);
        app.alerts.quiet = false;
        app.alerts.list[0].at = std::time::SystemTime::UNIX_EPOCH;
        app.on_key(key('g'));
        app.message = None;
        check(&format!("main_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(key('?'));
        check(&format!("help_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
        app.on_key(key('f'));
        check(&format!("rejected_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
        app.on_key(key('!'));
        check(&format!("alerts_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
        // Compare: mark the top candidate, move to the next, open both side by side.
        app.on_key(key('g'));
        app.on_key(key('='));
        app.on_key(key('j'));
        app.on_key(key('='));
        check(&format!("compare_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
        app.compare_with = None;
        app.message = None;
        // The ephemeris panel, with points computed here as the runtime's worker would.
        let fit = app.selected_candidate().unwrap().fit.clone();
        let model = ObserverModel::new();
        let site = SiteTable::builtin().get("TV1").unwrap().position;
        let t0 = UtcTime::parse("2027-02-27T04:00:00Z")
            .unwrap()
            .instant()
            .unwrap();
        let pts = (0..6)
            .filter_map(|k| {
                let d = f64::from(k) / 12.0;
                let inst = t0.plus_days(d);
                point(
                    &fit,
                    &inst,
                    tt_to_utc(inst.tt).to_string(),
                    &site,
                    &model,
                    Some(18.0),
                    20.0,
                )
            })
            .collect();
        app.ephemeris = Some((fit.object.clone(), pts));
        app.ephem.window = Some("at TV1, dark 04:00–04:25 UTC (Sun below −12°), every 2 h".into());
        app.mode = Mode::Ephemeris;
        check(&format!("ephemeris_{w}x{h}"), &screen(&mut app, w, h));
        // d: RA and Dec in h m s and ° ′ ″; X: the request as shown; s: the next site, recomputed.
        app.on_key(key('d'));
        check(&format!("ephemeris_hms_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(key('d'));
        match app.on_key(key('X')).as_slice() {
            [Effect::Request(obj, lines)] => {
                assert_eq!(obj, &fit.object);
                assert!(lines[0].contains("at TV1, dark"), "{lines:?}");
                assert_eq!(lines.len(), 3 + 6, "header, keys, columns and the rows");
            }
            other => panic!("X gave {other:?}"),
        }
        let fx = app.on_key(key('s'));
        assert!(
            matches!(fx.as_slice(), [Effect::Ephemeris(o)] if *o == fit.object),
            "{fx:?}"
        );
        assert!(app.ephem.site.is_some());
        assert_eq!(app.mode, Mode::Ephemeris);
        app.ephem = Default::default();
        // The origin pane of the best-ranked candidate that has an origin sheet.
        app.mode = Mode::List;
        let with_origin = app
            .view
            .iter()
            .position(|&i| app.candidates[i].fit.origin.is_some())
            .expect("the demo night has an unbound candidate");
        app.on_key(key('g'));
        for _ in 0..with_origin {
            app.on_key(key('j'));
        }
        app.on_key(key('o'));
        assert_eq!(app.mode, Mode::Origin);
        check(&format!("origin_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
        app.on_key(key('g'));
        app.message = None;
        app.on_key(key('/'));
        for c in "qk4".chars() {
            app.on_key(key(c));
        }
        check(&format!("filter_{w}x{h}"), &screen(&mut app, w, h));
        app.on_key(KeyEvent::new(KeyCode::Enter, KeyModifiers::NONE));
        app.on_key(key('m'));
        for c in "fast, bright".chars() {
            app.on_key(key(c));
        }
        check(&format!("note_{w}x{h}"), &screen(&mut app, w, h));
    }
}

#[test]
fn each_pane_alone_matches_its_snapshot() {
    let mut app = demo_app();
    app.on_key(key('g'));
    app.message = None;
    let theme = Theme { color: false };
    for (w, h) in [(80u16, 12u16), (160, 24)] {
        let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
        t.draw(|f| table::draw(f, f.area(), &app, theme)).unwrap();
        check(&format!("pane_table_{w}x{h}"), &text(&t));
        t.draw(|f| elements::draw(f, f.area(), &app, theme))
            .unwrap();
        check(&format!("pane_orbit_{w}x{h}"), &text(&t));
        t.draw(|f| residuals::draw(f, f.area(), &app, theme))
            .unwrap();
        check(&format!("pane_residuals_{w}x{h}"), &text(&t));
        t.draw(|f| {
            status::draw_status(f, ratatui::layout::Rect::new(0, 0, w, 1), &app, theme);
            status::draw_hints(f, ratatui::layout::Rect::new(0, 1, w, 1), &app, theme);
        })
        .unwrap();
        check(&format!("pane_status_{w}x{h}"), &text(&t));
    }
}

#[test]
fn an_answer_from_the_range_profile_shows_its_lopsided_e_and_what_the_positions_alone_allow() {
    // qk5t8yn (a near-parabolic comet-like orbit of the demo night, e 0.93 in its truth): the posterior
    // stands on the spike near e = 1, lopsided (e 1.003 ± 0.030 hides that its 95 % reaches 0.93 below
    // and no further than 1.0034 above); the orbit pane shows its intervals and beside them the range
    // of e the positions allow.
    let mut app = demo_app();
    select(&mut app, "qk5t8yn");
    app.message = None;
    let c = app
        .candidates
        .iter()
        .find(|c| c.fit.object == "qk5t8yn")
        .unwrap();
    let [lo, hi] = c.fit.e_data_interval.unwrap();
    let ([a, b], [p, q]) = (c.fit.e_interval_68.unwrap(), c.fit.e_interval_95.unwrap());
    let e = c.fit.e.unwrap();
    assert!(e - p > 10.0 * (q - e), "{p} {e} {q}");
    let mut t = Terminal::new(TestBackend::new(160, 24)).unwrap();
    t.draw(|f| elements::draw(f, f.area(), &app, Theme { color: false }))
        .unwrap();
    let shown = text(&t);
    assert!(
        shown.contains(&format!("positions alone: e {lo:.3}–{hi:.3}")),
        "{shown}"
    );
    assert!(
        shown.contains(&format!("e 68 %: {a:.3}–{b:.3}  95 %: {p:.3}–{q:.3}")),
        "{shown}"
    );
    check("pane_orbit_range_profile_160x24", &shown);
}

#[test]
fn the_cursor_stays_on_its_candidate_when_results_stream_in() {
    let mut app = demo_app();
    app.on_key(key('G')); // the last row
    let chosen = app.selected.clone().unwrap();
    let mut extra = app.candidates[0].fit.clone();
    extra.object = "qkzz99".into();
    extra.z_hyperbolic = Some(8.0);
    extra.log10_odds = Some(400.0);
    app.on_fit(1, extra, 5);
    assert_eq!(app.selected.as_deref(), Some(chosen.as_str()));
    let top_two: Vec<&str> = app
        .view
        .iter()
        .take(2)
        .map(|&i| app.candidates[i].fit.object.as_str())
        .collect();
    assert!(
        top_two.contains(&"qkzz99"),
        "the new candidate with the highest odds ranks at the top: {top_two:?}"
    );
}

#[test]
fn sorting_cycles_through_every_column_and_keeps_the_selection() {
    let mut app = demo_app();
    app.on_key(key('G'));
    let chosen = app.selected.clone();
    let mut labels = Vec::new();
    for _ in 0..interloper::console::state::SortKey::ALL.len() {
        app.on_key(key('s'));
        labels.push(app.sort.label());
        assert_eq!(
            app.selected,
            chosen,
            "sorting by {} moved the cursor",
            app.sort.label()
        );
        assert_eq!(app.view.len(), app.candidates.len());
    }
    assert_eq!(
        labels.last(),
        Some(&"rank"),
        "the cycle returns to the ranking: {labels:?}"
    );
    app.on_key(key('s')); // score
    let scores: Vec<f64> = app
        .view
        .iter()
        .map(|&i| {
            app.candidates[i]
                .fit
                .z_hyperbolic
                .unwrap_or(f64::NEG_INFINITY)
        })
        .collect();
    assert!(scores.windows(2).all(|w| w[0] >= w[1]), "{scores:?}");
}

#[test]
fn a_decision_the_journal_could_not_save_stops_saying_saving() {
    let mut app = demo_app();
    let object = app.selected.clone().unwrap();
    app.on_key(key('p'));
    let i = app
        .candidates
        .iter()
        .position(|c| c.fit.object == object)
        .unwrap();
    assert_eq!(app.candidates[i].saving, 1);
    app.on_save_failed(&object, "No space left on device");
    assert_eq!(app.candidates[i].saving, 0);
    assert!(
        app.message
            .as_deref()
            .is_some_and(|m| m.contains("NOT SAVED") && m.contains("No space left")),
        "{:?}",
        app.message
    );
}

#[test]
fn escape_in_the_filter_prompt_drops_the_filter() {
    let mut app = demo_app();
    let all = app.view.len();
    app.on_key(key('/'));
    for c in "zzz".chars() {
        app.on_key(key(c));
    }
    assert_eq!(app.view.len(), 0, "the filter applies while typed");
    let pane: Vec<String> = interloper::console::panes::elements::lines(&app)
        .iter()
        .map(|l| l.to_string())
        .collect();
    assert!(pane[0].contains("no candidate matches"), "{pane:?}");
    app.on_key(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
    assert_eq!(app.view.len(), all);
    assert!(app.filter.is_empty());
}

#[test]
fn a_screen_smaller_than_80x24_says_so_instead_of_cutting_columns() {
    let mut app = demo_app();
    app.message = None;
    check("too_small_60x20", &screen(&mut app, 60, 20));
    let s = screen(&mut app, 79, 30);
    assert!(s.contains("terminal too small: 79×30, needs 80×24"), "{s}");
    let s = screen(&mut app, 80, 24);
    assert!(!s.contains("too small"), "{s}");
}

#[test]
fn main_screen_at_100x30_matches_its_snapshot() {
    let mut app = demo_app();
    app.on_key(key('g'));
    app.message = None;
    check("main_100x30", &screen(&mut app, 100, 30));
}

#[test]
fn a_bound_answer_whose_positions_allow_only_unbound_orbits_is_marked_and_explained() {
    // A record shaped like a fresh hyperbolic arc's (true e 2.59): its own positions allow e 2.26–3.86
    // only, the population model puts the posterior on a bound valley (P 0.004, odds −2.4).
    let mut app = demo_app();
    let mut f = app.candidates[0].fit.clone();
    f.object = "qkzz01".into();
    f.p_hyperbolic = Some(0.004);
    f.z_hyperbolic = Some(-2.65);
    f.log10_odds = Some(-2.4);
    f.e_data_interval = Some([2.26, 3.86]);
    app.on_fit(1, f, 5);
    select(&mut app, "qkzz01");
    let shown = screen(&mut app, 160, 48);
    let row = shown.lines().find(|l| l.contains("qkzz01")).unwrap();
    assert!(row.contains("△-2.4"), "{row}");
    assert!(
        shown.contains("positions allow only unbound, the model says bound"),
        "{shown}"
    );
    assert!(shown.contains("another night tests the model"), "{shown}");
}

#[test]
fn at_80x24_the_orbit_pane_keeps_the_probability_the_evidence_and_why_a_fit_is_poor() {
    // The orbit pane at 80×24 has room for nine lines: the probability, the evidence and why a fit
    // is poor come before the orbit's angles (they were once cut off while Ω, ω and Tp stayed).
    // qk9h6tx is the demo night's false linkage (no probability: no orbit fits it); qk2m4wc an
    // answer the population model set.
    for (object, wants) in [
        ("qk9h6tx", ["P(unbound)", "POOR FIT", "chi2/dof"]),
        ("qk2m4wc", ["P(unbound)", "log₁₀K", "THE MODEL'S"]),
    ] {
        let mut app = demo_app();
        select(&mut app, object);
        app.message = None;
        let s = screen(&mut app, 80, 24);
        check(&format!("orbit_{object}_80x24"), &s);
        for want in wants {
            assert!(s.contains(want), "{want} is not on the 80×24 screen:\n{s}");
        }
    }
}

#[test]
fn the_observations_column_counts_every_known_position_also_the_excluded_ones() {
    // A position the observer excluded is refitted away; the total stayed the fit's own count and
    // shrank with every exclusion (11/12 became 10/11).
    let mut app = demo_app();
    let i = app.view[0];
    let (used, n) = (app.candidates[i].fit.n_used, app.candidates[i].fit.n_obs);
    app.candidates[i].n_known = n + 1;
    app.message = None;
    let s = screen(&mut app, 100, 30);
    assert!(s.contains(&format!("{used}/{}", n + 1)), "{s}");
}
