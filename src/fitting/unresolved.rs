//! Odds the trial orbits cannot resolve. Where no trial orbit of one class carries any weight (a
//! strongly hyperbolic fit whose energy line never reaches a bound orbit, draws that all land on one
//! side), the posterior odds are infinite only as far as the trial orbits reach. The record then
//! states the odds as a bound set by the data's own spread: the odds of a Gaussian in the barycentric
//! e on either side of e = 1, log₁₀ Φ(|z|)/Φ(−|z|) with z = (e_bary − 1)/σ, or, without that spread,
//! one draw's share of the effective sample (log₁₀ n_eff). The same bound stands for the evidence (the data decided,
//! not the model), P is the probability those odds give (P, z and the odds stay one quantity), and
//! `z_is_bound` says the numbers are bounds.

use super::posterior::{Posterior, z_of_ln_odds};
use super::result::FitResult;
use super::stats::normal_cdf;
use std::f64::consts::LN_10;

/// log₁₀ of the odds the data's spread alone can resolve on the side P points to (positive), or
/// None where the record holds nothing to size it.
fn resolvable_log10_odds(r: &FitResult, unbound: bool) -> Option<f64> {
    if let (Some(e), Some(s)) = (r.e_bary, r.e_bary_sigma)
        && e.is_finite()
        && s.is_finite()
        && s > 0.0
        && (e > 1.0) == unbound
    {
        let z = (e - 1.0).abs() / s;
        return Some((normal_cdf(z).ln() - ln_normal_tail(z)) / LN_10);
    }
    r.n_eff
        .filter(|n| n.is_finite() && *n > 1.0)
        .map(f64::log10)
}

/// ln Φ(−z) for z ≥ 0, without underflow far in the tail.
fn ln_normal_tail(z: f64) -> f64 {
    if z < 30.0 {
        return normal_cdf(-z).ln();
    }
    // Asymptotic series: Φ(−z) ≈ φ(z)/z · (1 − 1/z²), relative error below 3/z⁴ (10⁻⁵ at 30).
    -0.5 * z * z - z.ln() - 0.5 * (2.0 * std::f64::consts::PI).ln() + (1.0 - 1.0 / (z * z)).ln()
}

/// Where P is exactly 0 or 1 because one class has no weight, state the odds and the evidence as the
/// bound the data resolve (see the module's words); a record with finite odds is left alone.
pub fn bound_unresolved_odds(r: &mut FitResult) {
    // Only P exactly 0 or 1 from one empty class: undefined odds (no weight anywhere) stay unstated.
    let Some(p) = r.p_hyperbolic.filter(|p| *p == 0.0 || *p == 1.0) else {
        return;
    };
    let infinite = r.log10_odds.is_some_and(f64::is_infinite);
    if !(r.z_is_bound && infinite) {
        return;
    }
    let unbound = p >= 0.5;
    let Some(b) = resolvable_log10_odds(r, unbound) else {
        return;
    };
    let l10 = if unbound { b } else { -b };
    r.log10_odds = Some(l10);
    // P, its score and the odds stay one quantity: P is the probability the bound odds give.
    let odds = Posterior {
        ln_odds: l10 * LN_10,
        ln_bayes: l10 * LN_10,
        ln_odds_error: 0.0,
        n_eff: None,
    };
    r.p_hyperbolic = Some(odds.p());
    r.z_hyperbolic = Some(z_of_ln_odds(l10 * LN_10)).filter(|z| z.is_finite());
    if r.log10_bayes_factor.is_none_or(|k| !k.is_finite()) {
        r.log10_bayes_factor = Some(l10);
        r.bayes_factor = bayes_factor_of(l10);
    }
    // The bound is the positions' own: where it is weak (under half a decade) they did not decide.
    r.prior_dominated = l10.abs() < 0.5;
    // How far P itself may be off is not known beyond its being a bound.
    r.p_hyperbolic_error = None;
}

