//! The record of a least-squares answer: elements and their σ (heliocentric and barycentric), the other
//! solutions, P(unbound) under the population model (given by the range profile, along the energy line
//! of a trusted fit, or by importance sampling), and the fit's status.

use super::covariance::{eccentricity_gradient, elements_with_sigmas};
use super::fit::FitOptions;
use super::input::Tracklet;
use super::kinds::{FitMethod, FitStatus, ProbabilitySource};
use super::linear::{LineContext, line_posterior};
use super::lsq::{LsqFit, Problem};
use super::onenight::night_v_mag;
use super::quality::{night_means, poor_fit_reasons};
use super::result::{Alternative, FitResult, ResidualOut, elements_out};
use super::sampling::{PriorContext, importance_sample};
use super::significance::{MU_BARY, incoming};
use super::trust::distrust_reasons;
use crate::physics::constants::{ARCSEC, AU_PER_DAY_TO_KM_S, MU_SUN};
use crate::physics::elements::CometaryElements;
use crate::physics::frames::equatorial_to_ecliptic;
use crate::physics::time::tt_to_utc;
use crate::physics::{M3, S6, split_state};

/// |z| from which the linear score stands even when the linear model is distrusted (see lsq_result).
pub const LINEAR_DECIDES: f64 = 6.0;

pub(super) fn rms(fit_res: &[[f64; 2]], used: &[bool]) -> f64 {
    let (mut s, mut n) = (0.0, 0usize);
    for (r, u) in fit_res.iter().zip(used) {
        if *u {
            s += r[0] * r[0] + r[1] * r[1];
            n += 2;
        }
    }
    (s / n.max(1) as f64).sqrt() / ARCSEC
}

/// Every observation's residual as printed (chi2 NaN where the path has none).
pub fn residual_list(
    tr: &Tracklet,
    res: &[[f64; 2]],
    used: &[bool],
    chi2: &[f64],
) -> Vec<ResidualOut> {
    tr.obs
        .iter()
        .enumerate()
        .map(|(i, o)| ResidualOut {
            id: super::obsid::ObsId::of(o),
            time_utc: tt_to_utc(o.time.tt).to_string(),
            site: o.site_code.clone(),
            night: tr.night[i],
            ra_deg: o.ra.to_degrees(),
            dec_deg: o.dec.to_degrees(),
            ra_arcsec: res[i][0] / ARCSEC,
            dec_arcsec: res[i][1] / ARCSEC,
            used: used[i],
            chi2: chi2.get(i).copied().unwrap_or(f64::NAN),
        })
        .collect()
}

/// A probability worked out before the record (the range profile of a two-night arc): the posterior,
/// its path and weighted states at the fit's epoch.
pub struct Given {
    pub posterior: super::posterior::Posterior,
    pub from: super::kinds::ProbabilitySource,
    pub states: Vec<S6>,
    pub weights: Vec<f64>,
    /// The range of e the positions alone allow (`FitResult::e_data_interval`).
    pub e_data_interval: Option<[f64; 2]>,
    /// Which states belong to the answer's own solution, where the posterior has others apart from
    /// it (the element σ and intervals describe the answer; P and the kept orbits weigh them all).
    pub solution: Option<Vec<bool>>,
}

