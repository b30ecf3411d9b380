//! One tracklet in, one answer out: chooses the method (the short-arc posterior for a night seen from
//! one place, the range profile for two nights or a night from several places, least squares for
//! longer arcs, ranging for two positions or a degenerate problem), the dynamics, and how P(unbound)
//! under the population model is estimated, and gathers everything the console and the batch output
//! show.

use super::input::Tracklet;
use super::lsq::{LsqFit, LsqOptions, Problem, correct_with_outliers};
use super::lsqrecord::{NO_ORBIT_CHI2_PER_DOF, lsq_result};
use super::onenight::fit_one_night;
use super::perturb::{Dynamics, NBody, TwoBody};
use super::population::PopulationModel;
use super::ranging::RangingOptions;
pub use super::result::{
    Alternative, ElementsOut, FitResult, KEPT_SAMPLES, RangingOut, ResidualOut, rank, resample,
};
use super::standing::{Doubts, Judged, lopsided_here};
use super::trust::distrust_reasons;
use crate::physics::S6;
use crate::physics::constants::ARCSEC;
use crate::physics::frames::unit_from_radec;
use crate::physics::observe::ObserverModel;
use std::sync::{Arc, OnceLock};

/// Which method to use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum MethodChoice {
    #[default]
    Auto,
    Ranging,
}

/// Whether to include planetary perturbations.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PerturbChoice {
    #[default]
    Auto,
    On,
    Off,
}

/// Arcs longer than this (days) are fitted with planetary perturbations under `Auto`.
pub const PERTURB_ARC_DAYS: f64 = 10.0;
/// ... and so are objects passing closer than this to Earth (AU).
pub const PERTURB_EARTH_AU: f64 = 0.05;

#[derive(Debug, Clone)]
pub struct FitOptions {
    pub method: MethodChoice,
    pub perturbations: PerturbChoice,
    pub lsq: LsqOptions,
    pub ranging: RangingOptions,
    pub inflate_nights: bool,
    pub samples: usize,
    pub seed: u64,
    /// The population model every probability is under.
    pub population: Arc<PopulationModel>,
    /// Keep the weighted orbits of sampled answers (for ephemerides); a batch that only prints
    /// records drops them to stay small.
    pub keep_samples: bool,
    /// Make the origin sheet of candidates with P(unbound) ≥ 0.01 (None: skip it).
    pub origin: Option<super::origin::OriginOptions>,
}

/// The compiled-in population model, built once per process.
pub fn builtin_population() -> Arc<PopulationModel> {
    static MODEL: OnceLock<Arc<PopulationModel>> = OnceLock::new();
    MODEL
        .get_or_init(|| Arc::new(PopulationModel::builtin()))
        .clone()
}

impl Default for FitOptions {
    fn default() -> Self {
        let population = builtin_population();
        FitOptions {
            origin: Some(super::origin::OriginOptions::for_model(&population)),
            method: MethodChoice::Auto,
            perturbations: PerturbChoice::Auto,
            lsq: LsqOptions::default(),
            ranging: RangingOptions::default(),
            inflate_nights: true,
            samples: 2000,
            seed: super::ranging::DEFAULT_SEED,
            population,
            keep_samples: true,
        }
    }
}

/// Why an arc of several nights was answered by the range profile: no least-squares correction on
/// all its positions converged.
pub const NO_LSQ_MINIMUM: &str = "no initial orbit converged";

/// Positions that all lie within this (arcsec) of the first do not describe a moving object.
pub const MIN_MOTION_ARCSEC: f64 = 0.01;

/// Fit one tracklet, with the origin sheet where it is asked for and the candidate qualifies.
pub fn fit_tracklet(tr: &Tracklet, model: &ObserverModel, opts: &FitOptions) -> FitResult {
    let _budget = super::budget::Budget::start(super::budget::FIT_BUDGET);
    let gross = super::gross::gross_outliers(tr);
    let fit = |kept: &Tracklet| fit_orbit(kept, model, opts);
    let mut r = if gross.is_empty() {
        let first = fit(tr);
        match super::secondlook::wanted(tr, &first) {
            true => super::secondlook::second_look(tr, first, model, opts, &fit),
            false => first,
        }
    } else {
        super::gross::fit_without(tr, &gross, model, opts.inflate_nights, fit)
    };
    if super::budget::spent() {
        match r.status {
            super::kinds::FitStatus::Failed => {
                r.error = Some(format!(
                    "{}; {}",
                    r.error.as_deref().unwrap_or("no orbit"),
                    super::budget::reason()
                ));
            }
            _ => {
                super::lsqrecord::withhold_probability(&mut r);
                r.poor_fit.push(super::budget::reason());
                r.status = super::kinds::FitStatus::PoorFit;
            }
        }
    }
    r.mark_undetermined();
    super::unresolved::bound_unresolved_odds(&mut r);
    if let Some(low) = super::horizon::below_horizon(tr) {
        r.distrust_linear.push(super::horizon::caveat(low));
    }
    r.h_mag = super::ephemeris::tracklet_h(&r, tr, model);
    if let Some(o) = &opts.origin {
        r.origin = super::origin::origin_sheet(&r, o).map(Box::new);
    }
    r
}

