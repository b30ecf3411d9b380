//! Panels drawn over the main screen: help (generated from the active keymap), rejected files and lines,
//! the follow-up ephemeris and plan, the origin sheet, and the one-line prompt for a filter or a note.

use super::Theme;
use crate::console::state::{App, Mode};
use crate::feed::sanitize::clean;
use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::widgets::{Block, Borders, Clear, Paragraph};

pub(super) fn centered(area: Rect, w_pct: u16, h_pct: u16) -> Rect {
    let w = area.width * w_pct / 100;
    let h = area.height * h_pct / 100;
    Rect::new(
        area.x + (area.width - w) / 2,
        area.y + (area.height - h) / 2,
        w,
        h,
    )
}

fn panel(f: &mut Frame, area: Rect, app: &App, title: &str, lines: Vec<String>) {
    let r = centered(area, 90, 85);
    f.render_widget(Clear, r);
    let lines = wrap(lines, usize::from(r.width.saturating_sub(2)));
    // Scrolling stops where the last line reaches the bottom; the title says when more is hidden.
    let rows = usize::from(r.height.saturating_sub(2));
    let max = lines.len().saturating_sub(rows);
    app.overlay_max.set(max);
    let scroll = app.overlay_scroll.min(max);
    let more = match (scroll > 0, scroll < max) {
        (true, true) => " · ↑↓ more ",
        (false, true) => " · ↓ more ",
        (true, false) => " · ↑ more ",
        (false, false) => "",
    };
    let text: Vec<ratatui::text::Line> = lines
        .into_iter()
        .skip(scroll)
        .map(ratatui::text::Line::from)
        .collect();
    f.render_widget(
        Paragraph::new(text).block(
            Block::default()
                .borders(Borders::ALL)
                .title(format!("{title}{more}")),
        ),
        r,
    );
}

/// Lines longer than `width` cells broken at spaces (or anywhere, for a long word), continuations
/// indented, so nothing is cut at the panel's edge.
fn wrap(lines: Vec<String>, width: usize) -> Vec<String> {
    use unicode_width::UnicodeWidthStr;
    if width < 8 {
        return lines;
    }
    let mut out = Vec::new();
    for line in lines {
        if line.width() <= width {
            out.push(line);
            continue;
        }
        let mut cur = String::new();
        for (k, word) in line.split(' ').enumerate() {
            if k > 0 {
                if !cur.trim().is_empty() && cur.width() + 1 + word.width() > width {
                    out.push(std::mem::take(&mut cur));
                    cur.push_str("  ");
                } else {
                    cur.push(' ');
                }
            }
            for ch in word.chars() {
                if cur.width() >= width {
                    out.push(std::mem::take(&mut cur));
                    cur.push_str("  ");
                }
                cur.push(ch);
            }
        }
        out.push(cur);
    }
    out
}

/// A rejection as the panel shows it: the file's name without its folders (the full path is in the
/// log), then line, column and reason.
fn rejection_line(e: &crate::feed::InputError) -> String {
    let name = std::path::Path::new(&e.file)
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| e.file.clone());
    let short = crate::feed::InputError {
        file: name,
        ..e.clone()
    };
    clean(&short.to_string())
}

pub fn help_lines(app: &App) -> Vec<String> {
    let mut out = Vec::new();
    if let Some(w) = &app.keymap_warning {
        out.push(format!("[key map] {}", crate::feed::sanitize::clean(w)));
        out.push(String::new());
    }
    let mut last = None;
    for (ctx, action, keys) in app.keymap.describe() {
        if last != Some(ctx) {
            out.push(format!("[{}]", ctx.name()));
            last = Some(ctx);
        }
        let k = keys.iter().map(|k| k.label()).collect::<Vec<_>>().join(" ");
        out.push(format!(
            "  {k:<14} {:<20} {}",
            action.name(),
            action.describe()
        ));
    }
    out.push(String::new());
    out.extend(LEGEND.iter().map(|l| (*l).to_string()));
    out
}

