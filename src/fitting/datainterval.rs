//! What the positions alone say about e where P comes from the range profile or from grid ranging: the
//! least and greatest heliocentric e over the orbits whose χ² is within `DATA_DCHI2` of the best, a
//! profile-likelihood interval. It takes no density and no measure on the orbits (only each path's
//! speed cap), so it shows where the population model rather than the data narrowed the posterior's
//! e ± σ.

use super::profile::{Frame, Profile, Slice, V5};
use super::profilequad::speed_cap;
use crate::physics::constants::MU_SUN;
use crate::physics::elements::eccentricity_vector;
use crate::physics::{S6, split_state};

/// Δχ² from the best orbit within which an orbit is allowed by the positions alone (95 % for one
/// parameter).
pub const DATA_DCHI2: f64 = 3.84;

/// Points taken along each slice's allowed range of ρ̇ (e need not be monotonic along it).
const POINTS: usize = 9;

/// Over every slice of the profile, the orbits along its radial velocity whose χ² (the slice's minimum
/// plus its quadratic in ρ̇, the other four following ρ̇ by their conditional shift) stays within
/// `DATA_DCHI2` of the best, among those arriving no faster than `v_cap` (au/day, barycentric v∞: a
/// bound on what can be in the Solar System at all, not a population); None where none qualifies.
/// Between a slice inside the bound and its neighbour outside, the edge is taken where χ², linear in
/// ln ρ between the two, reaches the bound (the orbit there interpolated between theirs).
pub fn e_data_interval(
    prof: &Profile,
    frame: &Frame,
    sun_bary: &S6,
    v_cap: f64,
) -> Option<[f64; 2]> {
    // Each slice's admissible ρ̇ window with its centre and σ: (slice, lo, hi, σ), None where it has
    // none (kept in place, so that only neighbouring slices are ever paired).
    let aligned: Vec<Option<(&Slice, f64, f64, f64)>> = prof
        .slices
        .iter()
        .map(|s| {
            let var = s.cov[(4, 4)];
            if !(var.is_finite() && var > 0.0) {
                return None;
            }
            let cap = speed_cap(frame, s, sun_bary, v_cap);
            let (lo, hi) = (-cap.c1 - cap.y_cap, -cap.c1 + cap.y_cap);
            (lo < hi).then_some((s, lo, hi, var.sqrt()))
        })
        .collect();
    let windows: Vec<(&Slice, f64, f64, f64)> = aligned.iter().flatten().copied().collect();
    // χ² of an admissible orbit of a slice nearest its own minimum.
    let least = |(s, lo, hi, sd): &(&Slice, f64, f64, f64)| {
        s.chi2 + ((s.a[4].clamp(*lo, *hi) - s.a[4]) / sd).powi(2)
    };
    let best = windows.iter().map(least).fold(f64::INFINITY, f64::min);
    let mut out: Option<[f64; 2]> = None;
    let mut take = |e: f64| {
        if e.is_finite() {
            out = Some(out.map_or([e, e], |[a, b]| [a.min(e), b.max(e)]));
        }
    };
    for pair in aligned.windows(2) {
        if let [Some(a), Some(b)] = pair
            && let Some(e) = edge_between(a, b, best, frame)
        {
            take(e);
        }
    }
    for (s, lo, hi, sd) in &windows {
        let room = DATA_DCHI2 - (s.chi2 - best);
        if room.is_nan() || room < 0.0 {
            continue;
        }
        let half = sd * room.sqrt();
        let (from, to) = ((s.a[4] - half).max(*lo), (s.a[4] + half).min(*hi));
        if from > to {
            continue;
        }
        let shift = V5::from_fn(|i, _| s.cov[(i, 4)] / (sd * sd));
        let e_at = |rd: f64| {
            let (r, v) = split_state(&frame.state(&(s.a + shift * (rd - s.a[4])), s.rho));
            eccentricity_vector(&r, &v, MU_SUN).norm()
        };
        if let Some([lo, hi]) = extremes_along(&e_at, from, to) {
            take(lo);
            take(hi);
        }
    }
    out
}

