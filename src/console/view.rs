//! The whole screen: status line, candidate list, orbit and residual panes, hint line, overlays.

use super::panes::{Theme, elements, overlay, residuals, status, table};
use super::state::App;
use ratatui::Frame;
use ratatui::layout::{Constraint, Direction, Layout};

/// The smallest screen the console lays out (ids, score, P and status need 80 columns; the list, the
/// orbit pane and the two text lines need 24 rows).
pub const MIN_WIDTH: u16 = 80;
pub const MIN_HEIGHT: u16 = 24;

pub fn draw(f: &mut Frame, app: &mut App, theme: Theme) {
    let area = f.area();
    app.hidden = !fits(area);
    if app.hidden {
        too_small(f, area);
        return;
    }
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

/// Whether the whole layout fits in `area` (else only the size needed is shown).
pub fn fits(area: ratatui::layout::Rect) -> bool {
    area.width >= MIN_WIDTH && area.height >= MIN_HEIGHT
}

/// Instead of a layout that cuts ids and drops columns without saying so: the size needed, and that
/// decisions and the feed carry on meanwhile.
fn too_small(f: &mut Frame, area: ratatui::layout::Rect) {
    let text = format!(
        "terminal too small: {}×{}, needs {MIN_WIDTH}×{MIN_HEIGHT}. The feed is still being fitted; enlarge the window (Ctrl-C quits).",
        area.width, area.height
    );
    f.render_widget(
        ratatui::widgets::Paragraph::new(text).wrap(ratatui::widgets::Wrap { trim: true }),
        area,
    );
}
