//! One meaning of P everywhere: the posterior probability that the barycentric orbit is unbound under
//! the population model, with the data's own evidence (the Bayes factor: posterior odds over the
//! model's odds on the same trial orbits without the likelihood) and the numerical error of the
//! estimate. Every path (linear, sampled, one-night quadrature, ranging) ends here.

use super::population::log_sum_exp;
use super::stats::normal_quantile;

/// Posterior (or prior) mass of each class, as natural logarithms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Masses {
    pub ln_unbound: f64,
    pub ln_bound: f64,
}

impl Masses {
    /// Sum weighted trial orbits by class (`ln_w` natural-log weights).
    pub fn of<'a>(items: impl Iterator<Item = (&'a bool, f64)> + Clone) -> Masses {
        let unb = items.clone().filter(|(u, _)| **u).map(|(_, w)| w);
        let bnd = items.filter(|(u, _)| !**u).map(|(_, w)| w);
        Masses {
            ln_unbound: log_sum_exp(unb),
            ln_bound: log_sum_exp(bnd),
        }
    }

    pub fn ln_odds(&self) -> f64 {
        self.ln_unbound - self.ln_bound
    }
}

/// The answer: P(unbound | data, model) with its evidence and error.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Posterior {
    /// Natural log of the posterior odds unbound : bound (±∞ when one class has no mass at all).
    pub ln_odds: f64,
    /// Natural log of the Bayes factor (posterior odds ÷ the model's odds over the same trial orbits).
    pub ln_bayes: f64,
    /// One-sigma numerical error of ln_odds (quadrature or Monte Carlo).
    pub ln_odds_error: f64,
    /// Effective number of samples behind the estimate (None for deterministic quadrature).
    pub n_eff: Option<f64>,
}

impl Posterior {
    /// From the class masses with and without the likelihood.
    pub fn new(post: Masses, prior: Masses, ln_odds_error: f64, n_eff: Option<f64>) -> Posterior {
        Posterior {
            ln_odds: post.ln_odds(),
            ln_bayes: post.ln_odds() - prior.ln_odds(),
            ln_odds_error,
            n_eff,
        }
    }

    /// P(unbound).
    pub fn p(&self) -> f64 {
        if self.ln_odds >= 0.0 {
            1.0 / (1.0 + (-self.ln_odds).exp())
        } else {
            let e = self.ln_odds.exp();
            e / (1.0 + e)
        }
    }

    /// One-sigma numerical error of P: P(1 − P) times the error of ln odds, and never more than P's
    /// distance to 0 or 1. Where the estimate cannot size its own error (the coarser rule found no
    /// weight in one class) that is the answer: P is known in its order of magnitude only. (A flat
    /// 0.5 stood there once, beside P = 4 × 10⁻¹⁰.)
    pub fn p_error(&self) -> f64 {
        let p = self.p();
        let spread = p * (1.0 - p);
        if spread == 0.0 {
            // P is 0 or 1 to double precision; the error of the odds cannot move it.
            return 0.0;
        }
        (spread * self.ln_odds_error).min(p.min(1.0 - p))
    }

    /// log₁₀ of the posterior odds.
    pub fn log10_odds(&self) -> f64 {
        self.ln_odds / std::f64::consts::LN_10
    }

    /// Φ⁻¹(P), computed from the odds so that it stays exact in both tails.
    pub fn z(&self) -> f64 {
        z_of_ln_odds(self.ln_odds)
    }
}

/// Φ⁻¹(P) for P = odds / (1 + odds), from ln(odds), without losing the tails.
pub fn z_of_ln_odds(l: f64) -> f64 {
    if l.is_nan() {
        return f64::NAN;
    }
    // ln of the smaller tail probability: ln(1/(1 + e^{|l|})).
    let a = l.abs();
    let ln_tail = -(a + (-a).exp().ln_1p());
    let z_tail = if ln_tail > -700.0 {
        normal_quantile(ln_tail.exp())
    } else {
        // Asymptotic inverse of ln Φ(−z) ≈ −z²/2 − ln(z √(2π)).
        let t = -2.0 * ln_tail;
        -(t - t.ln() - (2.0 * std::f64::consts::PI).ln()).sqrt()
    };
    if l >= 0.0 { -z_tail } else { z_tail }
}