/// What the marks on screen mean and how the list is ordered.
const LEGEND: [&str; 13] = [
    "[what the marks mean]",
    "  + / ~          before an id: new / refitted since you last had it under the cursor (c jumps to the next)",
    "  order          usable fits first (by log10 odds unbound : bound), then poor fits, then failures",
    "  why: …         under the list: the selected row's tier, P, who decided it (data or prior), what would change it",
    "  odds ▲         P(unbound) ≥ 0.99 on a fit with no quality problem: a reason to follow up, not a discovery",
    "  odds △         on a fit with no quality problem, the positions alone allow only unbound orbits, the model says bound",
    "  odds +∞ / -∞   one class got no weight at all: P is 1 or 0 only as far as the trial orbits reach",
    "  odds >+999     the odds are written as a bound past a thousand decades",
    "  e ± σ          σ from the samples behind P wherever the linear fit is not trusted",
    "  status model   the positions leave e open: e ± σ are the population model's, not measured (ranks as ok)",
    "  (rng)          e from grid ranging whose orbits are too few to measure a σ (the fit is marked poor)",
    "  x              in the residual strips: a position set aside (outlier or excluded by you)",
    "  ^              in the residual strips: the position under the cursor",
];

pub fn draw(f: &mut Frame, area: Rect, app: &App, _theme: Theme) {
    match app.mode {
        Mode::Help => panel(
            f,
            area,
            app,
            " keys (from the active keymap) ",
            help_lines(app),
        ),
        Mode::Alerts => panel(f, area, app, " alerts ", app.alerts.lines()),
        Mode::Compare => super::compare::draw(f, area, app),
        Mode::Rejected => {
            let lines = if app.rejected.is_empty() {
                vec!["nothing rejected".to_string()]
            } else {
                app.rejected.iter().map(rejection_line).collect()
            };
            panel(f, area, app, " rejected files and lines ", lines)
        }
        Mode::Ephemeris => {
            let lines = match &app.ephemeris {
                None => vec!["computing…".to_string()],
                Some((obj, pts)) => crate::console::ephemtext::lines(app, obj, pts),
            };
            panel(f, area, app, " follow-up ephemeris ", lines)
        }
        Mode::Plan => {
            let lines = match &app.plan {
                None => vec!["planning…".to_string()],
                Some(p) => super::planview::lines(p),
            };
            panel(f, area, app, " follow-up plan, next 24 h ", lines)
        }
        Mode::Origin => {
            // The panel is 90 % of the screen wide, less its borders.
            let width = area.width * 90 / 100;
            let lines = super::origin::lines(app, width.saturating_sub(2));
            panel(f, area, app, " where it comes from ", lines)
        }
        Mode::Filter | Mode::Note => {
            let r = Rect::new(
                area.x,
                area.y + area.height.saturating_sub(3),
                area.width,
                3.min(area.height),
            );
            f.render_widget(Clear, r);
            let title = if app.mode == Mode::Filter {
                " filter "
            } else {
                " note "
            };
            f.render_widget(
                Paragraph::new(app.input.value().to_string())
                    .block(Block::default().borders(Borders::ALL).title(title)),
                r,
            );
        }
        Mode::List => {}
    }
}

#[cfg(test)]
mod legend_tests {
    #[test]
    fn every_legend_line_fits_a_full_width_help_panel() {
        for l in super::LEGEND {
            assert!(l.chars().count() <= 140, "{l}");
        }
    }
}

#[cfg(test)]
mod wrap_tests {
    use super::*;

    #[test]
    fn long_lines_wrap_at_spaces_within_the_width_and_nothing_is_lost() {
        let text = "qk_long_file_name.psv: line 4, column ra: 361 is outside 0 ≤ RA < 360° and more words follow here";
        let out = wrap(vec![text.to_string()], 30);
        assert!(out.len() > 2, "{out:?}");
        assert!(
            out.iter()
                .all(|l| unicode_width::UnicodeWidthStr::width(l.as_str()) <= 30),
            "{out:?}"
        );
        let joined: String = out
            .join(" ")
            .split_whitespace()
            .collect::<Vec<_>>()
            .join(" ");
        assert_eq!(joined, text);
    }

    #[test]
    fn a_rejection_shows_the_file_name_not_its_folders() {
        let e = crate::feed::InputError {
            file: "/data/survey/2027-02-26/incoming/deep/031_bad_dates.psv".into(),
            line: 3,
            column: Some("obsTime".into()),
            reason: "2027-02-30 is not a date".into(),
        };
        assert_eq!(
            rejection_line(&e),
            "031_bad_dates.psv: line 3, column obsTime: 2027-02-30 is not a date"
        );
    }
}