/// A tracklet that does not move at all is a star, a defect or a repeated line, not an orbit.
fn immobile(tr: &Tracklet) -> Option<FitResult> {
    let first = unit_from_radec(tr.obs[0].ra, tr.obs[0].dec);
    let spread = tr
        .obs
        .iter()
        .map(|o| unit_from_radec(o.ra, o.dec).angle(&first))
        .fold(0.0, f64::max);
    (spread < MIN_MOTION_ARCSEC * ARCSEC).then(|| {
        FitResult::failed(
            tr,
            format!(
                "the {} positions do not move (all within {MIN_MOTION_ARCSEC}\"): a star, a defect or a repeated line",
                tr.obs.len()
            ),
        )
    })
}

/// Fit one tracklet's orbit and probability.
fn fit_orbit(tr: &Tracklet, model: &ObserverModel, opts: &FitOptions) -> FitResult {
    if tr.obs.len() < 2 {
        return FitResult::failed(
            tr,
            format!("{} observation(s): at least 2 are needed", tr.obs.len()),
        );
    }
    if let Some(r) = immobile(tr) {
        return r;
    }
    let mut observers = Vec::with_capacity(tr.obs.len());
    for o in &tr.obs {
        match model.observer(&o.location, &o.time) {
            Ok(s) => observers.push(s),
            Err(e) => return FitResult::failed(tr, format!("{}: {e}", o.origin)),
        }
    }
    let cov = tr.covariances(opts.inflate_nights);
    let first = tr.obs[0].time.tdb;
    let epoch = first.plus_days(tr.arc_days() / 2.0);
    let shift = match model.earth(epoch) {
        Ok(e) => super::significance::barycentric_with(&S6::zeros(), &e),
        Err(e) => return FitResult::failed(tr, e.to_string()),
    };
    // A night seen from one place goes to the short-arc posterior. Several observer positions in one
    // night (two sites, or a moving observer), or two nights however close, go to the fits of the
    // whole observation model: the attributable has one observer, and across sites an Earth radius
    // apart it took their parallax for a misfit (two-site arcs of 0.2–0.34 d: nearly all poor fits,
    // near-Earth ones with P ≈ 1). Two positions from two places go to grid ranging.
    let one_night = tr.n_nights() < 2;
    let several_places = tr.obs.iter().any(|o| o.location != tr.obs[0].location);
    if one_night && !several_places {
        let (population, cap) = (&opts.population, opts.ranging.v_cap_km_s);
        return fit_one_night(tr, model, &observers, &cov, population, (opts.seed, cap));
    }
    if opts.method == MethodChoice::Ranging || tr.obs.len() < 3 {
        return super::rangingrecord::ranging_result(
            tr, model, &observers, &cov, &shift, opts, None,
        );
    }
    let inputs = super::twonight::ArcInputs {
        tr,
        model,
        observers: &observers,
        cov: &cov,
        shift,
        epoch,
        opts,
    };
    if tr.n_nights() <= 2
        && let Some(r) = super::twonight::profile_with_chosen_dynamics(&inputs)
    {
        return r;
    }
    // One night from several places that the profile could not answer: grid ranging models each
    // position's observer too (the attributable would not).
    if one_night {
        let why = "the range profile found no valley";
        return super::rangingrecord::ranging_result(
            tr,
            model,
            &observers,
            &cov,
            &shift,
            opts,
            Some(why),
        );
    }
    fit_multi_night(&inputs)
}

