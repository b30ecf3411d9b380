//! The record of grid ranging: P and intervals from its weighted samples, the most probable orbit's
//! residuals. It has no σ of e (`e_sigma` is null): its e intervals and the ranging line stand instead.

use super::fit::FitOptions;
use super::input::Tracklet;
use super::kinds::{FitMethod, FitStatus, ProbabilitySource};
use super::lsqrecord::{residual_list, rms};
use super::onenight::{instant_at, night_v_mag};
use super::ranging::{RangingResult, range};
use super::result::{FitResult, KEPT_SAMPLES, RangingOut, elements_out, resample};
use super::stats::{ONE_SIGMA_QUANTILES, weighted_quantile};
use crate::physics::constants::MU_SUN;
use crate::physics::elements::CometaryElements;
use crate::physics::frames::equatorial_to_ecliptic;
use crate::physics::observe::{ObserverModel, ObserverState};
use crate::physics::time::Jd2;
use crate::physics::{S6, V3, split_state};

/// The answer of grid ranging (forced with `--method ranging`, or for fewer than three positions):
/// the median sample's elements, the samples' intervals, and the most probable orbit's residuals.
pub(super) fn ranging_result(
    tr: &Tracklet,
    model: &ObserverModel,
    observers: &[ObserverState],
    cov: &[nalgebra::Matrix2<f64>],
    shift: &S6,
    opts: &FitOptions,
    why: Option<&str>,
) -> FitResult {
    let location = tr.obs[tr.obs.len() / 2].location;
    let observer_at = |t: Jd2| model.observer(&location, &instant_at(tr, t)).ok();
    let sun = (
        V3::new(shift[0], shift[1], shift[2]),
        V3::new(shift[3], shift[4], shift[5]),
    );
    let (v_mag, assumed) = night_v_mag(tr, &opts.population);
    let Some(rr) = range(
        tr,
        observers,
        cov,
        observer_at,
        sun,
        &opts.ranging,
        (&opts.population, v_mag),
    ) else {
        let mut f = FitResult::failed(tr, "ranging found no admissible orbit");
        f.method = FitMethod::Ranging;
        return f;
    };
    let mut out = FitResult::empty(tr);
    out.method = FitMethod::Ranging;
    out.probability_from = ProbabilitySource::SystematicRanging;
    out.v_mag = Some(v_mag);
    out.v_mag_assumed = assumed;
    fill_ranging(&mut out, tr, observers, &rr, opts);
    if let Some(w) = why {
        out.distrust_linear.push(w.to_string());
    }
    out
}

fn fill_ranging(
    out: &mut FitResult,
    tr: &Tracklet,
    observers: &[ObserverState],
    rr: &RangingResult,
    opts: &FitOptions,
) {
    out.set_posterior(
        &rr.posterior,
        ProbabilitySource::SystematicRanging,
        &opts.population.source,
    );
    out.n_eff = Some(rr.n_eff);
    out.e = Some(rr.e_interval[1]);
    out.q_au = Some(rr.q_interval[1]);
    out.i_deg = Some(rr.i_interval[1]);
    let w: Vec<f64> = rr.samples.iter().map(|s| s.weight).collect();
    let half68 = |f: &dyn Fn(&super::ranging::RangingSample) -> f64| {
        let v: Vec<f64> = rr.samples.iter().map(f).collect();
        match (
            weighted_quantile(&v, &w, ONE_SIGMA_QUANTILES[0]),
            weighted_quantile(&v, &w, ONE_SIGMA_QUANTILES[1]),
        ) {
            (Some(a), Some(b)) => Some((b - a) / 2.0),
            _ => None,
        }
    };
    out.q_sigma = half68(&|s| s.q);
    out.set_e_intervals(&rr.samples.iter().map(|s| s.e).collect::<Vec<_>>(), &w);
    out.i_sigma = half68(&|s| s.i);
    out.e_bary = Some(rr.best.e_bary);
    out.epoch_jd_tdb = Some(rr.best.epoch.value());
    out.n_used = tr.obs.len();
    let b = rr.best.state;
    out.state = Some([b[0], b[1], b[2], b[3], b[4], b[5]]);
    let ecl = equatorial_to_ecliptic();
    let (r, v) = split_state(&b);
    let el = CometaryElements::from_state(&(ecl * r), &(ecl * v), rr.best.epoch.value(), MU_SUN);
    out.elements = Some(elements_out(&el, None, MU_SUN));
    // Residuals of the most probable orbit.
    let mut res = Vec::new();
    for (i, o) in tr.obs.iter().enumerate() {
        let p = super::ranging::quick_predict(&r, &v, rr.best.epoch, o.time.tdb, &observers[i]);
        res.push(p.map_or([f64::NAN; 2], |p| {
            crate::physics::observe::residual(o.ra, o.dec, &p)
        }));
    }
    let used = vec![true; tr.obs.len()];
    out.rms_arcsec = Some(rms(&res, &used));
    out.chi2_per_dof = Some(rr.best.chi2 / ((2 * tr.obs.len()).saturating_sub(4)).max(1) as f64);
    out.residuals = residual_list(tr, &res, &used, &[]);
    out.ranging = Some(RangingOut {
        trials: rr.trials,
        n_eff: rr.n_eff,
        v_cap_km_s: opts.ranging.v_cap_km_s,
        e_interval: rr.e_interval,
        q_interval: rr.q_interval,
        i_interval: rr.i_interval,
    });
    out.samples = resample(
        rr.samples
            .iter()
            .map(|s| {
                (
                    [
                        s.state[0], s.state[1], s.state[2], s.state[3], s.state[4], s.state[5],
                    ],
                    s.epoch.value(),
                    s.weight,
                )
            })
            .collect(),
        KEPT_SAMPLES,
        opts.seed,
    );
    if out.chi2_per_dof.unwrap_or(0.0) > super::quality::MAX_CHI2_PER_DOF {
        out.poor_fit.push(format!(
            "chi2/dof {:.1} at the best node",
            out.chi2_per_dof.unwrap_or(0.0)
        ));
    }
    out.status = if out.poor_fit.is_empty() {
        FitStatus::Ok
    } else {
        FitStatus::PoorFit
    };
}
