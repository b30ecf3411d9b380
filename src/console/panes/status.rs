//! The feed status line at the top and the key-hint line at the bottom (generated from the keymap).

use super::Theme;
use crate::console::actions::Action;
use crate::console::state::{App, Mode};
use crate::feed::sanitize::clean;
use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::widgets::Paragraph;

pub fn status_text(app: &App) -> String {
    let s = &app.status;
    format!(
        " interloper · files {} · waiting {} · fitting {} · failed {} · rejected {} · last arrival {} ",
        s.files_seen,
        s.waiting,
        s.fitting,
        s.failed,
        app.rejected.len(),
        s.last_arrival.as_deref().unwrap_or("-")
    )
}

pub fn hint_text(app: &App) -> String {
    if let Some(m) = &app.message {
        return format!(" {}", clean(m));
    }
    match app.mode {
        Mode::List => {
            let pairs = [
                (Action::Pursue, "pursue"),
                (Action::SetAside, "set aside"),
                (Action::KeepWatching, "keep watching"),
                (Action::NextUndecided, "next undecided"),
                (Action::ToggleObs, "exclude obs"),
                (Action::Ephemeris, "ephemeris"),
                (Action::Help, "help"),
                (Action::Quit, "quit"),
            ];
            pairs
                .iter()
                .map(|(a, l)| format!("{} {l}", app.keys(*a)))
                .collect::<Vec<_>>()
                .join(" · ")
        }
        Mode::Filter | Mode::Note => " Enter accept · Esc cancel".into(),
        _ => " Esc close".into(),
    }
}

pub fn draw_status(f: &mut Frame, area: Rect, app: &App, theme: Theme) {
    f.render_widget(
        Paragraph::new(status_text(app)).style(theme.selected()),
        area,
    );
}

pub fn draw_hints(f: &mut Frame, area: Rect, app: &App, _theme: Theme) {
    f.render_widget(Paragraph::new(hint_text(app)), area);
}
