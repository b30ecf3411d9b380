//! The cells of systematic ranging: one orbit per cell of (ln ρ, ρ̇), its χ² with the attributable
//! profiled out and its prior mass (the population density times the cell's area and the Jacobian),
//! and the refinement that splits cells (those holding the weight, the lowest in χ² of every distance
//! band and, across nights, the one holding the valley's floor) until the weighted orbits are enough
//! to measure a spread. A grid of 100 × 100 cells resolves one night; across nights the valley is far
//! narrower than a cell, and a few cells carry all the weight (an effective sample size near 1, whose
//! spread of e would be a σ of 0).

use super::input::Tracklet;
use super::population::PopulationModel;
use super::ranging::{GridAttributable, RangingSample, SplitMix, quick_predict};
use super::stats::{effective_sample_size, relative_weights};
use crate::physics::constants::{C_AU_PER_DAY, MU_SUN};
use crate::physics::observe::{ObserverState, residual};
use crate::physics::{S6, V3};
use nalgebra::{DMatrix, DVector, Matrix2};

/// Splitting stops once the weighted orbits are worth this many independent draws.
pub const TARGET_N_EFF: f64 = 100.0;
/// At most this many rounds of splitting.
const MAX_ROUNDS: usize = 16;
/// At most this many cells split in one round (the heaviest).
const MAX_SPLIT: usize = 48;
/// Cells lighter than this share of the heaviest are not split.
const SPLIT_SHARE: f64 = 1e-3;
/// Splitting goes on while the best χ² still falls by this much a round (the valley is still being
/// found), however many orbits already carry the weight.
const SETTLED_DCHI2: f64 = 1.0;
/// Once splitting has begun, at least this many rounds, so that the valley is followed through every
/// distance band before the weight's spread is judged.
const MIN_ROUNDS: usize = 6;
/// The cells of lowest χ² split in every distance band each round.
const PER_BAND: usize = 3;
/// Each split cell becomes SPLIT × SPLIT cells.
const SPLIT: usize = 3;

/// A rectangle of the (ln ρ, ρ̇) plane: its lower corner and widths.
#[derive(Debug, Clone, Copy)]
pub struct Cell {
    /// The row of the first grid it lies in (its distance band).
    pub row: usize,
    pub ln_rho: f64,
    pub dln: f64,
    pub rhodot: f64,
    pub drd: f64,
}

impl Cell {
    /// Whether (ln ρ, ρ̇) lies in this cell.
    fn holds(&self, (ln_rho, rhodot): (f64, f64)) -> bool {
        (self.ln_rho..self.ln_rho + self.dln).contains(&ln_rho)
            && (self.rhodot..self.rhodot + self.drd).contains(&rhodot)
    }

    /// The SPLIT × SPLIT cells that tile this one.
    fn children(&self) -> impl Iterator<Item = Cell> + '_ {
        let (dln, drd) = (self.dln / SPLIT as f64, self.drd / SPLIT as f64);
        (0..SPLIT * SPLIT).map(move |k| Cell {
            row: self.row,
            ln_rho: self.ln_rho + dln * (k / SPLIT) as f64,
            dln,
            rhodot: self.rhodot + drd * (k % SPLIT) as f64,
            drd,
        })
    }
}

/// A cell's orbit with its ln prior mass and its class.
pub(super) struct Node {
    pub(super) sample: RangingSample,
    pub(super) ln_prior: f64,
    pub(super) unbound: bool,
    pub(super) cell: Cell,
    /// Where in the cell its orbit lies: (ln ρ, ρ̇).
    pub(super) at: (f64, f64),
}

/// What every cell's orbit is measured against: the positions, their whitening, the attributable and
/// its linear model, the observer at the mean epoch, and the prior.
pub(super) struct Scan<'a> {
    pub(super) tr: &'a Tracklet,
    pub(super) observers: &'a [ObserverState],
    pub(super) whiten: Vec<Matrix2<f64>>,
    /// Whitened linear model of the four attributable parameters, and (AᵀA)⁻¹.
    pub(super) a: DMatrix<f64>,
    pub(super) ata4: nalgebra::Matrix4<f64>,
    pub(super) att: GridAttributable,
    pub(super) obs0: ObserverState,
    pub(super) model: &'a PopulationModel,
    pub(super) v_mag: f64,
    pub(super) sun6: S6,
}

