//! Follow-up ephemerides: where a fitted object will be, how fast it moves, how bright it is, whether it
//! can be observed from a site, and how uncertain its position is. Linear fits map the state covariance
//! onto the sky (Γ_sky = A Γ Aᵀ); sampled fits propagate every weighted orbit and describe the cloud by
//! weighted quantiles along its principal axes, so a curved cloud is not squeezed into an ellipse.

use super::conditions::{Capabilities, RowOptions, SkyFields, SkySlot, sky_fields};
use super::fit::FitResult;
use super::perturb::Dynamics;
use super::stats::weighted_quantile;
use crate::physics::constants::{ARCSEC, DEG, MU_SUN};
use crate::physics::frames::r3;
use crate::physics::observe::{ObserverLocation, ObserverModel, ObserverState, project};
use crate::physics::site::{GroundPosition, celestial_to_intermediate, earth_rotation_angle};
use crate::physics::time::{Instant, Jd2};
use crate::physics::{M6, S6, V3};

/// Default lowest altitude for "observable" (degrees; common practice, no source).
pub const DEFAULT_MIN_ALT_DEG: f64 = 20.0;
/// The Sun must be below this altitude (degrees) by default: nautical twilight has ended (see
/// [`crate::physics::sky::Twilight`] for the other choices).
pub const SUN_MAX_ALT_DEG: f64 = -12.0;
/// Closer than this to the Sun (degrees) a caution is raised (a common solar-avoidance scale, no source).
pub const SUN_CAUTION_ELONG_DEG: f64 = 45.0;
/// Scale of the uncertainty region: 3 × the 1σ axes (98.9 % of a 2-D Gaussian).
pub const REGION_SIGMA: f64 = 3.0;
/// Weight fraction inside a sampled region (the 2-D equivalent of the 3σ ellipse).
pub const REGION_FRACTION: f64 = 0.989;
/// H–G slope parameter assumed (the usual default of the H–G system; from memory).
pub const SLOPE_G: f64 = 0.15;

/// One ephemeris line (the `ephem --json` record).
#[derive(Debug, Clone, serde::Serialize)]
pub struct EphemerisPoint {
    pub object: String,
    pub time_utc: String,
    pub ra_deg: f64,
    pub dec_deg: f64,
    pub ra_rate_arcsec_min: f64,
    pub dec_rate_arcsec_min: f64,
    /// Direction of motion, from north through east (degrees).
    pub motion_pa_deg: f64,
    pub sun_dist_au: f64,
    pub obs_dist_au: f64,
    pub phase_deg: f64,
    pub elong_deg: f64,
    pub alt_deg: Option<f64>,
    pub az_deg: Option<f64>,
    pub sun_alt_deg: Option<f64>,
    pub v_mag: Option<f64>,
    pub unc_major_arcsec: Option<f64>,
    pub unc_minor_arcsec: Option<f64>,
    pub unc_pa_deg: Option<f64>,
    /// "covariance" or "samples".
    pub unc_from: &'static str,
    pub observable: bool,
    pub sun_caution: bool,
    /// Sexagesimal position, airmass, the Moon, brightness against the site and trail length.
    #[serde(flatten)]
    pub sky: SkyFields,
}

/// H–G phase function: the 2.5 log₁₀[(1 − G)Φ₁ + GΦ₂] term of the H–G magnitude system.
pub fn hg_phase_term(phase_rad: f64, g: f64) -> f64 {
    let t = (phase_rad / 2.0).tan();
    let phi1 = (-3.33 * t.powf(0.63)).exp();
    let phi2 = (-1.87 * t.powf(1.22)).exp();
    -2.5 * ((1.0 - g) * phi1 + g * phi2).log10()
}

/// V = H + 5 log₁₀(rΔ) − 2.5 log₁₀[(1 − G)Φ₁ + GΦ₂].
pub fn hg_magnitude(h: f64, g: f64, r: f64, delta: f64, phase_rad: f64) -> f64 {
    h + 5.0 * (r * delta).log10() + hg_phase_term(phase_rad, g)
}

