//! The "one more night" line of the orbit pane: what another night from the last site is expected to
//! do to σ(e) and P(unbound), or why it was not estimated.

use crate::feed::sanitize::clean;
use crate::fitting::fit::FitResult;
use crate::fitting::nextnight::OPEN_P;
use ratatui::text::Line;

/// The line for a fit: the estimate, or why an open candidate of two nights or more has none
/// (nothing for decided candidates, one-night arcs and failures: the rest of the pane says enough).
pub fn line(f: &FitResult) -> Option<Line<'static>> {
    if let Some(n) = &f.next_night {
        return Some(Line::from(format!(
            "one more night ({} {}, alt {:.0}°): σ(e) {:.3} → {:.3}, P → {:.3} — {}",
            clean(&n.site),
            n.time_utc.get(..16).unwrap_or(&n.time_utc),
            n.alt_deg,
            n.e_sigma_now,
            n.e_sigma,
            n.p_hyperbolic,
            n.verdict.text()
        )));
    }
    let open = f
        .p_hyperbolic
        .is_some_and(|p| (OPEN_P.0..=OPEN_P.1).contains(&p));
    (open && f.n_nights >= 2 && f.status != "failed").then(|| {
        Line::from("one more night: no dark, high enough time from the last site in the next day")
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fitting::input::Tracklet;

    #[test]
    fn an_open_two_night_candidate_without_a_night_says_why_and_a_decided_one_is_silent() {
        let mut f = FitResult::empty(&Tracklet::new("X".into(), "s".into(), Vec::new()));
        f.status = crate::fitting::kinds::FitStatus::Ok;
        f.n_nights = 2;
        f.p_hyperbolic = Some(0.4);
        let text = line(&f).map(|l| l.to_string()).unwrap_or_default();
        assert!(text.contains("no dark"), "{text}");
        f.p_hyperbolic = Some(0.999);
        assert!(line(&f).is_none());
    }
}