impl Scan<'_> {
    /// The ρ̇ that keep the heliocentric energy at distance ρ below v_cap²/2.
    pub(super) fn rhodot_bounds(&self, rho: f64, v_cap: f64) -> Option<(f64, f64)> {
        let r = self.obs0.helio_pos + rho * self.att.u;
        let w0 = self.obs0.helio_vel + rho * self.att.udot;
        let c1 = w0.dot(&self.att.u);
        let disc = c1 * c1 - w0.norm_squared() + 2.0 * MU_SUN / r.norm() + v_cap * v_cap;
        (disc > 0.0).then(|| (-c1 - disc.sqrt(), -c1 + disc.sqrt()))
    }

    /// Whitened O − C of the orbit at (ρ, ρ̇) built from a direction and its rate (false where a
    /// position cannot be predicted).
    pub(super) fn whitened(
        &self,
        (rho, rhodot): (f64, f64),
        u: &V3,
        udot: &V3,
        out: &mut DVector<f64>,
    ) -> bool {
        let (tr, att, obs0) = (self.tr, &self.att, &self.obs0);
        let epoch = att.t0.plus_days(-rho / C_AU_PER_DAY);
        let rr = obs0.helio_pos + rho * u;
        let vv = obs0.helio_vel + rho * udot + rhodot * u;
        for (i, o) in tr.obs.iter().enumerate() {
            let Some(p) = quick_predict(&rr, &vv, epoch, o.time.tdb, &self.observers[i]) else {
                return false;
            };
            let res = residual(o.ra, o.dec, &p);
            let wr = self.whiten[i] * nalgebra::Vector2::new(res[0], res[1]);
            out[2 * i] = wr[0];
            out[2 * i + 1] = wr[1];
        }
        true
    }

    /// Over several nights the linear attributable model is not enough: one Gauss–Newton step on the
    /// four parameters with partials taken at this node, then the exact χ² (further steps change χ² by
    /// less than a part in a thousand on the synthetic three-night arcs).
    fn profiled_multi_night(&self, at: (f64, f64), xi: &DVector<f64>) -> Option<(V3, V3, f64)> {
        let att = &self.att;
        let n2 = xi.len();
        let mut jac = DMatrix::zeros(n2, 4);
        let mut probe = DVector::zeros(n2);
        for k in 0..4 {
            let h = 1e-7;
            let (du, dud) = match k {
                0 => (att.e_a * h, V3::zeros()),
                1 => (att.e_d * h, V3::zeros()),
                2 => (V3::zeros(), att.e_a * h),
                _ => (V3::zeros(), att.e_d * h),
            };
            if !self.whitened(at, &(att.u + du).normalize(), &(att.udot + dud), &mut probe) {
                return None;
            }
            jac.set_column(k, &((xi - &probe) / h));
        }
        let c = (jac.transpose() * &jac)
            .try_inverse()
            .map(|m| m * (jac.transpose() * xi))?;
        let u = (att.u + c[0] * att.e_a + c[1] * att.e_d).normalize();
        let udot = att.udot + c[2] * att.e_a + c[3] * att.e_d;
        self.whitened(at, &u, &udot, &mut probe)
            .then(|| (u, udot, probe.norm_squared()))
    }

    /// One night: O − C projected off the attributable's linear span (in fixed-size arithmetic, no
    /// allocation per trial), and the profiled correction applied to the direction and rate.
    fn profiled_one_night(&self, xi: &DVector<f64>) -> (V3, V3, f64) {
        let att = &self.att;
        let mut atx = nalgebra::Vector4::zeros();
        for (r, x) in self.a.row_iter().zip(xi.iter()) {
            for k in 0..4 {
                atx[k] += r[k] * x;
            }
        }
        let c = self.ata4 * atx;
        let chi2 = (xi.norm_squared() - atx.dot(&c)).max(0.0);
        let u = (att.u + c[0] * att.e_a + c[1] * att.e_d).normalize();
        let udot = att.udot + c[2] * att.e_a + c[3] * att.e_d;
        (u, udot, chi2)
    }

    /// The orbit at (ln ρ, ρ̇) standing for `cell`: None where it cannot be predicted or the
    /// population has no density there.
    pub(super) fn node(
        &self,
        ln_rho: f64,
        rhodot: f64,
        cell: Cell,
        xi: &mut DVector<f64>,
    ) -> Option<Node> {
        let (att, obs0) = (&self.att, &self.obs0);
        let rho = ln_rho.exp();
        let at = (rho, rhodot);
        if !self.whitened(at, &att.u, &att.udot, xi) {
            return None;
        }
        let (u, udot, chi2) = if self.tr.n_nights() >= 2 {
            self.profiled_multi_night(at, xi)?
        } else {
            self.profiled_one_night(xi)
        };
        let rr = obs0.helio_pos + rho * u;
        let vv = obs0.helio_vel + rho * udot + rhodot * u;
        // Population density at the node's orbit, with the H its distance implies.
        let x6 = S6::new(rr.x, rr.y, rr.z, vv.x, vv.y, vv.z);
        let h = self
            .model
            .absolute_magnitude(self.v_mag, &rr, &obs0.helio_pos);
        let dens = self.model.density(&x6, &self.sun6, h);
        if dens.ln_f == f64::NEG_INFINITY || !chi2.is_finite() {
            return None;
        }
        Some(Node {
            sample: RangingSample {
                state: x6,
                epoch: att.t0.plus_days(-rho / C_AU_PER_DAY),
                chi2,
                weight: 0.0,
                e: f64::NAN,
                e_bary: f64::NAN,
                q: f64::NAN,
                i: f64::NAN,
                rho,
            },
            ln_prior: dens.ln_f + (cell.dln * cell.drd).ln() + 5.0 * rho.ln(),
            unbound: dens.unbound,
            cell,
            at: (ln_rho, rhodot),
        })
    }
}

