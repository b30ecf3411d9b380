//! The observation model: where an object on a given heliocentric orbit appears from an observer, as
//! astrometric RA/Dec (light time included; no aberration or deflection, since astrometry is measured
//! against catalogue stars that share them), and the partial derivatives of (RA·cos Dec, Dec) with
//! respect to the object's state at the orbit epoch.
//!
//! Light time is taken in the barycentric frame: ρ = r☉(t−τ) − R☉(t) − V☉,bary·τ, where the last term
//! carries the Sun's own barycentric motion during the light time (up to ~0.01″ at 1 AU otherwise).

use super::constants::{AU_KM, C_AU_PER_DAY};
use super::earth::{EarthState, EphemerisError, earth_state, hermite};
use super::propagate::{PropagationError, propagate_with_stm};
use super::site::{GroundPosition, celestial_to_intermediate, site_gcrs};
use super::time::{Instant, Jd2};
use super::{M3, M6, S6, V3};
use nalgebra::{Matrix2x6, Matrix3x6, RowVector3};
use std::cell::RefCell;
use std::collections::HashMap;

/// Where an observation was made from.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum ObserverLocation {
    /// A fixed ground site.
    Ground(GroundPosition),
    /// A position relative to the geocentre, ICRF axes, in km (space telescopes, roving observers).
    Geocentric { pos_km: [f64; 3] },
    /// A heliocentric position, ICRF axes, in AU (spacecraft far from Earth).
    Heliocentric { pos_au: [f64; 3] },
}

/// The observer at one instant, heliocentric, ICRF axes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ObserverState {
    pub helio_pos: V3,
    pub helio_vel: V3,
    /// Barycentric velocity of the Sun (AU/day), for the light-time term.
    pub sun_bary_vel: V3,
}

fn compose(
    loc: &ObserverLocation,
    inst: &Instant,
    earth: &EarthState,
    c2i: impl Fn() -> M3,
) -> ObserverState {
    let (pos, vel) = match loc {
        ObserverLocation::Ground(g) => {
            let (s, ds) = site_gcrs(&g.itrs_km(), inst.ut1, &c2i());
            (earth.helio_pos + s, earth.helio_vel + ds)
        }
        ObserverLocation::Geocentric { pos_km } => {
            let p = V3::from(*pos_km) / AU_KM;
            (earth.helio_pos + p, earth.helio_vel)
        }
        ObserverLocation::Heliocentric { pos_au } => (V3::from(*pos_au), V3::zeros()),
    };
    ObserverState {
        helio_pos: pos,
        helio_vel: vel,
        sun_bary_vel: earth.sun_bary_vel(),
    }
}

/// The observer at an instant, computed directly from the series (slow; for one-off use).
pub fn observer_state(
    loc: &ObserverLocation,
    inst: &Instant,
) -> Result<ObserverState, EphemerisError> {
    let earth = earth_state(inst.tdb)?;
    Ok(compose(loc, inst, &earth, || {
        celestial_to_intermediate(inst.tt)
    }))
}

/// Earth's state and the celestial-to-intermediate matrix at one whole TDB day.
#[derive(Debug, Clone, Copy)]
struct Node {
    earth: EarthState,
    c2i: M3,
}

/// Observer positions with the costly series memoised at whole days (TDB JD integers) and interpolated
/// between them: cubic Hermite for Earth (≈ h⁴/384·|x⁗| ≈ 0.07 km at h = 1 d, Sun and Moon terms
/// together), linear for the orientation matrix (< 1 m at the surface). One model serves every fit a
/// worker makes, so each day's nodes are paid for once. Not `Sync`: give each worker its own.
#[derive(Debug, Default)]
pub struct ObserverModel {
    nodes: RefCell<HashMap<i64, Node>>,
}

impl ObserverModel {
    pub fn new() -> ObserverModel {
        ObserverModel::default()
    }

