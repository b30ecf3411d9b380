//! The panes of the console, each drawn from state only (no I/O, no fitting in here).

pub mod compare;
pub mod elements;
pub mod nextnight;
pub mod origin;
pub mod overlay;
pub mod planview;
pub mod residuals;
pub mod status;
pub mod table;

use ratatui::style::{Color, Modifier, Style};

/// Colours are a help, never the only carrier of meaning: every coloured cell also says it in text.
#[derive(Debug, Clone, Copy)]
pub struct Theme {
    pub color: bool,
}

impl Theme {
    pub fn from_env() -> Theme {
        Theme {
            color: std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty()),
        }
    }
    pub fn fg(&self, c: Color) -> Style {
        if self.color {
            Style::default().fg(c)
        } else {
            Style::default()
        }
    }
    pub fn strong(&self) -> Style {
        Style::default().add_modifier(Modifier::BOLD)
    }
    pub fn selected(&self) -> Style {
        Style::default().add_modifier(Modifier::REVERSED)
    }
    /// A flashed status line: bold and reversed, in colour where colour is allowed.
    pub fn alert(&self) -> Style {
        let s = Style::default().add_modifier(Modifier::BOLD | Modifier::REVERSED);
        if self.color { s.fg(Color::Yellow) } else { s }
    }
}

/// Format an optional number or a dash.
pub fn num(x: Option<f64>, prec: usize) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{v:.prec$}"),
        _ => "-".into(),
    }
}
