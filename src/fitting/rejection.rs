//! Outlier rejection sized to the number of positions: a differential correction that rejects the
//! worst point beyond a threshold that clean Gaussian data cross rarely, and readmits points that fit
//! again, until the set of used positions is stable.

use super::lsq::{LsqError, LsqFit, LsqOptions, Problem, correct};
use crate::physics::S6;

/// χ² (2 degrees of freedom) above which one of `n` observations is rejected, so that a tracklet of
/// clean Gaussian data loses a point with probability `false_rejection`: each point's standardised χ²
/// follows χ²(2), whose tail is exp(−T/2), and the largest of `n` exceeds T with probability
/// 1 − (1 − exp(−T/2))ⁿ.
pub fn reject_threshold(n: usize, false_rejection: f64) -> f64 {
    let n = n.max(1) as f64;
    let per_point = -(-false_rejection.clamp(1e-12, 0.5)).ln_1p() / n;
    // 1 − (1 − α)^(1/n), computed without cancellation.
    let per_point = -(-per_point).exp_m1();
    -2.0 * per_point.ln()
}

/// Differential correction with outlier rejection and recovery until the set of used observations is
/// stable. Never rejects more than `max_reject_fraction` of the points, nor leaves a night with fewer
/// than `min_per_night` (one on arcs of four nights or more).
pub fn correct_with_outliers(p: &Problem, x0: &S6, opts: &LsqOptions) -> Result<LsqFit, LsqError> {
    let n = p.len();
    let mut used = vec![true; n];
    let mut fit = correct(p, x0, &used, opts)?;
    if !opts.outliers {
        return Ok(fit);
    }
    let max_reject = ((n as f64 * opts.max_reject_fraction).floor() as usize).max(1);
    let reject_chi2 = reject_threshold(n, opts.false_rejection);
    let recover_chi2 = opts.recover_fraction * reject_chi2;
    // A night's own motion matters on short arcs; with four nights or more the other nights pin every
    // position, and a night may keep a single point.
    let nights = p.tracklet.night.iter().max().map_or(0, |m| m + 1);
    let floor = if nights >= 4 { 1 } else { opts.min_per_night };
    for _ in 0..10 {
        let mut changed = false;
        // Readmit every rejected point that now fits.
        for (u, c) in used.iter_mut().zip(&fit.obs_chi2) {
            if !*u && *c < recover_chi2 {
                *u = true;
                changed = true;
            }
        }
        // Reject the worst point above the threshold, if the limits allow.
        let rejected = used.iter().filter(|u| !**u).count();
        if rejected < max_reject {
            let worst = (0..n)
                .filter(|&i| used[i] && fit.obs_chi2[i] > reject_chi2)
                .filter(|&i| {
                    let night = p.tracklet.night[i];
                    let left = (0..n)
                        .filter(|&j| used[j] && p.tracklet.night[j] == night)
                        .count();
                    left > floor
                })
                .max_by(|&a, &b| fit.obs_chi2[a].total_cmp(&fit.obs_chi2[b]));
            if let Some(w) = worst {
                used[w] = false;
                changed = true;
            }
        }
        if !changed {
            break;
        }
        if 2 * used.iter().filter(|u| **u).count() < 7 {
            break;
        }
        fit = correct(p, &fit.state, &used, opts)?;
    }
    Ok(fit)
}

#[cfg(test)]
mod tests {
    use super::reject_threshold;

    #[test]
    fn one_point_threshold_is_the_chi2_2_tail_quantile() {
        // χ²(2) survival function is exp(−T/2) (closed form of the χ² distribution with 2 d.o.f.).
        let t = reject_threshold(1, 0.01);
        assert!(((-t / 2.0).exp() - 0.01).abs() < 1e-12, "{t}");
    }

    #[test]
    fn threshold_grows_with_the_number_of_observations_and_holds_the_family_rate() {
        let mut last = 0.0;
        for n in [2, 5, 10, 20, 50, 200] {
            let t = reject_threshold(n, 0.005);
            assert!(t > last, "n {n}: {t} after {last}");
            let family = 1.0 - (1.0 - (-t / 2.0).exp()).powi(n as i32);
            assert!((family - 0.005).abs() < 1e-9, "n {n}: {family}");
            last = t;
        }
    }
}
