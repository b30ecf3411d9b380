//! The selected candidate's orbit: heliocentric and barycentric elements with 1σ, 1/a, v∞ and the
//! incoming direction, ranging intervals, the prior, and why the fit is poor when it is.

use super::{Theme, num};
use crate::console::state::App;
use crate::feed::sanitize::clean;
use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::style::Color;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Paragraph, Wrap};

fn pm(v: Option<f64>, s: Option<f64>, prec: usize) -> String {
    match (v, s) {
        (Some(v), Some(s)) => format!("{v:.prec$} ± {s:.prec$}"),
        (v, _) => num(v, prec),
    }
}

pub fn lines(app: &App) -> Vec<Line<'static>> {
    match app.selected_candidate() {
        Some(c) => lines_for(app, c),
        None => nothing_selected(app),
    }
}

fn nothing_selected(app: &App) -> Vec<Line<'static>> {
    vec![Line::from(if app.candidates.is_empty() {
        "no candidate yet: waiting for files".to_string()
    } else {
        format!(
            "no candidate matches the filter '{}' ({} hidden); clear it to see them",
            clean(&app.filter),
            app.candidates.len()
        )
    })]
}

/// The orbit pane's lines for one candidate (the compare panel shows two side by side). What decides
/// comes first (at 80×24 the pane shows nine lines): P and the odds, whether the model or the
/// positions set them, why a fit is poor, e q i, the other solutions, the decision, the range of e
/// (and whether the model set it); then the barycentric orbit, the fit's rms, the caveats, v∞ and
/// the angles. Ω, ω and Tp once stayed on screen while the evidence and a poor fit's reasons fell off.
pub fn lines_for(app: &App, c: &crate::console::state::Candidate) -> Vec<Line<'static>> {
    let f = &c.fit;
    let mut out = vec![Line::from(vec![
        Span::raw(format!("{}  ", clean(&f.object))),
        Span::raw(format!(
            "{} · {} · {}",
            f.method, f.probability_from, f.dynamics
        )),
    ])];
    if let Some(e) = &f.error {
        out.push(Line::from(format!("failed: {}", clean(e))));
        return out;
    }
    out.extend(probability_lines(f));
    out.extend(f.elements.as_ref().map(|el| {
        let s = el.sigma;
        Line::from(format!(
            "helio  q {}  e {}  i {}°",
            pm(Some(el.q_au), s.map(|s| s.q), 4),
            pm(Some(el.e), s.map(|s| s.e), 5),
            pm(Some(el.i_deg), s.map(|s| s.i), 2)
        ))
    }));
    for a in f.alternatives.iter().take(MAX_ALTERNATIVE_LINES) {
        out.push(Line::from(alternative_line(a)));
    }
    out.extend(decision_line(app, c));
    out.extend(e_range_lines(f));
    out.extend(orbit_lines(f));
    out.extend(super::nextnight::line(f));
    // Last, as the least decisive: when it came and how its answer moved.
    out.push(Line::from(c.fresh.age_line((app.now)())));
    if c.fresh.history.len() > 1 {
        out.push(Line::from(c.fresh.history_line(76)));
    }
    out
}

/// P with its error, odds and score; the evidence (and whether the model set P); why a fit is poor.
fn probability_lines(f: &crate::fitting::result::FitResult) -> Vec<Line<'static>> {
    let mut out = vec![Line::from(format!(
        "P(unbound) {}±{}  log₁₀ odds {}  z {}{}",
        num(f.p_hyperbolic, 4),
        num(f.p_hyperbolic_error, 4),
        crate::report::odds_text(f),
        num(f.z_hyperbolic, 2),
        f.z_linear
            .map_or(String::new(), |z| format!(" (linear {z:+.2})")),
    ))];
    if let Some(p) = &f.prior {
        out.push(Line::from(format!(
            "evidence of the positions log₁₀K {}{} · under {}",
            num(f.log10_bayes_factor, 1),
            if f.prior_dominated {
                " — SET BY THE MODEL, NOT THE DATA"
            } else {
                ""
            },
            clean(p),
        )));
    }
    if !f.poor_fit.is_empty() {
        out.push(Line::from(Span::raw(format!(
            "POOR FIT: {}",
            clean(&f.poor_fit.join("; "))
        ))));
    }
    out
}