    fn node(&self, day: i64) -> Result<Node, EphemerisError> {
        if let Some(n) = self.nodes.borrow().get(&day) {
            return Ok(*n);
        }
        let t = Jd2::new(day as f64, 0.0);
        // The orientation node is taken at TT = TDB (they differ by < 2 ms).
        let n = Node {
            earth: earth_state(t)?,
            c2i: celestial_to_intermediate(t),
        };
        self.nodes.borrow_mut().insert(day, n);
        Ok(n)
    }

    /// Earth's state, interpolated.
    pub fn earth(&self, tdb: Jd2) -> Result<EarthState, EphemerisError> {
        Ok(self.interpolate(tdb)?.0)
    }

    fn interpolate(&self, tdb: Jd2) -> Result<(EarthState, M3), EphemerisError> {
        let whole = tdb.jd1.floor();
        let x = (tdb.jd1 - whole) + tdb.jd2;
        let k = x.floor();
        let day = whole as i64 + k as i64;
        let s = x - k;
        let (a, b) = (self.node(day)?, self.node(day + 1)?);
        let (ea, eb) = (&a.earth, &b.earth);
        let (hp, hv) = hermite(
            s,
            1.0,
            &ea.helio_pos,
            &ea.helio_vel,
            &eb.helio_pos,
            &eb.helio_vel,
        );
        let (bp, bv) = hermite(
            s,
            1.0,
            &ea.bary_pos,
            &ea.bary_vel,
            &eb.bary_pos,
            &eb.bary_vel,
        );
        let earth = EarthState {
            helio_pos: hp,
            helio_vel: hv,
            bary_pos: bp,
            bary_vel: bv,
        };
        Ok((earth, a.c2i * (1.0 - s) + b.c2i * s))
    }

    /// The celestial-to-intermediate matrix at an instant, interpolated like the observer.
    pub fn orientation(&self, tdb: Jd2) -> Result<M3, EphemerisError> {
        Ok(self.interpolate(tdb)?.1)
    }

    /// The observer at an instant.
    pub fn observer(
        &self,
        loc: &ObserverLocation,
        inst: &Instant,
    ) -> Result<ObserverState, EphemerisError> {
        let (earth, c2i) = self.interpolate(inst.tdb)?;
        Ok(compose(loc, inst, &earth, || c2i))
    }
}

/// A computed position.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Prediction {
    /// Right ascension in [0, 2π) and declination, radians.
    pub ra: f64,
    pub dec: f64,
    /// Topocentric vector to the object (AU), light-time corrected.
    pub topo: V3,
    /// Light time (days).
    pub light_time: f64,
    /// Heliocentric state of the object at emission time t − τ.
    pub obj_pos: V3,
    pub obj_vel: V3,
}

/// Astrometric position of an object with heliocentric state `x0` at `epoch` (TDB), seen at `t` (TDB),
/// with the partials ∂(RA·cos Dec, Dec)/∂x0 (radians per AU and per AU/day).
pub fn predict_with_partials(
    x0: &S6,
    epoch: Jd2,
    t: Jd2,
    obs: &ObserverState,
    mu: f64,
) -> Result<(Prediction, Matrix2x6<f64>), PropagationError> {
    let r0 = x0.fixed_rows::<3>(0).into_owned();
    let v0 = x0.fixed_rows::<3>(3).into_owned();
    let state = propagate_with_stm(&r0, &v0, t.minus(epoch), mu)?;
    Ok(project(state, obs, mu))
}

/// Emission-time state and topocentric vector by light-time iteration on a two-body Taylor series
/// about the observation time `t`: exact far below a metre over minutes to hours.
fn light_time(r: &V3, v: &V3, obs: &ObserverState, mu: f64) -> (V3, f64, V3, V3) {
    let rm = r.norm();
    let acc = -mu * r / (rm * rm * rm);
    let jerk = -mu * (v / (rm * rm * rm) - 3.0 * r.dot(v) * r / rm.powi(5));
    let at = |tau: f64| r - v * tau + acc * (0.5 * tau * tau) - jerk * (tau * tau * tau / 6.0);
    let mut tau = 0.0;
    let mut rho = r - obs.helio_pos;
    for _ in 0..3 {
        tau = rho.norm() / C_AU_PER_DAY;
        rho = at(tau) - obs.helio_pos - obs.sun_bary_vel * tau;
    }
    let obj_vel = v - acc * tau + jerk * (0.5 * tau * tau);
    (rho, tau, at(tau), obj_vel)
}

