//! Tonight's follow-up plan: for each telescope and its night, a time grid of sky conditions (one
//! [`SkySlot`] per step, shared by every candidate); for each candidate and step, where it is, how high,
//! how large its 3σ region is against the field of view, and what one visit there is worth (the Fisher
//! gain of `followup.rs`). Candidates are then placed greedily, most valuable first, each at the free
//! stretch of dark sky where its visit is worth most, never two at once on one telescope.

use super::conditions::{Capabilities, SkySlot};
use super::fit::FitResult;
use crate::physics::observe::ObserverModel;
use crate::physics::sexagesimal::{dec_dms, ra_hms};
use crate::physics::site::GroundPosition;
use crate::physics::sky::{Twilight, airmass};
use crate::physics::time::{Instant, tt_to_utc};

pub use super::planeval::{Evaluation, SlotEval, evaluate};

/// Closer than this to the Sun (degrees) a pointing carries a caution.
pub const NEAR_SUN_DEG: f64 = 45.0;
/// Expected changes of P below this count as none when ordering candidates.
pub const MIN_DP: f64 = 1e-4;
/// Within this of the site's altitude limit (degrees) a pointing is marked low.
pub const LOW_MARGIN_DEG: f64 = 10.0;

/// One telescope and the stretch of time it offers.
#[derive(Debug, Clone)]
pub struct PlanSite {
    pub code: String,
    pub position: GroundPosition,
    pub caps: Capabilities,
    pub from: Instant,
    pub to: Instant,
}

/// How the plan is made.
#[derive(Debug, Clone, Copy)]
pub struct PlanOptions {
    pub twilight: Twilight,
    /// Grid step (days).
    pub step_days: f64,
    /// Time at one pointing (days): enough for a short sequence of exposures.
    pub visit_days: f64,
    /// Positions measured in one visit.
    pub positions_per_visit: usize,
    /// A region needing more pointings than this is not scheduled.
    pub max_pointings: usize,
}

impl Default for PlanOptions {
    fn default() -> Self {
        PlanOptions {
            twilight: Twilight::default(),
            step_days: 10.0 / 1440.0,
            visit_days: 20.0 / 1440.0,
            positions_per_visit: 4,
            max_pointings: 16,
        }
    }
}

/// A reason to look twice before pointing; the site's own limits and procedures decide.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Caution {
    NearSun,
    LowAltitude,
    BrightMoon,
}

/// One scheduled visit.
#[derive(Debug, Clone, serde::Serialize)]
pub struct PlanItem {
    pub object: String,
    pub site: String,
    pub start_utc: String,
    pub end_utc: String,
    pub duration_min: f64,
    pub ra_deg: f64,
    pub dec_deg: f64,
    pub ra_hms: String,
    pub dec_dms: String,
    pub rate_arcsec_min: f64,
    /// Predicted V at the start (null when the positions carried no magnitudes).
    pub v_mag: Option<f64>,
    /// Lowest altitude over the visit, and the airmass there.
    pub alt_deg: f64,
    pub airmass: Option<f64>,
    pub moon_sep_deg: f64,
    pub moon_illum: f64,
    pub sun_alt_deg: f64,
    pub elong_deg: f64,
    pub region_major_arcsec: f64,
    pub region_minor_arcsec: f64,
    pub fov_deg: f64,
    pub region_exceeds_fov: bool,
    pub pointings: usize,
    pub p_hyperbolic: Option<f64>,
    pub expected_change: f64,
    pub inv_a_sigma_now: f64,
    pub inv_a_sigma_after: f64,
    /// Place in the value order (1 = most valuable).
    pub priority: usize,
    pub cautions: Vec<Caution>,
}

/// Why a candidate is not in the plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Unplanned {
    /// The fit has no orbit or no uncertainty to plan from.
    NoOrbit,
    /// Never dark, high and bright enough at any of the sites.
    NotObservable,
    /// Its 3σ region needs more pointings than the plan allows.
    RegionTooLarge,
    /// Every suitable stretch is taken by more valuable candidates.
    NoFreeTime,
    /// Never dark, high and bright enough for as long as its visit takes.
    TooBrief,
}

impl Unplanned {
    pub fn text(self) -> &'static str {
        match self {
            Unplanned::NoOrbit => "no orbit or uncertainty to plan from",
            Unplanned::NotObservable => "never dark, high and bright enough at these sites",
            Unplanned::RegionTooLarge => "3σ region needs more pointings than allowed",
            Unplanned::NoFreeTime => "every suitable stretch is taken by more valuable candidates",
            Unplanned::TooBrief => "observable for less time than its visit takes",
        }
    }
}

