//! Small traps of the console's state machine: Ctrl-C from every mode, overlays that stop scrolling at
//! their last line, keys on a screen too small to show the list.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::console::keymap::Keymap;
use interloper::console::state::{App, Effect, Mode};
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

fn key(c: char) -> KeyEvent {
    KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE)
}

fn ctrl_c() -> KeyEvent {
    KeyEvent::new(KeyCode::Char('c'), KeyModifiers::CONTROL)
}

#[test]
fn ctrl_c_quits_from_the_list_the_help_overlay_the_alert_list_and_the_filter_prompt() {
    for opening in [None, Some('?'), Some('!'), Some('f'), Some('/')] {
        let mut app = App::new(Keymap::builtin());
        if let Some(k) = opening {
            app.on_key(key(k));
            assert_ne!(app.mode, Mode::List, "{k} opened nothing");
        }
        let effects = app.on_key(ctrl_c());
        assert!(
            effects.iter().any(|e| matches!(e, Effect::Quit)),
            "{opening:?}: {effects:?}"
        );
    }
}

#[test]
fn an_overlay_stops_scrolling_at_its_last_line() {
    let mut app = App::new(Keymap::builtin());
    app.on_key(key('?'));
    // What the last drawing found: five lines below the panel at most.
    app.overlay_max.set(5);
    for _ in 0..50 {
        app.on_key(KeyEvent::new(KeyCode::Down, KeyModifiers::NONE));
    }
    assert_eq!(app.overlay_scroll, 5);
    app.on_key(KeyEvent::new(KeyCode::Up, KeyModifiers::NONE));
    assert_eq!(app.overlay_scroll, 4, "one key up moves one line back");
}

/// A window shrunk below the layout's size shows only the size it needs: keys that would move the
/// hidden cursor or record a decision do nothing there (a set-aside once reached the journal blind),
/// quit still quits, and once the window is large enough again they act as before.
#[test]
fn keys_do_nothing_but_quit_while_the_screen_is_too_small_to_show_the_list() {
    let mut app = util::screens::demo_app(|_| {});
    let before = app.selected.clone();
    let shown = util::screens::screen(&mut app, 40, 10);
    assert!(shown.contains("terminal too small"), "{shown}");
    for k in ['j', 'j', 'x', 'p', 'w', ' '] {
        assert!(app.on_key(key(k)).is_empty(), "{k} acted while hidden");
    }
    assert_eq!(app.selected, before, "the hidden cursor moved");
    assert!(matches!(app.on_key(key('q')).as_slice(), [Effect::Quit]));
    util::screens::screen(&mut app, 80, 24);
    let decided = app.on_key(key('x'));
    assert!(
        decided.iter().any(|e| matches!(e, Effect::Journal(_))),
        "{decided:?}"
    );
}

/// A key map refused at start (file, line, reason) is said atop the help, which alerts never replace
/// (the status line that first says it is taken by the next alert within a second).
#[test]
fn a_refused_key_map_is_said_atop_the_help() {
    let mut app = App::new(Keymap::builtin());
    let why = "keys.toml: line 3: unknown action 'bogus' — using the default keys";
    app.keymap_warning = Some(why.to_string());
    let lines = interloper::console::panes::overlay::help_lines(&app);
    assert_eq!(lines[0], format!("[key map] {why}"));
    app.keymap_warning = None;
    assert!(interloper::console::panes::overlay::help_lines(&app)[0].starts_with('['));
    assert!(!interloper::console::panes::overlay::help_lines(&app)[0].contains("key map"));
}

/// Ids that differ only in their last character stay distinct at the smallest screen (a trade
/// designation is ten characters; both once read `2027 AB12`), and wider screens give the spare
/// columns to the id and the decision rather than leaving them blank.
#[test]
fn ten_character_ids_are_shown_whole_at_80_columns() {
    let mut app = util::screens::demo_app(|_| {});
    let (a, b) = (app.view[0], app.view[1]);
    app.candidates[a].fit.object = "2027 AB123".into();
    app.candidates[b].fit.object = "2027 AB124".into();
    let shown = util::screens::screen(&mut app, 80, 24);
    assert!(shown.contains("2027 AB123"), "{shown}");
    assert!(shown.contains("2027 AB124"), "{shown}");
    app.candidates[a].fit.object = "a_synthetic_name_of_24ch".into();
    let wider = util::screens::screen(&mut app, 100, 30);
    assert!(wider.contains("a_synthetic_name_of_24ch"), "{wider}");
}

/// A position the observer excluded has no O−C and no place in the residual strips: the pane's title
/// counts it (it once vanished without a word).
#[test]
fn the_residual_pane_counts_the_positions_you_excluded() {
    let mut app = util::screens::demo_app(|_| {});
    let shown = util::screens::screen(&mut app, 100, 30);
    assert!(!shown.contains("excluded by you"), "{shown}");
    let k = app.view[0];
    // Excluded, and so (as the engine does) no longer among the fitted positions.
    let gone = app.candidates[k].fit.residuals.remove(0);
    app.candidates[k].overrides.excluded.insert(gone.id);
    let shown = util::screens::screen(&mut app, 100, 30);
    assert!(shown.contains("1 excluded by you"), "{shown}");
}