/// cos β from the three distances (Sun–object r, observer–object Δ, Sun–observer R).
pub fn phase_angle(r: f64, delta: f64, big_r: f64) -> f64 {
    ((r * r + delta * delta - big_r * big_r) / (2.0 * r * delta))
        .clamp(-1.0, 1.0)
        .acos()
}

/// Altitude and azimuth (radians, azimuth from north through east) of an ICRF direction at a site.
/// Geometric: no refraction (about 0.5° at the horizon, under 2′ above 30°).
pub fn alt_az(dir: &V3, site: &GroundPosition, inst: &Instant) -> (f64, f64) {
    let c2i = celestial_to_intermediate(inst.tt);
    let terrestrial = r3(earth_rotation_angle(inst.ut1)) * c2i * dir;
    let (lat, lon) = site.geodetic_lat_lon();
    let (sl, cl) = lon.sin_cos();
    let (sp, cp) = lat.sin_cos();
    let east = V3::new(-sl, cl, 0.0);
    let north = V3::new(-sp * cl, -sp * sl, cp);
    let up = V3::new(cp * cl, cp * sl, sp);
    let (e, n, u) = (
        terrestrial.dot(&east),
        terrestrial.dot(&north),
        terrestrial.dot(&up),
    );
    (
        u.clamp(-1.0, 1.0).asin(),
        e.atan2(n).rem_euclid(std::f64::consts::TAU),
    )
}

pub(crate) fn tangent_axes(ra: f64, dec: f64) -> (V3, V3) {
    let (sa, ca) = ra.sin_cos();
    let (sd, cd) = dec.sin_cos();
    (V3::new(-sa, ca, 0.0), V3::new(-sd * ca, -sd * sa, cd))
}

/// Absolute magnitude from the observed magnitudes of a fit (median of per-observation H).
pub fn fitted_h(fit: &FitResult, mags: &[(Jd2, f64)], obs: &[ObserverState]) -> Option<f64> {
    let (x, epoch, dyn_) = fit_state(fit)?;
    // Every time in one pass (the perturbed model integrates once for all of them, without partials).
    let times: Vec<Jd2> = mags.iter().map(|(t, _)| *t).collect();
    let states = dyn_.positions(&x, epoch, &times).ok()?;
    let mut hs: Vec<f64> = Vec::new();
    for (((_, m), o), (r, v)) in mags.iter().zip(obs).zip(&states) {
        let p = crate::physics::observe::project_position(r, v, o, MU_SUN);
        let r = p.obj_pos.norm();
        let delta = p.topo.norm();
        let beta = phase_angle(r, delta, o.helio_pos.norm());
        hs.push(m - 5.0 * (r * delta).log10() - hg_phase_term(beta, SLOPE_G));
    }
    if hs.is_empty() {
        return None;
    }
    hs.sort_by(f64::total_cmp);
    Some(hs[hs.len() / 2])
}

/// Absolute magnitude of a fit from the magnitudes in its tracklet ([`fitted_h`]).
pub fn tracklet_h(
    fit: &FitResult,
    tr: &super::input::Tracklet,
    model: &ObserverModel,
) -> Option<f64> {
    let with_mag: Vec<_> = tr.obs.iter().filter(|o| o.mag.is_some()).collect();
    let mut mags = Vec::with_capacity(with_mag.len());
    let mut obs = Vec::with_capacity(with_mag.len());
    for o in with_mag {
        if let (Some(m), Ok(st)) = (o.mag, model.observer(&o.location, &o.time)) {
            mags.push((o.time.tdb, m));
            obs.push(st);
        }
    }
    fitted_h(fit, &mags, &obs)
}

/// The fit's orbit and the dynamics that propagate it.
pub(crate) fn fit_state(fit: &FitResult) -> Option<(S6, Jd2, Box<dyn Dynamics>)> {
    let orbit = super::forcemodel::FittedOrbit::of(fit)?;
    Some((orbit.state, orbit.epoch, orbit.dynamics()))
}

