//! One night of positions to one answer: the geometry the short-arc posterior needs (observer, its
//! acceleration, the Sun's barycentric motion, the night's magnitude), a refinement loop that keeps
//! the quadrature error small against the decision, and the record the console and `fit` show.

use super::covariance::ElementSigmas;
use super::input::Tracklet;
use super::kinds::{FitMethod, FitStatus, ProbabilitySource};
use super::population::PopulationModel;
use super::result::{FitResult, KEPT_SAMPLES, RangingOut, elements_out};
use super::shortarc::{Geometry, ShortArc, ShortArcOptions, one_night};
use super::significance::{MU_BARY, incoming};
use super::stats::{ONE_SIGMA_QUANTILES, weighted_quantiles};
use crate::physics::constants::{ARCSEC, MU_SUN};
use crate::physics::elements::CometaryElements;
use crate::physics::frames::equatorial_to_ecliptic;
use crate::physics::observe::{ObserverModel, ObserverState};
use crate::physics::time::{Instant, Jd2, tdb_to_tt};
use crate::physics::{S6, V3, split_state};

/// The ln ρ rule is refined while the one-sigma error of P exceeds this (what could change a decision)
/// ...
pub const MAX_P_ERROR: f64 = 0.005;
/// ... or the odds are uncertain by more than this factor in ln (what could change the ranking).
pub const MAX_LN_ODDS_ERROR: f64 = 1.0;

fn settled(p: &super::posterior::Posterior) -> bool {
    p.p_error() <= MAX_P_ERROR && p.ln_odds_error <= MAX_LN_ODDS_ERROR
}

/// Mean V of the night from the reported magnitudes and bands, or the model's assumption.
pub fn night_v_mag(tr: &Tracklet, model: &PopulationModel) -> (f64, bool) {
    let v: Vec<f64> = tr
        .obs
        .iter()
        .filter_map(|o| {
            o.mag
                .filter(|m| m.is_finite())
                .map(|m| m + model.band_offset(o.band.as_deref()))
        })
        .collect();
    if v.is_empty() {
        (model.file.default_mag_v, true)
    } else {
        (v.iter().sum::<f64>() / v.len() as f64, false)
    }
}

/// An instant at a TDB date, with UT1 offset taken from the tracklet's first observation.
pub fn instant_at(tr: &Tracklet, t: Jd2) -> Instant {
    let o = &tr.obs[0].time;
    Instant {
        tai: t,
        tt: tdb_to_tt(t),
        tdb: t,
        ut1: t.plus_days(o.ut1.minus(o.tdb)),
        status: o.status,
    }
}

/// Observer state at `t` for the middle observation's site, and its heliocentric acceleration by
/// central differences (diurnal rotation included).
fn observer_with_acceleration(
    tr: &Tracklet,
    model: &ObserverModel,
    t: Jd2,
) -> Option<(ObserverState, V3)> {
    let loc = tr.obs[tr.obs.len() / 2].location;
    let h = 0.002;
    let at = |dt: f64| model.observer(&loc, &instant_at(tr, t.plus_days(dt))).ok();
    let (o, a, b) = (at(0.0)?, at(-h)?, at(h)?);
    Some((o, (b.helio_vel - a.helio_vel) / (2.0 * h)))
}

/// Fit one night by the short-arc posterior.
pub fn fit_one_night(
    tr: &Tracklet,
    model: &ObserverModel,
    observers: &[ObserverState],
    cov: &[nalgebra::Matrix2<f64>],
    population: &PopulationModel,
    (seed, v_cap_km_s): (u64, f64),
) -> FitResult {
    let fail = |why: String| {
        let mut f = FitResult::failed(tr, why);
        f.method = FitMethod::Ranging;
        f
    };
    let Some(att) = super::shortarc::attributable(tr, cov) else {
        return fail("the positions do not define a direction and rate".into());
    };
    let Some((observer, observer_acc)) = observer_with_acceleration(tr, model, att.t0) else {
        return fail("no observer position at the mean epoch".into());
    };
    let sun_bary = match model.earth(att.t0) {
        Ok(e) => super::significance::barycentric_with(&S6::zeros(), &e),
        Err(e) => return fail(e.to_string()),
    };
    let (v_mag, assumed) = night_v_mag(tr, population);
    let g = Geometry {
        observer,
        observer_acc,
        sun_bary,
        v_mag,
    };
    let mut opts = ShortArcOptions {
        v_cap_km_s,
        ..ShortArcOptions::default()
    };
    let mut arc = match one_night(tr, cov, &g, population, &opts) {
        Ok(a) => a,
        Err(e) => return fail(e.to_string()),
    };
    for _ in 0..2 {
        if settled(&arc.posterior) {
            break;
        }
        opts.n_rho = 2 * opts.n_rho - 1;
        match one_night(tr, cov, &g, population, &opts) {
            Ok(a) => arc = a,
            Err(e) => return fail(e.to_string()),
        }
    }
    let mut out = FitResult::empty(tr);
    out.method = FitMethod::Ranging;
    out.v_mag = Some(v_mag);
    out.v_mag_assumed = assumed;
    out.set_posterior(
        &arc.posterior,
        ProbabilitySource::ShortArcQuadrature,
        &population.source,
    );
    if !settled(&arc.posterior) {
        out.distrust_linear.push(format!(
            "probability uncertain by a factor {:.1} in the odds",
            arc.posterior.ln_odds_error.exp()
        ));
    }
    if assumed {
        out.distrust_linear
            .push(format!("no magnitude reported: V {v_mag:.1} assumed"));
    }
    summarise(&mut out, tr, observers, &arc, &g, (seed, opts.v_cap_km_s));
    out
}