pub fn lsq_result(
    p: &Problem,
    fit: &LsqFit,
    alternatives: &[LsqFit],
    shift: &S6,
    opts: &FitOptions,
    dynamics: super::forcemodel::ForceModel,
    given: Option<Given>,
) -> FitResult {
    let tr = p.tracklet;
    let mut out = FitResult::empty(tr);
    out.dynamics = dynamics;
    out.method = FitMethod::LeastSquares;
    let (e_helio, e_bary, sigma_eb) = fill_orbit(&mut out, p, fit, shift);
    // Computed once: the record lists them, and they decide below whether σ come from draws.
    let reasons = distrust_reasons(p, fit, shift);
    out.distrust_linear.clone_from(&reasons);
    out.alternatives = alternatives_out(fit, alternatives, shift);
    let z_linear = sigma_eb.filter(|s| *s > 0.0).map(|s| (e_bary - 1.0) / s);
    // Beyond ±6σ a nonlinearity of a fifth of σ (the distrust trigger) cannot carry e across 1: keep
    // the linear answer there for three nights or more.
    let decided = z_linear.is_some_and(|z| z.abs() >= LINEAR_DECIDES)
        && tr.n_nights() >= 3
        && alternatives.is_empty();
    let trusted = (out.distrust_linear.is_empty() && out.alternatives.is_empty()) || decided;
    let sampled = given.is_some();
    match given {
        Some(g) => {
            let (v_mag, assumed) = night_v_mag(tr, &opts.population);
            out.v_mag = Some(v_mag);
            out.v_mag_assumed = assumed;
            out.set_posterior(&g.posterior, g.from, &opts.population.source);
            out.e_data_interval = g.e_data_interval;
            super::spreads::sample_spreads(
                &mut out,
                (&g.states, &g.weights, g.solution.as_deref()),
                (fit.epoch.value(), shift),
                opts.seed,
                super::spreads::Headline::MedianE,
            );
        }
        // A fit no orbit explains gets no probability (withheld below): do not compute one.
        None if fit.chi2_per_dof() > NO_ORBIT_CHI2_PER_DOF => {}
        None => lsq_probability(&mut out, p, fit, alternatives, shift, opts, trusted),
    }
    if trusted {
        out.z_linear = z_linear;
    }
    // A linear answer that stands (its z settles the class) although the positions distrust it (the
    // elements curve within 1σ, e lies within 3σ of zero, …): its σ come from draws.
    if !sampled
        && decided
        && out.samples.is_empty()
        && !reasons.is_empty()
        && let Some(c) = fit.cov
    {
        super::spreads::gaussian_spreads(&mut out, fit, &c, shift, opts.seed);
    }
    // The other solutions against the class the record reports (P's, where there is one: a profile's
    // P can call bound an arc whose least-squares minimum lies just past e = 1, and its unbound
    // alternative then went unsaid).
    let unbound = out
        .p_hyperbolic
        .map_or(out.e_bary.unwrap_or(e_bary) >= 1.0, |p| p >= 0.5);
    if let Some(why) = alternatives_note(&out.alternatives, unbound) {
        out.distrust_linear.push(why);
    }
    out.poor_fit = poor_fit_reasons(p, fit, e_helio, &opts.lsq);
    out.status = if out.poor_fit.is_empty() {
        FitStatus::Ok
    } else {
        FitStatus::PoorFit
    };
    if fit.chi2_per_dof() > NO_ORBIT_CHI2_PER_DOF {
        withhold_probability(&mut out);
    }
    out
}