fn prediction(rho: V3, tau: f64, obj_pos: V3, obj_vel: V3) -> Prediction {
    let u = rho / rho.norm();
    Prediction {
        ra: within_turn(rho.y.atan2(rho.x)),
        dec: u.z.clamp(-1.0, 1.0).asin(),
        topo: rho,
        light_time: tau,
        obj_pos,
        obj_vel,
    }
}

/// Astrometric position from the object's heliocentric state at the observation time (no partials).
pub fn project_position(r: &V3, v: &V3, obs: &ObserverState, mu: f64) -> Prediction {
    let (rho, tau, p, w) = light_time(r, v, obs, mu);
    prediction(rho, tau, p, w)
}

/// Astrometric position and partials from the object's heliocentric state and STM at the observation
/// time `t` (before light time). Any propagator can supply them.
pub fn project(state: (V3, V3, M6), obs: &ObserverState, mu: f64) -> (Prediction, Matrix2x6<f64>) {
    let (r, v, phi) = state;
    let (rho, tau, obj_pos, obj_vel) = light_time(&r, &v, obs, mu);
    let pred = prediction(rho, tau, obj_pos, obj_vel);
    let dist = rho.norm();
    let u = rho / dist;
    // Position rows of Φ(t − τ, t0) ≈ Φr(t) − τ Φv(t).
    let phi_r: Matrix3x6<f64> = phi.fixed_rows::<3>(0) - phi.fixed_rows::<3>(3) * tau;
    let w = obj_vel + obs.sun_bary_vel;
    let u_a = u.transpose() * phi_r / (1.0 + u.dot(&w) / C_AU_PER_DAY);
    let a = phi_r - w * u_a / C_AU_PER_DAY;
    // The unit vectors of increasing RA and Dec, from ρ's components (no trigonometry).
    // At a pole RA is 0 (atan2(0, 0)), whose axes these are.
    let rho_xy = (rho.x * rho.x + rho.y * rho.y).sqrt();
    let (e_ra, e_dec) = if rho_xy > 0.0 {
        (
            RowVector3::new(-rho.y, rho.x, 0.0) / rho_xy,
            RowVector3::new(-u.z * rho.x, -u.z * rho.y, rho_xy * rho_xy / dist) / rho_xy,
        )
    } else {
        (
            RowVector3::new(0.0, 1.0, 0.0),
            RowVector3::new(-u.z, 0.0, 0.0),
        )
    };
    let mut jac = Matrix2x6::zeros();
    jac.set_row(0, &(e_ra * a / dist));
    jac.set_row(1, &(e_dec * a / dist));
    (pred, jac)
}

/// Astrometric position only.
pub fn predict(
    x0: &S6,
    epoch: Jd2,
    t: Jd2,
    obs: &ObserverState,
    mu: f64,
) -> Result<Prediction, PropagationError> {
    predict_with_partials(x0, epoch, t, obs, mu).map(|p| p.0)
}

/// `x.rem_euclid(2π)`, bit for bit, with the one-turn cases that atan2 and angle differences give
/// done by one addition instead of a (software) floating remainder.
fn within_turn(x: f64) -> f64 {
    use std::f64::consts::TAU;
    if (0.0..TAU).contains(&x) {
        x
    } else if x > -TAU && x < 0.0 {
        x + TAU
    } else {
        x.rem_euclid(TAU)
    }
}