impl Caution {
    pub fn text(self) -> &'static str {
        match self {
            Caution::NearSun => "SUN",
            Caution::LowAltitude => "LOW",
            Caution::BrightMoon => "MOON",
        }
    }
}

#[derive(Debug, Clone, serde::Serialize)]
pub struct Left {
    pub object: String,
    pub reason: Unplanned,
}

/// The dark stretch of one site.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SiteNight {
    pub site: String,
    pub dark_from_utc: Option<String>,
    pub dark_to_utc: Option<String>,
    pub dark_hours: f64,
    pub min_alt_deg: f64,
    pub fov_deg: f64,
    pub limiting_mag: f64,
}

#[derive(Debug, Clone, serde::Serialize)]
pub struct Plan {
    pub twilight: Twilight,
    pub sites: Vec<SiteNight>,
    pub items: Vec<PlanItem>,
    pub unplanned: Vec<Left>,
}

/// The sky grid of one site: a slot per step (None where it could not be computed).
pub fn site_grid(
    site: &PlanSite,
    opts: &PlanOptions,
    model: &ObserverModel,
) -> Vec<Option<SkySlot>> {
    let n = (site.to.tt.minus(site.from.tt) / opts.step_days + 1e-9).floor() as usize + 1;
    (0..n)
        .map(|k| {
            let inst = site.from.plus_days(k as f64 * opts.step_days);
            SkySlot::new(&site.position, &inst, model).ok()
        })
        .collect()
}

fn utc(inst: &Instant) -> String {
    tt_to_utc(inst.tt).to_string()
}

fn night_summary(site: &PlanSite, grid: &[Option<SkySlot>], opts: &PlanOptions) -> SiteNight {
    let dark: Vec<&SkySlot> = grid
        .iter()
        .flatten()
        .filter(|s| s.is_dark(opts.twilight))
        .collect();
    SiteNight {
        site: site.code.clone(),
        dark_from_utc: dark.first().map(|s| utc(&s.inst)),
        dark_to_utc: dark.last().map(|s| utc(&s.inst)),
        dark_hours: dark.len().saturating_sub(1) as f64 * opts.step_days * 24.0,
        min_alt_deg: site.caps.min_alt_deg,
        fov_deg: site.caps.fov_deg,
        limiting_mag: site.caps.limiting_mag,
    }
}

/// Pointings that tile a 3σ region of full extent 2a × 2b (arcsec) with a square field.
pub fn pointings(major: f64, minor: f64, fov_deg: f64) -> usize {
    let f = fov_deg * 3600.0;
    let along = (2.0 * major / f).ceil().max(1.0) as usize;
    let across = (2.0 * minor / f).ceil().max(1.0) as usize;
    along * across
}

/// Where a visit can go: the start slot with the highest value among free, fully visible stretches of
/// `len` steps (the end instant included), or None.
fn best_start(evals: &[Option<SlotEval>], busy: &[bool], len: usize) -> Option<usize> {
    let mut best: Option<(usize, (f64, f64))> = None;
    for k in 0..evals.len().saturating_sub(len) {
        let stretch = &evals[k..=k + len];
        if busy[k..k + len].iter().any(|b| *b) || stretch.iter().any(Option::is_none) {
            continue;
        }
        let mid = evals[k + len / 2].as_ref()?;
        let low = stretch
            .iter()
            .flatten()
            .map(|e| e.alt_deg)
            .fold(f64::INFINITY, f64::min);
        // Expected |ΔP| (below MIN_DP all alike: a slot worth 10⁻³³ more in P once beat a higher
        // one), then the altitude, as the candidates' own order reads their highest slot.
        let key = (slot_dp(mid), low);
        if best.is_none_or(|(_, b)| key > b) {
            best = Some((k, key));
        }
    }
    best.map(|b| b.0)
}

/// A slot's expected |ΔP|, as the ranking reads it (below `MIN_DP`, zero).
fn slot_dp(e: &SlotEval) -> f64 {
    if e.value < MIN_DP { 0.0 } else { e.value }
}

/// Make the plan for `fits` at `sites`, without brightness limits.
pub fn plan(
    fits: &[FitResult],
    sites: &[PlanSite],
    opts: &PlanOptions,
    model: &ObserverModel,
) -> Plan {
    plan_with_h(fits, &[], sites, opts, model)
}