/// Split the cells that carry the weight, the PER_BAND lowest in χ² of every distance band and the one
/// that holds the valley's floor, each into SPLIT × SPLIT cells with one jittered orbit each,
/// until the weighted orbits are worth TARGET_N_EFF draws (or MAX_ROUNDS pass, or nothing is left to
/// split). A split cell's mass is shared among its parts, so the sum over cells still estimates the
/// same integral. Returns the orbits tried.
pub(super) fn refine(scan: &Scan, nodes: &mut Vec<Node>, rng: &mut SplitMix) -> usize {
    let mut xi = DVector::zeros(2 * scan.tr.obs.len());
    let mut trials = 0;
    let mut last_best = f64::INFINITY;
    // Across nights: where the valley's floor lies, from a fit started at the best cell's orbit.
    let floor = if scan.tr.n_nights() >= 2 {
        nodes
            .iter()
            .min_by(|a, b| a.sample.chi2.total_cmp(&b.sample.chi2))
            .and_then(|n| scan.floor(n.at))
    } else {
        None
    };
    for round in 0..MAX_ROUNDS {
        let best_chi2 = nodes
            .iter()
            .map(|n| n.sample.chi2)
            .fold(f64::INFINITY, f64::min);
        let settled = last_best - best_chi2 < SETTLED_DCHI2 && round >= MIN_ROUNDS;
        last_best = best_chi2;
        let Some(w) = relative_weights(
            nodes
                .iter()
                .map(|n| n.ln_prior - 0.5 * (n.sample.chi2 - best_chi2)),
        ) else {
            break;
        };
        // A first grid that already resolves the weight (one night, two positions) stands as it is.
        if (round == 0 || settled) && effective_sample_size(&w) >= TARGET_N_EFF {
            break;
        }
        let (order, split) = to_split(nodes, &w, floor);
        let parents: Vec<Cell> = order.iter().map(|&k| nodes[k].cell).collect();
        let mut k = 0;
        nodes.retain(|_| {
            k += 1;
            !split[k - 1]
        });
        for parent in &parents {
            for c in parent.children() {
                trials += 1;
                let ln_rho = c.ln_rho + c.dln * rng.uniform();
                let rhodot = c.rhodot + c.drd * rng.uniform();
                nodes.extend(scan.node(ln_rho, rhodot, c, &mut xi));
            }
        }
    }
    trials
}

