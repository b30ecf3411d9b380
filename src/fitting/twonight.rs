//! Two nights of positions (or one night from several places): the range profile gives the posterior (P, element spreads, orbits for the
//! ephemeris) and its most probable slice starts the full least-squares fit that supplies residuals,
//! outliers and the record's elements.

use super::datainterval::e_data_interval;
use super::fit::FitOptions;
use super::input::Tracklet;
use super::kinds::ProbabilitySource;
use super::lsq::{LsqFit, Problem, correct, correct_with_outliers};
use super::lsqrecord::{Given, lsq_result};
use super::onenight::{instant_at, night_v_mag};
use super::perturb::{Dynamics, TwoBody};
use super::profile::{DensityContext, Frame, GridInputs, Profile, ProfileOptions, V5, profile};
use super::rangescan::valley_ids;
use super::rejection::reject_threshold;
use super::result::FitResult;
use super::search::ScanStart;
use super::search::{cleaned, competitive, same_minimum};
use super::stats::relative_weights;
use crate::physics::constants::{AU_PER_DAY_TO_KM_S, MU_SUN};
use crate::physics::frames::unit_from_radec;
use crate::physics::observe::{ObserverModel, ObserverState};
use crate::physics::time::Jd2;
use crate::physics::{S6, V3};
use nalgebra::SVector;

/// What every multi-night path shares about one tracklet.
pub struct ArcInputs<'a> {
    pub tr: &'a Tracklet,
    pub model: &'a ObserverModel,
    pub observers: &'a [ObserverState],
    pub cov: &'a [nalgebra::Matrix2<f64>],
    pub shift: S6,
    pub epoch: Jd2,
    pub opts: &'a FitOptions,
}

impl<'a> ArcInputs<'a> {
    /// The least-squares problem of the arc under `dynamics`.
    pub fn problem<'b>(&self, dynamics: &'b dyn Dynamics) -> Problem<'b>
    where
        'a: 'b,
    {
        Problem::new(
            self.tr,
            self.observers.to_vec(),
            self.cov.to_vec(),
            self.epoch,
            MU_SUN,
            dynamics,
        )
    }
}

/// A two-night arc (or a night from several places, or an arc least squares could not answer) by its
/// range profile from a straight line through the positions, with the planets where the user asked
/// for them or, left to the tool, beyond ten days of arc; None where the profile found nothing.
pub fn profile_with_chosen_dynamics(inp: &ArcInputs) -> Option<FitResult> {
    use super::fit::PerturbChoice;
    let planets = match inp.opts.perturbations {
        PerturbChoice::On => true,
        PerturbChoice::Off => false,
        PerturbChoice::Auto => inp.tr.arc_days() > super::fit::PERTURB_ARC_DAYS,
    };
    if planets {
        fit_by_profile(inp, None, &[], &super::perturb::NBody::new())
    } else {
        fit_by_profile(inp, None, &[], &TwoBody)
    }
}

