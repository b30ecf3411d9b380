//! The origin sheet of one fitted candidate: the record `fit --json`, `origin` and the console show.

use super::flight::{Encounter, FlightEnd, fly, mu_total};
use super::kinematics::{Ellipse, Membership, mean_sigma, membership, sky_ellipse};
use super::{MAX_SAMPLES, MIN_PROBABILITY, OriginOptions};
use crate::fitting::ranging::SplitMix;
use crate::fitting::result::{FitResult, resample};
use crate::fitting::significance::{Incoming, incoming};
use crate::physics::frames::{equatorial_to_galactic, radec_from_vector, unit_from_radec};
use crate::physics::galaxy::{Envelope, POTENTIAL_NAME, Trace, orbit_envelope};
use crate::physics::{M6, S6, V3};

/// Relative tolerance of the Galactic orbits (model units): envelopes to about a part in 10⁴.
pub const GALACTIC_RTOL: f64 = 1e-6;
/// Speed at infinity (km/s) beyond which hardly any star near the Sun moves (project default, not a
/// literature threshold): the built-in population model puts 0.3 % of the interstellar bodies near
/// the Sun above it, weighted by their flux and focusing (2 % above 150 km/s, where this once stood;
/// its halo's mean is 232 km/s).
pub const IMPLAUSIBLE_KM_S: f64 = 300.0;
/// An encounter closer than this many Hill radii could have changed the orbit's energy.
pub const ENCOUNTER_HILL_RADII: f64 = 3.0;

/// Is the arrival speed one that stars near the Sun have?
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Plausibility {
    /// Within the speeds of stars near the Sun.
    LikeNearbyStars,
    /// Faster than nearly all of them: more likely a false linkage or bad astrometry.
    TooFastSuspectLinkage,
}

/// Envelope of the Galactic orbit with its spread over the samples.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct GalacticOrbit {
    pub r_peri_kpc: f64,
    pub r_peri_kpc_sigma: Option<f64>,
    pub r_apo_kpc: f64,
    pub r_apo_kpc_sigma: Option<f64>,
    pub z_max_kpc: f64,
    pub z_max_kpc_sigma: Option<f64>,
    pub ecc: f64,
    /// The spreads are null where fewer than two sampled orbits were followed.
    pub ecc_sigma: Option<f64>,
    /// Fraction of the followed orbits that leave the Galaxy.
    pub escaping_fraction: f64,
    pub samples: usize,
}

/// The sheet.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Origin {
    /// Barycentric 1/a before the planets acted (au⁻¹), its σ, and the same after them.
    pub inv_a_orig_per_au: f64,
    pub inv_a_orig_sigma: f64,
    pub inv_a_fut_per_au: f64,
    pub inv_a_fut_sigma: f64,
    /// The osculating barycentric 1/a at the fit's epoch, beside them.
    pub inv_a_osc_per_au: Option<f64>,
    /// Share of the samples whose original orbit is unbound, and how the fitted orbit's flight ended.
    pub unbound_before_planets: f64,
    pub original_flight_end: FlightEnd,
    pub v_inf_orig_km_s: Option<f64>,
    pub v_inf_orig_sigma: Option<f64>,
    /// Where it came from (incoming asymptote of the original orbit), with 1σ ellipses.
    pub radiant_ra_deg: Option<f64>,
    pub radiant_dec_deg: Option<f64>,
    pub radiant_l_deg: Option<f64>,
    pub radiant_b_deg: Option<f64>,
    pub radiant_ellipse: Option<Ellipse>,
    pub radiant_ellipse_galactic: Option<Ellipse>,
    /// Velocity before arrival relative to the Sun and to the local standard of rest (km/s).
    pub uvw_helio_km_s: Option<[f64; 3]>,
    pub uvw_helio_sigma: Option<[f64; 3]>,
    pub uvw_lsr_km_s: Option<[f64; 3]>,
    pub speed_lsr_km_s: Option<f64>,
    /// Relative membership of stars with this velocity (not a statement about this object's birth).
    pub membership: Option<Membership>,
    pub galactic_orbit: Option<GalacticOrbit>,
    pub plausibility: Option<Plausibility>,
    /// The closest planetary approach of any sample before the epoch, and whether it is close enough
    /// to have changed the orbit.
    pub closest_approach: Option<Encounter>,
    pub planetary_encounter: bool,
    pub samples: usize,
    /// What was assumed.
    pub potential: &'static str,
    pub solar_motion_km_s: [f64; 3],
    pub r0_kpc: f64,
    pub z0_kpc: f64,
    pub v_circ_km_s: f64,
    pub galactic_gyr: f64,
    pub stop_au: f64,
    /// The fitted orbit's Galactic path, (R, z) in kpc, for drawing.
    #[serde(skip)]
    pub path: Trace,
}

