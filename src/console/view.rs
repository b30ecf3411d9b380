//! The whole screen: status line, candidate list, orbit and residual panes, hint line, overlays.

use super::panes::{Theme, elements, overlay, residuals, status, table};
use super::state::App;
use ratatui::Frame;
use ratatui::layout::{Constraint, Direction, Layout};

pub fn draw(f: &mut Frame, app: &mut App, theme: Theme) {
    let area = f.area();
    let rows = Layout::default()
        .direction(Direction::Vertical)
        .constraints([
            Constraint::Length(1),
            Constraint::Percentage(45),
            Constraint::Min(8),
            Constraint::Length(1),
        ])
        .split(area);
    app.page = rows[1].height.saturating_sub(3).max(1) as usize;
    status::draw_status(f, rows[0], app, theme);
    table::draw(f, rows[1], app, theme);
    let bottom = Layout::default()
        .direction(Direction::Horizontal)
        .constraints([Constraint::Percentage(55), Constraint::Percentage(45)])
        .split(rows[2]);
    elements::draw(f, bottom[0], app, theme);
    residuals::draw(f, bottom[1], app, theme);
    status::draw_hints(f, rows[3], app, theme);
    overlay::draw(f, area, app, theme);
}