/// The fit's orbit in the record: heliocentric and barycentric elements with their linear σ, the
/// incoming asymptote, residuals, night means, state and covariance. Returns the heliocentric and
/// barycentric e and the barycentric e's σ.
fn fill_orbit(
    out: &mut FitResult,
    p: &Problem,
    fit: &LsqFit,
    shift: &S6,
) -> (f64, f64, Option<f64>) {
    let ecl: M3 = equatorial_to_ecliptic();
    let epoch = fit.epoch.value();
    let (el, sig) = elements_with_sigmas(&fit.state, fit.cov.as_ref(), epoch, MU_SUN, &ecl);
    let xb = fit.state + shift;
    let (elb, sigb) = elements_with_sigmas(&xb, fit.cov.as_ref(), epoch, MU_BARY, &ecl);
    let (rb, vb) = split_state(&xb);
    let sigma_eb = fit.cov.map(|c| {
        let g = eccentricity_gradient(&rb, &vb, MU_BARY);
        (g * c * g.transpose())[0].max(0.0).sqrt()
    });
    out.n_used = fit.n_used();
    out.e = Some(el.e);
    out.e_sigma = sig.map(|s| s.e);
    out.set_linear_e_intervals(el.e, out.e_sigma);
    out.q_au = Some(el.q);
    out.q_sigma = sig.map(|s| s.q);
    out.i_deg = Some(el.i);
    out.i_sigma = sig.map(|s| s.i);
    out.e_bary = Some(elb.e);
    out.e_bary_sigma = sigma_eb;
    out.inv_a_bary = Some(elb.inv_a);
    out.rms_arcsec = Some(rms(&fit.residuals, &fit.used));
    out.chi2_per_dof = Some(fit.chi2_per_dof());
    out.epoch_jd_tdb = Some(epoch);
    out.elements = Some(elements_out(&el, sig, MU_SUN));
    out.barycentric = Some(elements_out(&elb, sigb, MU_BARY));
    out.incoming = incoming(&xb, MU_BARY, sigb.map(|s| s.inv_a));
    out.residuals = residual_list(p.tracklet, &fit.residuals, &fit.used, &fit.obs_chi2);
    out.night_means = night_means(p, fit);
    out.state = Some([0, 1, 2, 3, 4, 5].map(|k| fit.state[k]));
    out.covariance = fit.cov.map(|c| {
        (0..6)
            .map(|i| [0, 1, 2, 3, 4, 5].map(|j| c[(i, j)]))
            .collect()
    });
    (el.e, elb.e, sigma_eb)
}

/// The other solutions as listed: orbit, Δχ² against the reported one, and whether each is unbound.
/// List the search's other least-squares minima on a record that has none (an answer the range
/// profile gave, whose own valleys held too little weight to list), with the note that says which
/// class they are against P's: `next_night` and the plan must know of another solution of the
/// other class (a note alone once let the next night "settle" such an arc).
pub(super) fn list_other_minima(
    out: &mut FitResult,
    fit: &LsqFit,
    alternatives: &[LsqFit],
    shift: &S6,
) {
    if !out.alternatives.is_empty() || alternatives.is_empty() {
        return;
    }
    out.alternatives = alternatives_out(fit, alternatives, shift);
    let unbound = out
        .p_hyperbolic
        .map_or(out.e_bary.is_some_and(|e| e >= 1.0), |p| p >= 0.5);
    out.distrust_linear
        .extend(alternatives_note(&out.alternatives, unbound));
}

fn alternatives_out(fit: &LsqFit, alternatives: &[LsqFit], shift: &S6) -> Vec<Alternative> {
    let ecl = equatorial_to_ecliptic();
    alternatives
        .iter()
        .map(|a| {
            let (r, v) = split_state(&a.state);
            let el = CometaryElements::from_state(&(ecl * r), &(ecl * v), a.epoch.value(), MU_SUN);
            let (rb, vb) = split_state(&(a.state + shift));
            Alternative {
                delta_chi2: a.chi2 - fit.chi2,
                e: el.e,
                q_au: el.q,
                i_deg: el.i,
                unbound: CometaryElements::from_state(&rb, &vb, 0.0, MU_BARY).e >= 1.0,
                probability: None,
            }
        })
        .collect()
}

/// What the record says when the positions allow other solutions, how much worse the worst of them
/// fits, and whether any flips the answer.
fn alternatives_note(alternatives: &[Alternative], unbound: bool) -> Option<String> {
    if alternatives.is_empty() {
        return None;
    }
    let worst = alternatives
        .iter()
        .map(|a| a.delta_chi2)
        .fold(f64::NEG_INFINITY, f64::max);
    let allowed = format!(
        "{} other solution(s) the positions also allow (Δχ² up to {worst:+.1})",
        alternatives.len()
    );
    let flips = alternatives.iter().filter(|a| a.unbound != unbound).count();
    Some(if flips > 0 {
        format!(
            "{allowed}, {flips} of them {}: P weighs them all",
            if unbound { "bound" } else { "unbound" }
        )
    } else {
        allowed
    })
}

/// χ²/dof beyond which no orbit fits the positions at all (a false linkage or a broken position):
/// the probability of such a "fit" being unbound means nothing and is not shown.
pub const NO_ORBIT_CHI2_PER_DOF: f64 = 100.0;

