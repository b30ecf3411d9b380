//! Barycentric states, v∞ and the incoming asymptote of unbound orbits (the probability itself is in
//! `posterior.rs`).

use crate::physics::constants::{AU_PER_DAY_TO_KM_S, MU_BARY_OVER_SUN, MU_SUN};
use crate::physics::earth::EarthState;
use crate::physics::frames::{equatorial_to_galactic, radec_from_vector};
use crate::physics::{S6, V3};

/// Gravitational parameter for barycentric elements (Sun plus planets).
pub const MU_BARY: f64 = MU_SUN * MU_BARY_OVER_SUN;

/// Barycentric state of an object from its heliocentric state (ICRF), given Earth's state (which
/// carries the Sun's barycentric motion).
pub fn barycentric_with(x_helio: &S6, e: &EarthState) -> S6 {
    let sp = e.sun_bary_pos();
    let sv = e.sun_bary_vel();
    S6::new(
        x_helio[0] + sp.x,
        x_helio[1] + sp.y,
        x_helio[2] + sp.z,
        x_helio[3] + sv.x,
        x_helio[4] + sv.y,
        x_helio[5] + sv.z,
    )
}

/// Whether the barycentric orbit of a heliocentric state is unbound (energy ≥ 0), given the Sun's
/// barycentric state `shift`.
pub fn unbound_bary(x_helio: &S6, shift: &S6) -> bool {
    let x = x_helio + shift;
    let (r, v) = (V3::new(x[0], x[1], x[2]), V3::new(x[3], x[4], x[5]));
    0.5 * v.norm_squared() >= MU_BARY / r.norm()
}

/// What an unbound orbit says about where the object came from.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Incoming {
    pub v_inf_km_s: f64,
    pub v_inf_sigma_km_s: Option<f64>,
    /// Direction the object comes from (radiant), ICRF and galactic, degrees.
    pub radiant_ra_deg: f64,
    pub radiant_dec_deg: f64,
    pub radiant_l_deg: f64,
    pub radiant_b_deg: f64,
    /// Incoming heliocentric velocity in galactic Cartesian components (U toward l = 0, V toward
    /// l = 90°, W toward b = 90°), km/s.
    pub uvw_km_s: [f64; 3],
}

/// Incoming asymptote of an unbound orbit (None if bound).
pub fn incoming(x: &S6, mu: f64, sigma_inv_a: Option<f64>) -> Option<Incoming> {
    let r = V3::new(x[0], x[1], x[2]);
    let v = V3::new(x[3], x[4], x[5]);
    let rm = r.norm();
    let alpha = 2.0 / rm - v.norm_squared() / mu;
    if alpha >= 0.0 {
        return None;
    }
    let h = r.cross(&v);
    let evec = ((v.norm_squared() - mu / rm) * r - r.dot(&v) * v) / mu;
    let e = evec.norm();
    let p_hat = evec / e;
    let q_hat = h.cross(&p_hat).normalize();
    // Position direction at true anomaly −ν∞, cos ν∞ = −1/e: where the object comes from.
    let cos_nu = -1.0 / e;
    let sin_nu = (1.0 - cos_nu * cos_nu).sqrt();
    let radiant = cos_nu * p_hat - sin_nu * q_hat;
    let v_inf = (-mu * alpha).sqrt();
    let v_in = -radiant * v_inf * AU_PER_DAY_TO_KM_S;
    let g = equatorial_to_galactic();
    let (ra, dec) = radec_from_vector(&radiant);
    let (l, b) = radec_from_vector(&(g * radiant));
    let uvw = g * v_in;
    Some(Incoming {
        v_inf_km_s: v_inf * AU_PER_DAY_TO_KM_S,
        v_inf_sigma_km_s: sigma_inv_a.map(|s| mu * s / (2.0 * v_inf) * AU_PER_DAY_TO_KM_S),
        radiant_ra_deg: ra.to_degrees(),
        radiant_dec_deg: dec.to_degrees(),
        radiant_l_deg: l.to_degrees(),
        radiant_b_deg: b.to_degrees(),
        uvw_km_s: [uvw.x, uvw.y, uvw.z],
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::propagate::propagate;

    #[test]
    fn a_state_is_unbound_above_the_escape_speed_about_the_barycentre() {
        // At 1 AU from the barycentre, escape speed is √(2μ/r): a little below it bound, a little
        // above it unbound; the Sun's offset from the barycentre is added first.
        let shift = S6::new(0.003, 0.0, 0.0, 0.0, 1e-5, 0.0);
        let escape = (2.0 * MU_BARY).sqrt();
        let at = |k: f64| S6::new(0.997, 0.0, 0.0, 0.0, k * escape - 1e-5, 0.0);
        assert!(!unbound_bary(&at(0.999), &shift));
        assert!(unbound_bary(&at(1.0001), &shift));
        assert!(unbound_bary(&at(1.001), &shift));
    }

    #[test]
    fn radiant_is_where_the_backward_propagated_object_sits() {
        let x = S6::new(1.0, 0.3, 0.2, -0.01, 0.025, 0.006);
        let inc = incoming(&x, MU_SUN, None).unwrap();
        let (r, _) = propagate(
            &V3::new(x[0], x[1], x[2]),
            &V3::new(x[3], x[4], x[5]),
            -2.0e6,
            MU_SUN,
        )
        .unwrap();
        let (ra, dec) = radec_from_vector(&r);
        assert!(
            (ra.to_degrees() - inc.radiant_ra_deg).abs() < 0.05,
            "{} {}",
            ra.to_degrees(),
            inc.radiant_ra_deg
        );
        assert!((dec.to_degrees() - inc.radiant_dec_deg).abs() < 0.05);
        let speed =
            (inc.uvw_km_s[0].powi(2) + inc.uvw_km_s[1].powi(2) + inc.uvw_km_s[2].powi(2)).sqrt();
        assert!((speed - inc.v_inf_km_s).abs() < 1e-9);
    }
}