/// Any multi-night arc along its range profile (the answer for two nights, for arcs whose linear
/// answer cannot be trusted, and the way out when least squares finds no orbit), from the fit `start`
/// or a straight line through the positions, with a slice at each of the other known minima
/// `elsewhere`. The profile weighs the positions the least-squares fit keeps: `start`'s, then, while
/// the fit from the profile's floor keeps others (twice at most), the profile is formed again on
/// those, and the record is fitted on the positions the last profile weighed (a wild position once
/// shaped P, σ and the samples while the record showed it rejected).
pub fn fit_by_profile(
    inp: &ArcInputs,
    start: Option<&LsqFit>,
    elsewhere: &[S6],
    dynamics: &dyn Dynamics,
) -> Option<FitResult> {
    let (tr, opts) = (inp.tr, inp.opts);
    let shift = &inp.shift;
    let p = inp.problem(dynamics);
    let ScanStart {
        frame,
        start: first,
    } = scan_start(inp, start.map(|f| f.state))?;
    let seeds: Vec<(V5, f64)> = elsewhere.iter().map(|x| frame.params(x)).collect();
    let mut used = start.map_or_else(|| vec![true; tr.obs.len()], |f| f.used.clone());
    let mut answer = profile_answer(inp, &p, &frame, (first, &seeds), &used)?;
    for _ in 0..2 {
        if answer.fit.used == used {
            break;
        }
        let next = answer.fit.used.clone();
        // A pass that finds nothing leaves the answer of the one before.
        let Some(a) = profile_answer(inp, &p, &frame, (first, &seeds), &next) else {
            break;
        };
        (used, answer) = (next, a);
    }
    // The record weighs the positions the profile weighed, even where the outlier passes did not
    // settle (a point readmitted in one valley and set aside in another).
    if answer.fit.used != used
        && let Ok(f) = correct(&p, &answer.fit.state, &used, &opts.lsq)
    {
        answer.fit = f;
    }
    let ProfileAnswer {
        prof,
        ids,
        share,
        fit,
    } = answer;
    let others = other_valleys(&p, &frame, &prof, (&ids, &share), &fit, opts);
    // A profile without a posterior is a gross misfit: the record still shows the best attempt and
    // its residuals, with P along the energy line of that fit (it ranks among the poor fits anyway).
    let v_cap = opts.ranging.v_cap_km_s / AU_PER_DAY_TO_KM_S;
    let solution = solution_of(
        &prof,
        (&ids, &share),
        home_valley(&prof, &ids, &frame, &fit),
    );
    let given = given(&prof, &frame, shift, v_cap).map(|g| Given { solution, ..g });
    let alternatives: Vec<LsqFit> = others.iter().map(|(f, _)| f.clone()).collect();
    let mut out = lsq_result(
        &p,
        &fit,
        &alternatives,
        shift,
        opts,
        dynamics.model(),
        given,
    );
    for (a, (_, share)) in out.alternatives.iter_mut().zip(&others) {
        a.probability = Some(*share);
    }
    Some(out)
}

/// A profile over the `used` positions, its valleys and their posterior shares, and the full
/// least-squares fit (outliers handled) from the floor of the valley the posterior favours.
struct ProfileAnswer {
    prof: Profile,
    ids: Vec<usize>,
    share: Vec<f64>,
    fit: LsqFit,
}

fn profile_answer(
    inp: &ArcInputs,
    p: &Problem,
    frame: &Frame,
    (start, seeds): ((V5, f64), &[(V5, f64)]),
    used: &[bool],
) -> Option<ProfileAnswer> {
    let opts = inp.opts;
    let (v_mag, _) = night_v_mag(inp.tr, &opts.population);
    let ctx = DensityContext {
        model: &opts.population,
        sun_bary: inp.shift,
        v_mag,
    };
    let popts = ProfileOptions {
        v_cap_km_s: opts.ranging.v_cap_km_s,
        n_rho: opts.ranging.profile_n_rho,
        ..ProfileOptions::default()
    };
    let grid = GridInputs {
        p,
        frame,
        start,
        seeds,
        used,
        opts: &popts,
    };
    let prof = profile(&grid, &ctx)?;
    let (ids, share) = valley_shares(&prof);
    // The answer is the valley the posterior favours (the prior and the volume of orbits can outweigh
    // a small Δχ²), so that its elements and the most probable sample agree; the others are listed.
    let home = (0..share.len())
        .filter(|&v| share[v] > 0.0)
        .max_by(|&a, &b| share[a].total_cmp(&share[b]));
    let floor = prof
        .slices
        .iter()
        .zip(&ids)
        .filter(|(_, id)| home.is_none_or(|h| **id == h))
        .map(|(s, _)| s)
        .min_by(|a, b| a.chi2.total_cmp(&b.chi2))
        .unwrap_or(&prof.best);
    let fit = correct_with_outliers(p, &frame.state(&floor.a, floor.rho), &opts.lsq).ok()?;
    Some(ProfileAnswer {
        prof,
        ids,
        share,
        fit,
    })
}

