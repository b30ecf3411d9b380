//! Whether a least-squares answer of a multi-night arc stands as it is: the doubts the search raised
//! about its minimum, the decision a decisive linear z makes, and the last look along the distance
//! before a linear answer stands alone.

use super::fit::{FLATTER_REASON, FLIPS_REASON};
use super::lsq::{LsqFit, Problem};
use super::lsqrecord::LINEAR_DECIDES;
use super::result::FitResult;
use super::significance::{MU_BARY, unbound_bary};
use crate::fitting::covariance::eccentricity_gradient;
use crate::physics::elements::CometaryElements;
use crate::physics::{S6, split_state};

/// Why the linear answer may not stand, beyond its own distrust reasons (`distrust_reasons`).
pub(super) struct Doubts {
    /// χ² beside the minimum, along the distance, rose well short of its covariance's prediction.
    pub(super) flatter: bool,
    /// A distinct minimum of the other class (bound or unbound) lies within `PROFILE_SEED_DCHI2` of
    /// the best (before its outliers were set aside). It can hold the posterior though it fits worse
    /// than the alternatives' Δχ², when the model favours its class by more: a near-Earth asteroid's
    /// own valley 11.7 above a hyperbolic one at twice its distance once left P = 1 to the linear answer.
    flips: bool,
}

impl Doubts {
    /// The doubts about `fit`, given where the search's other minima lie and whether χ² was flatter.
    pub(super) fn of(elsewhere: &[S6], flatter: bool, fit: &LsqFit, shift: &S6) -> Doubts {
        let unbound = unbound_bary(&fit.state, shift);
        Doubts {
            flatter,
            flips: elsewhere.iter().any(|x| unbound_bary(x, shift) != unbound),
        }
    }

    pub(super) fn any(&self) -> bool {
        self.flatter || self.flips
    }

    /// Say on the record why the linear answer was doubted.
    pub(super) fn mark(&self, r: &mut FitResult) {
        for (doubted, why) in [(self.flatter, FLATTER_REASON), (self.flips, FLIPS_REASON)] {
            if doubted {
                r.distrust_linear.push(why.into());
            }
        }
    }
}

/// A least-squares answer as the decision whether it stands sees it.
pub(super) struct Judged<'a> {
    fit: &'a LsqFit,
    shift: &'a S6,
    alternatives: &'a [LsqFit],
    range_sigma: Option<f64>,
    nights: usize,
}

impl<'a> Judged<'a> {
    pub(super) fn new(
        fit: &'a LsqFit,
        shift: &'a S6,
        alternatives: &'a [LsqFit],
        range_sigma: Option<f64>,
        nights: usize,
    ) -> Judged<'a> {
        Judged {
            fit,
            shift,
            alternatives,
            range_sigma,
            nights,
        }
    }

    /// Whether a decisive linear z settles the class. Where the range is known to worse than 5 %, or
    /// χ² along the distance is flatter than the covariance, its Gaussian draws cannot follow e along
    /// the curved valley, and where another solution or a minimum of the other class competes the
    /// linear answer does not weigh it: the profile still answers.
    pub(super) fn decides(&self, doubts: &Doubts) -> bool {
        linear_z(self.fit, self.shift).is_some_and(|z| z.abs() >= LINEAR_DECIDES)
            && self.nights >= 3
            && self.alternatives.is_empty()
            && !doubts.any()
            && self
                .range_sigma
                .is_some_and(|rel| rel <= super::trust::RANGE_TRUSTED)
    }
}

/// Whether χ² along the distance is lopsided within 3σ of the minimum (`valleyseeds::lopsided`), where
/// the search scans the distance at all (more nights pin it).
pub(super) fn lopsided_here(
    problem: &Problem,
    scan: Option<&super::search::ScanStart>,
    fit: &LsqFit,
    range_sigma: Option<f64>,
) -> bool {
    match (scan, range_sigma) {
        (Some(scan), Some(rel))
            if problem.tracklet.n_nights() <= super::search::MAX_SCAN_NIGHTS =>
        {
            super::valleyseeds::lopsided(problem, &scan.frame, fit, rel)
        }
        _ => false,
    }
}

/// (e_bary − 1)/σ of a least-squares fit, where it has a covariance.
fn linear_z(fit: &LsqFit, shift: &S6) -> Option<f64> {
    let cov = fit.cov?;
    let xb = fit.state + shift;
    let (rb, vb) = split_state(&xb);
    let g = eccentricity_gradient(&rb, &vb, MU_BARY);
    let s = (g * cov * g.transpose())[0].max(0.0).sqrt();
    let e = CometaryElements::from_state(&rb, &vb, 0.0, MU_BARY).e;
    (s > 0.0).then(|| (e - 1.0) / s)
}
