//! Systematic ranging for short arcs (two positions, or a degenerate least-squares problem): a grid over
//! topocentric distance ρ (log-spaced) and radial velocity ρ̇ at the mean epoch, inside the region
//! where the heliocentric energy stays below v_cap²/2 (so unbound orbits up to v∞ = v_cap are admitted).
//! At each node the four attributable parameters (direction and its rate) are profiled out: O − C is
//! projected off their linear span, which is what a per-node four-parameter fit converges to for a
//! short arc, at the cost of one prediction per observation.
//!
//! Prior: the population model's phase-space density at each node's orbit (with the H its distance
//! implies) times the Jacobian ρ⁴ of (direction, rate, ρ, ρ̇) → state and the cell's area in
//! (ln ρ, ρ̇). Used for arcs of two positions, for multi-night arcs whose least squares is degenerate
//! and when forced; a night seen from one place goes to the short-arc quadrature (`shortarc.rs`).

use super::input::Tracklet;
use super::population::PopulationModel;
use super::posterior::{Masses, Posterior, sampled_ln_odds_error};
use super::rangecells::{Cell, Node, Scan, refine};
use super::stats::{effective_sample_size, relative_weights, weighted_quantile};
use crate::physics::constants::{AU_PER_DAY_TO_KM_S, MU_SUN};
use crate::physics::elements::CometaryElements;
use crate::physics::frames::equatorial_to_ecliptic;
use crate::physics::observe::{ObserverState, Prediction, project_position};
use crate::physics::propagate::propagate;
use crate::physics::time::Jd2;
use crate::physics::{S6, V3};
use nalgebra::{DMatrix, DVector, Matrix2};

/// The seed of every path's draws and jitter unless one is given (`fit --seed`): the console, `watch`
/// and `fit` share it, so that the same input gives the same numbers everywhere.
pub const DEFAULT_SEED: u64 = 0x5EED;

/// Default speed cap at infinity (km/s). It bounds the search only; the population model weighs the
/// speeds within it. The built-in model's Galactic halo (relative mean 232 km/s, σ up to 160 km/s)
/// and thick disc put about 8 % of the interstellar bodies passing 1 au above 100 km/s (a cap there
/// piled their posterior against it: e 15 ± 0.2 for a true 37), 0.3 % above 300 and 1e-4 above
/// 500 (flux- and focusing-weighted draws of its velocity ellipsoids).
pub const DEFAULT_V_CAP_KM_S: f64 = 500.0;
/// Nearest distance considered (AU): just beyond the Moon, so Earth satellites are not modelled.
pub const RHO_MIN_AU: f64 = 0.003;
/// Farthest distance considered (AU).
pub const RHO_MAX_AU: f64 = 100.0;

#[derive(Debug, Clone, Copy)]
pub struct RangingOptions {
    pub v_cap_km_s: f64,
    pub n_rho: usize,
    pub n_rhodot: usize,
    pub seed: u64,
    /// Distances of the multi-night range profile's coarse grid (refined where it matters).
    pub profile_n_rho: usize,
}

impl Default for RangingOptions {
    fn default() -> Self {
        RangingOptions {
            v_cap_km_s: DEFAULT_V_CAP_KM_S,
            n_rho: 100,
            n_rhodot: 100,
            seed: DEFAULT_SEED,
            profile_n_rho: super::profile::ProfileOptions::default().n_rho,
        }
    }
}

/// Up to this speed at infinity a row of the grid has `n_rhodot` even cells in ρ̇; from there to the
/// cap each side has a tenth as many (the population's fast tail, where its density is small: the
/// built-in model's interstellar bodies near the Sun are about 8 % faster than 100 km/s). Even cells
/// up to a 500 km/s cap would leave the bound part of a row a fifth of its cells.
pub const RESOLVED_V_KM_S: f64 = 100.0;
const WING_SHARE: usize = 10;

/// The ρ̇ cells (start, width) of one row spanning `full`: `n` even ones over `resolved` (the range
/// up to `RESOLVED_V_KM_S`, all of `full` when absent), `n / WING_SHARE` even ones over each part of
/// `full` beyond it.
fn row_cells(full: (f64, f64), resolved: Option<(f64, f64)>, n: usize) -> Vec<(f64, f64)> {
    let (lo, hi) = full;
    let (a, b) = resolved.map_or(full, |(a, b)| (a.max(lo), b.min(hi)));
    let wing = (n / WING_SHARE).max(1);
    let mut out = Vec::with_capacity(n + 2 * wing);
    for (from, to, k) in [(lo, a, wing), (a, b, n), (b, hi, wing)] {
        if to > from {
            let d = (to - from) / k as f64;
            out.extend((0..k).map(|j| (from + d * j as f64, d)));
        }
    }
    out
}

