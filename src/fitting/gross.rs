//! Positions no motion of the others can reach (a mistyped degree, a wrong field copied), set aside
//! before any orbit is fitted. A position far off (in the tests, from a degree to tens of degrees; the
//! screen acts from a minute of arc beyond the others' motion) keeps every least-squares correction that
//! includes it from converging, so the search never reaches the minimum where the usual rejection
//! would drop it: a strongly hyperbolic ten-night arc with one RA 30° off was answered from the range
//! profile as `ok`, e 2.3610 ± 0.00005 for a true 2.40 (700σ off); without the line, e 2.3998.

use super::forcemodel::ForceModel;
use super::input::{Observation, Tracklet};
use super::lsq::Problem;
use super::obsid::ObsId;
use super::perturb::{Dynamics, NBody, TwoBody};
use super::result::{FitResult, ResidualOut};
use crate::physics::S6;
use crate::physics::constants::{ARCSEC, MU_SUN};
use crate::physics::frames::unit_from_radec;
use crate::physics::observe::ObserverModel;
use crate::physics::time::Jd2;

/// A position whose typical departure from the arc's own motion (the median over the others of
/// |angle − rate × time apart|, the rate the arc's median pairwise speed) is this many times that of
/// every position that cannot be set aside (all but the worst one in ten), and at least
/// `MIN_GROSS_ARCSEC`, is out of reach of the others' motion. A smooth path departs from one steady
/// rate by its curvature only, a night at a time (a weakly hyperbolic arc's first night by 65″ while the
/// others stay within 2″): the bar is the largest such departure, not the typical one (common practice,
/// no source; chosen generous).
const GROSS_RATIO: f64 = 10.0;

/// Departures below this (arcsec) are for least squares to judge: its rejection reaches them.
pub(super) const MIN_GROSS_ARCSEC: f64 = 60.0;

/// Fewer positions than this leave no majority to judge by.
const MIN_POSITIONS: usize = 4;

/// The screen compares every pair: beyond this many positions (a file may hold 200 000) it is not run
/// (its tables would take n² memory; least squares' own rejection still judges such arcs).
const MAX_POSITIONS: usize = 500;

/// The positions (indices) of `tr` out of reach of the others' motion: at most one in ten (at least
/// one); where more disagree as much, none (a false linkage, or an object whose speed changes, is for
/// the fit to judge).
pub fn gross_outliers(tr: &Tracklet) -> Vec<usize> {
    let n = tr.obs.len();
    if !(MIN_POSITIONS..=MAX_POSITIONS).contains(&n) {
        return Vec::new();
    }
    let dirs: Vec<_> = tr
        .obs
        .iter()
        .map(|o| unit_from_radec(o.ra, o.dec))
        .collect();
    // Angles and times apart of every pair, once.
    let mut angle = vec![0.0; n * n];
    let mut apart = vec![0.0; n * n];
    for i in 0..n {
        for j in i + 1..n {
            let (a, t) = (
                dirs[i].angle(&dirs[j]),
                tr.obs[i].time.tdb.minus(tr.obs[j].time.tdb).abs(),
            );
            (angle[i * n + j], angle[j * n + i]) = (a, a);
            (apart[i * n + j], apart[j * n + i]) = (t, t);
        }
    }
    let rate = median(
        (0..n)
            .flat_map(|i| (i + 1..n).map(move |j| i * n + j))
            .filter(|&k| apart[k] > 0.0)
            .map(|k| angle[k] / apart[k])
            .collect(),
    );
    if !rate.is_finite() {
        return Vec::new();
    }
    let departure: Vec<f64> = (0..n)
        .map(|i| {
            median(
                (0..n)
                    .filter(|&j| j != i)
                    .map(|j| (angle[i * n + j] - rate * apart[i * n + j]).abs())
                    .collect(),
            )
        })
        .collect();
    let most = (n / 10).max(1);
    let mut sorted = departure.clone();
    sorted.sort_by(f64::total_cmp);
    // The largest departure among the positions that cannot be set aside.
    let bar = sorted[n - most - 1];
    if !bar.is_finite() {
        return Vec::new();
    }
    let floor = MIN_GROSS_ARCSEC * ARCSEC;
    // A position with no other of its night and site has nothing beside it to be judged against: its
    // departure is the path's curvature and the sites' parallax (two sites at one instant, a lone
    // later night), never set aside here.
    let accompanied = |i: usize| {
        (0..n).any(|j| {
            j != i && tr.night[j] == tr.night[i] && tr.obs[j].location == tr.obs[i].location
        })
    };
    (0..n)
        .filter(|&i| departure[i] > floor && departure[i] > GROSS_RATIO * bar && accompanied(i))
        .collect()
}

