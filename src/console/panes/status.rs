//! The feed status line at the top and the key-hint line at the bottom (generated from the keymap).

use super::Theme;
use crate::console::actions::Action;
use crate::console::state::{App, Mode};
use crate::feed::sanitize::clean;
use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::widgets::Paragraph;

/// The status line in `width` cells: the program's name goes first, then the labels shorten; the
/// counts and the time of the last arrival are what decide, and they stay.
pub fn status_text(app: &App, width: usize) -> String {
    let s = &app.status;
    let last = s.last_arrival.as_deref().unwrap_or("-");
    let counts = [
        ("files", "f", s.files_seen),
        ("waiting", "wait", s.waiting),
        ("fitting", "fit", s.fitting),
        ("failed", "fail", s.failed),
        // Files with refused input (a file of two bad lines once counted 2); the overlay lists every
        // reason. Headless watch counts only files refused whole, and lists bad lines apart.
        ("rejected", "rej", rejected_files(app)),
    ];
    let join = |long: bool| {
        counts
            .iter()
            .map(|(l, sh, n)| format!("{} {n}", if long { l } else { sh }))
            .collect::<Vec<_>>()
            .join(" · ")
    };
    let forms = [
        format!(" interloper · {} · last arrival {last} ", join(true)),
        format!(" {} · last arrival {last} ", join(true)),
        format!(" {} · last {last} ", join(true)),
        format!(" {} · last {last} ", join(false)),
        format!(" {} {last}", join(false).replace(" · ", " ")),
    ];
    fit_or_cut(&forms, width)
}

/// How many distinct files the refused input came from.
fn rejected_files(app: &App) -> usize {
    app.rejected
        .iter()
        .map(|e| e.file.as_str())
        .collect::<std::collections::HashSet<_>>()
        .len()
}

/// The first form that fits `width` cells, else the last one cut with an ellipsis.
fn fit_or_cut(forms: &[String], width: usize) -> String {
    if let Some(f) = forms.iter().find(|f| f.chars().count() <= width) {
        return f.clone();
    }
    let last = forms.last().map_or("", String::as_str);
    let mut cut: String = last.chars().take(width.saturating_sub(1)).collect();
    cut.push('…');
    cut
}

/// The key-hint line in `width` cells: help and quit always; the other keys in order of use while they
/// fit (help lists every key).
pub fn hint_text(app: &App, width: usize) -> String {
    if let Some(m) = &app.message {
        return format!(" {}", clean(m));
    }
    match app.mode {
        Mode::List => {
            // In the order shown; the number is the priority (lower stays longer).
            let pairs = [
                (Action::Pursue, "pursue", 0),
                (Action::SetAside, "set aside", 1),
                (Action::KeepWatching, "keep watching", 3),
                (Action::NextUndecided, "next undecided", 5),
                (Action::ToggleObs, "exclude obs", 4),
                (Action::Ephemeris, "ephemeris", 2),
            ];
            let tail = format!(
                "{} help · {} quit",
                app.keys(Action::Help),
                app.keys(Action::Quit)
            );
            let line = |upto: usize| {
                let mut parts: Vec<String> = pairs
                    .iter()
                    .filter(|(_, _, p)| *p < upto)
                    .map(|(a, l, _)| format!("{} {l}", app.keys(*a)))
                    .collect();
                parts.push(tail.clone());
                format!(" {}", parts.join(" · "))
            };
            let forms: Vec<String> = (0..=pairs.len()).rev().map(line).collect();
            fit_or_cut(&forms, width)
        }
        Mode::Filter | Mode::Note => " Enter accept · Esc cancel".into(),
        _ => " Esc close".into(),
    }
}

/// The status line; while an alert flashes it is drawn in the alert's style and starts with ALERT
/// (so it shows without colour too).
pub fn draw_status(f: &mut Frame, area: Rect, app: &App, theme: Theme) {
    let flashing = app.alerts.flashing(std::time::Instant::now());
    let (text, style) = if flashing {
        let t = status_text(app, (area.width as usize).saturating_sub(6));
        (format!(" ALERT{t}"), theme.alert())
    } else {
        (status_text(app, area.width as usize), theme.selected())
    };
    f.render_widget(Paragraph::new(text).style(style), area);
}

pub fn draw_hints(f: &mut Frame, area: Rect, app: &App, _theme: Theme) {
    f.render_widget(Paragraph::new(hint_text(app, area.width as usize)), area);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_status_line_keeps_every_count_and_the_last_arrival_at_80_columns() {
        let mut app = App::new(crate::console::keymap::Keymap::builtin());
        app.status.files_seen = 2200;
        app.status.waiting = 12;
        app.status.fitting = 2;
        app.status.last_arrival = Some("03:12:55Z".into());
        for w in [80, 60, 50] {
            let s = status_text(&app, w);
            assert!(s.chars().count() <= w, "{w}: {s}");
            for needle in ["2200", "12", "03:12:55Z"] {
                assert!(s.contains(needle), "{w}: {s}");
            }
        }
        assert!(status_text(&app, 160).contains("interloper"));
    }

    #[test]
    fn the_hint_line_keeps_help_and_quit_at_every_width() {
        let app = App::new(crate::console::keymap::Keymap::builtin());
        for w in [40, 60, 80, 120] {
            let h = hint_text(&app, w);
            assert!(h.chars().count() <= w, "{w}: {h}");
            assert!(h.contains("help") && h.contains("quit"), "{w}: {h}");
        }
        assert!(hint_text(&app, 200).contains("next undecided"));
        assert!(
            hint_text(&app, 80).contains("ephemeris"),
            "{}",
            hint_text(&app, 80)
        );
    }
}