/// Make the plan; `h[i]`, where given, is the absolute magnitude of `fits[i]` (else the record's own),
/// and times when it is fainter than a site's limiting magnitude are not used.
pub fn plan_with_h(
    fits: &[FitResult],
    h: &[Option<f64>],
    sites: &[PlanSite],
    opts: &PlanOptions,
    model: &ObserverModel,
) -> Plan {
    let grids: Vec<Vec<Option<SkySlot>>> =
        sites.iter().map(|s| site_grid(s, opts, model)).collect();
    let mut evals: Vec<(usize, Evaluation)> = Vec::new();
    let mut unplanned = Vec::new();
    for (i, fit) in fits.iter().enumerate() {
        let h = h.get(i).copied().flatten().or(fit.h_mag);
        match evaluate(fit, h, sites, &grids, opts, model) {
            Some(e) => evals.push((i, e)),
            None => unplanned.push(Left {
                object: fit.object.clone(),
                reason: Unplanned::NoOrbit,
            }),
        }
    }
    // Most valuable first: expected |ΔP| (below 1e-4 all alike), then the shrinkage of σ(1/a), then
    // the name.
    // The shrinkage is the one at the slot the visit would take on an empty night (the one the plan
    // then shows, unless a more valuable visit took it): the largest anywhere once ranked a visit
    // that was then placed where σ(1/a) shrank by 5 %.
    let dp = |e: &Evaluation| if e.best < MIN_DP { 0.0 } else { e.best };
    let free: Vec<Vec<bool>> = grids.iter().map(|g| vec![false; g.len()]).collect();
    let shrink_where_placed = |ev: &Evaluation| match place(ev, sites, &mut free.clone(), opts) {
        Ok((s, k, len)) => ev.slots[s][k + len / 2]
            .as_ref()
            .filter(|e| e.inv_a_sigma_now > 0.0)
            .map_or(ev.best_shrink, |e| {
                1.0 - e.inv_a_sigma_after / e.inv_a_sigma_now
            }),
        Err(_) => ev.best_shrink,
    };
    let shrink: Vec<f64> = evals.iter().map(|(_, e)| shrink_where_placed(e)).collect();
    let mut order: Vec<usize> = (0..evals.len()).collect();
    order.sort_by(|&x, &y| {
        let ((ia, a), (ib, b)) = (&evals[x], &evals[y]);
        dp(b)
            .total_cmp(&dp(a))
            .then(shrink[y].total_cmp(&shrink[x]))
            .then(fits[*ia].object.cmp(&fits[*ib].object))
    });
    let mut slots: Vec<Option<(usize, Evaluation)>> = evals.into_iter().map(Some).collect();
    let evals: Vec<(usize, Evaluation)> = order.iter().filter_map(|&k| slots[k].take()).collect();
    let mut busy: Vec<Vec<bool>> = grids.iter().map(|g| vec![false; g.len()]).collect();
    let mut items = Vec::new();
    for (rank, (i, ev)) in evals.iter().enumerate() {
        let fit = &fits[*i];
        match place(ev, sites, &mut busy, opts) {
            Ok((s, k, len)) => items.push(item(
                fit,
                ev,
                &sites[s],
                &grids[s],
                (s, k, len),
                rank,
                opts.visit_days,
            )),
            Err(reason) => unplanned.push(Left {
                object: fit.object.clone(),
                reason,
            }),
        }
    }
    items.sort_by(|a, b| a.start_utc.cmp(&b.start_utc).then(a.site.cmp(&b.site)));
    Plan {
        twilight: opts.twilight,
        sites: sites
            .iter()
            .zip(&grids)
            .map(|(s, g)| night_summary(s, g, opts))
            .collect(),
        items,
        unplanned,
    }
}