/// Arcs of three nights or more (and two-night arcs the profile could not answer): the global search,
/// perturbations where the arc or an approach to Earth needs them, and the range profile wherever the
/// linear answer cannot be trusted.
fn fit_multi_night(inputs: &super::twonight::ArcInputs) -> FitResult {
    let (tr, opts) = (inputs.tr, inputs.opts);
    let shift = inputs.shift;
    let fallback = |why: &str| profile_instead(inputs, why);
    let two_body = TwoBody;
    let problem = inputs.problem(&two_body);
    let scan = super::twonight::scan_start(inputs, None);
    let Some(found) = super::search::least_squares(&problem, opts, scan.as_ref()) else {
        return fallback(NO_LSQ_MINIMUM);
    };
    let (mut fit, alternatives) = (found.best, found.alternatives);
    let nbody = NBody::new();
    let perturb = needs_perturbations(&problem, &fit, opts.perturbations);
    let dynamics: &dyn Dynamics = if perturb { &nbody } else { &two_body };
    let problem = inputs.problem(dynamics);
    if perturb {
        match correct_with_outliers(&problem, &fit.state, &opts.lsq) {
            Ok(f) => fit = f,
            Err(e) => return FitResult::failed(tr, format!("perturbed refit failed: {e}")),
        }
    }
    if fit.cov.is_none() {
        return fallback("degenerate least squares");
    }
    // A range known to worse than this is a nearly degenerate problem: its minimum means little and
    // sampling around it cannot reach the other solutions, so the whole (ρ, ρ̇) plane is searched.
    let range_sigma = super::trust::relative_range_sigma(&problem, &fit);
    if let Some(rel) = range_sigma
        && rel > DEGENERATE_RANGE
        && tr.n_nights() < 3
    {
        let why = format!(
            "least squares nearly degenerate (range known to {:.0} %)",
            100.0 * rel
        );
        return fallback(&why);
    }
    let alternatives = if perturb { Vec::new() } else { alternatives };
    let mut doubts = Doubts::of(&found.elsewhere, found.flatter_than_linear, &fit, &shift);
    // Where the linear answer cannot be trusted, the range profile gives the posterior (it follows a
    // curved valley that Gaussian sampling around the minimum would need thousands of draws for).
    let judged = Judged::new(&fit, &shift, &alternatives, range_sigma, tr.n_nights());
    let first_reasons = distrust_reasons(&problem, &fit, &shift);
    let reasons = !first_reasons.is_empty() || !alternatives.is_empty();
    // Before a linear answer stands alone, χ² a few σ out along the distance must follow its
    // covariance on both sides.
    if !(reasons || doubts.any()) || judged.decides(&doubts) {
        doubts.flatter |= lopsided_here(&problem, scan.as_ref(), &fit, range_sigma);
    }
    let decided = judged.decides(&doubts);
    let distrusted = reasons || doubts.any();
    // (A fit no orbit explains goes straight to its record: no probability will be shown for it.)
    let hopeless = fit.chi2_per_dof() > NO_ORBIT_CHI2_PER_DOF;
    if distrusted
        && !decided
        && !hopeless
        && let Some(mut r) =
            super::twonight::fit_by_profile(inputs, Some(&fit), &found.elsewhere, dynamics)
    {
        // The profile's refit may look linear again; the doubts and the reasons were found about
        // this minimum, and they are why the record's P is not the linear one: no linear z.
        doubts.mark(&mut r);
        // The same reason about the profile's refit (its numbers differ) is said once, the refit's.
        for why in first_reasons {
            if !r.distrust_linear.iter().any(|w| same_reason(w, &why)) {
                r.distrust_linear.push(why);
            }
        }
        super::lsqrecord::list_other_minima(&mut r, &fit, &alternatives, &shift);
        r.z_linear = None;
        return r;
    }
    let mut r = lsq_result(
        &problem,
        &fit,
        &alternatives,
        &shift,
        opts,
        dynamics.model(),
        None,
    );
    // The profile could not answer (or no orbit fits): the linear answer stands, with the warnings.
    doubts.mark(&mut r);
    r
}

/// Two reasons of one kind: the same words up to the first number ("range known to 9 %" and
/// "range known to 11 %").
fn same_reason(a: &str, b: &str) -> bool {
    fn words(s: &str) -> impl Iterator<Item = &str> {
        s.split_whitespace()
            .take_while(|w| !w.chars().any(|c| c.is_ascii_digit()))
    }
    words(a).eq(words(b))
}

/// Every way out of least squares is the same: answer along the range profile (ranging if even that
/// finds nothing) and say why.
fn profile_instead(inputs: &super::twonight::ArcInputs, why: &str) -> FitResult {
    super::twonight::profile_with_chosen_dynamics(inputs)
        .map(|mut r| {
            r.distrust_linear.push(why.to_string());
            r
        })
        .unwrap_or_else(|| {
            FitResult::failed(
                inputs.tr,
                format!("{why}; no orbit fits all positions (a false linkage or a bad position?)"),
            )
        })
}

/// Perturbations, by arc length or a close approach to Earth (unless the user chose).
fn needs_perturbations(problem: &Problem, fit: &LsqFit, choice: PerturbChoice) -> bool {
    let close = problem
        .evaluate_all(&fit.state)
        .map(|ev| {
            ev.iter()
                .map(|e| e.0.topo.norm())
                .fold(f64::INFINITY, f64::min)
        })
        .unwrap_or(f64::INFINITY);
    match choice {
        PerturbChoice::On => true,
        PerturbChoice::Off => false,
        PerturbChoice::Auto => {
            problem.tracklet.arc_days() > PERTURB_ARC_DAYS || close < PERTURB_EARTH_AU
        }
    }
}

/// Why a fit with a distinct minimum of the other class (bound or unbound) within
/// `search::PROFILE_SEED_DCHI2` went to the range profile.
pub const FLIPS_REASON: &str = "a minimum of the other class fits within Δχ² 100: P weighs it";

/// Why a fit whose χ² beside the minimum rose well short of its covariance's prediction went to the
/// range profile.
pub const FLATTER_REASON: &str = "χ² along the distance flatter than the covariance predicts";

/// Relative range uncertainty beyond which a short arc is handed to ranging.
pub const DEGENERATE_RANGE: f64 = 0.3;