/// The profile's posterior, its weighted nodes and what the positions alone allow, for the record
/// (None for a profile without a posterior).
fn given(prof: &Profile, frame: &Frame, sun_bary: &S6, v_cap: f64) -> Option<Given> {
    let posterior = prof.posterior?;
    let raw = relative_weights(prof.nodes.iter().map(|n| n.ln_w))?;
    let total: f64 = raw.iter().sum();
    Some(Given {
        posterior,
        from: ProbabilitySource::RangeProfile,
        states: prof.nodes.iter().map(|n| n.state).collect(),
        weights: raw.iter().map(|w| w / total).collect(),
        e_data_interval: e_data_interval(prof, frame, sun_bary, v_cap),
        solution: None,
    })
}

/// The valley of the profile the reported fit lies in.
fn home_valley(prof: &Profile, ids: &[usize], frame: &Frame, fit: &LsqFit) -> usize {
    let (_, rho_fit) = frame.params(&fit.state);
    prof.slices
        .iter()
        .position(|s| s.rho >= rho_fit)
        .map_or(ids.last().copied().unwrap_or(0), |k| ids[k])
}

/// The nodes of valley `home`, where the profile has other valleys and `home` holds at least
/// `OWN_SOLUTION_SHARE` of the posterior (None otherwise: one valley, or an answer uncertain between
/// valleys, whose σ then spans them).
fn solution_of(prof: &Profile, (ids, share): (&[usize], &[f64]), home: usize) -> Option<Vec<bool>> {
    let total: f64 = share.iter().sum();
    let own = share.get(home).copied().unwrap_or(0.0);
    if !(total > 0.0 && own >= OWN_SOLUTION_SHARE * total) {
        return None;
    }
    let mask: Vec<bool> = prof.nodes.iter().map(|n| ids[n.k_rho] == home).collect();
    (!mask.iter().all(|m| *m)).then_some(mask)
}

/// A valley holding this share of the posterior is a solution of its own: its σ and intervals are its
/// own, and the others are listed apart with their shares (a far valley of 0.04 % widened σ_e forty
/// times, 2.4 ± 1.0 for a core of ± 0.025). Below it the answer is uncertain between valleys and σ
/// spans them.
pub const OWN_SOLUTION_SHARE: f64 = 0.95;

/// Valley number of every slice and each valley's (unnormalised) posterior weight.
fn valley_shares(prof: &Profile) -> (Vec<usize>, Vec<f64>) {
    let ids = valley_ids(&prof.slices);
    let n = ids.last().map_or(0, |l| l + 1);
    let weights = relative_weights(prof.nodes.iter().map(|x| x.ln_w))
        .unwrap_or_else(|| vec![0.0; prof.nodes.len()]);
    let mut share = vec![0.0; n];
    for (node, w) in prof.nodes.iter().zip(&weights) {
        share[ids[node.k_rho]] += w;
    }
    (ids, share)
}

/// Posterior share below which another valley of the scan is not worth reporting.
pub const MIN_VALLEY_SHARE: f64 = 1e-3;

