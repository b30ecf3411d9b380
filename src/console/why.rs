//! Why a candidate ranks where it does, in one line for the selected row: its tier (usable fits before
//! poor ones before failures), P(unbound) and where it came from, whether the data or the population
//! model decided it, and what would change it.

use crate::fitting::fit::FitResult;

fn tier(r: &FitResult) -> &'static str {
    match r.rank_key().0 {
        2 => "usable fit",
        1 => "poor fit, below usable ones",
        _ => "no orbit, last",
    }
}

fn evidence(r: &FitResult) -> Option<String> {
    if r.model_overrules_unbound_positions() {
        return Some("positions allow only unbound, the model says bound".into());
    }
    let k = r.log10_bayes_factor?;
    Some(if r.prior_dominated {
        "prior decides, not the data".to_string()
    } else if k > 0.0 {
        format!("data say unbound (log K {k:+.1})")
    } else {
        format!("data say bound (log K {k:+.1})")
    })
}

/// What would most change the answer, as the observer can act on it.
fn what_would_change(r: &FitResult) -> String {
    if !r.poor_fit.is_empty() {
        return "check the linkage".into();
    }
    let p = r.p_hyperbolic.unwrap_or(0.0);
    if r.alternatives.iter().any(|a| a.unbound != (p >= 0.5)) {
        return "another solution flips it".into();
    }
    // However small P is, the data have not settled it: the model has.
    if r.model_overrules_unbound_positions() {
        return "another night tests the model".into();
    }
    if r.n_nights <= 1 && (0.01..=0.99).contains(&p) {
        return "a 2nd night decides it".into();
    }
    if let Some(n) = &r.next_night
        && (0.01..=0.99).contains(&p)
    {
        return format!(
            "next night at {}: σe {:.3}→{:.3}",
            crate::feed::sanitize::clean(&n.site),
            n.e_sigma_now,
            n.e_sigma
        );
    }
    if r.status == crate::fitting::kinds::FitStatus::Undetermined {
        return "another night measures e".into();
    }
    if (0.01..=0.99).contains(&p) {
        return "more positions narrow it".into();
    }
    "settled".into()
}

/// The line shown for the selected candidate, in at most `width` characters: where room is short the
/// probability's source goes first, then the evidence; what would change it stays.
pub fn why_line(r: &FitResult, width: usize) -> String {
    let p = match (r.p_hyperbolic, r.log10_odds) {
        (Some(p), Some(o)) => Some((format!("P {p:.3}, odds {o:+.1}"), r.probability_from)),
        _ => None,
    };
    let change =
        (r.status != crate::fitting::kinds::FitStatus::Failed).then(|| what_would_change(r));
    let build = |source: bool, evid: bool| {
        let mut parts = vec![tier(r).to_string()];
        match &p {
            Some((text, from)) if source => parts.push(format!("{text} ({from})")),
            Some((text, _)) => parts.push(text.clone()),
            None => parts.push("no probability".into()),
        }
        if evid && let Some(e) = evidence(r) {
            parts.push(e);
        }
        parts.extend(change.clone());
        format!("why: {}", parts.join(" · "))
    };
    let forms = [build(true, true), build(false, true), build(false, false)];
    if let Some(f) = forms.iter().find(|f| f.chars().count() <= width) {
        return f.clone();
    }
    let mut cut: String = forms[2].chars().take(width.saturating_sub(1)).collect();
    cut.push('…');
    cut
}

#[cfg(test)]
mod tests {
    use super::*;

    fn record(p: f64, nights: usize, prior: bool) -> FitResult {
        let mut r = crate::testutil::record("qk5t8yn", p, nights);
        r.log10_odds = Some((p / (1.0 - p)).log10());
        r.log10_bayes_factor = Some(if prior { 0.1 } else { 2.0 });
        r.prior_dominated = prior;
        r
    }

    #[test]
    fn an_open_one_night_candidate_says_a_second_night_decides_it() {
        let w = why_line(&record(0.4, 1, true), 200);
        assert!(w.contains("usable fit"), "{w}");
        assert!(w.contains("prior decides"), "{w}");
        assert!(w.contains("2nd night"), "{w}");
    }

    #[test]
    fn a_bound_answer_whose_positions_allow_only_unbound_orbits_is_not_called_settled() {
        let mut r = record(0.004, 3, false);
        r.e_data_interval = Some([2.26, 3.86]);
        let w = why_line(&r, 200);
        assert!(w.contains("positions allow only unbound"), "{w}");
        assert!(w.contains("another night tests the model"), "{w}");
        assert!(!w.contains("settled"), "{w}");
    }

    #[test]
    fn a_settled_candidate_says_more_data_will_not_change_it() {
        let w = why_line(&record(0.999, 3, false), 200);
        assert!(w.contains("data say unbound"), "{w}");
        assert!(w.contains("settled"), "{w}");
    }

    #[test]
    fn an_undetermined_fit_ranks_as_usable_and_says_another_night_measures_e() {
        let mut r = record(1e-7, 2, false);
        r.status = crate::fitting::kinds::FitStatus::Undetermined;
        let w = why_line(&r, 200);
        assert!(w.contains("usable fit"), "{w}");
        assert!(w.contains("another night measures e"), "{w}");
        assert!(!w.contains("settled"), "{w}");
    }

    #[test]
    fn a_poor_fit_says_it_ranks_below_and_why() {
        let mut r = record(0.9, 3, false);
        r.status = crate::fitting::kinds::FitStatus::PoorFit;
        r.poor_fit = vec!["night 2 disagrees".into()];
        let w = why_line(&r, 200);
        assert!(w.contains("below usable ones"), "{w}");
        assert!(w.contains("check the linkage"), "{w}");
    }

    #[test]
    fn a_narrow_line_keeps_what_would_change_it() {
        let r = record(0.4, 1, true);
        let w = why_line(&r, 76);
        assert!(w.chars().count() <= 76, "{w}");
        assert!(w.contains("2nd night decides"), "{w}");
        assert!(why_line(&r, 200).contains("prior decides"));
    }
}
