//! Residuals of the selected candidate: one strip per coordinate (bar height = |O − C|, a sign row below
//! it, `x` for rejected points, `│` between nights, `^` under the selected observation) and a sky-plane
//! view of the track with the residual vectors exaggerated, so a bad night, a trend or one wild point
//! shows at a glance.

use super::Theme;
use crate::console::state::App;
use crate::fitting::fit::ResidualOut;
use ratatui::Frame;
use ratatui::layout::{Constraint, Direction, Layout, Rect};
use ratatui::style::Color;
use ratatui::text::Line;
use ratatui::widgets::canvas::{Canvas, Line as CLine, Points};
use ratatui::widgets::{Block, Borders, Paragraph};

const BARS: [char; 9] = [' ', '▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

/// The strip lines for one coordinate: (bars, signs), with night separators.
pub fn strip(
    res: &[ResidualOut],
    dec: bool,
    width: usize,
    cursor: usize,
) -> (String, String, String) {
    let vals: Vec<f64> = res
        .iter()
        .map(|r| if dec { r.dec_arcsec } else { r.ra_arcsec })
        .collect();
    let scale = vals
        .iter()
        .filter(|v| v.is_finite())
        .fold(0.5f64, |m, v| m.max(v.abs()));
    let (mut bars, mut signs, mut marks) = (String::new(), String::new(), String::new());
    for (k, r) in res.iter().enumerate() {
        if k > 0 && res[k - 1].night != r.night {
            bars.push('│');
            signs.push('│');
            marks.push(' ');
        }
        let v = vals[k];
        let level = if v.is_finite() {
            ((v.abs() / scale) * 8.0).round().clamp(1.0, 8.0) as usize
        } else {
            0
        };
        bars.push(BARS[level]);
        signs.push(if !r.used {
            'x'
        } else if v >= 0.0 {
            '+'
        } else {
            '-'
        });
        marks.push(if k == cursor { '^' } else { ' ' });
        if bars.chars().count() >= width {
            break;
        }
    }
    (bars, signs, marks)
}

/// An arcsecond value in at most seven characters: two decimals below 100″, whole above.
fn compact(x: f64) -> String {
    match x {
        x if x < 100.0 => format!("{x:.2}"),
        x if x < 9_999_999.0 => format!("{x:.0}"),
        _ => ">1e7".into(),
    }
}

/// An angle given in arcminutes, in the unit that reads best.
fn arcmin(x: f64) -> String {
    if x >= 60.0 {
        format!("{:.1}°", x / 60.0)
    } else if x >= 1.0 {
        format!("{x:.1}′")
    } else {
        format!("{:.0}″", x * 60.0)
    }
}

pub fn draw(f: &mut Frame, area: Rect, app: &App, theme: Theme) {
    let rows = app.observation_rows();
    // Positions the observer excluded have no O−C and no place in the strips: the title counts them
    // (they once vanished without a word; the cursor still reaches them).
    let excluded = rows.iter().filter(|r| r.excluded).count();
    let title = match excluded {
        0 => " residuals (O−C) ".to_string(),
        n => format!(" residuals (O−C) · {n} excluded by you "),
    };
    let block = Block::default()
        .borders(Borders::ALL)
        .title(title)
        .border_style(theme.fg(Color::Cyan));
    let inner = block.inner(area);
    f.render_widget(block, area);
    let Some(c) = app.selected_candidate() else {
        return;
    };
    let res = &c.fit.residuals;
    let parts = Layout::default()
        .direction(Direction::Vertical)
        .constraints([Constraint::Length(7), Constraint::Min(3)])
        .split(inner);
    let w = inner.width.saturating_sub(9) as usize;
    f.render_widget(Paragraph::new(strip_lines(app, &rows, res, w)), parts[0]);
    sky_track(f, parts[1], res);
}

/// The O−C strips of RA and Dec with their largest values, the marks under them and the selected
/// observation's line, in `w` columns of strip.
fn strip_lines(
    app: &App,
    rows: &[crate::console::state::ObsRow],
    res: &[ResidualOut],
    w: usize,
) -> Vec<Line<'static>> {
    let row = rows.get(app.obs_cursor);
    // The strips show fitted observations only: the mark goes under the selected one if it is fitted.
    let at = row.and_then(|r| r.residual).unwrap_or(usize::MAX);
    let (ra_b, ra_s, marks) = strip(res, false, w, at);
    let (de_b, de_s, _) = strip(res, true, w, at);
    let max = |dec: bool| {
        res.iter()
            .map(|r| if dec { r.dec_arcsec } else { r.ra_arcsec })
            .filter(|v| v.is_finite())
            .fold(0.0f64, |m, v| m.max(v.abs()))
    };
    let sel = row.map(
        |o| match (o.residual.and_then(|k| res.get(k)), o.excluded) {
            (Some(r), false) => format!(
                "obs {}/{} {} O−C {:+.2}\" {:+.2}\" χ² {:.1}{}",
                app.obs_cursor + 1,
                rows.len(),
                o.label,
                r.ra_arcsec,
                r.dec_arcsec,
                r.chi2,
                if r.used { "" } else { " REJECTED" }
            ),
            _ => format!(
                "obs {}/{} {} EXCLUDED by you",
                app.obs_cursor + 1,
                rows.len(),
                o.label
            ),
        },
    );
    // The largest |O−C| under each label, in the label's own nine columns (after the strip, a full
    // strip pushed it off the pane: "max 0." at 80 columns).
    let most = |dec: bool| format!("{:>8} ", format!("{}\"", compact(max(dec))));
    vec![
        Line::from(format!("RA cosδ  {ra_b}")),
        Line::from(format!("{}{ra_s}", most(false))),
        Line::from(format!("Dec      {de_b}")),
        Line::from(format!("{}{de_s}", most(true))),
        Line::from(format!("         {marks}")),
        Line::from(sel.unwrap_or_default()),
    ]
}