/// Residual (O − C) in (RA·cos Dec, Dec), radians, with RA wrapped to ±π.
pub fn residual(obs_ra: f64, obs_dec: f64, pred: &Prediction) -> [f64; 2] {
    let mut dra = obs_ra - pred.ra;
    dra = within_turn(dra + std::f64::consts::PI) - std::f64::consts::PI;
    [dra * pred.dec.cos(), obs_dec - pred.dec]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::constants::{ARCSEC, AU_KM, MU_SUN};
    use crate::physics::propagate::propagate;

    #[test]
    fn within_turn_equals_the_euclidean_remainder_bit_for_bit() {
        use std::f64::consts::{PI, TAU};
        let mut x = -3.0 * TAU;
        while x < 3.0 * TAU {
            assert_eq!(within_turn(x).to_bits(), x.rem_euclid(TAU).to_bits(), "{x}");
            x += 0.0123;
        }
        for x in [-1e-300, -0.0, 0.0, -TAU, TAU, PI, -PI, TAU - 1e-16, -1e-17] {
            assert_eq!(within_turn(x).to_bits(), x.rem_euclid(TAU).to_bits(), "{x}");
        }
    }

    fn sample() -> (S6, Jd2, ObserverState) {
        let x0 = S6::new(1.2, 0.9, 0.2, -0.008, 0.011, 0.002);
        let obs = ObserverState {
            helio_pos: V3::new(0.3, -0.95, 0.0),
            helio_vel: V3::new(0.0165, 0.005, 0.0),
            sun_bary_vel: V3::new(3e-6, -5e-6, 0.0),
        };
        (x0, Jd2::new(2_461_000.5, 0.0), obs)
    }

    #[test]
    fn memoised_observer_within_a_tenth_of_a_km_of_the_direct_series() {
        let model = ObserverModel::new();
        let site = ObserverLocation::Ground(GroundPosition::Geodetic {
            lon_deg: 70.0,
            lat_deg: -20.0,
            alt_m: 2000.0,
        });
        let mut worst: f64 = 0.0;
        for k in 0..300 {
            let inst = crate::physics::time::parse_utc(&format!(
                "2026-{:02}-{:02}T{:02}:{:02}:00Z",
                1 + k % 12,
                1 + k % 28,
                k % 24,
                (k * 7) % 60
            ))
            .unwrap();
            let a = model.observer(&site, &inst).unwrap();
            let b = observer_state(&site, &inst).unwrap();
            worst = worst.max((a.helio_pos - b.helio_pos).norm() * AU_KM);
        }
        assert!(worst < 0.1, "worst {worst} km");
    }

    #[test]
    fn taylor_emission_state_matches_exact_light_time_iteration() {
        let (x0, epoch, obs) = sample();
        let t = Jd2::new(2_461_000.5, 12.3);
        let p = predict(&x0, epoch, t, &obs, MU_SUN).unwrap();
        let r0 = x0.fixed_rows::<3>(0).into_owned();
        let v0 = x0.fixed_rows::<3>(3).into_owned();
        let mut tau = 0.0;
        let mut rho = V3::zeros();
        for _ in 0..5 {
            let (r, _) = propagate(&r0, &v0, t.minus(epoch) - tau, MU_SUN).unwrap();
            rho = r - obs.helio_pos - obs.sun_bary_vel * tau;
            tau = rho.norm() / C_AU_PER_DAY;
        }
        assert!((p.topo - rho).norm() < 1e-13, "{}", (p.topo - rho).norm());
    }

    #[test]
    fn partials_match_central_differences() {
        let (x0, epoch, obs) = sample();
        let t = Jd2::new(2_461_000.5, -20.0);
        let (p, jac) = predict_with_partials(&x0, epoch, t, &obs, MU_SUN).unwrap();
        for j in 0..6 {
            let h = if j < 3 { 1e-7 } else { 1e-9 };
            let mut xp = x0;
            let mut xm = x0;
            xp[j] += h;
            xm[j] -= h;
            let a = predict(&xp, epoch, t, &obs, MU_SUN).unwrap();
            let b = predict(&xm, epoch, t, &obs, MU_SUN).unwrap();
            let ra = residual(a.ra, a.dec, &p);
            let rb = residual(b.ra, b.dec, &p);
            for i in 0..2 {
                let num = (ra[i] - rb[i]) / (2.0 * h);
                let scale = jac.column(j).amax();
                assert!(
                    (num - jac[(i, j)]).abs() < 1e-6 * scale + 1e-3 * ARCSEC,
                    "({i},{j}) numeric {num} analytic {}",
                    jac[(i, j)]
                );
            }
        }
    }
}
