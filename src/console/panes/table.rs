//! The candidate list, ranked by the hyperbolicity score. Only the visible rows are built, so a list of
//! ten thousand costs no more to draw than a screenful.

use super::{Theme, num};
use crate::console::state::{App, Candidate};
use crate::feed::sanitize::clean;
use crate::fitting::kinds::{FitMethod, FitStatus};
use ratatui::Frame;
use ratatui::layout::{Constraint, Rect};
use ratatui::style::Color;
use ratatui::widgets::{Block, Borders, Cell, Row, Table};

/// The odds column: log₁₀ of the posterior odds, with ▲ where P ≥ 0.99 on a usable fit and △ where the
/// positions alone allow only unbound orbits but the model says bound.
fn score_text(c: &Candidate) -> String {
    let f = &c.fit;
    let flag = if strong(f) {
        "▲"
    } else if f.model_overrules_unbound_positions() {
        "△"
    } else {
        " "
    };
    format!("{flag}{}", crate::report::odds_text(f))
}

/// P(unbound) ≥ 0.99 on a fit without quality problems.
fn strong(f: &crate::fitting::fit::FitResult) -> bool {
    f.log10_odds.is_some_and(|z| z >= 2.0) && f.status.usable()
}

/// The decision column, `width` characters: the verdict, `*` when it was made on fewer observations
/// than are known now, and who made it when that was not the observer at this console (the name cut
/// to what the column leaves, never the verdict: `set aside* (al…)`).
fn decision_text(c: &Candidate, me: &str, width: usize) -> String {
    match (&c.decision, c.saving > 0) {
        (_, true) => "saving…".into(),
        (Some(d), _) => {
            let fewer = if d.n_obs < c.fit.n_obs { "*" } else { "" };
            let verdict = format!("{}{fewer}", d.verdict_label());
            if d.observer() == me {
                return verdict;
            }
            let name = clean(d.observer());
            let full = format!("{verdict} ({name})");
            if full.chars().count() <= width {
                return full;
            }
            // " (" + at least one letter + "…)".
            let room = width.saturating_sub(verdict.chars().count() + 4);
            match room {
                0 => format!("{verdict}(…)"),
                n => format!("{verdict} ({}…)", name.chars().take(n).collect::<String>()),
            }
        }
        (None, _) => "".into(),
    }
}

/// Width (columns) from which the table shows every column.
const WIDE_FROM: u16 = 130;

/// Widths of the id and decision columns: whatever the fixed columns between them leave, the id as wide
/// as the longest shown (at least 10 columns, 12 in the wide table, and at most what leaves the decision
/// its least: 10, 15 in the wide table), the decision the rest (an observer's name after the verdict). At 80 columns the id
/// was once cut to 9 characters and the decision to `set aside* (`, with 20 columns blank at 100.
fn id_and_decision_widths(width: u16, middle: &[u16], need: usize, wide: bool) -> (u16, u16) {
    let (min_id, min_decision) = if wide { (12u16, 15) } else { (10, 10) };
    // Borders (2) and one space between columns.
    let gaps = middle.len() as u16 + 1;
    let left = width
        .saturating_sub(2 + gaps)
        .saturating_sub(middle.iter().sum::<u16>());
    let id = u16::try_from(need)
        .unwrap_or(u16::MAX)
        .min(left.saturating_sub(min_decision))
        .max(min_id);
    (id, left.saturating_sub(id).max(min_decision))
}