/// Fit `tr` without its positions `gross` (by `fit`), then give the record back every position: those
/// set aside appear among the residuals as not used, with their O − C from the fitted state (NaN where
/// there is none); `n_obs` counts them (the nights and arc are those of the positions used: a set-aside
/// position never has a night or a site of its own). Where the orbit fitted without them still passes
/// within `MIN_GROSS_ARCSEC` of every one, they were no wild positions: the whole tracklet is fitted.
pub fn fit_without(
    tr: &Tracklet,
    gross: &[usize],
    model: &ObserverModel,
    inflate_nights: bool,
    fit: impl Fn(&Tracklet) -> FitResult,
) -> FitResult {
    let off = |x: &ResidualOut| x.ra_arcsec.hypot(x.dec_arcsec) >= MIN_GROSS_ARCSEC;
    match without(tr, (gross, &off), model, inflate_nights, &fit) {
        Some(r) => r,
        None => fit(tr),
    }
}

/// Whether a position set aside is out of the reach of the orbit fitted without it.
pub(super) type OutOfReach<'a> = dyn Fn(&ResidualOut) -> bool + 'a;

/// The record of `tr` fitted without its positions `gross`, every position listed (those set aside
/// as not used); None where that orbit still reaches every one of them (`off` says which are out of
/// its reach).
pub(super) fn without(
    tr: &Tracklet,
    (gross, off): (&[usize], &OutOfReach<'_>),
    model: &ObserverModel,
    inflate_nights: bool,
    fit: &impl Fn(&Tracklet) -> FitResult,
) -> Option<FitResult> {
    let kept: Vec<Observation> = (0..tr.obs.len())
        .filter(|i| !gross.contains(i))
        .map(|i| tr.obs[i].clone())
        .collect();
    let mut r = fit(&Tracklet::new(tr.object.clone(), tr.source.clone(), kept));
    let residuals = off_path_residuals(&r, tr, model, inflate_nights);
    let reached = gross.iter().all(|&i| !off(&residuals[i]));
    if reached {
        return None;
    }
    let known: std::collections::HashMap<ObsId, ResidualOut> =
        r.residuals.drain(..).map(|x| (x.id.clone(), x)).collect();
    r.residuals = residuals
        .into_iter()
        .map(|x| known.get(&x.id).cloned().unwrap_or(x))
        .collect();
    r.n_obs = tr.obs.len();
    Some(r)
}

/// Every position's O − C from the record's state, marked not used (NaN where the record has no
/// state or the position cannot be predicted).
fn off_path_residuals(
    r: &FitResult,
    tr: &Tracklet,
    model: &ObserverModel,
    inflate_nights: bool,
) -> Vec<ResidualOut> {
    let n = tr.obs.len();
    let nan = vec![[f64::NAN; 2]; n];
    let evaluated = (|| {
        let (state, epoch) = (r.state?, r.epoch_jd_tdb?);
        let observers = tr
            .obs
            .iter()
            .map(|o| model.observer(&o.location, &o.time).ok())
            .collect::<Option<Vec<_>>>()?;
        let (two_body, planets) = (TwoBody, NBody::new());
        let dynamics: &dyn Dynamics = match r.dynamics {
            ForceModel::TwoBody => &two_body,
            ForceModel::SunPlanetsMoon => &planets,
        };
        let p = Problem::new(
            tr,
            observers,
            tr.covariances(inflate_nights),
            Jd2::new(epoch, 0.0),
            MU_SUN,
            dynamics,
        );
        let ev = p.evaluate_all(&S6::from(state)).ok()?;
        let res: Vec<[f64; 2]> = ev.iter().map(|e| e.1).collect();
        let chi2 = res
            .iter()
            .zip(&p.whiten)
            .map(|(x, w)| (w * nalgebra::Vector2::new(x[0], x[1])).norm_squared())
            .collect::<Vec<f64>>();
        Some((res, chi2))
    })();
    let (res, chi2) = evaluated.unwrap_or((nan, vec![f64::NAN; n]));
    super::lsqrecord::residual_list(tr, &res, &vec![false; n], &chi2)
}

/// The median of finite values (the upper middle of an even count); NaN where there are none.
fn median(mut v: Vec<f64>) -> f64 {
    v.retain(|x| x.is_finite());
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::time::parse_utc;

    /// A straight path at `rate` degrees a day near RA 120°, Dec 10°, four positions a night for three
    /// nights, with position `wild` moved by `off` degrees in RA.
    fn arc(rate: f64, wild: Option<(usize, f64)>) -> Tracklet {
        let start = parse_utc("2026-11-26T06:00:00Z").unwrap();
        let mut obs = Vec::new();
        for night in 0..3 {
            for k in 0..4 {
                let t = night as f64 + k as f64 * 25.0 / 1440.0;
                let mut ra = 120.0 + rate * t;
                if let Some((w, off)) = wild
                    && w == obs.len()
                {
                    ra += off;
                }
                obs.push(crate::testutil::observation(
                    start.plus_days(t),
                    ra,
                    10.0 + 0.3 * rate * t,
                ));
            }
        }
        Tracklet::new("x".into(), "x".into(), obs)
    }

    #[test]
    fn a_position_degrees_off_is_flagged_and_nothing_on_a_clean_path() {
        for rate in [0.25, 1.0, 8.0] {
            assert!(gross_outliers(&arc(rate, None)).is_empty(), "{rate}");
            for (w, off) in [(0, 30.0f64), (5, -80.0), (11, 2.0)] {
                // A fast mover's path over two days (16°) departs from one steady rate by some tenths
                // of a degree: 2° is within ten times that.
                if rate > 4.0 && off.abs() < 5.0 {
                    continue;
                }
                assert_eq!(
                    gross_outliers(&arc(rate, Some((w, off)))),
                    vec![w],
                    "{rate} {w}"
                );
            }
        }
        // Ten arcseconds on a slow arc is for least squares to judge, not for this screen.
        assert!(gross_outliers(&arc(0.25, Some((5, 10.0 / 3600.0)))).is_empty());
    }

    #[test]
    fn a_tracklet_too_long_to_compare_every_pair_is_left_to_the_fit() {
        // 600 positions with one 30° off: the pairwise tables (n²) are not built.
        let mut tr = arc(1.0, Some((0, 30.0)));
        let first = tr.obs.clone();
        for k in 1..50 {
            tr.obs.extend(first.iter().map(|o| Observation {
                time: o.time.plus_days(7.0 * k as f64),
                ..o.clone()
            }));
        }
        let tr = Tracklet::new("x".into(), "x".into(), tr.obs);
        assert_eq!(tr.obs.len(), 600);
        assert!(gross_outliers(&tr).is_empty());
    }

    #[test]
    fn many_disagreeing_positions_and_short_tracklets_are_left_to_the_fit() {
        // Two of twelve off: more than one in ten.
        let mut tr = arc(1.0, Some((2, 30.0)));
        tr.obs[7].ra += 40f64.to_radians();
        assert!(gross_outliers(&tr).is_empty());
        // Three positions: no majority.
        let mut short = arc(1.0, Some((1, 30.0)));
        short.obs.truncate(3);
        assert!(gross_outliers(&short).is_empty());
    }
}
