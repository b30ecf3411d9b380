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
/// Between slices the edge in ρ falls where the grid has no slice, so the interval is a little narrow
/// where slices are sparse.
pub fn e_data_interval(
    prof: &Profile,
    frame: &Frame,
    sun_bary: &S6,
    v_cap: f64,
) -> Option<[f64; 2]> {
    // Each slice's admissible ρ̇ window with its centre and σ: (slice, lo, hi, σ).
    let windows: Vec<(&Slice, f64, f64, f64)> = prof
        .slices
        .iter()
        .filter_map(|s| {
            let var = s.cov[(4, 4)];
            if !(var.is_finite() && var > 0.0) {
                return None;
            }
            let cap = speed_cap(frame, s, sun_bary, v_cap);
            let (lo, hi) = (-cap.c1 - cap.y_cap, -cap.c1 + cap.y_cap);
            (lo < hi).then_some((s, lo, hi, var.sqrt()))
        })
        .collect();
    // χ² of an admissible orbit of a slice nearest its own minimum.
    let least = |(s, lo, hi, sd): &(&Slice, f64, f64, f64)| {
        s.chi2 + ((s.a[4].clamp(*lo, *hi) - s.a[4]) / sd).powi(2)
    };
    let best = windows.iter().map(least).fold(f64::INFINITY, f64::min);
    let mut out: Option<[f64; 2]> = None;
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
        for k in 0..POINTS {
            let rd = from + (to - from) * k as f64 / (POINTS - 1) as f64;
            let (r, v) = split_state(&frame.state(&(s.a + shift * (rd - s.a[4])), s.rho));
            let e = eccentricity_vector(&r, &v, MU_SUN).norm();
            if e.is_finite() {
                out = Some(out.map_or([e, e], |[lo, hi]| [lo.min(e), hi.max(e)]));
            }
        }
    }
    out
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