/// The standing decision: verdict, time, who (when another observer), note, and whether it was made
/// on fewer observations than are known now.
fn decision_line(app: &App, c: &crate::console::state::Candidate) -> Option<Line<'static>> {
    let d = c.decision.as_ref()?;
    let fewer = if d.n_obs < c.fit.n_obs {
        format!(" — decided on {} of {} observations", d.n_obs, c.fit.n_obs)
    } else {
        String::new()
    };
    let by = if d.observer() == app.me {
        String::new()
    } else {
        format!(" by {}", clean(d.observer()))
    };
    Some(Line::from(format!(
        "decision: {} at {}{by}{}{}",
        d.verdict_label(),
        d.time_utc,
        d.note
            .as_ref()
            .map(|n| format!(" — \"{}\"", clean(n)))
            .unwrap_or_default(),
        fewer
    )))
}

/// The range of e the positions alone allow (first: it says when e ± σ are the model's) and the
/// posterior's central intervals.
fn e_range_lines(f: &crate::fitting::result::FitResult) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    if let Some(interval) = f.e_data_interval {
        out.push(Line::from(data_interval_line(
            interval,
            f.status == crate::fitting::kinds::FitStatus::Undetermined,
        )));
    }
    out.extend(posterior_interval_line(f).map(Line::from));
    out
}

/// The rest of the orbit: barycentric elements, the fit's rms and χ², the caveats, the incoming
/// asymptote, ranging intervals and the orientation angles.
fn orbit_lines(f: &crate::fitting::result::FitResult) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    if let Some(b) = &f.barycentric {
        out.push(Line::from(format!(
            "bary   e {}  q {} AU  1/a {} /AU",
            pm(f.e_bary, f.e_bary_sigma, 5),
            num(Some(b.q_au), 4),
            pm(Some(b.inv_a_per_au), b.sigma.map(|s| s.inv_a), 5)
        )));
    }
    out.push(Line::from(format!(
        "fit rms {}\"  χ²/dof {}",
        num(f.rms_arcsec, 2),
        num(f.chi2_per_dof, 2)
    )));
    if !f.distrust_linear.is_empty() {
        out.push(Line::from(format!(
            "caveats: {}",
            clean(&f.distrust_linear.join("; "))
        )));
    }
    if let Some(inc) = &f.incoming {
        out.push(Line::from(format!(
            "v∞ {} km/s from RA {:.1}° Dec {:+.1}° (l {:.1}° b {:+.1}°)  UVW {:+.1} {:+.1} {:+.1}",
            pm(Some(inc.v_inf_km_s), inc.v_inf_sigma_km_s, 2),
            inc.radiant_ra_deg,
            inc.radiant_dec_deg,
            inc.radiant_l_deg,
            inc.radiant_b_deg,
            inc.uvw_km_s[0],
            inc.uvw_km_s[1],
            inc.uvw_km_s[2]
        )));
    }
    if let Some(r) = &f.ranging {
        out.push(Line::from(format!(
            "ranging 95%: e {:.2}–{:.2}  q {:.2}–{:.2} AU  i {:.0}–{:.0}°  ({} trials, v cap {:.0} km/s)",
            r.e_interval[0], r.e_interval[2], r.q_interval[0], r.q_interval[2], r.i_interval[0], r.i_interval[2], r.trials, r.v_cap_km_s
        )));
    }
    if let Some(el) = &f.elements {
        let s = el.sigma;
        out.push(Line::from(format!(
            "       Ω {}°  ω {}°  Tp {}  1/a {}",
            pm(Some(el.node_deg), s.map(|s| s.node), 2),
            pm(Some(el.peri_deg), s.map(|s| s.peri), 2),
            pm(Some(el.tp_jd_tdb), s.map(|s| s.tp), 2),
            pm(Some(el.inv_a_per_au), s.map(|s| s.inv_a), 5)
        )));
    }
    out
}