/// The ephemeris of one fit at one instant from one site, with the default sky options and the
/// given altitude limit.
pub fn point(
    fit: &FitResult,
    inst: &Instant,
    time_utc: String,
    site: &GroundPosition,
    model: &ObserverModel,
    h: Option<f64>,
    min_alt_deg: f64,
) -> Option<EphemerisPoint> {
    let opts = RowOptions {
        caps: Capabilities {
            min_alt_deg,
            ..Capabilities::default()
        },
        ..RowOptions::default()
    };
    point_with(fit, inst, time_utc, site, model, h, &opts)
}

/// The ephemeris of one fit at one instant from one site, against the site's capabilities, the
/// twilight and the exposure of `opts`.
pub fn point_with(
    fit: &FitResult,
    inst: &Instant,
    time_utc: String,
    site: &GroundPosition,
    model: &ObserverModel,
    h: Option<f64>,
    opts: &RowOptions,
) -> Option<EphemerisPoint> {
    let (x, epoch, dyn_) = fit_state(fit)?;
    let loc = ObserverLocation::Ground(*site);
    let obs = model.observer(&loc, inst).ok()?;
    let st = dyn_.state_and_stm(&x, epoch, inst.tdb).ok()?;
    let (p, jac) = project(st, &obs, MU_SUN);
    let (e_a, e_d) = tangent_axes(p.ra, p.dec);
    let delta = p.topo.norm();
    let rel_v = p.obj_vel - obs.helio_vel;
    let rate_e = e_a.dot(&rel_v) / delta / DEG * 3600.0 / 1440.0;
    let rate_n = e_d.dot(&rel_v) / delta / DEG * 3600.0 / 1440.0;
    let r = p.obj_pos.norm();
    let big_r = obs.helio_pos.norm();
    let beta = phase_angle(r, delta, big_r);
    let sun_dir = -obs.helio_pos;
    let elong = sun_dir.angle(&p.topo) / DEG;
    let (alt, az) = alt_az(&p.topo.normalize(), site, inst);
    let (sun_alt, _) = alt_az(&sun_dir.normalize(), site, inst);
    let (major, minor, pa, from) = if !fit.samples.is_empty() {
        let (a, b, c) = sample_region(fit, dyn_.as_ref(), inst, &obs, p.ra, p.dec)?;
        (Some(a), Some(b), Some(c), "samples")
    } else if let Some((a, b, c)) = fit
        .covariance
        .as_ref()
        .and_then(|cov| covariance_region(cov, &jac))
    {
        (Some(a), Some(b), Some(c), "covariance")
    } else {
        (None, None, None, "none")
    };
    let v = h.map(|h| hg_magnitude(h, SLOPE_G, r, delta, beta));
    let slot = SkySlot::new(site, inst, model).ok()?;
    let dir = p.topo.normalize();
    let rate = rate_e.hypot(rate_n);
    let sky = sky_fields(
        &slot,
        &dir,
        (p.ra / DEG, p.dec / DEG),
        alt / DEG,
        rate,
        v,
        opts,
    );
    Some(EphemerisPoint {
        object: fit.object.clone(),
        time_utc,
        ra_deg: p.ra / DEG,
        dec_deg: p.dec / DEG,
        ra_rate_arcsec_min: rate_e,
        dec_rate_arcsec_min: rate_n,
        motion_pa_deg: rate_e.atan2(rate_n).rem_euclid(std::f64::consts::TAU) / DEG,
        sun_dist_au: r,
        obs_dist_au: delta,
        phase_deg: beta / DEG,
        elong_deg: elong,
        alt_deg: Some(alt / DEG),
        az_deg: Some(az / DEG),
        sun_alt_deg: Some(sun_alt / DEG),
        v_mag: v,
        unc_major_arcsec: major,
        unc_minor_arcsec: minor,
        unc_pa_deg: pa,
        unc_from: from,
        observable: sun_alt / DEG < opts.twilight.sun_limit_deg()
            && alt / DEG > opts.caps.min_alt_deg,
        sun_caution: elong < SUN_CAUTION_ELONG_DEG,
        sky,
    })
}

