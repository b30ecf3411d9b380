//! The original and future orbits: one state carried backwards or forwards with the Sun and planets
//! until it is far beyond them (or turns round at aphelion), in barycentric axes, where the orbit
//! about the whole solar system's mass is a conic and its 1/a no longer changes.
//!
//! Within 10 au of the barycentre every planet acts (Earth and Moon as their barycentre); beyond, the
//! four inner planets are merged into the Sun (their pull there differs from the merged mass by a
//! part in 10⁹). Planet positions come from SOFA `plan94` at memoised nodes, Hermite-interpolated:
//! one day apart for the inner planets, sixteen for the giants.

use crate::fitting::perturb::MASS_RATIOS;
use crate::physics::constants::MU_SUN;
use crate::physics::dopri::{Control, IntegrationError, Tolerance, integrate};
use crate::physics::earth::hermite;
use crate::physics::{S6, V3};
use std::cell::RefCell;

/// The planets the flight feels, in `plan94` order (Earth stands for the Earth–Moon barycentre).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Planet {
    Mercury,
    Venus,
    Earth,
    Mars,
    Jupiter,
    Saturn,
    Uranus,
    Neptune,
}

const PLANETS: [Planet; 8] = [
    Planet::Mercury,
    Planet::Venus,
    Planet::Earth,
    Planet::Mars,
    Planet::Jupiter,
    Planet::Saturn,
    Planet::Uranus,
    Planet::Neptune,
];

/// Mean distances from the Sun (au; common practice, from memory), for Hill radii only.
const SEMI_MAJOR_AU: [f64; 8] = [0.387, 0.723, 1.0, 1.524, 5.203, 9.537, 19.19, 30.07];

/// Sun/planet mass ratios, the Earth–Moon pair as one body.
fn ratio(k: usize) -> f64 {
    if k == 2 {
        1.0 / (1.0 / MASS_RATIOS[2] + 1.0 / MASS_RATIOS[8])
    } else {
        MASS_RATIOS[k]
    }
}

/// The solar system's total gravitational parameter in this model (au³/day²).
pub fn mu_total() -> f64 {
    static MU: std::sync::OnceLock<f64> = std::sync::OnceLock::new();
    *MU.get_or_init(|| MU_SUN * (1.0 + (0..8).map(|k| 1.0 / ratio(k)).sum::<f64>()))
}

/// Hill radius of a planet (au).
pub fn hill_radius(p: Planet) -> f64 {
    let k = p as usize;
    SEMI_MAJOR_AU[k] * (1.0 / (3.0 * ratio(k))).cbrt()
}

/// Radius (au) inside which the inner planets act as bodies of their own.
const INNER_RADIUS_AU: f64 = 10.0;
/// Node spacing (days): inner planets, giants.
const STEP_INNER: f64 = 1.0;
const STEP_GIANT: f64 = 16.0;
/// Nodes kept per planet and thread before the memo starts afresh, so that a candidate's sample orbits,
/// flying both ways, and the other candidates of the night share one run instead of each recomputing
/// it. Giants: flights of ten centuries back and ten forward from one epoch (45,656 nodes of 16 days).
/// Inner planets, which act only within 10 au: 45 years (a slow orbit's decades there each way). At 56
/// bytes a node, at most 4 × 2.75 + 4 × 0.92 = 14.7 MB a thread, held only as far as flights went
/// (measured: 4 MB more on the population sky's two-night arcs).
const MAX_NODES_GIANT: usize = 49_152;
const MAX_NODES_INNER: usize = 16_384;

/// The node interval holding TDB JD `t`: its first node's index (an instant no ephemeris reaches is
/// an error, not an index at the end of the integers).
fn node_index(t: f64, step: f64) -> Result<i64, IntegrationError> {
    let x = (t / step).floor();
    if x.is_finite() && x.abs() < 1e15 {
        Ok(x as i64)
    } else {
        Err(IntegrationError::NonFinite)
    }
}

/// One planet's states at consecutive nodes `base`, `base + 1`, … (None where not yet computed): a
/// flight sweeps a contiguous span of time, so an index into a run of nodes finds them without
/// hashing (hashing every lookup cost a third of an unbound candidate's whole fit).
#[derive(Default)]
struct NodeRun {
    base: i64,
    states: std::collections::VecDeque<Option<(V3, V3)>>,
}

