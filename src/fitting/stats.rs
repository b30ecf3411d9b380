//! Small statistics helpers: the normal distribution and its inverse, weighted quantiles.

/// Standard normal cumulative distribution Φ(x) (via `libm::erfc`).
pub fn normal_cdf(x: f64) -> f64 {
    0.5 * libm::erfc(-x / std::f64::consts::SQRT_2)
}

/// Probability that χ² with an even number of degrees of freedom exceeds `x`:
/// e^(−x/2) Σ_{j < dof/2} (x/2)^j / j! (exact for even dof; None for an odd one).
pub fn chi2_survival_even(x: f64, dof: usize) -> Option<f64> {
    if dof % 2 == 1 {
        return None;
    }
    let h = 0.5 * x.max(0.0);
    let (mut term, mut sum) = (1.0, 0.0);
    for j in 0..dof / 2 {
        if j > 0 {
            term *= h / j as f64;
        }
        sum += term;
    }
    Some(((-h).exp() * sum).min(1.0))
}

/// Φ⁻¹(p): Acklam's rational approximation refined by one Halley step (relative error ~1e-15).
/// The upper half is computed as −Φ⁻¹(1 − p), where 1 − p is exact, so the tail keeps its precision.
pub fn normal_quantile(p: f64) -> f64 {
    if p > 0.5 && p < 1.0 {
        return -lower_quantile(1.0 - p);
    }
    lower_quantile(p)
}