/// 3σ semi-axes (arcsec) and position angle (degrees, north through east) of the sky ellipse of a
/// state covariance under the partials `jac`.
fn covariance_region(cov: &[[f64; 6]], jac: &nalgebra::Matrix2x6<f64>) -> Option<(f64, f64, f64)> {
    let g = M6::from_fn(|i, j| cov[i][j]);
    let sky = jac * g * jac.transpose();
    // Bounded: an iterative decomposition never settles on a non-finite matrix.
    let eig = sky.try_symmetric_eigen(f64::EPSILON, super::lsqstep::MAX_SVD_SWEEPS)?;
    let (k_major, k_minor) = if eig.eigenvalues[0] >= eig.eigenvalues[1] {
        (0, 1)
    } else {
        (1, 0)
    };
    let u = eig.eigenvectors.column(k_major);
    let pa = u[0].atan2(u[1]).rem_euclid(std::f64::consts::PI) / DEG;
    let s = |k: usize| REGION_SIGMA * eig.eigenvalues[k].max(0.0).sqrt() / ARCSEC;
    Some((s(k_major), s(k_minor), pa))
}

/// Extents of the propagated sample cloud: principal direction from the weighted scatter, then the
/// weighted REGION_FRACTION quantile of |offset| along and across it (arcsec), PA north through east.
fn sample_region(
    fit: &FitResult,
    dyn_: &dyn Dynamics,
    inst: &Instant,
    obs: &ObserverState,
    ra0: f64,
    dec0: f64,
) -> Option<(f64, f64, f64)> {
    let (e_a, e_d) = tangent_axes(ra0, dec0);
    let center = crate::physics::frames::unit_from_radec(ra0, dec0);
    let mut pts = Vec::with_capacity(fit.samples.len());
    let mut ws = Vec::with_capacity(fit.samples.len());
    for (s, ep, w) in &fit.samples {
        let x = S6::from_column_slice(s);
        let Ok(st) = dyn_.state_and_stm(&x, Jd2::new(*ep, 0.0), inst.tdb) else {
            continue;
        };
        let (p, _) = project(st, obs, MU_SUN);
        pts.push(sky_offset(&p.topo.normalize(), &center, (&e_a, &e_d)));
        ws.push(*w);
    }
    sample_extent(&pts, &ws)
}

/// Offset (arcsec, east and north) of the direction `u` from `center`: the true angle between them,
/// along the direction in which `u` lies (an azimuthal equidistant map, bounded by 180° and smooth to
/// the antipode). Gnomonic offsets (tan of the angle) once grew without bound as a sample neared 90°,
/// and samples beyond it were dropped with their weight: a three-σ region of 2.5 million degrees, then
/// one that shrank as the farthest samples fell out.
fn sky_offset(u: &V3, center: &V3, (e_a, e_d): (&V3, &V3)) -> (f64, f64) {
    let (x, y) = (u.dot(e_a), u.dot(e_d));
    let across = x.hypot(y);
    let angle = across.atan2(u.dot(center)) / ARCSEC;
    if across > 0.0 {
        (angle * x / across, angle * y / across)
    } else {
        // The nominal direction itself, or its antipode (any bearing: east).
        (angle, 0.0)
    }
}