impl NodeRun {
    fn get(&self, i: i64) -> Option<(V3, V3)> {
        let k = usize::try_from(i.checked_sub(self.base)?).ok()?;
        self.states.get(k).copied().flatten()
    }

    /// Keep `n` at index `i`, growing the run towards it; a run that would pass `max` nodes starts
    /// afresh at `i`. Its storage never grows past `max` (doubling would overshoot it by a third).
    fn put(&mut self, i: i64, n: (V3, V3), max: usize) {
        let len = self.states.len() as i64;
        let (lo, hi) = (self.base.min(i), (self.base + len).max(i + 1));
        if self.states.is_empty() || hi - lo > max as i64 {
            self.base = i;
            self.states.clear();
            self.states.push_back(Some(n));
            return;
        }
        let need = (hi - lo) as usize;
        if need > self.states.capacity() {
            let grow = need.max(2 * self.states.capacity()).min(max);
            self.states.reserve_exact(grow - self.states.len());
        }
        while self.base > i {
            self.states.push_front(None);
            self.base -= 1;
        }
        while self.base + (self.states.len() as i64) <= i {
            self.states.push_back(None);
        }
        self.states[(i - self.base) as usize] = Some(n);
    }
}

thread_local! {
    /// Heliocentric planet states at nodes, per planet.
    static NODES: RefCell<[NodeRun; 8]> = RefCell::new(Default::default());
}

fn node(k: usize, i: i64, step: f64) -> Result<(V3, V3), IntegrationError> {
    if let Some(n) = NODES.with(|m| m.borrow()[k].get(i)) {
        return Ok(n);
    }
    let (pv, _) = sofars::eph::plan94(i as f64 * step, 0.0, k as i32 + 1)
        .map_err(|_| IntegrationError::NonFinite)?;
    let n = (
        V3::new(pv[0][0], pv[0][1], pv[0][2]),
        V3::new(pv[1][0], pv[1][1], pv[1][2]),
    );
    let max = if k < 4 {
        MAX_NODES_INNER
    } else {
        MAX_NODES_GIANT
    };
    NODES.with(|m| m.borrow_mut()[k].put(i, n, max));
    Ok(n)
}

/// The node pair each planet last used (most evaluations fall in the same interval).
type Interval = (i64, (V3, V3), (V3, V3));

thread_local! {
    static LAST: RefCell<[Option<Interval>; 8]> = const { RefCell::new([None; 8]) };
}

/// Heliocentric position of planet k at TDB JD t.
fn planet(k: usize, t: f64) -> Result<V3, IntegrationError> {
    let step = if k < 4 { STEP_INNER } else { STEP_GIANT };
    let i = node_index(t, step)?;
    let (a, b) = match LAST.with(|l| l.borrow()[k]) {
        Some((j, a, b)) if j == i => (a, b),
        _ => {
            let (a, b) = (node(k, i, step)?, node(k, i + 1, step)?);
            LAST.with(|l| l.borrow_mut()[k] = Some((i, a, b)));
            (a, b)
        }
    };
    Ok(hermite(t / step - i as f64, step, &a.0, &a.1, &b.0, &b.1).0)
}

/// The bodies acting at one instant: (μ, barycentric position), planets first, the Sun last.
struct Bodies {
    list: [(f64, V3); 9],
    n: usize,
}

impl Bodies {
    fn iter(&self) -> impl Iterator<Item = &(f64, V3)> {
        self.list[..self.n].iter()
    }
}

/// Barycentric positions of the Sun and the planets that act at distance r from the barycentre; the
/// Sun carries the inner planets' mass when they are merged.
fn bodies(t: f64, r: f64) -> Result<Bodies, IntegrationError> {
    let mu_tot = mu_total();
    let first = if r < INNER_RADIUS_AU { 0 } else { 4 };
    let mut out = Bodies {
        list: [(0.0, V3::zeros()); 9],
        n: 0,
    };
    let mut sun_shift = V3::zeros();
    let mut sun_mu = MU_SUN;
    for k in 0..8 {
        let mu = MU_SUN / ratio(k);
        if k < first {
            sun_mu += mu;
            continue;
        }
        let p = planet(k, t)?;
        sun_shift -= mu * p / mu_tot;
        out.list[out.n] = (mu, p);
        out.n += 1;
    }
    for b in &mut out.list[..out.n] {
        b.1 += sun_shift;
    }
    out.list[out.n] = (sun_mu, sun_shift);
    out.n += 1;
    Ok(out)
}