/// Orbits, elements, residuals and quality from the weighted nodes.
fn summarise(
    out: &mut FitResult,
    tr: &Tracklet,
    observers: &[ObserverState],
    arc: &ShortArc,
    g: &Geometry,
    (seed, v_cap_km_s): (u64, f64),
) {
    let Some(weights) = super::stats::relative_weights(arc.nodes.iter().map(|n| n.ln_w)) else {
        return;
    };
    out.n_eff = Some(super::stats::effective_sample_size(&weights));
    // Kept orbits: systematic resampling, each with the attributable drawn from its uncertainty.
    let picks = systematic(&weights, KEPT_SAMPLES, seed);
    let mut rng = super::ranging::SplitMix::new(seed ^ 0xA77);
    let s = arc.attributable.sigma;
    let ecl = equatorial_to_ecliptic();
    let mut kept = Vec::with_capacity(picks.len());
    let mut els = Vec::with_capacity(picks.len());
    for &k in &picks {
        let d = [
            s[0] * rng.normal(),
            s[1] * rng.normal(),
            s[2] * rng.normal(),
            s[3] * rng.normal(),
        ];
        let (x, t) = arc.state(g, &arc.nodes[k], d);
        let (r, v) = split_state(&x);
        els.push(CometaryElements::from_state(
            &(ecl * r),
            &(ecl * v),
            t.value(),
            MU_SUN,
        ));
        kept.push((
            [x[0], x[1], x[2], x[3], x[4], x[5]],
            t.value(),
            1.0 / picks.len() as f64,
        ));
    }
    let (qe, qq, qi) = (
        quantiles(&els, |e| e.e),
        quantiles(&els, |e| e.q),
        quantiles(&els, |e| e.i),
    );
    out.e_sigma = Some((qe[3] - qe[1]) / 2.0);
    (out.e_interval_68, out.e_interval_95) = (Some([qe[1], qe[3]]), Some([qe[0], qe[4]]));
    out.q_sigma = Some((qq[3] - qq[1]) / 2.0);
    out.i_sigma = Some((qi[3] - qi[1]) / 2.0);
    out.ranging = Some(RangingOut {
        trials: arc.evaluations,
        n_eff: out.n_eff.unwrap_or(0.0),
        v_cap_km_s,
        e_interval: [qe[0], qe[2], qe[4]],
        q_interval: [qq[0], qq[2], qq[4]],
        i_interval: [qi[0], qi[2], qi[4]],
    });
    // One σ per quantity: half the central 68 % of the kept orbits, the same in every view.
    let sig = half_widths(&els, [qq, qe, qi]);
    // The orbit that stands for the answer in the table, the panes and the residuals: of the kept
    // orbits' nodes, each at the night's own attributable, the one whose e is nearest the median e
    // (so that e, q, i and the residuals are one orbit's, e near the middle of its interval).
    let mut nodes = picks.clone();
    nodes.dedup();
    let at_node = |k: usize| {
        let (x, t) = arc.state(g, &arc.nodes[k], [0.0; 4]);
        let (r, v) = split_state(&x);
        let el = CometaryElements::from_state(&(ecl * r), &(ecl * v), t.value(), MU_SUN);
        (x, t, el)
    };
    let (x, t, el) = nodes
        .into_iter()
        .map(at_node)
        .min_by(|a, b| (a.2.e - qe[2]).abs().total_cmp(&(b.2.e - qe[2]).abs()))
        .unwrap_or_else(|| at_node(0));
    let (r, v) = split_state(&x);
    out.e = Some(el.e);
    out.q_au = Some(el.q);
    out.i_deg = Some(el.i);
    out.epoch_jd_tdb = Some(t.value());
    out.elements = Some(elements_out(&el, Some(sig), MU_SUN));
    barycentric_line(out, &kept, &x, t, &g.sun_bary);
    out.samples = kept;
    out.state = Some([x[0], x[1], x[2], x[3], x[4], x[5]]);
    out.n_used = tr.obs.len();
    let mut res = Vec::with_capacity(tr.obs.len());
    for (i, o) in tr.obs.iter().enumerate() {
        let p = super::ranging::quick_predict(&r, &v, t, o.time.tdb, &observers[i]);
        res.push(p.map_or([f64::NAN; 2], |p| {
            crate::physics::observe::residual(o.ra, o.dec, &p)
        }));
    }
    let (mut ss, mut nn) = (0.0, 0usize);
    for r in &res {
        ss += r[0] * r[0] + r[1] * r[1];
        nn += 2;
    }
    out.rms_arcsec = Some((ss / nn.max(1) as f64).sqrt() / ARCSEC);
    let att = &arc.attributable;
    let chi2_dof = att.chi2 / att.dof.max(1) as f64;
    // A parabola through three positions fits them exactly: no χ²/dof to show (0 would read as perfect).
    out.chi2_per_dof = (att.dof > 0).then_some(chi2_dof);
    out.residuals = super::lsqrecord::residual_list(tr, &res, &vec![true; tr.obs.len()], &[]);
    // χ²/dof above 3 alone called 5 % of clean nights of four positions poor (two degrees of freedom:
    // P(χ²(2) > 6) = e⁻³); it must also be improbable under the positions' own errors. (A night of
    // three has no degree of freedom about its parabola: `bends_as_no_orbit` tests it.)
    let improbable = super::stats::chi2_survival_even(att.chi2, att.dof)
        .is_none_or(|p| p < super::quality::NIGHT_DISAGREES_P);
    if att.dof > 0 && chi2_dof > super::quality::MAX_CHI2_PER_DOF && improbable {
        out.poor_fit.push(format!(
            "positions off a smooth path: chi2/dof {chi2_dof:.1} of the night's polynomial"
        ));
    }
    if att.dof == 0
        && let Some(why) = bends_as_no_orbit(arc)
    {
        out.poor_fit.push(why);
    }
    out.status = if out.poor_fit.is_empty() {
        FitStatus::Ok
    } else {
        FitStatus::PoorFit
    };
}

