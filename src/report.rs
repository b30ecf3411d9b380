//! Plain-text renderings of fit results for people (the console draws its own panes).

use crate::feed::sanitize::clean;
use crate::fitting::fit::FitResult;

fn opt(x: Option<f64>, prec: usize) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{v:.prec$}"),
        _ => "-".into(),
    }
}

/// The ranked table printed by `fit` without `--json`.
pub fn ranked_table(results: &[FitResult]) -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "{:>4} {:<14} {:>6} {:>7} {:>10} {:>8} {:>8} {:>6} {:>6} {:>7} {:>6} {:<9} {:<9} {}\n",
        "rank",
        "object",
        "score",
        "P(e>1)",
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
            "answer set by the prior".into()
        } else if !r.distrust_linear.is_empty() {
            format!("sampled: {}", clean(&r.distrust_linear.join(", ")))
        } else {
            String::new()
        };
        let z = r.z_hyperbolic.map(|z| {
            let mark = match (r.z_is_bound, z > 0.0) {
                (true, true) => "≥",
                (true, false) => "≤",
                _ => "",
            };
            format!("{mark}{z:+.1}")
        });
        s.push_str(&format!(
            "{:>4} {:<14} {:>6} {:>7} {:>10} {:>8} {:>8} {:>6} {:>6} {:>7} {:>6} {:<9} {:<9} {}\n",
            k + 1,
            clean(&r.object).chars().take(14).collect::<String>(),
            z.unwrap_or_else(|| "-".into()),
            opt(r.p_hyperbolic, 3),
            opt(r.e, 5),
            opt(r.e_sigma, 5),
            opt(r.q_au, 3),
            opt(r.i_deg, 1),
            format!("{:.2}", r.arc_days),
            format!("{}/{}", r.n_used, r.n_obs),
            opt(r.rms_arcsec, 2),
            if r.method == "ranging" {
                "ranging"
            } else {
                "lsq"
            },
            r.status,
            note
        ));
    }
    s.push_str("score = Φ⁻¹(P(e_bary > 1)), clipped to ±8; a high score is a reason for follow-up, not a discovery.\n");
    s
}