/// The e of the orbit where χ² reaches the bound between two neighbouring slices, one inside it and
/// one outside: their parameters and χ² interpolated linearly in ln ρ, the radial velocity at the
/// interpolated minimum where it is admissible (at the bound itself no other ρ̇ is allowed).
fn edge_between(
    a: &(&Slice, f64, f64, f64),
    b: &(&Slice, f64, f64, f64),
    best: f64,
    frame: &Frame,
) -> Option<f64> {
    let (room_a, room_b) = (
        DATA_DCHI2 - (a.0.chi2 - best),
        DATA_DCHI2 - (b.0.chi2 - best),
    );
    if !(room_a.is_finite() && room_b.is_finite()) || (room_a >= 0.0) == (room_b >= 0.0) {
        return None;
    }
    let t = room_a / (room_a - room_b);
    let lerp = |x: f64, y: f64| x + t * (y - x);
    let rho = (lerp(a.0.rho.ln(), b.0.rho.ln())).exp();
    let p = a.0.a + (b.0.a - a.0.a) * t;
    let (lo, hi) = (lerp(a.1, b.1), lerp(a.2, b.2));
    if !(lo..=hi).contains(&p[4]) {
        return None;
    }
    let (r, v) = split_state(&frame.state(&p, rho));
    Some(eccentricity_vector(&r, &v, MU_SUN).norm())
}

/// Golden-section steps that narrow an extreme of e between two neighbouring points to 1e-6 of their
/// spacing.
const GOLDEN_STEPS: usize = 30;

/// The least and greatest finite value of `f` on [from, to]: `POINTS` evenly spaced, then each extreme
/// narrowed by golden section between the neighbours of the point that holds it. Near a nearly circular
/// orbit e is the length of a vector that passes close to zero along the line, a sharp dip that even
/// spaced points step over (a two-site main-belt arc's range once began at 0.58 for a true 0.15).
fn extremes_along(f: &dyn Fn(f64) -> f64, from: f64, to: f64) -> Option<[f64; 2]> {
    let step = (to - from) / (POINTS - 1) as f64;
    let xs: Vec<f64> = (0..POINTS).map(|k| from + step * k as f64).collect();
    let ys: Vec<f64> = xs.iter().map(|&x| f(x)).collect();
    let finite = |k: &usize| ys[*k].is_finite();
    let lo_k = (0..POINTS)
        .filter(finite)
        .min_by(|&a, &b| ys[a].total_cmp(&ys[b]))?;
    let hi_k = (0..POINTS)
        .filter(finite)
        .max_by(|&a, &b| ys[a].total_cmp(&ys[b]))?;
    let around = |k: usize| (xs[k.saturating_sub(1)], xs[(k + 1).min(POINTS - 1)]);
    let lo = golden(f, around(lo_k), 1.0).min(ys[lo_k]);
    let hi = (-golden(&|x| -f(x), around(hi_k), 1.0)).max(ys[hi_k]);
    Some([lo, hi])
}

/// The least value golden-section search finds of `sign · f` on [a, b] (+∞ where f is not finite).
fn golden(f: &dyn Fn(f64) -> f64, (mut a, mut b): (f64, f64), sign: f64) -> f64 {
    const R: f64 = 0.618_033_988_749_894_8;
    let g = |x: f64| {
        let y = sign * f(x);
        if y.is_finite() { y } else { f64::INFINITY }
    };
    let (mut c, mut d) = (b - R * (b - a), a + R * (b - a));
    let (mut fc, mut fd) = (g(c), g(d));
    for _ in 0..GOLDEN_STEPS {
        if fc < fd {
            (b, d, fd) = (d, c, fc);
            c = b - R * (b - a);
            fc = g(c);
        } else {
            (a, c, fc) = (c, d, fd);
            d = a + R * (b - a);
            fd = g(d);
        }
    }
    fc.min(fd)
}