fn lower_quantile(p: f64) -> f64 {
    if p <= 0.0 {
        return f64::NEG_INFINITY;
    }
    if p >= 1.0 {
        return f64::INFINITY;
    }
    const A: [f64; 6] = [
        -3.969_683_028_665_376e1,
        2.209_460_984_245_205e2,
        -2.759_285_104_469_687e2,
        1.383_577_518_672_69e2,
        -3.066_479_806_614_716e1,
        2.506_628_277_459_239,
    ];
    const B: [f64; 5] = [
        -5.447_609_879_822_406e1,
        1.615_858_368_580_409e2,
        -1.556_989_798_598_866e2,
        6.680_131_188_771_972e1,
        -1.328_068_155_288_572e1,
    ];
    const C: [f64; 6] = [
        -7.784_894_002_430_293e-3,
        -3.223_964_580_411_365e-1,
        -2.400_758_277_161_838,
        -2.549_732_539_343_734,
        4.374_664_141_464_968,
        2.938_163_982_698_783,
    ];
    const D: [f64; 4] = [
        7.784_695_709_041_462e-3,
        3.224_671_290_700_398e-1,
        2.445_134_137_142_996,
        3.754_408_661_907_416,
    ];
    let low = 0.024_25;
    let x = if p < low {
        let q = (-2.0 * p.ln()).sqrt();
        (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
            / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1.0)
    } else if p <= 1.0 - low {
        let q = p - 0.5;
        let r = q * q;
        (((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q
            / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1.0)
    } else {
        let q = (-2.0 * (1.0 - p).ln()).sqrt();
        -(((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
            / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1.0)
    };
    // Halley refinement on Φ(x) − p.
    let e = normal_cdf(x) - p;
    let u = e * (2.0 * std::f64::consts::PI).sqrt() * (x * x / 2.0).exp();
    x - u / (1.0 + x * u / 2.0)
}

/// Weighted quantile of values (weights need not be normalised).
pub fn weighted_quantile(values: &[f64], weights: &[f64], q: f64) -> Option<f64> {
    weighted_quantiles(values, weights, [q])[0]
}

/// Several weighted quantiles of the same values from one sort (`qs` ascending or not): each the
/// first value, in ascending order, at which the cumulative weight reaches q of the total.
pub fn weighted_quantiles<const N: usize>(
    values: &[f64],
    weights: &[f64],
    qs: [f64; N],
) -> [Option<f64>; N] {
    let mut idx: Vec<usize> = (0..values.len())
        .filter(|&i| weights[i] > 0.0 && values[i].is_finite())
        .collect();
    if idx.is_empty() {
        return [None; N];
    }
    idx.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
    let total: f64 = idx.iter().map(|&i| weights[i]).sum();
    let cumulative: Vec<f64> = idx
        .iter()
        .scan(0.0, |acc, &i| {
            *acc += weights[i];
            Some(*acc)
        })
        .collect();
    qs.map(|q| {
        let k = cumulative.partition_point(|&c| c < q * total);
        Some(values[idx[k.min(idx.len() - 1)]])
    })
}

/// Φ(−1) and Φ(1): the ends of the central 68.27 % of a normal distribution (scipy.stats.norm.cdf).
pub const ONE_SIGMA_QUANTILES: [f64; 2] = [0.158_655_253_931_457_05, 0.841_344_746_068_542_9];

/// The central 68.27 % and 95 % intervals of weighted values (their Φ(∓1) and 2.5/97.5 % points):
/// unlike a mean ± σ they follow a skewed distribution, and a monotone function of the values carries
/// them over unchanged.
pub fn central_intervals(values: &[f64], weights: &[f64]) -> Option<([f64; 2], [f64; 2])> {
    let [lo, hi] = ONE_SIGMA_QUANTILES;
    match weighted_quantiles(values, weights, [0.025, lo, hi, 0.975]) {
        [Some(a), Some(b), Some(c), Some(d)] => Some(([b, c], [a, d])),
        _ => None,
    }
}

/// Weights from natural logs, scaled so that the largest is 1 (exp(ln w − max ln w), which neither
/// overflows nor underflows where the logs are large); None where no log is finite or above −∞.
pub fn relative_weights(ln_w: impl IntoIterator<Item = f64>) -> Option<Vec<f64>> {
    let ln_w: Vec<f64> = ln_w.into_iter().collect();
    let top = ln_w.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    top.is_finite()
        .then(|| ln_w.iter().map(|l| (l - top).exp()).collect())
}

/// Kish's effective sample size of a set of weights.
pub fn effective_sample_size(weights: &[f64]) -> f64 {
    let s: f64 = weights.iter().sum();
    let s2: f64 = weights.iter().map(|w| w * w).sum();
    if s2 > 0.0 { s * s / s2 } else { 0.0 }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chi2_tails_of_even_degrees_match_their_table_points() {
        // The 0.1 % points of χ²(2) and χ²(4) and the 5 % point of χ²(6), as printed in the usual tables
        // (and by scipy.stats.chi2.isf): 13.816, 18.467, 12.592.
        for (x, dof, p) in [(13.816, 2, 1e-3), (18.467, 4, 1e-3), (12.592, 6, 0.05)] {
            let q = chi2_survival_even(x, dof).unwrap();
            assert!((q / p - 1.0).abs() < 1e-3, "{x} {dof}: {q}");
        }
        assert_eq!(chi2_survival_even(0.0, 4), Some(1.0));
        assert_eq!(chi2_survival_even(1.0, 3), None);
    }

    #[test]
    fn quantiles_from_one_sort_equal_the_quantile_taken_one_at_a_time() {
        // Values with ties, a zero weight and a non-finite value, weights not normalised.
        let values = [3.0, 1.0, 2.0, 2.0, f64::NAN, 5.0, 4.0, 1.5, 0.5, 2.5];
        let weights = [0.3, 1.0, 0.0, 2.0, 1.0, 0.7, 0.1, 0.4, 0.9, 0.6];
        let qs = [0.0, 0.025, 0.1587, 0.5, 0.8413, 0.975, 1.0];
        // The rule written out: sort the finite values of positive weight, walk up, and stop at the
        // first whose cumulative weight reaches q of the total.
        let one_at_a_time = |q: f64| {
            let mut v: Vec<(f64, f64)> = values
                .iter()
                .copied()
                .zip(weights.iter().copied())
                .filter(|(x, w)| *w > 0.0 && x.is_finite())
                .collect();
            v.sort_by(|a, b| a.0.total_cmp(&b.0));
            let total: f64 = v.iter().map(|p| p.1).sum();
            let mut acc = 0.0;
            for (x, w) in &v {
                acc += w;
                if acc >= q * total {
                    return *x;
                }
            }
            v[v.len() - 1].0
        };
        let all = weighted_quantiles(&values, &weights, qs);
        for (q, got) in qs.iter().zip(all) {
            assert_eq!(got, Some(one_at_a_time(*q)), "q {q}");
        }
        assert_eq!(weighted_quantiles(&[f64::NAN], &[1.0], [0.5]), [None]);
    }

    #[test]
    fn central_intervals_follow_a_skewed_sample_and_a_monotone_map() {
        // 10 000 equally weighted points of a standard normal by its quantiles, and their exp (a
        // log-normal): the intervals of the exp are the exp of the normal's, lopsided about the median.
        let n = 10_000;
        let z: Vec<f64> = (0..n)
            .map(|k| normal_quantile((k as f64 + 0.5) / n as f64))
            .collect();
        let w = vec![1.0; n];
        let (i68, i95) = central_intervals(&z, &w).unwrap();
        assert!(
            (i68[0] + 1.0).abs() < 1e-3 && (i68[1] - 1.0).abs() < 1e-3,
            "{i68:?}"
        );
        assert!((i95[0] + 1.959_964).abs() < 1e-3, "{i95:?}");
        let x: Vec<f64> = z.iter().map(|v| v.exp()).collect();
        let (j68, j95) = central_intervals(&x, &w).unwrap();
        assert_eq!(j68, i68.map(f64::exp));
        assert_eq!(j95, i95.map(f64::exp));
        assert!(j95[1] - 1.0 > 3.0 * (1.0 - j95[0]));
        assert_eq!(central_intervals(&[f64::NAN], &[1.0]), None);
    }

    #[test]
    fn relative_weights_put_the_largest_at_one_whatever_the_scale_of_the_logs() {
        // exp(−1000) underflows and exp(1000) overflows; their differences do not.
        let w = relative_weights([-1000.0, -1001.0, f64::NEG_INFINITY]).unwrap();
        assert_eq!(w[0], 1.0);
        assert!((w[1] - (-1.0f64).exp()).abs() < 1e-15);
        assert_eq!(w[2], 0.0);
        assert_eq!(
            relative_weights([1000.0, 999.0]).unwrap()[1],
            (-1.0f64).exp()
        );
        assert_eq!(relative_weights([f64::NEG_INFINITY]), None);
        assert_eq!(relative_weights([f64::INFINITY, 0.0]), None);
        assert_eq!(relative_weights(std::iter::empty()), None);
    }

    #[test]
    fn normal_quantile_matches_scipy_norm_ppf() {
        // scipy.stats.norm.ppf (scipy 1.17.1): values computed with the pinned reference environment.
        for (p, want) in [
            (0.975, 1.959_963_984_540_054),
            (0.5, 0.0),
            (1e-3, -3.090_232_306_167_813_5),
            (0.999_999, 4.753_424_308_817_087),
            (0.02, -2.053_748_910_631_823),
        ] {
            let x = normal_quantile(p);
            assert!((x - want).abs() < 1e-12 * (1.0 + want.abs()), "p={p}: {x}");
            assert!((normal_cdf(x) - p).abs() < 1e-14 * (1.0 + p));
        }
    }

    #[test]
    fn weighted_median_of_skewed_weights() {
        let v = [1.0, 2.0, 3.0];
        assert_eq!(weighted_quantile(&v, &[1.0, 1.0, 10.0], 0.5), Some(3.0));
        assert_eq!(weighted_quantile(&v, &[10.0, 1.0, 1.0], 0.5), Some(1.0));
    }
}