/// Orbit samples (state, epoch, weight): the fit's own, or antithetic draws from its covariance.
fn orbit_samples(r: &FitResult, n: usize, seed: u64) -> Vec<(S6, f64, f64)> {
    let n = n.min(MAX_SAMPLES);
    if !r.samples.is_empty() {
        return resample(r.samples.clone(), n, seed)
            .into_iter()
            .map(|(s, t, w)| (S6::from(s), t, w))
            .collect();
    }
    let (Some(x), Some(c), Some(t)) = (r.state, r.covariance.as_ref(), r.epoch_jd_tdb) else {
        return Vec::new();
    };
    let cov = M6::from_fn(|i, j| c[i][j]);
    let Some(chol) = cov.cholesky() else {
        return Vec::new();
    };
    let mut rng = SplitMix::new(seed);
    let mut out = Vec::with_capacity(n);
    // Antithetic pairs: an odd count rounds up.
    while out.len() < n.max(2) {
        let z = S6::from_fn(|_, _| rng.normal());
        let d = chol.l() * z;
        out.push((S6::from(x) + d, t, 1.0));
        out.push((S6::from(x) - d, t, 1.0));
    }
    out
}

/// One sample's flights: original and future 1/a, closest approach before the epoch, the arrival.
struct Flown {
    inv_a_orig: f64,
    inv_a_fut: f64,
    closest: Option<Encounter>,
    arrival: Option<Incoming>,
    weight: f64,
}

fn fly_both(x: &S6, t: f64, w: f64, stop: f64) -> Option<(Flown, FlightEnd)> {
    let back = fly(x, t, -1.0, stop).ok()?;
    let ahead = fly(x, t, 1.0, stop).ok()?;
    let arrival = (back.end == FlightEnd::Radius && back.inv_a < 0.0)
        .then(|| incoming(&back.end_state, mu_total(), None))
        .flatten();
    Some((
        Flown {
            inv_a_orig: back.inv_a,
            inv_a_fut: ahead.inv_a,
            closest: back.closest,
            arrival,
            weight: w,
        },
        back.end,
    ))
}