/// One candidate's cells, the id and decision cut to their columns' widths.
fn row_cells<'a>(
    c: &'a Candidate,
    app: &App,
    theme: Theme,
    wide: bool,
    (object_w, decision_w): (u16, u16),
) -> Vec<Cell<'a>> {
    let fit = &c.fit;
    let status = fit.status.label();
    let e = match (fit.e, fit.e_sigma) {
        (Some(e), Some(s)) => value_pm(e, s),
        (Some(e), None) => format!("{e:.3} (rng)"),
        _ => "-".into(),
    };
    let mut cells = vec![
        Cell::from(format!(
            "{}{}",
            c.fresh.mark().symbol(),
            crate::report::id_within(&clean(&fit.object), usize::from(object_w).saturating_sub(1))
        )),
        Cell::from(score_text(c)).style(if strong(fit) {
            theme.fg(Color::Yellow).patch(theme.strong())
        } else {
            theme.fg(Color::Reset)
        }),
        Cell::from(num(fit.p_hyperbolic, 3)),
        Cell::from(e),
    ];
    if wide {
        cells.push(Cell::from(match (fit.q_au, fit.q_sigma) {
            (Some(q), Some(s)) => format!("{q:.3}±{s:.3}"),
            (q, _) => num(q, 3),
        }));
        cells.push(Cell::from(num(fit.i_deg, 1)));
        cells.push(Cell::from(format!("{:.2}", fit.arc_days)));
        cells.push(Cell::from(fit.n_nights.to_string()));
    } else {
        cells.push(Cell::from(num(fit.q_au, 2)));
        cells.push(Cell::from(format!("{:.1}", fit.arc_days)));
    }
    // Used of all known: positions the observer excluded count in the total (it once
    // shrank with every exclusion).
    cells.push(Cell::from(format!(
        "{}/{}",
        fit.n_used,
        fit.n_obs.max(c.n_known)
    )));
    if wide {
        cells.push(Cell::from(num(fit.rms_arcsec, 2)));
        cells.push(Cell::from(match fit.method {
            FitMethod::Ranging => "ranging",
            FitMethod::LeastSquares => "lsq",
        }));
    }
    cells.push(Cell::from(status).style(match fit.status {
        FitStatus::Ok => theme.fg(Color::Green),
        FitStatus::Undetermined => theme.fg(Color::Yellow),
        FitStatus::PoorFit => theme.fg(Color::Magenta),
        FitStatus::Failed => theme.fg(Color::Red),
    }));
    cells.push(Cell::from(decision_text(
        c,
        &app.me,
        usize::from(decision_w),
    )));
    cells
}

pub fn draw(f: &mut Frame, area: Rect, app: &App, theme: Theme) {
    let wide = area.width >= WIDE_FROM;
    let header_cells: Vec<&str> = if wide {
        vec![
            "object",
            "odds",
            "P(unb)",
            "e ± σ",
            "q ± σ AU",
            "i°",
            "arc d",
            "nts",
            "obs",
            "rms\"",
            "method",
            "status",
            "decision",
        ]
    } else {
        vec![
            "object", "odds", "P(unb)", "e ± σ", "q AU", "arc", "obs", "status", "decision",
        ]
    };
    // The longest id shown (and its mark): distinct ids must not look alike when cut.
    let need = app
        .view
        .iter()
        .map(|&i| clean(&app.candidates[i].fit.object).chars().count() + 1)
        .max()
        .unwrap_or(0);
    let middle: &[u16] = if wide {
        &[7, 6, 16, 14, 6, 6, 4, 7, 6, 8, 9]
    } else {
        &[7, 6, 13, 5, 4, 6, 6]
    };
    let (object_w, decision_w) = id_and_decision_widths(area.width, middle, need, wide);
    let widths: Vec<Constraint> = std::iter::once(object_w)
        .chain(middle.iter().copied())
        .chain(std::iter::once(decision_w))
        .map(Constraint::Length)
        .collect();
    let inner_h = area.height.saturating_sub(3) as usize;
    let sel = app.selected_row().unwrap_or(0);
    let offset = sel
        .saturating_sub(inner_h.saturating_sub(1))
        .min(app.view.len().saturating_sub(inner_h.max(1)));
    let rows = app
        .view
        .iter()
        .skip(offset)
        .take(inner_h.max(1))
        .enumerate()
        .map(|(k, &i)| {
            let c = &app.candidates[i];
            let cells = row_cells(c, app, theme, wide, (object_w, decision_w));
            let row = Row::new(cells);
            if offset + k == sel {
                row.style(theme.selected())
            } else {
                row
            }
        });
    let title = format!(
        " candidates {} of {} · sort {}{}{} ",
        app.view.len(),
        app.candidates.len(),
        app.sort.label(),
        if app.reverse { " (reversed)" } else { "" },
        if app.filter.is_empty() {
            String::new()
        } else {
            format!(" · filter \"{}\"", clean(&app.filter))
        }
    );
    // Why the selected row ranks where it does, on the bottom border (cut to the width left).
    let why = app.selected_candidate().map_or_else(String::new, |c| {
        let room = usize::from(area.width.saturating_sub(4));
        format!(" {} ", crate::console::why::why_line(&c.fit, room))
    });
    let table = Table::new(rows, widths)
        .header(Row::new(header_cells).style(theme.strong()))
        .block(
            Block::default()
                .borders(Borders::ALL)
                .title(title)
                .title_bottom(why),
        );
    f.render_widget(table, area);
}