/// Barycentric state from a heliocentric one at TDB JD t, in this model's barycentre.
pub fn to_barycentric(x: &S6, t: f64) -> Result<S6, IntegrationError> {
    let mu_tot = mu_total();
    let (mut p, mut v) = (V3::zeros(), V3::zeros());
    for k in 0..8 {
        let mu = MU_SUN / ratio(k);
        let step = if k < 4 { STEP_INNER } else { STEP_GIANT };
        let i = node_index(t, step)?;
        let (a, b) = (node(k, i, step)?, node(k, i + 1, step)?);
        let (pk, vk) = hermite(t / step - i as f64, step, &a.0, &a.1, &b.0, &b.1);
        p -= mu * pk / mu_tot;
        v -= mu * vk / mu_tot;
    }
    Ok(x + S6::new(p.x, p.y, p.z, v.x, v.y, v.z))
}

/// Why a flight ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum FlightEnd {
    /// Reached the stop radius.
    Radius,
    /// Turned round at aphelion inside it (a bound orbit).
    Aphelion,
    /// Still inside after the time limit.
    TimeLimit,
}

/// The closest approach to any planet on one flight.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Encounter {
    pub planet: Planet,
    pub distance_au: f64,
    pub hill_radii: f64,
}

/// One flight's outcome.
#[derive(Debug, Clone, Copy)]
pub struct Flight {
    /// Barycentric 1/a (au⁻¹) with the whole system's mass at the end.
    pub inv_a: f64,
    /// Barycentric state (au, au/day) and TDB JD at the end.
    pub end_state: S6,
    pub end_jd: f64,
    pub end: FlightEnd,
    pub closest: Option<Encounter>,
}

/// Longest flight (days): ten centuries cover the way to 250 au of any orbit that gets there.
const MAX_DAYS: f64 = 1000.0 * 365.25;