pub(super) fn withhold_probability(out: &mut FitResult) {
    out.p_hyperbolic = None;
    out.p_hyperbolic_error = None;
    out.z_hyperbolic = None;
    out.log10_odds = None;
    out.z_linear = None;
    out.bayes_factor = None;
    out.log10_bayes_factor = None;
    out.z_is_bound = false;
    out.e_data_interval = None;
    // Nor an incoming asymptote: a "v∞" of 0.9 c once stood beside a false linkage.
    out.incoming = None;
    out.probability_from = ProbabilitySource::NoProbability;
    out.poor_fit
        .push("no probability: no orbit fits these positions".into());
}

/// P(unbound) of a least-squares fit under the population model: along the energy line where the
/// linear fit is trusted, by importance sampling where it is not (with the line's answer when the
/// samples leave one class empty, since they cannot weigh its tail).
fn lsq_probability(
    out: &mut FitResult,
    p: &Problem,
    fit: &LsqFit,
    alternatives: &[LsqFit],
    shift: &S6,
    opts: &FitOptions,
    trusted: bool,
) {
    let tr = p.tracklet;
    let model = &opts.population;
    let (v_mag, assumed) = night_v_mag(tr, model);
    out.v_mag = Some(v_mag);
    out.v_mag_assumed = assumed;
    if assumed {
        out.distrust_linear
            .push(format!("no magnitude reported: V {v_mag:.1} assumed"));
    }
    let dt = |i: usize| tr.obs[i].time.tdb.minus(fit.epoch).abs();
    let mid = (0..tr.obs.len())
        .min_by(|&a, &b| dt(a).total_cmp(&dt(b)))
        .unwrap_or(0);
    let observer = p.observers[mid].helio_pos;
    let line = fit.cov.and_then(|c| {
        line_posterior(
            &fit.state,
            &c,
            &LineContext {
                model,
                sun_bary: *shift,
                observer,
                v_mag,
                v_cap_au_day: opts.ranging.v_cap_km_s / AU_PER_DAY_TO_KM_S,
            },
        )
    });
    if trusted {
        match line {
            Some(post) => out.set_posterior(&post, ProbabilitySource::Linear, &model.source),
            None => out.error = Some("the covariance gives no spread in energy".into()),
        }
        return;
    }
    let mut all: Vec<&LsqFit> = vec![fit];
    all.extend(alternatives.iter());
    let ctx = PriorContext {
        model,
        v_mag,
        observer,
    };
    let Some(set) = importance_sample(p, &all, opts.samples, opts.seed, shift, &ctx) else {
        if let Some(post) = line {
            out.set_posterior(&post, ProbabilitySource::Linear, &model.source);
            out.distrust_linear
                .push("sampling found no weight: answer from the linear fit".into());
        }
        return;
    };
    match (set.n_unbound == 0 || set.n_bound == 0, line) {
        (true, Some(post)) => {
            out.set_posterior(&post, ProbabilitySource::Linear, &model.source);
            out.distrust_linear.push(format!(
                "no sampled orbit was {}: that tail is from the linear fit",
                if set.n_unbound == 0 {
                    "unbound"
                } else {
                    "bound"
                }
            ));
        }
        _ => {
            out.set_posterior(
                &set.posterior,
                ProbabilitySource::ImportanceSampling,
                &model.source,
            );
            // The sampling budget ran out before the error was small: say how uncertain P is.
            if set.posterior.ln_odds_error > super::sampling::TARGET_LN_ODDS_ERROR {
                out.distrust_linear.push(format!(
                    "probability uncertain by a factor {:.1} in the odds ({:.0} effective samples)",
                    set.posterior.ln_odds_error.exp(),
                    set.n_eff
                ));
            }
        }
    }
    super::spreads::sample_spreads(
        out,
        (&set.states, &set.weights, None),
        (fit.epoch.value(), shift),
        opts.seed,
        super::spreads::Headline::MedianE,
    );
}