/// 10^log10 where a double holds it, else None (the log10 field carries it).
pub fn bayes_factor_of(log10: f64) -> Option<f64> {
    (log10.is_finite() && log10.abs() <= 300.0).then(|| 10f64.powf(log10))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_tail_is_continuous_where_the_series_takes_over_and_matches_known_values() {
        // Φ(−5) = 2.866516e-7 (any table of the normal distribution).
        assert!((ln_normal_tail(5.0) - 2.866_516e-7_f64.ln()).abs() < 1e-5);
        let (below, above) = (normal_cdf(-29.999_999).ln(), ln_normal_tail(30.0));
        assert!((below - above).abs() < 1e-4, "{below} {above}");
    }

    #[test]
    fn a_strongly_unbound_record_with_no_bound_weight_gets_finite_bounded_odds() {
        use crate::fitting::input::Tracklet;
        let mut r = FitResult::empty(&Tracklet::new("x".into(), "x".into(), Vec::new()));
        r.p_hyperbolic = Some(1.0);
        r.log10_odds = Some(f64::INFINITY);
        r.z_is_bound = true;
        r.prior_dominated = true;
        (r.e_bary, r.e_bary_sigma) = (Some(3.0), Some(0.1));
        bound_unresolved_odds(&mut r);
        // z = 20: log₁₀ Φ(20)/Φ(−20) = −log₁₀ Φ(−20) = 88.56 (by hand, the asymptotic series:
        // 200/ln 10 + log₁₀(20√(2π)) − log₁₀(1 − 1/400) = 86.859 + 1.700 + 0.001).
        let l = r.log10_odds.unwrap();
        assert!((l - 88.56).abs() < 0.01, "{l}");
        assert!(r.z_hyperbolic.unwrap() > 19.9, "{:?}", r.z_hyperbolic);
        let p = r.p_hyperbolic.unwrap();
        assert_eq!(
            p,
            1.0 / (1.0 + 10f64.powf(-l)),
            "P must be what the odds give"
        );
        assert_eq!(r.p_hyperbolic_error, None);
        assert_eq!(r.log10_bayes_factor, Some(l));
        let k = r.bayes_factor.unwrap();
        assert!((k.log10() - l).abs() < 1e-9, "{k}");
        // Beyond a double's range the factor itself is left out (its log₁₀ carries it).
        assert_eq!(bayes_factor_of(415.3), None);
        assert_eq!(bayes_factor_of(-415.3), None);
        assert!(!r.prior_dominated);
        // Near e = 1 the bound is the Gaussian's own odds: z = 0 is even (P ½), z = 1 gives
        // Φ(1)/Φ(−1) = 0.8413/0.1587 = 5.30 (normal table), and so weak a bound leaves the
        // model in charge.
        for (z, want) in [(1e-9, 0.0), (1.0, 5.30_f64.log10())] {
            let mut near = FitResult::empty(&Tracklet::new("n".into(), "n".into(), Vec::new()));
            near.p_hyperbolic = Some(1.0);
            near.log10_odds = Some(f64::INFINITY);
            near.z_is_bound = true;
            (near.e_bary, near.e_bary_sigma) = (Some(1.0 + 0.1 * z), Some(0.1));
            bound_unresolved_odds(&mut near);
            let got = near.log10_odds.unwrap();
            assert!((got - want).abs() < 0.002, "z {z}: {got} vs {want}");
            assert_eq!(near.prior_dominated, got.abs() < 0.5);
        }
        // Draws on one side only and no spread of e: one draw's share of the effective sample.
        let mut drawn = FitResult::empty(&Tracklet::new("d".into(), "d".into(), Vec::new()));
        drawn.p_hyperbolic = Some(0.0);
        drawn.log10_odds = Some(f64::NEG_INFINITY);
        drawn.z_is_bound = true;
        drawn.n_eff = Some(1000.0);
        bound_unresolved_odds(&mut drawn);
        assert_eq!(drawn.log10_odds, Some(-3.0));
        // Undefined odds (no weight in either class) are not turned into a bound.
        let mut none = FitResult::empty(&Tracklet::new("u".into(), "u".into(), Vec::new()));
        none.p_hyperbolic = Some(f64::NAN);
        none.log10_odds = None;
        none.z_is_bound = true;
        none.n_eff = Some(1000.0);
        bound_unresolved_odds(&mut none);
        assert_eq!(none.log10_odds, None);
        // A record whose odds were resolved is left alone.
        let mut f = FitResult::empty(&Tracklet::new("y".into(), "y".into(), Vec::new()));
        f.p_hyperbolic = Some(0.7);
        f.log10_odds = Some(0.37);
        bound_unresolved_odds(&mut f);
        assert_eq!(f.log10_odds, Some(0.37));
    }
}