/// Carry a heliocentric ICRF state at TDB JD `t0` backwards (dir < 0) or forwards until it is
/// `r_stop` au from the barycentre.
pub fn fly(x_helio: &S6, t0: f64, dir: f64, r_stop: f64) -> Result<Flight, IntegrationError> {
    let y0 = to_barycentric(x_helio, t0)?;
    let f = |t: f64, y: &S6| {
        let r = V3::new(y[0], y[1], y[2]);
        let mut a = V3::zeros();
        for (mu, p) in bodies(t, r.norm())?.iter() {
            let d = p - r;
            a += *mu * d / d.norm().powi(3);
        }
        Ok(S6::new(y[3], y[4], y[5], a.x, a.y, a.z))
    };
    let tol = Tolerance {
        rtol: 1e-9,
        atol: 1e-11,
        h0: 0.1,
        h_max: 400.0,
        max_steps: 200_000,
    };
    let outward = |y: &S6| (y[0] * y[3] + y[1] * y[4] + y[2] * y[5]) * dir > 0.0;
    let mut end = FlightEnd::TimeLimit;
    let mut closest: Option<Encounter> = None;
    let mut was_outward = outward(&y0);
    let (t_end, y_end) = integrate(f, t0, y0, dir, &tol, |s| {
        let r = V3::new(s.y1[0], s.y1[1], s.y1[2]);
        let first = if r.norm() < INNER_RADIUS_AU { 0 } else { 4 };
        if let Ok(bs) = bodies(s.t1, r.norm()) {
            for (k, (_, p)) in bs.iter().take(8 - first).enumerate() {
                let planet = PLANETS[first + k];
                let d = (p - r).norm();
                let hill = d / hill_radius(planet);
                if closest.is_none_or(|c| hill < c.hill_radii) {
                    closest = Some(Encounter {
                        planet,
                        distance_au: d,
                        hill_radii: hill,
                    });
                }
            }
        }
        let now_outward = outward(&s.y1);
        if r.norm() >= r_stop {
            end = FlightEnd::Radius;
            return Control::Stop;
        }
        if was_outward && !now_outward {
            end = FlightEnd::Aphelion;
            return Control::Stop;
        }
        was_outward = now_outward;
        if (s.t1 - t0).abs() > MAX_DAYS {
            return Control::Stop;
        }
        Control::Continue
    })?;
    let (r, v) = (
        V3::new(y_end[0], y_end[1], y_end[2]),
        V3::new(y_end[3], y_end[4], y_end[5]),
    );
    Ok(Flight {
        inv_a: 2.0 / r.norm() - v.norm_squared() / mu_total(),
        end_state: y_end,
        end_jd: t_end,
        end,
        closest,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_run_of_nodes_grows_either_way_and_starts_afresh_when_too_long() {
        let at = |x: f64| (V3::new(x, 0.0, 0.0), V3::zeros());
        let max = MAX_NODES_GIANT;
        let mut run = NodeRun::default();
        assert_eq!(run.get(5), None);
        run.put(5, at(5.0), max);
        run.put(8, at(8.0), max);
        run.put(2, at(2.0), max);
        assert_eq!((run.base, run.states.len()), (2, 7));
        for i in [2, 5, 8] {
            assert_eq!(run.get(i), Some(at(i as f64)));
        }
        // Gaps inside the run and indices outside it are simply not there.
        for i in [1, 3, 4, 6, 7, 9, i64::MIN, i64::MAX] {
            assert_eq!(run.get(i), None, "{i}");
        }
        // A node too far away for one run replaces it.
        let far = 2 + max as i64;
        run.put(far, at(1.0), max);
        assert_eq!((run.base, run.states.len()), (far, 1));
        assert_eq!(run.get(5), None);
        assert_eq!(run.get(far), Some(at(1.0)));
    }

    #[test]
    fn a_run_grown_node_by_node_both_ways_to_its_limit_holds_no_more_than_its_limit() {
        let at = |x: f64| (V3::new(x, 0.0, 0.0), V3::zeros());
        // (Not a power of two: doubling from 32,768 would have reached 65,536.)
        let max = MAX_NODES_GIANT;
        let mut run = NodeRun::default();
        // A backward flight then a forward one from node 0, as an origin sheet flies them.
        for i in 0..(max as i64 / 2) {
            run.put(-i, at(-i as f64), max);
        }
        for i in 1..(max as i64 / 2) {
            run.put(i, at(i as f64), max);
        }
        assert_eq!(run.states.len(), max - 1);
        assert!(run.states.capacity() <= max, "{}", run.states.capacity());
        assert_eq!(
            run.get(-(max as i64) / 2 + 1),
            Some(at((-(max as i64) / 2 + 1) as f64))
        );
        assert_eq!(
            run.get(max as i64 / 2 - 1),
            Some(at((max as i64 / 2 - 1) as f64))
        );
    }

    #[test]
    fn the_model_mass_is_the_usual_solar_system_mass() {
        let ratio = mu_total() / MU_SUN;
        // The shared constant is given to seven digits.
        assert!(
            (ratio - crate::physics::constants::MU_BARY_OVER_SUN).abs() < 1e-6,
            "{ratio}"
        );
    }

    #[test]
    fn a_pass_near_jupiter_is_found_and_named() {
        // Start 0.2 au from Jupiter (under its Hill radius) and fly back: the closest approach is
        // Jupiter's, within the flagging distance.
        let t = 2_461_000.5;
        let j = planet(4, t).unwrap();
        let x = S6::new(j.x + 0.2, j.y, j.z, 0.0, 0.012, 0.004);
        let f = fly(&x, t, -1.0, 250.0).unwrap();
        let c = f.closest.unwrap();
        assert_eq!(c.planet, Planet::Jupiter);
        assert!(c.distance_au <= 0.2 + 1e-9 && c.hill_radii < 1.0, "{c:?}");
    }

    #[test]
    fn far_from_the_planets_1_over_a_settles() {
        // A hyperbola leaving the system: 1/a at 150 au and 250 au differ by far less than its size.
        let x = S6::new(1.2, 0.4, -0.3, -0.004, 0.021, 0.012);
        let a = fly(&x, 2_461_000.5, -1.0, 150.0).unwrap();
        let b = fly(&x, 2_461_000.5, -1.0, 250.0).unwrap();
        assert_eq!(a.end, FlightEnd::Radius);
        assert!(a.inv_a < 0.0);
        assert!((a.inv_a - b.inv_a).abs() < 1e-7, "{} {}", a.inv_a, b.inv_a);
    }
}