/// Over trial orbits given as (heliocentric state, χ²) with the four other parameters already profiled
/// out (grid ranging's nodes): the least and greatest heliocentric e of those within `DATA_DCHI2` of
/// the best, however the model weighs them (grid ranging keeps only nodes where the model's density is
/// not zero, so a range through a hole of the model stops at its edge). Nodes without a finite χ² take
/// no part. None where there is none.
pub fn e_range_of_nodes<'a>(
    nodes: impl Iterator<Item = (&'a S6, f64)> + Clone,
) -> Option<[f64; 2]> {
    let finite = |c: &f64| c.is_finite();
    let best = nodes
        .clone()
        .map(|(_, c)| c)
        .filter(finite)
        .fold(f64::INFINITY, f64::min);
    nodes
        .filter(|(_, c)| finite(c) && *c <= best + DATA_DCHI2)
        .filter_map(|(x, _)| {
            let (r, v) = split_state(x);
            Some(eccentricity_vector(&r, &v, MU_SUN).norm()).filter(|e| e.is_finite())
        })
        .fold(None, |out: Option<[f64; 2]>, e| {
            Some(out.map_or([e, e], |[lo, hi]| [lo.min(e), hi.max(e)]))
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A heliocentric state at 1 au from the Sun moving perpendicular to the radius with speed `k`
    /// times the circular one: e = |k² − 1|.
    fn state(k: f64) -> S6 {
        S6::new(1.0, 0.0, 0.0, 0.0, k * MU_SUN.sqrt(), 0.0)
    }

    #[test]
    fn a_sharp_dip_between_evenly_spaced_points_is_found_and_the_ends_are_kept() {
        // |x − 0.0625| on [0, 1]: the nine even points (spacing 0.125) all stand at least 0.0625
        // above the dip, as e does where the line passes close to a circular orbit.
        let f = |x: f64| (x - 0.0625).abs();
        let [lo, hi] = extremes_along(&f, 0.0, 1.0).unwrap();
        assert!(lo < 1e-6, "{lo}");
        assert!((hi - 0.9375).abs() < 1e-12, "{hi}");
        // A peak inside: found as well (the maximum is not only ever at an end).
        let g = |x: f64| 1.0 - (x - 0.3).abs();
        let [lo, hi] = extremes_along(&g, 0.0, 1.0).unwrap();
        assert!(
            (hi - 1.0).abs() < 1e-6 && (lo - 0.3).abs() < 1e-12,
            "{lo} {hi}"
        );
        // Values that are not finite take no part; none finite gives nothing.
        let h = |x: f64| if x < 0.5 { f64::NAN } else { x };
        assert_eq!(extremes_along(&h, 0.0, 1.0), Some([0.5, 1.0]));
        assert!(extremes_along(&|_| f64::NAN, 0.0, 1.0).is_none());
    }

    #[test]
    fn the_nodes_range_of_e_takes_every_node_within_the_bound_and_no_other() {
        let nodes = [
            (state(1.1), 10.0),  // e 0.21, the best
            (state(1.2), 13.5),  // e 0.44, Δχ² 3.5: allowed
            (state(1.3), 14.0),  // e 0.69, Δχ² 4.0: not
            (state(0.95), 12.0), // e 0.0975: allowed
        ];
        let [lo, hi] = e_range_of_nodes(nodes.iter().map(|(x, c)| (x, *c))).unwrap();
        assert!((lo - 0.0975).abs() < 1e-12, "{lo}");
        assert!((hi - 0.44).abs() < 1e-12, "{hi}");
        assert!(e_range_of_nodes(std::iter::empty()).is_none());
        // A node without a χ² neither sets the best nor joins the range.
        let odd = [
            (state(1.1), 10.0),
            (state(1.3), f64::INFINITY),
            (state(1.2), f64::NAN),
        ];
        let [lo, hi] = e_range_of_nodes(odd.iter().map(|(x, c)| (x, *c))).unwrap();
        assert!(
            (lo - 0.21).abs() < 1e-12 && (hi - 0.21).abs() < 1e-12,
            "{lo} {hi}"
        );
        // Nodes none of which has a finite χ² give no range.
        let none = [(state(1.1), f64::INFINITY), (state(1.2), f64::INFINITY)];
        assert!(e_range_of_nodes(none.iter().map(|(x, c)| (x, *c))).is_none());
    }
}
