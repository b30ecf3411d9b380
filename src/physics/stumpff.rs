//! Stumpff functions c₀…c₅ and the universal functions Uₖ(χ; α) = χᵏ cₖ(αχ²).
//!
//! Near z = 0 the closed forms cancel catastrophically (1 − cos √z over z), which stalls Newton near
//! e = 1; there an 8-term series is used instead.

/// c₀(z)…c₅(z).
pub fn stumpff(z: f64) -> [f64; 6] {
    if z.abs() < 0.1 { series(z) } else { closed(z) }
}

/// 1/n! for n = 0..=19, for the series below.
const INV_FACT: [f64; 20] = {
    let mut t = [1.0; 20];
    let mut n = 1;
    while n < 20 {
        t[n] = t[n - 1] / n as f64;
        n += 1;
    }
    t
};

fn series(z: f64) -> [f64; 6] {
    // cₖ(z) = Σⱼ (−z)ʲ/(k + 2j)!, eight terms: at |z| < 0.1 the next is below 1e-18 of the first.
    let mut out = [0.0; 6];
    for (k, slot) in out.iter_mut().enumerate() {
        let mut sum = 0.0;
        for j in (0..8).rev() {
            sum = sum * -z + INV_FACT[k + 2 * j];
        }
        *slot = sum;
    }
    out
}

fn closed(z: f64) -> [f64; 6] {
    {
        let (c0, c1) = if z > 0.0 {
            let s = z.sqrt();
            (s.cos(), s.sin() / s)
        } else {
            let s = (-z).sqrt();
            (s.cosh(), s.sinh() / s)
        };
        let c2 = (1.0 - c0) / z;
        let c3 = (1.0 - c1) / z;
        let c4 = (0.5 - c2) / z;
        let c5 = (1.0 / 6.0 - c3) / z;
        [c0, c1, c2, c3, c4, c5]
    }
}

/// U₀…U₅ at (χ, α).
pub fn universal(chi: f64, alpha: f64) -> [f64; 6] {
    let c = stumpff(alpha * chi * chi);
    let mut u = [0.0; 6];
    let mut p = 1.0;
    for k in 0..6 {
        u[k] = p * c[k];
        p *= chi;
    }
    u
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn series_and_closed_forms_agree_at_the_switch() {
        for z in [0.1, -0.1] {
            let a = series(z);
            let b = closed(z);
            for k in 0..6 {
                assert!(
                    (a[k] - b[k]).abs() < 1e-12 * a[k].abs(),
                    "k={k} z={z} {} {}",
                    a[k],
                    b[k]
                );
            }
        }
    }

    #[test]
    fn recurrence_holds_for_all_signs() {
        // cₖ(z) = 1/k! − z cₖ₊₂(z): an identity of the definitions, not of the code paths.
        let fact = [1.0, 1.0, 2.0, 6.0];
        for z in [-50.0, -1.0, -1e-3, 0.0, 2e-4, 0.5, 30.0] {
            let c = stumpff(z);
            for k in 0..4 {
                let rhs = 1.0 / fact[k] - z * c[k + 2];
                assert!(
                    (c[k] - rhs).abs() < 1e-12 * (1.0 + c[k].abs()),
                    "k={k} z={z}"
                );
            }
        }
    }
}
