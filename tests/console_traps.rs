//! Small traps of the console's state machine: Ctrl-C from every mode, overlays that stop scrolling at
//! their last line.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

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