/// Other solutions listed one per line, best first (the JSON has them all).
const MAX_ALTERNATIVE_LINES: usize = 3;

/// Where e ± σ came from orbits (samples of the posterior or draws about the fit), their central
/// intervals of e, which show a lopsided e that a symmetric σ hides (a linear answer's are e ± σ; a
/// one-night answer's ranging line shows its 95 % already).
fn posterior_interval_line(f: &crate::fitting::result::FitResult) -> Option<String> {
    let (Some([a, b]), Some([c, d])) = (f.e_interval_68, f.e_interval_95) else {
        return None;
    };
    (!f.samples.is_empty() && f.ranging.is_none()).then(|| {
        // Enough digits to tell the ends apart, as many as e ± σ shows at most.
        let p = (2.0 - (d - c).max(1e-12).log10()).clamp(2.0, 5.0) as usize;
        format!("e 68 %: {a:.p$}–{b:.p$}  95 %: {c:.p$}–{d:.p$}")
    })
}

/// The range of e the positions alone allow, beside the posterior's e ± σ above it.
fn data_interval_line([lo, hi]: [f64; 2], undetermined: bool) -> String {
    // The warning first: on a narrow pane the line wraps, and its end may fall off.
    format!(
        "{}positions alone: e {lo:.3}–{hi:.3} (Δχ² ≤ {})",
        if undetermined {
            "e ± σ ARE THE MODEL'S, NOT MEASURED — "
        } else {
            ""
        },
        crate::fitting::datainterval::DATA_DCHI2,
    )
}

/// One other solution: its orbit, how much worse (or better) it fits, and its share of P.
fn alternative_line(a: &crate::fitting::result::Alternative) -> String {
    format!(
        "or: e {:.4}  q {:.4} AU  i {:.2}°  Δχ² {:+.1}{}  {}",
        a.e,
        a.q_au,
        a.i_deg,
        a.delta_chi2,
        a.probability
            .map_or(String::new(), |w| format!("  share {:.0} %", 100.0 * w)),
        if a.unbound { "unbound" } else { "bound" }
    )
}

pub fn draw(f: &mut Frame, area: Rect, app: &App, theme: Theme) {
    let p = Paragraph::new(lines(app)).wrap(Wrap { trim: true }).block(
        Block::default()
            .borders(Borders::ALL)
            .title(" orbit ")
            .border_style(theme.fg(Color::Blue)),
    );
    f.render_widget(p, area);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fitting::result::Alternative;

    #[test]
    fn the_positions_alone_line_names_its_bound_on_chi2() {
        assert_eq!(
            data_interval_line([0.6449, 14.0367], false),
            "positions alone: e 0.645–14.037 (Δχ² ≤ 3.84)"
        );
    }

    #[test]
    fn an_undetermined_fit_says_its_e_is_the_models() {
        assert_eq!(
            data_interval_line([0.6449, 14.0367], true),
            "e ± σ ARE THE MODEL'S, NOT MEASURED — positions alone: e 0.645–14.037 (Δχ² ≤ 3.84)"
        );
    }

    #[test]
    fn another_solution_shows_its_orbit_fit_share_and_class() {
        let a = Alternative {
            delta_chi2: -1.12,
            e: 2.3457,
            q_au: 1.0889,
            i_deg: 62.596,
            unbound: true,
            probability: Some(0.469),
        };
        assert_eq!(
            alternative_line(&a),
            "or: e 2.3457  q 1.0889 AU  i 62.60°  Δχ² -1.1  share 47 %  unbound"
        );
        let b = Alternative {
            probability: None,
            unbound: false,
            delta_chi2: 4.0,
            ..a
        };
        assert_eq!(
            alternative_line(&b),
            "or: e 2.3457  q 1.0889 AU  i 62.60°  Δχ² +4.0  bound"
        );
    }
}