/// The origin sheet of a fitted candidate with P(unbound) ≥ `MIN_PROBABILITY`, or of any one with
/// `OriginOptions::any_probability` (None below it otherwise, or when the fit has no orbit).
pub fn origin_sheet(r: &FitResult, o: &OriginOptions) -> Option<Origin> {
    if !o.any_probability && r.p_hyperbolic.is_none_or(|p| p < MIN_PROBABILITY) {
        return None;
    }
    // The orbit the record's elements describe (a sample's where P comes from samples).
    let (x, t) = (S6::from(r.shown_state.or(r.state)?), r.epoch_jd_tdb?);
    let (nominal, end) = fly_both(&x, t, 1.0, o.stop_au)?;
    let flown: Vec<Flown> = orbit_samples(r, o.samples, o.seed)
        .iter()
        .filter_map(|(s, t, w)| fly_both(s, *t, *w, o.stop_au).map(|f| f.0))
        .collect();
    let set: &[Flown] = if flown.is_empty() {
        std::slice::from_ref(&nominal)
    } else {
        &flown
    };
    let w: Vec<f64> = set.iter().map(|f| f.weight).collect();
    let orig: Vec<f64> = set.iter().map(|f| f.inv_a_orig).collect();
    let fut: Vec<f64> = set.iter().map(|f| f.inv_a_fut).collect();
    let unbound_w: f64 = set
        .iter()
        .filter(|f| f.arrival.is_some())
        .map(|f| f.weight)
        .sum();
    let closest = set
        .iter()
        .chain(std::iter::once(&nominal))
        .filter_map(|f| f.closest)
        .min_by(|a, b| a.hill_radii.total_cmp(&b.hill_radii));
    let mut sheet = Origin {
        inv_a_orig_per_au: nominal.inv_a_orig,
        inv_a_orig_sigma: mean_sigma(&orig, &w).1,
        inv_a_fut_per_au: nominal.inv_a_fut,
        inv_a_fut_sigma: mean_sigma(&fut, &w).1,
        inv_a_osc_per_au: r.inv_a_bary,
        // (+ 0.0: an empty sum is −0.0.)
        unbound_before_planets: unbound_w / w.iter().sum::<f64>().max(1e-300) + 0.0,
        original_flight_end: end,
        v_inf_orig_km_s: None,
        v_inf_orig_sigma: None,
        radiant_ra_deg: None,
        radiant_dec_deg: None,
        radiant_l_deg: None,
        radiant_b_deg: None,
        radiant_ellipse: None,
        radiant_ellipse_galactic: None,
        uvw_helio_km_s: None,
        uvw_helio_sigma: None,
        uvw_lsr_km_s: None,
        speed_lsr_km_s: None,
        membership: None,
        galactic_orbit: None,
        plausibility: None,
        closest_approach: closest,
        planetary_encounter: closest.is_some_and(|c| c.hill_radii < ENCOUNTER_HILL_RADII),
        samples: set.len(),
        potential: POTENTIAL_NAME,
        solar_motion_km_s: o.frame.solar_motion_km_s,
        r0_kpc: o.frame.r0_kpc,
        z0_kpc: o.frame.z0_kpc,
        v_circ_km_s: o.frame.v_circ_km_s,
        galactic_gyr: o.galactic_gyr,
        stop_au: o.stop_au,
        path: Vec::new(),
    };
    fill_arrival(&mut sheet, &nominal, set, o);
    Some(sheet)
}

/// Arrival, kinematics and Galactic orbit from the samples that came from interstellar space.
fn fill_arrival(sheet: &mut Origin, nominal: &Flown, set: &[Flown], o: &OriginOptions) {
    let arrivals: Vec<(Incoming, f64)> = set
        .iter()
        .filter_map(|f| f.arrival.map(|a| (a, f.weight)))
        .collect();
    let Some(centre) = nominal.arrival.or_else(|| mean_arrival(&arrivals)) else {
        return;
    };
    let w: Vec<f64> = arrivals.iter().map(|a| a.1).collect();
    let v: Vec<f64> = arrivals.iter().map(|a| a.0.v_inf_km_s).collect();
    let dirs: Vec<V3> = arrivals
        .iter()
        .map(|a| {
            unit_from_radec(
                a.0.radiant_ra_deg.to_radians(),
                a.0.radiant_dec_deg.to_radians(),
            )
        })
        .collect();
    let c_dir = unit_from_radec(
        centre.radiant_ra_deg.to_radians(),
        centre.radiant_dec_deg.to_radians(),
    );
    let g = equatorial_to_galactic();
    let g_dirs: Vec<V3> = dirs.iter().map(|d| g * d).collect();
    let uvw_sigma: [f64; 3] = std::array::from_fn(|k| {
        let c: Vec<f64> = arrivals.iter().map(|a| a.0.uvw_km_s[k]).collect();
        mean_sigma(&c, &w).1
    });
    let lsr = o.frame.to_lsr(centre.uvw_km_s);
    sheet.v_inf_orig_km_s = Some(centre.v_inf_km_s);
    sheet.v_inf_orig_sigma = (v.len() >= 2).then(|| mean_sigma(&v, &w).1);
    sheet.radiant_ra_deg = Some(centre.radiant_ra_deg);
    sheet.radiant_dec_deg = Some(centre.radiant_dec_deg);
    sheet.radiant_l_deg = Some(centre.radiant_l_deg);
    sheet.radiant_b_deg = Some(centre.radiant_b_deg);
    sheet.radiant_ellipse = Some(sky_ellipse(&dirs, &w, &c_dir));
    sheet.radiant_ellipse_galactic = Some(sky_ellipse(&g_dirs, &w, &(g * c_dir)));
    sheet.uvw_helio_km_s = Some(centre.uvw_km_s);
    sheet.uvw_helio_sigma = Some(uvw_sigma);
    sheet.uvw_lsr_km_s = Some(lsr);
    sheet.speed_lsr_km_s = Some(V3::from(lsr).norm());
    sheet.plausibility = Some(if centre.v_inf_km_s > IMPLAUSIBLE_KM_S {
        Plausibility::TooFastSuspectLinkage
    } else {
        Plausibility::LikeNearbyStars
    });
    sheet.membership = average_membership(&arrivals, o);
    let (orbit, path) = galactic_orbit(&centre, &arrivals, o);
    sheet.galactic_orbit = orbit;
    sheet.path = path;
}