/// "e±σ" in at most 13 cells: four decimals while both are below 10, fewer as they grow, and the
/// σ written as a power of ten past 9999 (a 23-digit number would push the row over its border).
pub fn value_pm(v: f64, s: f64) -> String {
    let big = v.abs().max(s.abs());
    let d = if big < 10.0 {
        4
    } else if big < 100.0 {
        2
    } else if big < 1000.0 {
        1
    } else {
        0
    };
    let text = format!("{v:.d$}±{s:.d$}");
    if text.chars().count() <= 13 {
        text
    } else {
        format!("{v:.1e}±{s:.0e}")
    }
}

#[cfg(test)]
mod tests {
    use super::value_pm;

    #[test]
    fn the_model_overrules_the_positions_only_where_they_exclude_every_bound_orbit() {
        use crate::fitting::input::Tracklet;
        use crate::fitting::result::FitResult;
        let mut f = FitResult::empty(&Tracklet::new("x".into(), "x".into(), Vec::new()));
        f.status = crate::fitting::kinds::FitStatus::Ok;
        f.p_hyperbolic = Some(0.004);
        f.log10_odds = Some(-2.4);
        // A range of e that reaches below 1.01 allows bound orbits (or barely unbound ones).
        for (interval, marked) in [
            (None, false),
            (Some([2.26, 3.86]), true),
            (Some([1.005, 3.86]), false),
            (Some([0.64, 14.0]), false),
        ] {
            f.e_data_interval = interval;
            assert_eq!(
                f.model_overrules_unbound_positions(),
                marked,
                "{interval:?}"
            );
        }
        // A poor fit's range of e means little (its why line says to check the linkage).
        f.e_data_interval = Some([2.26, 3.86]);
        f.status = crate::fitting::kinds::FitStatus::PoorFit;
        assert!(!f.model_overrules_unbound_positions());
        // Where the posterior too says unbound there is nothing to overrule.
        f.status = crate::fitting::kinds::FitStatus::Ok;
        f.p_hyperbolic = Some(0.7);
        assert!(!f.model_overrules_unbound_positions());
    }

    #[test]
    fn another_observers_name_is_cut_before_the_verdict_is() {
        use crate::console::state::Candidate;
        use crate::feed::journal::{Entry, Verdict};
        use crate::fitting::input::Tracklet;
        use crate::fitting::result::FitResult;
        let fit = FitResult::empty(&Tracklet::new("x".into(), "x".into(), Vec::new()));
        let mut d = Entry::decision("x", Verdict::SetAside, "2027-01-01T00:00:00Z".into());
        d.observer = Some("bartholomew".into());
        let c = Candidate {
            fresh: crate::console::state::fresh::Fresh::new(&fit, std::time::SystemTime::now()),
            fit,
            version: 1,
            decision: Some(d),
            saving: 0,
            overrides: Default::default(),
            n_known: 0,
        };
        let verdict = Verdict::SetAside.label();
        assert_eq!(
            super::decision_text(&c, "ann", 40),
            format!("{verdict} (bartholomew)")
        );
        // At 80 columns the column is about 12 wide: the verdict whole, then what of the name fits.
        let cut = super::decision_text(&c, "ann", verdict.chars().count() + 7);
        assert_eq!(cut, format!("{verdict} (bar…)"));
        assert_eq!(super::decision_text(&c, "ann", 3), format!("{verdict}(…)"));
        assert_eq!(super::decision_text(&c, "bartholomew", 3), verdict);
    }

    #[test]
    fn value_and_sigma_fit_their_column_at_every_size() {
        for (v, s) in [
            (0.1234, 0.0012),
            (6.8452, 10.267),
            (123.4, 56.7),
            (2.1, 3.0e22),
            (-1.0e9, 1.0e8),
        ] {
            let t = value_pm(v, s);
            assert!(t.chars().count() <= 13, "{v} {s}: {t}");
            assert!(t.contains('±'), "{t}");
        }
        assert_eq!(value_pm(0.1234, 0.0012), "0.1234±0.0012");
        assert_eq!(value_pm(6.8452, 10.267), "6.85±10.27");
    }
}
