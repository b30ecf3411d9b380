//! Plain-text renderings of fit results for people (the console draws its own panes).

use crate::feed::sanitize::clean;
use crate::fitting::fit::FitResult;

fn opt(x: Option<f64>, prec: usize) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{v:.prec$}"),
        _ => "-".into(),
    }
}

/// log₁₀ of the posterior odds unbound : bound as shown in tables: signed, one decimal, written as a
/// bound past ±999, with ≥ or ≤ where it is the bound the positions resolve, and as ±∞ when one
/// class has no weight at all and nothing sizes a bound.
pub fn odds_text(r: &FitResult) -> String {
    match r.log10_odds {
        Some(z) if z > 999.0 => ">+999".into(),
        Some(z) if z < -999.0 => "<-999".into(),
        // A bound the positions' spread gives (no trial orbit of the other class had weight).
        Some(z) if r.z_is_bound && z >= 0.0 => format!("≥{z:.1}"),
        Some(z) if r.z_is_bound => format!("≤{z:.1}"),
        Some(z) => format!("{z:+.1}"),
        None if r.z_is_bound => match r.p_hyperbolic {
            Some(p) if p >= 0.5 => "+∞".into(),
            Some(_) => "-∞".into(),
            None => "-".into(),
        },
        None => "-".into(),
    }
}

/// An object id cut to `width` characters, where it must be, in the middle: ids that differ only at
/// their end (`hyp_strong_10n`, `hyp_strong_1n`) stay apart (cut at the end, both read
/// `hyp_strong_1`).
pub fn id_within(id: &str, width: usize) -> String {
    let chars: Vec<char> = id.chars().collect();
    if chars.len() <= width {
        return id.to_string();
    }
    if width < 3 {
        return chars.iter().take(width).collect();
    }
    let tail = (width - 1) / 2;
    let head = width - 1 - tail;
    let mut out: String = chars[..head].iter().collect();
    out.push('…');
    out.extend(&chars[chars.len() - tail..]);
    out
}

/// Width of the text table's id column.
const ID_WIDTH: usize = 14;

/// The ranked table printed by `fit` without `--json`.
pub fn ranked_table(results: &[FitResult]) -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "{:>4} {:<14} {:>6} {:>7} {:>10} {:>8} {:>8} {:>6} {:>6} {:>7} {:>6} {:<13} {:<12} {}\n",
        "rank",
        "object",
        "odds",
        "P(unb)",
        "e",
        "±e",
        "q AU",
        "i°",
        "arc d",
        "obs",
        "rms\"",
        "method",
        "status",
        "note"
    ));
    for (k, r) in results.iter().enumerate() {
        let note = if let Some(e) = &r.error {
            clean(e)
        } else if !r.poor_fit.is_empty() {
            clean(&r.poor_fit.join("; "))
        } else if r.prior_dominated {
            "set by the population model, not the data".into()
        } else if r.status == crate::fitting::kinds::FitStatus::Undetermined {
            "e ± σ are the population model's, not measured".into()
        } else if !r.distrust_linear.is_empty() {
            format!("caveats: {}", clean(&r.distrust_linear.join(", ")))
        } else {
            String::new()
        };
        s.push_str(&format!(
            "{:>4} {:<14} {:>6} {:>7} {:>10} {:>8} {:>8} {:>6} {:>6} {:>7} {:>6} {:<13} {:<12} {}\n",
            k + 1,
            id_within(&clean(&r.object), ID_WIDTH),
            odds_text(r),
            opt(r.p_hyperbolic, 3),
            opt(r.e, 5),
            opt(r.e_sigma, 5),
            opt(r.q_au, 3),
            opt(r.i_deg, 1),
            format!("{:.2}", r.arc_days),
            format!("{}/{}", r.n_used, r.n_obs),
            opt(r.rms_arcsec, 2),
            r.method,
            r.status,
            note
        ));
    }
    s.push_str(
        "odds = log10 of the posterior odds unbound : bound under the population model; P(unb) the \
         probability. A high value is a reason for follow-up, not a discovery.\n",
    );
    s
}

#[cfg(test)]
mod tests {
    use super::id_within;

    #[test]
    fn ids_cut_to_their_column_stay_apart_where_they_differ_at_the_end() {
        assert_eq!(id_within("qka2e7f", 14), "qka2e7f");
        let (a, b) = (
            id_within("hyp_strong_10n", 12),
            id_within("hyp_strong_1n", 12),
        );
        assert_eq!(a.chars().count(), 12);
        assert_eq!(b.chars().count(), 12);
        assert_ne!(a, b);
        assert_eq!(a, "hyp_st…g_10n");
        assert_eq!(id_within("abcdef", 2), "ab");
    }
}