/// The sky-plane track: offsets from the first position in arcmin, east to the left as on the sky,
/// each position's O−C magnified.
fn sky_track(f: &mut Frame, area: Rect, res: &[ResidualOut]) {
    if res.is_empty() || area.height < 3 {
        return;
    }
    let (ra0, dec0) = (res[0].ra_deg, res[0].dec_deg);
    let cosd = dec0.to_radians().cos();
    let pts: Vec<(f64, f64)> = res
        .iter()
        .map(|r| {
            (
                -((r.ra_deg - ra0 + 540.0) % 360.0 - 180.0) * cosd * 60.0,
                (r.dec_deg - dec0) * 60.0,
            )
        })
        .collect();
    let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for (x, y) in &pts {
        x0 = x0.min(*x);
        x1 = x1.max(*x);
        y0 = y0.min(*y);
        y1 = y1.max(*y);
    }
    let span = (x1 - x0).max(y1 - y0).max(1e-3) * 1.2;
    let (cx, cy) = ((x0 + x1) / 2.0, (y0 + y1) / 2.0);
    let rmax = res
        .iter()
        .map(|r| r.ra_arcsec.hypot(r.dec_arcsec))
        .filter(|v| v.is_finite())
        .fold(1e-6, f64::max);
    let exaggerate = 0.15 * span / rmax;
    // The drawing spans `span` arcmin; a residual of 1″ (1/60′) is drawn `exaggerate` arcmin long.
    let times = exaggerate * 60.0;
    // Two significant figures below ten (a false linkage's O−C is drawn shrunk: "×0" said nothing).
    let times = match times {
        t if t >= 10.0 => format!("{t:.0}"),
        t if t >= 1.0 => format!("{t:.1}"),
        t if t >= 0.01 => format!("{t:.2}"),
        t => format!("{t:.1e}"),
    };
    let scale = format!("{} across · O−C ×{times}", arcmin(span));
    let used: Vec<(f64, f64)> = pts
        .iter()
        .zip(res)
        .filter(|(_, r)| r.used)
        .map(|(p, _)| *p)
        .collect();
    let rejected: Vec<(f64, f64)> = pts
        .iter()
        .zip(res)
        .filter(|(_, r)| !r.used)
        .map(|(p, _)| *p)
        .collect();
    let canvas = Canvas::default()
        .x_bounds([cx - span / 2.0, cx + span / 2.0])
        .y_bounds([cy - span / 2.0, cy + span / 2.0])
        .paint(move |ctx| {
            for ((x, y), r) in pts.iter().zip(res) {
                ctx.draw(&CLine {
                    x1: *x,
                    y1: *y,
                    x2: x - r.ra_arcsec * exaggerate,
                    y2: y + r.dec_arcsec * exaggerate,
                    color: Color::Cyan,
                });
            }
            ctx.draw(&Points {
                coords: &used,
                color: Color::White,
            });
            for (x, y) in &rejected {
                ctx.print(*x, *y, "x");
            }
        });
    // Compass and scale on a line of their own below the drawing (printed inside it, they hid the
    // points that fell under them): north up and east left, as on the sky; residuals magnified.
    let [plot, caption] = Layout::vertical([Constraint::Min(2), Constraint::Length(1)]).areas(area);
    f.render_widget(canvas, plot);
    f.render_widget(Paragraph::new(format!("N↑ E← · {scale}")), caption);
}