/// One weighted orbit of the ranging set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RangingSample {
    pub state: S6,
    pub epoch: Jd2,
    pub chi2: f64,
    /// Posterior weight under the population prior (normalised to sum 1 over the set).
    pub weight: f64,
    pub e: f64,
    pub e_bary: f64,
    pub q: f64,
    pub i: f64,
    pub rho: f64,
}

/// Summary of a ranging run.
#[derive(Debug, Clone)]
pub struct RangingResult {
    pub samples: Vec<RangingSample>,
    pub posterior: Posterior,
    pub n_eff: f64,
    pub e_interval: [f64; 3],
    pub q_interval: [f64; 3],
    pub i_interval: [f64; 3],
    pub best: RangingSample,
    pub trials: usize,
    /// The least and greatest heliocentric e over every node within Δχ² 3.84 of the best, however the
    /// model weighs it (`FitResult::e_data_interval`; nodes where its density is zero are not kept).
    pub e_data_interval: Option<[f64; 2]>,
}

/// A small seeded generator (SplitMix64) for reproducible jitter within grid cells.
pub struct SplitMix(u64);

impl SplitMix {
    pub fn new(seed: u64) -> Self {
        SplitMix(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Standard normal (Box–Muller).
    pub fn normal(&mut self) -> f64 {
        let u1 = self.uniform().max(1e-300);
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// Position only, with light time, for a state at its own epoch (no partials: ranging needs speed).
pub fn quick_predict(
    r0: &V3,
    v0: &V3,
    epoch: Jd2,
    t: Jd2,
    obs: &ObserverState,
) -> Option<Prediction> {
    let (r, v) = propagate(r0, v0, t.minus(epoch), MU_SUN).ok()?;
    Some(project_position(&r, &v, obs, MU_SUN))
}

/// The attributable of a multi-night arc: direction and rate at the mean epoch, from a weighted
/// polynomial fit in the tangent plane (no uncertainties or curvature: the grid's cells profile them
/// out, unlike one night's quadrature).
pub(super) struct GridAttributable {
    pub(super) t0: Jd2,
    pub(super) u: V3,
    pub(super) udot: V3,
    pub(super) e_a: V3,
    pub(super) e_d: V3,
}

use super::shortarc::tangent_axes;

fn attributable(tr: &Tracklet) -> GridAttributable {
    let n = tr.obs.len();
    let t0 = {
        let base = tr.obs[0].time.tdb;
        let mean = tr.obs.iter().map(|o| o.time.tdb.minus(base)).sum::<f64>() / n as f64;
        base.plus_days(mean)
    };
    let dirs: Vec<V3> = tr
        .obs
        .iter()
        .map(|o| crate::physics::frames::unit_from_radec(o.ra, o.dec))
        .collect();
    let u0 = dirs.iter().fold(V3::zeros(), |a, d| a + d).normalize();
    let (e_a, e_d) = tangent_axes(&u0);
    let span = tr.arc_days();
    let degree = if n > 4 && span > 1.0 / 24.0 { 2 } else { 1 };
    let mut a = DMatrix::zeros(n, degree + 1);
    let mut bx = DVector::zeros(n);
    let mut by = DVector::zeros(n);
    for (i, (o, d)) in tr.obs.iter().zip(&dirs).enumerate() {
        let dt = o.time.tdb.minus(t0);
        let w = d.dot(&u0);
        bx[i] = d.dot(&e_a) / w;
        by[i] = d.dot(&e_d) / w;
        for k in 0..=degree {
            a[(i, k)] = dt.powi(k as i32);
        }
    }
    let solve = |b: &DVector<f64>| {
        let qr = a.clone().qr();
        qr.r()
            .solve_upper_triangular(&(qr.q().transpose() * b))
            .unwrap_or_else(|| DVector::zeros(degree + 1))
    };
    let (cx, cy) = (solve(&bx), solve(&by));
    let u = (u0 + cx[0] * e_a + cy[0] * e_d).normalize();
    let udot_raw = cx[1] * e_a + cy[1] * e_d;
    let udot = udot_raw - u * u.dot(&udot_raw);
    let (e_a, e_d) = tangent_axes(&u);
    GridAttributable {
        t0,
        u,
        udot,
        e_a,
        e_d,
    }
}

/// Run systematic ranging. `observer_at_t0` is the observer at the tracklet's mean epoch;
/// `sun_bary` the Sun's barycentric state at that epoch (for barycentric eccentricities).
pub fn range(
    tr: &Tracklet,
    observers: &[ObserverState],
    cov: &[Matrix2<f64>],
    observer_at_t0: impl Fn(Jd2) -> Option<ObserverState>,
    sun_bary: (V3, V3),
    opts: &RangingOptions,
    prior: (&PopulationModel, f64),
) -> Option<RangingResult> {
    if tr.obs.len() < 2 {
        return None;
    }
    let scan = scan_of(tr, observers, cov, observer_at_t0, sun_bary, prior)?;
    let mut rng = SplitMix::new(opts.seed);
    let (mut nodes, mut trials) = first_grid(&scan, opts, &mut rng);
    if nodes.is_empty() {
        return None;
    }
    trials += refine(&scan, &mut nodes, &mut rng);
    if nodes.is_empty() {
        return None;
    }
    let best_chi2 = nodes
        .iter()
        .map(|n| n.sample.chi2)
        .fold(f64::INFINITY, f64::min);
    let e_data_interval = super::datainterval::e_range_of_nodes(
        nodes.iter().map(|n| (&n.sample.state, n.sample.chi2)),
    );
    let ln_w: Vec<f64> = nodes
        .iter()
        .map(|n| n.ln_prior - 0.5 * (n.sample.chi2 - best_chi2))
        .collect();
    with_elements(&mut nodes, &ln_w, sun_bary);
    let mut r = summarise(&nodes, &ln_w)?;
    r.trials = trials;
    r.e_data_interval = e_data_interval;
    Some(r)
}

/// The tracklet's attributable, whitened linear model and projector, ready to place cells.
fn scan_of<'a>(
    tr: &'a Tracklet,
    observers: &'a [ObserverState],
    cov: &[Matrix2<f64>],
    observer_at_t0: impl Fn(Jd2) -> Option<ObserverState>,
    sun_bary: (V3, V3),
    prior: (&'a PopulationModel, f64),
) -> Option<Scan<'a>> {
    let (model, v_mag) = prior;
    let sun6 = S6::new(
        sun_bary.0.x,
        sun_bary.0.y,
        sun_bary.0.z,
        sun_bary.1.x,
        sun_bary.1.y,
        sun_bary.1.z,
    );
    let n = tr.obs.len();
    let att = attributable(tr);
    let obs0 = observer_at_t0(att.t0)?;
    let whiten: Vec<Matrix2<f64>> = cov
        .iter()
        .map(|c| {
            c.cholesky()
                .and_then(|ch| ch.l().try_inverse())
                .unwrap_or_else(Matrix2::identity)
        })
        .collect();
    // Whitened linear model of the four attributable parameters, and its projector.
    let mut a = DMatrix::zeros(2 * n, 4);
    for i in 0..n {
        let dt = tr.obs[i].time.tdb.minus(att.t0);
        let block = nalgebra::Matrix2x4::new(1.0, 0.0, dt, 0.0, 0.0, 1.0, 0.0, dt);
        let wb = whiten[i] * block;
        for r in 0..2 {
            for c in 0..4 {
                a[(2 * i + r, c)] = wb[(r, c)];
            }
        }
    }
    let ata_inv = (a.transpose() * &a).try_inverse()?;
    let ata4: nalgebra::Matrix4<f64> = nalgebra::Matrix4::from_fn(|i, j| ata_inv[(i, j)]);
    Some(Scan {
        tr,
        observers,
        whiten,
        a,
        ata4,
        att,
        obs0,
        model,
        v_mag,
        sun6,
    })
}

/// The first grid: one jittered distance per row of cells, its ρ̇ range from the speed cap there;
/// the nodes that fit and the number of trials.
fn first_grid(scan: &Scan, opts: &RangingOptions, rng: &mut SplitMix) -> (Vec<Node>, usize) {
    let v_cap = opts.v_cap_km_s / AU_PER_DAY_TO_KM_S;
    let resolved_v = RESOLVED_V_KM_S / AU_PER_DAY_TO_KM_S;
    let dln = (RHO_MAX_AU / RHO_MIN_AU).ln() / opts.n_rho as f64;
    let mut nodes: Vec<Node> = Vec::new();
    let mut trials = 0;
    let mut xi = DVector::zeros(2 * scan.tr.obs.len());
    for k in 0..opts.n_rho {
        let row = RHO_MIN_AU.ln() + dln * k as f64;
        let ln_rho = RHO_MIN_AU.ln() + dln * (k as f64 + rng.uniform());
        let Some(full) = scan.rhodot_bounds(ln_rho.exp(), v_cap) else {
            continue;
        };
        let resolved = scan.rhodot_bounds(ln_rho.exp(), v_cap.min(resolved_v));
        for (start, drd) in row_cells(full, resolved, opts.n_rhodot) {
            let cell = Cell {
                row: k,
                ln_rho: row,
                dln,
                rhodot: start,
                drd,
            };
            let rhodot = start + drd * rng.uniform();
            trials += 1;
            nodes.extend(scan.node(ln_rho, rhodot, cell, &mut xi));
        }
    }
    (nodes, trials)
}

/// Elements only where the weight is not negligible (below e⁻³⁰ of the heaviest cell's: cells of
/// split grids differ in area, so χ² alone does not say).
fn with_elements(nodes: &mut [Node], ln_w: &[f64], sun_bary: (V3, V3)) {
    let ecl = equatorial_to_ecliptic();
    let ln_w_max = ln_w.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    for (n, _) in nodes
        .iter_mut()
        .zip(ln_w)
        .filter(|(_, w)| **w - ln_w_max >= -30.0)
    {
        let st = &n.sample.state;
        let (rr, vv) = (V3::new(st[0], st[1], st[2]), V3::new(st[3], st[4], st[5]));
        let t = n.sample.epoch.value();
        let el = CometaryElements::from_state(&(ecl * rr), &(ecl * vv), t, MU_SUN);
        let eb = CometaryElements::from_state(
            &(rr + sun_bary.0),
            &(vv + sun_bary.1),
            t,
            super::significance::MU_BARY,
        );
        n.sample.e = el.e;
        n.sample.e_bary = eb.e;
        n.sample.q = el.q;
        n.sample.i = el.i;
    }
}

/// The posterior over the weighted cells: P with its error, the weighted samples, their central 95 %
/// intervals and medians, the heaviest cell (trials and the data's e range are the caller's).
fn summarise(nodes: &[Node], ln_w: &[f64]) -> Option<RangingResult> {
    let classes: Vec<bool> = nodes.iter().map(|n| n.unbound).collect();
    let post = Masses::of(classes.iter().zip(ln_w.iter().copied()));
    let prior = Masses::of(classes.iter().zip(nodes.iter().map(|n| n.ln_prior)));
    let raw = relative_weights(ln_w.iter().copied())?;
    let total: f64 = raw.iter().sum();
    let n_eff_all = effective_sample_size(&raw);
    let posterior = Posterior::new(
        post,
        prior,
        sampled_ln_odds_error(ln_w, &classes),
        Some(n_eff_all),
    );
    let mut samples: Vec<RangingSample> = nodes
        .iter()
        .zip(&raw)
        .map(|(n, w)| RangingSample {
            weight: w / total,
            ..n.sample
        })
        .collect();
    let w: Vec<f64> = samples.iter().map(|s| s.weight).collect();
    let n_eff = effective_sample_size(&w);
    // Over the cells with elements (the rest weigh below e⁻³⁰ of the heaviest).
    let interval = |f: &dyn Fn(&RangingSample) -> f64| {
        let (v, vw): (Vec<f64>, Vec<f64>) = samples
            .iter()
            .zip(&w)
            .map(|(s, w)| (f(s), *w))
            .filter(|(x, _)| x.is_finite())
            .unzip();
        [0.025, 0.5, 0.975].map(|q| weighted_quantile(&v, &vw, q).unwrap_or(f64::NAN))
    };
    let e_interval = interval(&|s| s.e);
    let q_interval = interval(&|s| s.q);
    let i_interval = interval(&|s| s.i);
    let best = *samples
        .iter()
        .max_by(|a, b| a.weight.total_cmp(&b.weight))?;
    let wmax = best.weight;
    samples.retain(|s| s.weight > 1e-9 * wmax);
    Some(RangingResult {
        samples,
        posterior,
        n_eff,
        e_interval,
        q_interval,
        i_interval,
        best,
        trials: 0,
        e_data_interval: None,
    })
}

#[cfg(test)]
mod tests {
    use super::row_cells;

    #[test]
    fn a_row_keeps_its_even_cells_up_to_the_resolved_speed_and_a_tenth_as_many_beyond() {
        let cells = row_cells((-5.0, 7.0), Some((-1.0, 2.0)), 30);
        assert_eq!(cells.len(), 30 + 2 * 3);
        // Contiguous from end to end, 30 cells of 0.1 over the resolved part.
        assert_eq!(cells[0].0, -5.0);
        for w in cells.windows(2) {
            assert!((w[0].0 + w[0].1 - w[1].0).abs() < 1e-12, "{w:?}");
        }
        let last = cells[cells.len() - 1];
        assert!((last.0 + last.1 - 7.0).abs() < 1e-12);
        let inner: Vec<_> = cells.iter().filter(|c| c.0 >= -1.0 && c.0 < 2.0).collect();
        assert_eq!(inner.len(), 30);
        assert!(inner.iter().all(|c| (c.1 - 0.1).abs() < 1e-12));
        // A cap at or below the resolved speed: the row is even, as before.
        let even = row_cells((-1.0, 2.0), Some((-1.0, 2.0)), 30);
        assert_eq!(even.len(), 30);
        assert_eq!(row_cells((-1.0, 2.0), None, 30).len(), 30);
    }
}