/// Choose site and start for one candidate and mark the time taken.
fn place(
    ev: &Evaluation,
    sites: &[PlanSite],
    busy: &mut [Vec<bool>],
    opts: &PlanOptions,
) -> Result<(usize, usize, usize), Unplanned> {
    let mut best: Option<(usize, usize, usize, (f64, f64))> = None;
    let (mut any_visible, mut too_large, mut taken) = (false, false, false);
    for (s, site) in sites.iter().enumerate() {
        let per = &ev.slots[s];
        let Some(worst) = per
            .iter()
            .flatten()
            .map(|e| e.major_arcsec)
            .reduce(f64::max)
        else {
            continue;
        };
        any_visible = true;
        let minor = per
            .iter()
            .flatten()
            .map(|e| e.minor_arcsec)
            .fold(0.0, f64::max);
        let n = pointings(worst, minor, site.caps.fov_deg);
        if n > opts.max_pointings {
            too_large = true;
            continue;
        }
        let len = ((n as f64 * opts.visit_days / opts.step_days) - 1e-9)
            .ceil()
            .max(1.0) as usize;
        if let Some(k) = best_start(per, &busy[s], len) {
            let v = per[k + len / 2]
                .as_ref()
                .map_or((0.0, 0.0), |e| (slot_dp(e), e.alt_deg));
            if best.is_none_or(|b| v > b.3) {
                best = Some((s, k, len, v));
            }
        } else if best_start(per, &vec![false; busy[s].len()], len).is_some() {
            // It would fit here, had more valuable candidates not taken the time.
            taken = true;
        }
    }
    match best {
        Some((s, k, len, _)) => {
            busy[s][k..k + len].iter_mut().for_each(|b| *b = true);
            Ok((s, k, len))
        }
        None if !any_visible => Err(Unplanned::NotObservable),
        None if taken => Err(Unplanned::NoFreeTime),
        None if too_large => Err(Unplanned::RegionTooLarge),
        None => Err(Unplanned::TooBrief),
    }
}

fn item(
    fit: &FitResult,
    ev: &Evaluation,
    site: &PlanSite,
    grid: &[Option<SkySlot>],
    (s, k, len): (usize, usize, usize),
    rank: usize,
    visit_days: f64,
) -> PlanItem {
    let stretch: Vec<&SlotEval> = ev.slots[s][k..=k + len].iter().flatten().collect();
    let first = stretch[0];
    let mid = stretch[stretch.len() / 2];
    let low = stretch
        .iter()
        .min_by(|a, b| a.alt_deg.total_cmp(&b.alt_deg))
        .copied()
        .unwrap_or(first);
    let major = stretch.iter().map(|e| e.major_arcsec).fold(0.0, f64::max);
    let minor = stretch.iter().map(|e| e.minor_arcsec).fold(0.0, f64::max);
    let slots: Vec<&SkySlot> = grid[k..=k + len].iter().flatten().collect();
    let n = pointings(major, minor, site.caps.fov_deg);
    let mut cautions = Vec::new();
    if stretch.iter().any(|e| e.elong_deg < NEAR_SUN_DEG) {
        cautions.push(Caution::NearSun);
    }
    if low.alt_deg < site.caps.min_alt_deg + LOW_MARGIN_DEG {
        cautions.push(Caution::LowAltitude);
    }
    if stretch.iter().any(|e| e.moon_caution) {
        cautions.push(Caution::BrightMoon);
    }
    // The visit itself: its pointings one after another (the grid's steps only place it).
    let start = slots.first().map(|s| s.inst).unwrap_or(site.from);
    let end = start.plus_days(n as f64 * visit_days);
    PlanItem {
        object: fit.object.clone(),
        site: site.code.clone(),
        start_utc: utc(&start),
        end_utc: utc(&end),
        duration_min: end.tt.minus(start.tt) * 1440.0,
        ra_deg: first.ra_deg,
        dec_deg: first.dec_deg,
        ra_hms: ra_hms(first.ra_deg),
        dec_dms: dec_dms(first.dec_deg),
        rate_arcsec_min: first.rate_arcsec_min,
        v_mag: first.v_mag,
        alt_deg: low.alt_deg,
        airmass: airmass(low.alt_deg),
        moon_sep_deg: stretch.iter().map(|e| e.moon_sep_deg).fold(180.0, f64::min),
        moon_illum: slots.first().map_or(0.0, |s| s.moon_illum),
        sun_alt_deg: slots.iter().map(|s| s.sun_alt_deg).fold(-90.0, f64::max),
        elong_deg: stretch.iter().map(|e| e.elong_deg).fold(180.0, f64::min),
        region_major_arcsec: major,
        region_minor_arcsec: minor,
        fov_deg: site.caps.fov_deg,
        region_exceeds_fov: n > 1,
        pointings: n,
        p_hyperbolic: fit.p_hyperbolic,
        expected_change: mid.value,
        inv_a_sigma_now: mid.inv_a_sigma_now,
        inv_a_sigma_after: mid.inv_a_sigma_after,
        priority: rank + 1,
        cautions,
    }
}