/// The arrival of the samples' mean Galactic velocity (when the fitted orbit itself is bound before
/// the planets but some samples are not).
fn mean_arrival(arrivals: &[(Incoming, f64)]) -> Option<Incoming> {
    let total: f64 = arrivals.iter().map(|a| a.1).sum();
    if arrivals.is_empty() || total <= 0.0 {
        return None;
    }
    let uvw = arrivals
        .iter()
        .fold(V3::zeros(), |acc, (a, w)| acc + V3::from(a.uvw_km_s) * *w)
        / total;
    let g = equatorial_to_galactic();
    let (ra, dec) = radec_from_vector(&(g.transpose() * -uvw));
    let (l, b) = radec_from_vector(&-uvw);
    Some(Incoming {
        v_inf_km_s: uvw.norm(),
        v_inf_sigma_km_s: None,
        radiant_ra_deg: ra.to_degrees(),
        radiant_dec_deg: dec.to_degrees(),
        radiant_l_deg: l.to_degrees(),
        radiant_b_deg: b.to_degrees(),
        uvw_km_s: [uvw.x, uvw.y, uvw.z],
    })
}

/// Membership averaged over the arrivals.
fn average_membership(arrivals: &[(Incoming, f64)], o: &OriginOptions) -> Option<Membership> {
    let mut acc = [0.0; 3];
    let mut total = 0.0;
    for (a, w) in arrivals {
        let m = membership(o.frame.to_lsr(a.uvw_km_s), &o.components)?;
        acc[0] += w * m.thin_disc;
        acc[1] += w * m.thick_disc;
        acc[2] += w * m.halo;
        total += w;
    }
    (total > 0.0).then(|| Membership {
        thin_disc: acc[0] / total,
        thick_disc: acc[1] / total,
        halo: acc[2] / total,
    })
}