/// Least-squares minima of the scan's other valleys that hold at least `MIN_VALLEY_SHARE` of the
/// posterior or compete with the best fit by χ² (`search::competitive`), each with its posterior
/// share.
fn other_valleys(
    p: &Problem,
    frame: &Frame,
    prof: &Profile,
    (ids, share): (&[usize], &[f64]),
    fit: &LsqFit,
    opts: &FitOptions,
) -> Vec<(LsqFit, f64)> {
    let n = share.len();
    let total: f64 = share.iter().sum::<f64>().max(1e-300);
    let home = home_valley(prof, ids, frame, fit);
    // Compared on the positions the reported fit kept.
    let used = &fit.used;
    (0..n)
        .filter(|&v| v != home)
        .filter_map(|v| {
            let floor = prof
                .slices
                .iter()
                .zip(ids)
                .filter(|(_, id)| **id == v)
                .map(|(s, _)| s)
                .min_by(|a, b| a.chi2.total_cmp(&b.chi2))?;
            let w = share[v] / total;
            if w < MIN_VALLEY_SHARE && !competitive(floor.chi2, fit) {
                return None;
            }
            let x = frame.state(&floor.a, floor.rho);
            let f = correct(p, &x, used, &opts.lsq).ok()?;
            // On the positions it keeps where those fit it better than the reported fit's do (a wild
            // position the reported fit bends to keep).
            let cap = reject_threshold(p.len(), opts.lsq.false_rejection);
            let wild = f.obs_chi2.iter().any(|c| *c > cap);
            let f = match wild.then(|| cleaned(p, &opts.lsq, fit, &x)).flatten() {
                Some(c) if !f.converged || c.chi2 < f.chi2 => c,
                _ => f,
            };
            (f.converged && f.cov.is_some() && !same_minimum(fit, &f)).then_some((f, w))
        })
        .fold(Vec::new(), |mut kept: Vec<(LsqFit, f64)>, (f, w)| {
            match kept.iter_mut().find(|(k, _)| same_minimum(k, &f)) {
                Some(k) => k.1 += w,
                None => kept.push((f, w)),
            }
            kept
        })
}

/// The arc's frame (the middle observer at the epoch, the mean direction of the first and last
/// positions) and where a distance scan starts: at `start`, or on a straight line through the
/// positions at 1 au.
pub fn scan_start(inp: &ArcInputs, start: Option<S6>) -> Option<ScanStart> {
    let (tr, epoch) = (inp.tr, inp.epoch);
    let loc = tr.obs[tr.obs.len() / 2].location;
    let observer = inp.model.observer(&loc, &instant_at(tr, epoch)).ok()?;
    let dirs: Vec<V3> = tr
        .obs
        .iter()
        .map(|o| unit_from_radec(o.ra, o.dec))
        .collect();
    let frame = Frame::new(observer, dirs[0] + dirs[dirs.len() - 1]);
    let start = match start {
        Some(x) => frame.params(&x),
        None => (straight_start(tr, &dirs, &frame, epoch), 1.0),
    };
    Some(ScanStart { frame, start })
}

/// Direction and rate at the epoch from a straight line through all positions in the frame's
/// tangent plane (enough to start the first slice), with no radial motion.
fn straight_start(tr: &Tracklet, dirs: &[V3], frame: &Frame, epoch: Jd2) -> SVector<f64, 5> {
    let n = dirs.len() as f64;
    let t: Vec<f64> = tr.obs.iter().map(|o| o.time.tdb.minus(epoch)).collect();
    let gx: Vec<f64> = dirs
        .iter()
        .map(|d| d.dot(&frame.e_a) / d.dot(&frame.u_ref))
        .collect();
    let gy: Vec<f64> = dirs
        .iter()
        .map(|d| d.dot(&frame.e_d) / d.dot(&frame.u_ref))
        .collect();
    let tm = t.iter().sum::<f64>() / n;
    let stt: f64 = t.iter().map(|x| (x - tm).powi(2)).sum::<f64>().max(1e-12);
    let line = |g: &[f64]| {
        let gm = g.iter().sum::<f64>() / n;
        let slope = t
            .iter()
            .zip(g)
            .map(|(x, y)| (x - tm) * (y - gm))
            .sum::<f64>()
            / stt;
        (gm - slope * tm, slope)
    };
    let (x0, xd) = line(&gx);
    let (y0, yd) = line(&gy);
    SVector::<f64, 5>::new(x0, y0, xd, yd, 0.0)
}
