//! Two candidates side by side: each one's orbit lines (elements ± σ, P and where it came from) and its
//! residual strips, so a pair that may be one object, or two answers to compare, can be read at once.

use super::elements::lines_for;
use super::residuals::strip;
use crate::console::state::{App, Candidate};
use ratatui::Frame;
use ratatui::layout::{Constraint, Direction, Layout, Rect};
use ratatui::text::Line;
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Wrap};

fn column(app: &App, c: &Candidate, width: u16) -> Vec<Line<'static>> {
    let mut out = lines_for(app, c);
    let w = usize::from(width.saturating_sub(12)).max(8);
    let res = &c.fit.residuals;
    let (ra, ra_s, _) = strip(res, false, w, usize::MAX);
    let (de, de_s, _) = strip(res, true, w, usize::MAX);
    out.push(Line::from(""));
    out.push(Line::from(format!("O−C RA  {ra}")));
    out.push(Line::from(format!("        {ra_s}")));
    out.push(Line::from(format!("O−C Dec {de}")));
    out.push(Line::from(format!("        {de_s}")));
    out
}

/// The compare panel over most of the screen: the marked candidate left, the selected one right.
pub fn draw(f: &mut Frame, area: Rect, app: &App) {
    let r = super::overlay::centered(area, 96, 90);
    f.render_widget(Clear, r);
    let block = Block::default()
        .borders(Borders::ALL)
        .title(" compare (Esc closes) ");
    let inner = block.inner(r);
    f.render_widget(block, r);
    let halves = Layout::default()
        .direction(Direction::Horizontal)
        .constraints([Constraint::Percentage(50), Constraint::Percentage(50)])
        .split(inner);
    let pair = [
        app.compare_with
            .as_ref()
            .and_then(|o| app.candidates.iter().find(|c| &c.fit.object == o)),
        app.selected_candidate(),
    ];
    for (half, c) in halves.iter().zip(pair) {
        let lines = match c {
            Some(c) => column(app, c, half.width),
            None => vec![Line::from("no candidate")],
        };
        let p = Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .block(Block::default().borders(Borders::RIGHT));
        f.render_widget(p, *half);
    }
}