/// The fitted orbit's Galactic envelope and path, with spreads over up to `galactic_samples`
/// arrivals.
fn galactic_orbit(
    centre: &Incoming,
    arrivals: &[(Incoming, f64)],
    o: &OriginOptions,
) -> (Option<GalacticOrbit>, Trace) {
    let run = |a: &Incoming, trace: Option<&mut Trace>| -> Option<Envelope> {
        let (p, v) = o.frame.galactocentric(a.uvw_km_s);
        orbit_envelope(p, v, o.galactic_gyr, GALACTIC_RTOL, trace).ok()
    };
    let mut path = Vec::new();
    let Some(best) = run(centre, Some(&mut path)) else {
        return (None, path);
    };
    let step = (arrivals.len() / o.galactic_samples.max(1)).max(1);
    let envs: Vec<(Envelope, f64)> = arrivals
        .iter()
        .step_by(step)
        .take(o.galactic_samples)
        .filter_map(|(a, w)| run(a, None).map(|e| (e, *w)))
        .collect();
    let w: Vec<f64> = envs.iter().map(|e| e.1).collect();
    // No spread of fewer than two orbits (an empty sum would show as a σ of −0.0).
    let sig = |f: fn(&Envelope) -> f64| {
        let v: Vec<f64> = envs.iter().map(|e| f(&e.0)).collect();
        (v.len() >= 2).then(|| mean_sigma(&v, &w).1)
    };
    let escaping = envs
        .iter()
        .filter(|e| e.0.escapes)
        .map(|e| e.1)
        .sum::<f64>()
        / w.iter().sum::<f64>().max(1e-300)
        // An empty sum of floats is −0.0: none escaping is 0, not "-0.0" in the JSON.
        + 0.0;
    let orbit = GalacticOrbit {
        r_peri_kpc: best.r_peri_kpc,
        r_peri_kpc_sigma: sig(|e| e.r_peri_kpc),
        r_apo_kpc: best.r_apo_kpc,
        r_apo_kpc_sigma: sig(|e| e.r_apo_kpc),
        z_max_kpc: best.z_max_kpc,
        z_max_kpc_sigma: sig(|e| e.z_max_kpc),
        ecc: best.ecc,
        ecc_sigma: sig(|e| e.ecc),
        escaping_fraction: if envs.is_empty() {
            f64::from(u8::from(best.escapes))
        } else {
            escaping
        },
        samples: envs.len(),
    };
    (Some(orbit), path)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::frames::radec_from_vector;

    fn arrival(uvw: [f64; 3]) -> Incoming {
        Incoming {
            v_inf_km_s: V3::from(uvw).norm(),
            v_inf_sigma_km_s: None,
            radiant_ra_deg: 0.0,
            radiant_dec_deg: 0.0,
            radiant_l_deg: 0.0,
            radiant_b_deg: 0.0,
            uvw_km_s: uvw,
        }
    }

    /// Draws from a covariance come in antithetic pairs: an odd count rounds up (3 once gave 2).
    #[test]
    fn draws_from_a_covariance_are_at_least_the_count_asked_in_whole_pairs() {
        let mut r = crate::testutil::record("x", 0.5, 2);
        r.samples.clear();
        r.state = Some([1.0, 0.2, 0.0, 0.0, 0.017, 0.001]);
        r.epoch_jd_tdb = Some(2_461_000.5);
        r.covariance = Some(
            (0..6)
                .map(|i| std::array::from_fn(|j| if i == j { 1e-8 } else { 0.0 }))
                .collect(),
        );
        for (asked, got) in [(1, 2), (2, 2), (3, 4), (7, 8), (48, 48)] {
            assert_eq!(orbit_samples(&r, asked, 1).len(), got, "{asked}");
        }
    }

    #[test]
    fn the_mean_arrival_comes_from_opposite_the_mean_velocity() {
        let a = [
            (arrival([10.0, -20.0, 5.0]), 1.0),
            (arrival([14.0, -24.0, 1.0]), 1.0),
        ];
        let m = mean_arrival(&a).unwrap();
        assert_eq!(m.uvw_km_s, [12.0, -22.0, 3.0]);
        assert!((m.v_inf_km_s - V3::new(12.0, -22.0, 3.0).norm()).abs() < 1e-12);
        let (l, b) = radec_from_vector(&V3::new(-12.0, 22.0, -3.0));
        assert!((m.radiant_l_deg - l.to_degrees()).abs() < 1e-9);
        assert!((m.radiant_b_deg - b.to_degrees()).abs() < 1e-9);
        let eq = equatorial_to_galactic().transpose() * V3::new(-12.0, 22.0, -3.0);
        let (ra, _) = radec_from_vector(&eq);
        assert!((m.radiant_ra_deg - ra.to_degrees()).abs() < 1e-9);
        assert!(mean_arrival(&[]).is_none());
    }
}