/// Which cells a round splits, in the order their parts are drawn: the heaviest (at most MAX_SPLIT,
/// above SPLIT_SHARE of the heaviest), the PER_BAND lowest in χ² of every distance band, and the one
/// holding the valley's floor. Also a flag per node: whether it is split.
fn to_split(nodes: &[Node], w: &[f64], floor: Option<(f64, f64)>) -> (Vec<usize>, Vec<bool>) {
    let w_max = w.iter().copied().fold(0.0, f64::max);
    let mut order: Vec<usize> = (0..w.len())
        .filter(|&k| w[k] >= SPLIT_SHARE * w_max)
        .collect();
    order.sort_by(|&a, &b| w[b].total_cmp(&w[a]).then(a.cmp(&b)));
    order.truncate(MAX_SPLIT);
    let mut split = vec![false; nodes.len()];
    for &k in &order {
        split[k] = true;
    }
    // Across nights the valley is a thin curve of ρ̇ against ρ that the first grid misses
    // everywhere: in every distance band the cells nearest it are split too, so the valley is
    // followed at every distance, not only where the heaviest cell happened to fall. (One a band
    // left the valley's best part unfound more often: the synthetic three-night comet-like arc's
    // 95 % interval of e held the truth in 2 of 12 draws, now 10.)
    let mut bands: std::collections::BTreeMap<usize, Vec<usize>> =
        std::collections::BTreeMap::new();
    for (k, n) in nodes.iter().enumerate() {
        bands.entry(n.cell.row).or_default().push(k);
    }
    for band in bands.values_mut() {
        band.sort_by(|&a, &b| {
            nodes[a]
                .sample
                .chi2
                .total_cmp(&nodes[b].sample.chi2)
                .then(a.cmp(&b))
        });
        for &k in band.iter().take(PER_BAND) {
            if !split[k] {
                split[k] = true;
                order.push(k);
            }
        }
    }
    // The cell that holds the floor, chosen by where the floor lies, not by its own draw.
    if let Some(k) = floor.and_then(|f| nodes.iter().position(|n| n.cell.holds(f)))
        && !split[k]
    {
        split[k] = true;
        order.push(k);
    }
    (order, split)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_split_cell_is_tiled_exactly_by_its_parts() {
        let parent = Cell {
            row: 7,
            ln_rho: -1.0,
            dln: 0.3,
            rhodot: -0.02,
            drd: 0.009,
        };
        let parts: Vec<Cell> = parent.children().collect();
        assert_eq!(parts.len(), SPLIT * SPLIT);
        let area: f64 = parts.iter().map(|c| c.dln * c.drd).sum();
        assert!((area - parent.dln * parent.drd).abs() < 1e-15);
        // Every part inside the parent, same band; the corners of the parts cover its grid.
        for c in &parts {
            assert_eq!(c.row, 7);
            assert!(c.ln_rho >= parent.ln_rho - 1e-15);
            assert!(c.ln_rho + c.dln <= parent.ln_rho + parent.dln + 1e-12);
            assert!(c.rhodot >= parent.rhodot - 1e-15);
            assert!(c.rhodot + c.drd <= parent.rhodot + parent.drd + 1e-12);
        }
        let mut corners: Vec<(i64, i64)> = parts
            .iter()
            .map(|c| {
                (
                    ((c.ln_rho - parent.ln_rho) / c.dln).round() as i64,
                    ((c.rhodot - parent.rhodot) / c.drd).round() as i64,
                )
            })
            .collect();
        corners.sort_unstable();
        corners.dedup();
        assert_eq!(corners.len(), SPLIT * SPLIT);
        // A point lies in exactly one part (lower edges in, upper edges out).
        let point = (parent.ln_rho + 0.15, parent.rhodot + 0.003);
        assert!(parent.holds(point));
        assert_eq!(parts.iter().filter(|c| c.holds(point)).count(), 1);
        assert!(!parent.holds((parent.ln_rho + parent.dln, parent.rhodot)));
    }
}