/// The region that holds `REGION_FRACTION` of weighted sky offsets (arcsec, east and north of the
/// nominal direction): (major, minor semi-axis in arcsec, position angle of the major axis in
/// degrees).
pub(crate) fn sample_extent(pts: &[(f64, f64)], ws: &[f64]) -> Option<(f64, f64, f64)> {
    let total: f64 = ws.iter().sum();
    if pts.is_empty() || total <= 0.0 {
        return None;
    }
    let mx = pts.iter().zip(ws).map(|(p, w)| p.0 * w).sum::<f64>() / total;
    let my = pts.iter().zip(ws).map(|(p, w)| p.1 * w).sum::<f64>() / total;
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for (p, w) in pts.iter().zip(ws) {
        let (dx, dy) = (p.0 - mx, p.1 - my);
        sxx += w * dx * dx;
        syy += w * dy * dy;
        sxy += w * dx * dy;
    }
    let theta = 0.5 * (2.0 * sxy).atan2(sxx - syy); // angle of the major axis from east
    let (c, s) = (theta.cos(), theta.sin());
    let along: Vec<f64> = pts.iter().map(|p| (p.0 * c + p.1 * s).abs()).collect();
    let across: Vec<f64> = pts.iter().map(|p| (-p.0 * s + p.1 * c).abs()).collect();
    // With n draws the k-th largest covers k/(n + 1) of new draws on average, so the level that covers
    // REGION_FRACTION is ⌈p(n + 1)⌉/n (for the effective n of the weights).
    let n_eff = crate::fitting::stats::effective_sample_size(ws);
    let level = ((REGION_FRACTION * (n_eff + 1.0)).ceil() / n_eff).min(1.0);
    let a = weighted_quantile(&along, ws, level)?;
    let b = weighted_quantile(&across, ws, level)?;
    // PA from north through east of the direction (cos θ east, sin θ north).
    let pa = c.atan2(s).rem_euclid(std::f64::consts::PI) / DEG;
    Some((
        a.max(b),
        a.min(b),
        if a >= b { pa } else { (pa + 90.0) % 180.0 },
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hg_magnitudes_match_the_worked_values() {
        // V = H + 5 log₁₀(rΔ) − 2.5 log₁₀[(1−G)Φ₁ + GΦ₂] (the H–G system); the expected values were
        // recomputed independently in double precision: 16.5051, 17.5048, 20.2361.
        assert!((hg_magnitude(15.0, 0.15, 2.0, 1.0, 0.0) - 16.5051).abs() < 1e-4);
        assert!((hg_magnitude(15.0, 0.15, 2.0, 1.0, 20.0 * DEG) - 17.5048).abs() < 1e-4);
        assert!((hg_magnitude(22.0, 0.15, 1.1, 0.15, 60.0 * DEG) - 20.2361).abs() < 1e-4);
    }

    #[test]
    fn sky_offsets_are_true_angles_bounded_and_never_dropped_past_ninety_degrees() {
        let (ra0, dec0) = (40.0 * DEG, 20.0 * DEG);
        let (e_a, e_d) = tangent_axes(ra0, dec0);
        let center = crate::physics::frames::unit_from_radec(ra0, dec0);
        // Moving north along the meridian by `a`: the offset is (0, a) for every a up to 180°.
        let mut last = -1.0;
        for deg in [1e-4, 0.5, 30.0, 89.0, 90.0, 91.0, 120.0, 179.0] {
            let u = crate::physics::frames::unit_from_radec(ra0, dec0 + deg * DEG);
            let u = if dec0 + deg * DEG > std::f64::consts::FRAC_PI_2 {
                // Past the pole the meridian continues on the other side.
                crate::physics::frames::unit_from_radec(
                    ra0 + std::f64::consts::PI,
                    std::f64::consts::PI - dec0 - deg * DEG,
                )
            } else {
                u
            };
            let (x, y) = sky_offset(&u, &center, (&e_a, &e_d));
            assert!(x.abs() < 1e-6 * deg.max(1.0) * 3600.0, "{deg}: east {x}");
            assert!(
                (y / 3600.0 - deg).abs() < 1e-9 * deg.max(1.0),
                "{deg}: north {y}"
            );
            assert!(y > last, "{deg}: not increasing");
            last = y;
        }
        // The antipode is 180° off, not infinitely far.
        let (x, y) = sky_offset(&(-center), &center, (&e_a, &e_d));
        assert!((x.hypot(y) / 3600.0 - 180.0).abs() < 1e-9, "{x} {y}");
        // Small offsets match the tangent-plane ones (1″ east).
        let u = crate::physics::frames::unit_from_radec(ra0 + ARCSEC / dec0.cos(), dec0);
        let (x, y) = sky_offset(&u, &center, (&e_a, &e_d));
        assert!((x - 1.0).abs() < 1e-6 && y.abs() < 1e-5, "{x} {y}");
    }

    #[test]
    fn meeus_2nd_ex_41_a_phase_angle() {
        // Meeus, Astronomical Algorithms 2nd ed., Example 41.a: r = 0.724604, Δ = 0.910947,
        // R = 0.983824 → cos β = 0.29312 (third-party copy; recomputed).
        assert!((phase_angle(0.724_604, 0.910_947, 0.983_824).cos() - 0.29312).abs() < 1e-5);
    }
}
