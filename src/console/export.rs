//! The candidate list and its decisions as CSV and JSON, in the list's order, for a report or a
//! hand-over. Text cells are cleaned, and a cell a spreadsheet would read as a formula is quoted as text.

use super::state::App;
use crate::feed::sanitize::clean;
use serde::Serialize;

/// One exported row.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    pub rank: usize,
    pub object: String,
    pub log10_odds: Option<f64>,
    pub p_hyperbolic: Option<f64>,
    pub prior_dominated: bool,
    pub e: Option<f64>,
    pub e_sigma: Option<f64>,
    pub q_au: Option<f64>,
    pub i_deg: Option<f64>,
    pub arc_days: f64,
    pub n_nights: usize,
    pub n_used: usize,
    pub n_obs: usize,
    pub rms_arcsec: Option<f64>,
    pub method: String,
    pub status: String,
    pub decision: Option<String>,
    pub decided_by: Option<String>,
    pub decided_utc: Option<String>,
    pub note: Option<String>,
}

/// The rows in the list's current order (filter and sort as on screen).
pub fn rows(app: &App) -> Vec<Row> {
    rows_in(app, &app.view)
}

/// The rows of the candidates at `order` (indices into `app.candidates`), in that order, with the
/// decisions that stand now.
pub fn rows_in(app: &App, order: &[usize]) -> Vec<Row> {
    order
        .iter()
        .filter_map(|&i| app.candidates.get(i))
        .enumerate()
        .map(|(k, c)| {
            let f = &c.fit;
            let d = c.decision.as_ref();
            Row {
                rank: k + 1,
                object: clean(&f.object),
                log10_odds: f.log10_odds,
                p_hyperbolic: f.p_hyperbolic,
                prior_dominated: f.prior_dominated,
                e: f.e,
                e_sigma: f.e_sigma,
                q_au: f.q_au,
                i_deg: f.i_deg,
                arc_days: f.arc_days,
                n_nights: f.n_nights,
                n_used: f.n_used,
                n_obs: f.n_obs,
                rms_arcsec: f.rms_arcsec,
                method: f.method.to_string(),
                status: f.status.to_string(),
                decision: d.map(|d| d.verdict_label().to_string()),
                decided_by: d.map(|d| clean(d.observer())),
                decided_utc: d.map(|d| clean(&d.time_utc)),
                note: d.and_then(|d| d.note.as_deref()).map(clean),
            }
        })
        .collect()
}

/// A text cell: quoted when it holds a separator, quote or line break; a leading `=`, `+`, `-` or `@`
/// (a formula to a spreadsheet) is kept as text by a leading apostrophe.
fn cell(s: &str) -> String {
    let s = if s.starts_with(['=', '+', '-', '@']) {
        format!("'{s}")
    } else {
        s.to_string()
    };
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s
    }
}

fn num(x: Option<f64>) -> String {
    x.filter(|v| v.is_finite())
        .map_or(String::new(), |v| v.to_string())
}

pub fn csv(rows: &[Row]) -> String {
    let mut out = String::from(
        "rank,object,log10_odds,p_hyperbolic,prior_dominated,e,e_sigma,q_au,i_deg,arc_days,n_nights,n_used,n_obs,rms_arcsec,method,status,decision,decided_by,decided_utc,note\n",
    );
    for r in rows {
        let fields = [
            r.rank.to_string(),
            cell(&r.object),
            num(r.log10_odds),
            num(r.p_hyperbolic),
            r.prior_dominated.to_string(),
            num(r.e),
            num(r.e_sigma),
            num(r.q_au),
            num(r.i_deg),
            r.arc_days.to_string(),
            r.n_nights.to_string(),
            r.n_used.to_string(),
            r.n_obs.to_string(),
            num(r.rms_arcsec),
            cell(&r.method),
            cell(&r.status),
            cell(r.decision.as_deref().unwrap_or("")),
            cell(r.decided_by.as_deref().unwrap_or("")),
            cell(r.decided_utc.as_deref().unwrap_or("")),
            cell(r.note.as_deref().unwrap_or("")),
        ];
        out.push_str(&fields.join(","));
        out.push('\n');
    }
    out
}

pub fn json(rows: &[Row]) -> String {
    serde_json::to_string_pretty(rows).unwrap_or_else(|_| "[]".into())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_that_would_break_a_csv_or_run_as_a_formula_are_quoted() {
        assert_eq!(cell("plain"), "plain");
        assert_eq!(cell("a,b"), "\"a,b\"");
        assert_eq!(cell("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(cell("=HYPERLINK(1)"), "'=HYPERLINK(1)");
        assert_eq!(cell("-1+2,3"), "\"'-1+2,3\"");
    }
}