/// Whether no trial orbit bends as a night of three positions does (its parabola fits them exactly,
/// so there is no other test): the smallest curvature χ² over the quadrature's orbits (its grid of
/// distances and radial speeds, where the model gives weight; an upper bound on the true smallest,
/// loose where the curvature is measured tightly, so nights of four or more keep the polynomial's
/// test) is improbable under the positions' errors (χ²(2)). A close, fast body curves within the
/// hour (diurnal parallax and the Coriolis-like 2ρ̇u̇/ρ): a straight line once called ten
/// interstellar nights of the population sky poor, ranking them under every bound one.
fn bends_as_no_orbit(arc: &super::shortarc::ShortArc) -> Option<String> {
    arc.attributable.curvature?;
    let best = arc
        .nodes
        .iter()
        .map(|n| n.chi2)
        .fold(f64::INFINITY, f64::min);
    let improbable = super::stats::chi2_survival_even(best, 2)
        .is_some_and(|p| p < super::quality::NIGHT_DISAGREES_P);
    (best.is_finite() && improbable).then(|| {
        format!("positions bend as no orbit does: curvature chi2 {best:.1} for the best of them")
    })
}

/// The 2.5, 15.87, 50, 84.13 and 97.5 % points of an element over equally weighted orbits.
fn quantiles(els: &[CometaryElements], f: impl Fn(&CometaryElements) -> f64) -> [f64; 5] {
    let v: Vec<f64> = els.iter().map(f).collect();
    let eq = vec![1.0; v.len()];
    weighted_quantiles(
        &v,
        &eq,
        [
            0.025,
            ONE_SIGMA_QUANTILES[0],
            0.5,
            ONE_SIGMA_QUANTILES[1],
            0.975,
        ],
    )
    .map(|q| q.unwrap_or(f64::NAN))
}