/// Self-normalised importance-sampling estimate from natural-log weights and classes: the class masses
/// and the one-sigma error of ln odds (delta method on the weighted indicator).
pub fn sampled_ln_odds_error(ln_w: &[f64], unbound: &[bool]) -> f64 {
    let Some(w) = super::stats::relative_weights(ln_w.iter().copied()) else {
        return f64::INFINITY;
    };
    let total: f64 = w.iter().sum();
    let p: f64 = w
        .iter()
        .zip(unbound)
        .filter(|(_, u)| **u)
        .map(|(x, _)| x)
        .sum::<f64>()
        / total;
    let var: f64 = w
        .iter()
        .zip(unbound)
        .map(|(x, u)| {
            let i = if *u { 1.0 } else { 0.0 };
            (x / total).powi(2) * (i - p).powi(2)
        })
        .sum();
    if p <= 0.0 || p >= 1.0 {
        return f64::INFINITY;
    }
    var.sqrt() / (p * (1.0 - p))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_unsized_error_of_p_is_its_own_size_not_a_flat_half() {
        let post = |ln_odds: f64, err: f64| Posterior {
            ln_odds,
            ln_bayes: 0.0,
            ln_odds_error: err,
            n_eff: None,
        };
        let tiny = post(-21.76, f64::INFINITY);
        assert!(
            (tiny.p_error() - tiny.p()).abs() < 1e-20,
            "{}",
            tiny.p_error()
        );
        let near_one = post(4.1, f64::INFINITY);
        assert!((near_one.p_error() - (1.0 - near_one.p())).abs() < 1e-15);
        // A sized error is the delta method's: P(1 − P) · σ(ln odds).
        let mid = post(0.08, 0.5);
        let p = mid.p();
        assert!((mid.p_error() - p * (1.0 - p) * 0.5).abs() < 1e-15);
    }

    #[test]
    fn z_is_the_normal_quantile_of_p_in_the_middle_and_the_tails() {
        for l in [-30.0_f64, -5.0, -0.3, 0.0, 0.7, 4.0, 25.0] {
            let p = 1.0 / (1.0 + (-l).exp());
            let direct = normal_quantile(p);
            let z = z_of_ln_odds(l);
            // Directly, 1 − P loses digits once P is near 1; compare where it keeps them.
            if l.abs() <= 5.0 {
                assert!((z - direct).abs() < 1e-9, "l={l}: {z} vs {direct}");
            }
            assert!(z.is_finite());
        }
        // Far tails stay finite, ordered and symmetric.
        assert!(z_of_ln_odds(-1000.0) < z_of_ln_odds(-800.0));
        assert!((z_of_ln_odds(900.0) + z_of_ln_odds(-900.0)).abs() < 1e-12);
    }

    #[test]
    fn bayes_factor_is_posterior_over_prior_odds() {
        let post = Masses {
            ln_unbound: 2.0_f64.ln(),
            ln_bound: 1.0_f64.ln(),
        };
        let prior = Masses {
            ln_unbound: 1.0_f64.ln(),
            ln_bound: 4.0_f64.ln(),
        };
        let p = Posterior::new(post, prior, 0.0, None);
        assert!((p.p() - 2.0 / 3.0).abs() < 1e-15);
        assert!((p.ln_bayes.exp() - 8.0).abs() < 1e-12);
    }

    #[test]
    fn sampling_error_shrinks_like_one_over_root_n() {
        let make = |n: usize| {
            let w: Vec<f64> = vec![0.0; n];
            let u: Vec<bool> = (0..n).map(|k| k % 4 == 0).collect();
            sampled_ln_odds_error(&w, &u)
        };
        let (a, b) = (make(400), make(1600));
        assert!((a / b - 2.0).abs() < 0.05, "{a} {b}");
    }
}