/// Half the central 68 % of the orbits' elements (q, e and i from their quantiles `[q, e, i]` already
/// worked out).
fn half_widths(els: &[CometaryElements], [qq, qe, qi]: [[f64; 5]; 3]) -> ElementSigmas {
    let half68 = |f: fn(&CometaryElements) -> f64| {
        let q = quantiles(els, f);
        (q[3] - q[1]) / 2.0
    };
    // Angles about their circular mean, so that orbits either side of 0°/360° are not half a turn
    // apart.
    let half68_angle = |f: fn(&CometaryElements) -> f64| {
        let (s, c) = els.iter().fold((0.0, 0.0), |(s, c), el| {
            let a = f(el).to_radians();
            (s + a.sin(), c + a.cos())
        });
        let mean = f64::atan2(s, c).to_degrees();
        let v: Vec<f64> = els
            .iter()
            .map(|el| (f(el) - mean + 180.0).rem_euclid(360.0) - 180.0)
            .collect();
        let q = weighted_quantiles(&v, &vec![1.0; v.len()], ONE_SIGMA_QUANTILES);
        (q[1].unwrap_or(f64::NAN) - q[0].unwrap_or(f64::NAN)) / 2.0
    };
    ElementSigmas {
        q: (qq[3] - qq[1]) / 2.0,
        e: (qe[3] - qe[1]) / 2.0,
        i: (qi[3] - qi[1]) / 2.0,
        node: half68_angle(|e| e.node),
        peri: half68_angle(|e| e.peri),
        tp: half68(|e| e.tp),
        inv_a: half68(|e| e.inv_a),
    }
}

/// The barycentric line from the same orbits: the values of the orbit `x` shown (epoch `t`), the
/// half-widths of the kept orbits' barycentric elements, and the arrival where that orbit is unbound.
fn barycentric_line(
    out: &mut FitResult,
    kept: &[([f64; 6], f64, f64)],
    x: &S6,
    t: Jd2,
    sun_bary: &S6,
) {
    let ecl = equatorial_to_ecliptic();
    let bary = |x: &S6, t: f64| {
        let (rb, vb) = split_state(&(x + sun_bary));
        CometaryElements::from_state(&(ecl * rb), &(ecl * vb), t, MU_BARY)
    };
    let els: Vec<CometaryElements> = kept
        .iter()
        .map(|(s, t, _)| bary(&S6::from(*s), *t))
        .collect();
    let sig = half_widths(
        &els,
        [
            quantiles(&els, |e| e.q),
            quantiles(&els, |e| e.e),
            quantiles(&els, |e| e.i),
        ],
    );
    let elb = bary(x, t.value());
    out.e_bary = Some(elb.e);
    out.e_bary_sigma = Some(sig.e);
    out.inv_a_bary = Some(elb.inv_a);
    out.barycentric = Some(elements_out(&elb, Some(sig), MU_BARY));
    out.incoming = incoming(&(x + sun_bary), MU_BARY, Some(sig.inv_a));
}

/// Indices picked by systematic resampling of `n` from weights (deterministic for a seed).
fn systematic(weights: &[f64], n: usize, seed: u64) -> Vec<usize> {
    let total: f64 = weights.iter().sum();
    if total <= 0.0 || weights.is_empty() {
        return Vec::new();
    }
    let mut rng = super::ranging::SplitMix::new(seed);
    let step = total / n as f64;
    let mut u = rng.uniform() * step;
    let mut acc = 0.0;
    let mut out = Vec::with_capacity(n);
    for (k, w) in weights.iter().enumerate() {
        acc += w;
        while u < acc && out.len() < n {
            out.push(k);
            u += step;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn angle_spreads_of_orbits_either_side_of_zero_are_not_half_a_turn() {
        // Nodes 357°…3° and perihelia 177°…183°: the same spread, one of them across 0°/360°.
        let els: Vec<CometaryElements> = (0..61)
            .map(|k| {
                let d = (k as f64 - 30.0) * 0.1;
                CometaryElements {
                    q: 1.0,
                    e: 0.5,
                    i: 10.0,
                    node: (d + 360.0).rem_euclid(360.0),
                    peri: 180.0 + d,
                    tp: 0.0,
                    inv_a: 0.5,
                    epoch: 0.0,
                }
            })
            .collect();
        let q5 = |f: fn(&CometaryElements) -> f64| quantiles(&els, f);
        let s = half_widths(&els, [q5(|e| e.q), q5(|e| e.e), q5(|e| e.i)]);
        assert!((s.node - s.peri).abs() < 1e-9, "{} {}", s.node, s.peri);
        assert!(s.node > 0.5 && s.node < 3.0, "{}", s.node);
    }
}
