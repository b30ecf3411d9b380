//! What a fit answers, as one record: the `fit --json` object, the console's row and the ephemeris's
//! input. Built by the paths in `fit.rs`, `onenight.rs` and `linear.rs`; ranked by `rank`.

use super::covariance::ElementSigmas;
use super::input::Tracklet;
use super::nextnight::NextNight;
use super::posterior::Posterior;
use super::quality::NightMean;
use super::significance::Incoming;
use crate::physics::elements::CometaryElements;

/// Elements with 1σ, as printed.
#[derive(Debug, Clone, serde::Serialize)]
pub struct ElementsOut {
    pub q_au: f64,
    pub e: f64,
    pub i_deg: f64,
    pub node_deg: f64,
    pub peri_deg: f64,
    pub tp_jd_tdb: f64,
    pub inv_a_per_au: f64,
    pub a_au: Option<f64>,
    pub mean_anomaly_deg: Option<f64>,
    pub sigma: Option<ElementSigmas>,
}

pub fn elements_out(el: &CometaryElements, sigma: Option<ElementSigmas>, mu: f64) -> ElementsOut {
    ElementsOut {
        q_au: el.q,
        e: el.e,
        i_deg: el.i,
        node_deg: el.node,
        peri_deg: el.peri,
        tp_jd_tdb: el.tp,
        inv_a_per_au: el.inv_a,
        a_au: el.a(),
        mean_anomaly_deg: el.mean_anomaly(mu),
        sigma,
    }
}

/// Ranging summary, as printed.
#[derive(Debug, Clone, serde::Serialize)]
pub struct RangingOut {
    pub trials: usize,
    pub n_eff: f64,
    pub v_cap_km_s: f64,
    pub e_interval: [f64; 3],
    pub q_interval: [f64; 3],
    pub i_interval: [f64; 3],
}

/// Another least-squares minimum that fits nearly as well (a second valley of the search).
#[derive(Debug, Clone, serde::Serialize)]
pub struct Alternative {
    /// χ² of this solution minus that of the reported one; for a solution that sets aside a position
    /// the reported one keeps (one it alone finds wild), the difference on the positions it keeps.
    pub delta_chi2: f64,
    pub e: f64,
    pub q_au: f64,
    pub i_deg: f64,
    /// Whether this solution's barycentric orbit is unbound.
    pub unbound: bool,
    /// Its share of the posterior where the probability came from the distance scan (which weighs
    /// every valley); null otherwise.
    pub probability: Option<f64>,
}

/// One observation's residual, as printed.
#[derive(Debug, Clone, serde::Serialize)]
pub struct ResidualOut {
    /// The observation's identity (exclusions and the journal name it by this; not printed).
    #[serde(skip)]
    pub id: super::obsid::ObsId,
    pub time_utc: String,
    pub site: String,
    pub night: usize,
    /// Observed position (degrees).
    pub ra_deg: f64,
    pub dec_deg: f64,
    pub ra_arcsec: f64,
    pub dec_arcsec: f64,
    pub used: bool,
    pub chi2: f64,
}

/// Heliocentric e above which the positions' own range of e counts as unbound: clear of the
/// heliocentric–barycentric difference of e (under 0.005 for objects a few au from the Sun, the demo's
/// largest; common practice, no source for the margin).
pub const POSITIONS_UNBOUND_E: f64 = 1.01;

/// Where the positions' own 95 % range of e is more than this many times as wide as the posterior's
/// 95 % interval, the model has supplied most of what is known about e (with a Gaussian likelihood and
/// prior, three times the data's information): the fit is `undetermined`.
pub const MODEL_NARROWED: f64 = 2.0;

/// The answer for one tracklet (the `fit --json` record).
#[derive(Debug, Clone, serde::Serialize)]
pub struct FitResult {
    pub source: String,
    pub object: String,
    pub n_obs: usize,
    pub n_used: usize,
    pub n_nights: usize,
    pub arc_days: f64,
    pub method: super::kinds::FitMethod,
    pub probability_from: super::kinds::ProbabilitySource,
    pub dynamics: super::forcemodel::ForceModel,
    pub e: Option<f64>,
    pub e_sigma: Option<f64>,
    /// The least and greatest heliocentric e the positions alone allow where P comes from the range
    /// profile or grid ranging (χ² within 3.84 of the best: 95 % for one parameter, no density
    /// involved; see `datainterval.rs`); null on other paths. Beside e ± σ, which are the
    /// posterior's, it shows where the model rather than the data narrowed e (`mark_undetermined`).
    pub e_data_interval: Option<[f64; 2]>,
    /// The central 68.27 % and 95 % intervals of the heliocentric e over the same orbits as e_sigma (their
    /// Φ(∓1) and 2.5/97.5 % points); e ∓ σ and e ∓ 1.96σ (not below 0) wherever e_sigma is the linear
    /// σ (a trusted linear answer's e is linear in the state within a fifth of σ). Unlike e ± σ they
    /// follow a skewed e: where e curves within 1σ, one side can be several times the other.
    pub e_interval_68: Option<[f64; 2]>,
    pub e_interval_95: Option<[f64; 2]>,
    /// Posterior probability that the barycentric orbit is unbound under the population model (the
    /// same meaning on every path), its one-sigma numerical error, and Φ⁻¹ of it.
    pub p_hyperbolic: Option<f64>,
    pub p_hyperbolic_error: Option<f64>,
    pub z_hyperbolic: Option<f64>,
    /// log₁₀ of the posterior odds unbound : bound, the number the candidates are ranked by (it keeps
    /// an order where P is within rounding of 0 or 1).
    pub log10_odds: Option<f64>,
    /// One class had no weight at all, so P is exactly 0 or 1 only as far as the trial orbits reach:
    /// read the score as "≤" or "≥".
    pub z_is_bound: bool,
    /// (e_bary − 1)/σ where the linear fit is trusted: the data's own significance, without a prior.
    pub z_linear: Option<f64>,
    /// Which population model the probability is under.
    pub prior: Option<String>,
    /// Posterior odds ÷ the model's odds over the same trial orbits without the likelihood: what the
    /// positions themselves say; |log₁₀ K| < 0.5 means the model rather than the data decided.
    pub bayes_factor: Option<f64>,
    pub log10_bayes_factor: Option<f64>,
    pub prior_dominated: bool,
    /// Mean V magnitude behind the absolute magnitudes of the trial orbits, and whether it was
    /// assumed because the positions carried none.
    pub v_mag: Option<f64>,
    pub v_mag_assumed: bool,
    /// Absolute magnitude (H–G, G = 0.15) from the tracklet's magnitudes on the fitted orbit (median of
    /// the per-position values; None without magnitudes): what every ephemeris predicts V from.
    pub h_mag: Option<f64>,
    /// Some position lies past the end of the leap-second table: its UTC was converted with the last
    /// known offset (a leap second announced since would move it by 1 s).
    pub times_past_leap_table: bool,
    pub q_au: Option<f64>,
    pub q_sigma: Option<f64>,
    pub i_deg: Option<f64>,
    pub i_sigma: Option<f64>,
    pub rms_arcsec: Option<f64>,
    pub chi2_per_dof: Option<f64>,
    pub epoch_jd_tdb: Option<f64>,
    pub status: super::kinds::FitStatus,
    pub error: Option<String>,
    pub e_bary: Option<f64>,
    pub e_bary_sigma: Option<f64>,
    pub inv_a_bary: Option<f64>,
    pub elements: Option<ElementsOut>,
    pub barycentric: Option<ElementsOut>,
    pub incoming: Option<Incoming>,
    pub ranging: Option<RangingOut>,
    pub n_eff: Option<f64>,
    pub distrust_linear: Vec<String>,
    /// Other least-squares minima that fit nearly as well (short arcs).
    pub alternatives: Vec<Alternative>,
    pub poor_fit: Vec<String>,
    pub night_means: Vec<NightMean>,
    pub residuals: Vec<ResidualOut>,
    /// Heliocentric ICRF state at the epoch (AU, AU/day) and its covariance, for ephemerides: the
    /// least-squares answer where there is one (even when the elements shown are a sample's).
    pub state: Option<[f64; 6]>,
    pub covariance: Option<Vec<[f64; 6]>>,
    /// What one more night from the last site is expected to buy (open candidates of 2+ nights).
    pub next_night: Option<NextNight>,
    /// Where an unbound candidate comes from (P(unbound) ≥ 0.01 only).
    pub origin: Option<Box<super::origin::Origin>>,
    /// Weighted orbits (state, epoch TDB JD, weight) when the answer came from samples.
    #[serde(skip)]
    pub samples: Vec<([f64; 6], f64, f64)>,
    /// The heliocentric state of the orbit the elements describe, where that is a sample's (None: `state`).
    #[serde(skip)]
    pub shown_state: Option<[f64; 6]>,
}

impl FitResult {
    /// On a fit with no quality problem, the positions alone allow only unbound orbits (their own range
    /// of e starts above `POSITIONS_UNBOUND_E`) while the posterior says bound: the population model,
    /// not the data, made the answer bound.
    pub fn model_overrules_unbound_positions(&self) -> bool {
        self.status.usable()
            && self
                .e_data_interval
                .is_some_and(|[lo, _]| lo > POSITIONS_UNBOUND_E)
            && self.p_hyperbolic.is_some_and(|p| p < 0.5)
    }

    /// Mark an orbit that fits but whose e the population model, not the positions, set: their own
    /// 95 % range of e (`e_data_interval`) is more than `MODEL_NARROWED` times as wide as the
    /// posterior's central 95 % interval, or does not hold the e shown at all (the model's spike of
    /// near-parabolic comets can hold the posterior's e where the positions allow only e ≥ 1.2). A pull
    /// of such an e against an orbit the model finds rare can be many σ: the record must not call it ok.
    /// Likewise where another solution fits nearly as well (within `ALTERNATIVE_DCHI2`) with an e
    /// outside this one's 95 % interval: the positions leave e open between them, and the posterior's
    /// choice of valley is the model's (a strongly hyperbolic three-night arc headlined e 18.5 ± 0.6,
    /// `ok`, for a true 2.4 listed at Δχ² +5.4 and 3 % of the posterior).
    pub fn mark_undetermined(&mut self) {
        // The positions' range is a little narrow where slices are sparse: a tenth of σ of slack.
        let slack = 0.1 * self.e_sigma.unwrap_or(0.0);
        let narrowed = matches!(
            (self.e_data_interval, self.e_interval_95, self.e),
            (Some([dl, dh]), Some([pl, ph]), Some(e))
                if dh - dl > MODEL_NARROWED * (ph - pl) || !(dl - slack..=dh + slack).contains(&e)
        );
        let open = self.e_interval_95.is_some_and(|[lo, hi]| {
            self.alternatives.iter().any(|a| {
                a.delta_chi2 < super::search::ALTERNATIVE_DCHI2 && !(lo..=hi).contains(&a.e)
            })
        });
        if self.status == super::kinds::FitStatus::Ok && (narrowed || open) {
            self.status = super::kinds::FitStatus::Undetermined;
        }
    }

    /// The e intervals from weighted values of e (the orbits behind e_sigma).
    pub fn set_e_intervals(&mut self, e_values: &[f64], weights: &[f64]) {
        (self.e_interval_68, self.e_interval_95) =
            super::stats::central_intervals(e_values, weights).unzip();
    }

    /// The e intervals of a trusted linear answer: e ∓ σ and e ∓ 1.96σ, not below 0.
    pub fn set_linear_e_intervals(&mut self, e: f64, sigma: Option<f64>) {
        let around = |k: f64| sigma.map(|s| [(e - k * s).max(0.0), e + k * s]);
        self.e_interval_68 = around(1.0);
        self.e_interval_95 = around(1.959_963_984_540_054);
    }

    pub fn empty(tr: &Tracklet) -> FitResult {
        FitResult {
            source: tr.source.clone(),
            object: tr.object.clone(),
            n_obs: tr.obs.len(),
            n_used: 0,
            n_nights: tr.n_nights(),
            arc_days: tr.arc_days(),
            method: super::kinds::FitMethod::LeastSquares,
            probability_from: super::kinds::ProbabilitySource::NoProbability,
            dynamics: super::forcemodel::ForceModel::TwoBody,
            e: None,
            e_sigma: None,
            e_data_interval: None,
            e_interval_68: None,
            e_interval_95: None,
            p_hyperbolic: None,
            p_hyperbolic_error: None,
            z_hyperbolic: None,
            log10_odds: None,
            z_is_bound: false,
            z_linear: None,
            prior: None,
            bayes_factor: None,
            log10_bayes_factor: None,
            prior_dominated: false,
            v_mag: None,
            v_mag_assumed: false,
            h_mag: None,
            times_past_leap_table: tr
                .obs
                .iter()
                .any(|o| o.time.status == crate::physics::time::TableStatus::Extrapolated),
            q_au: None,
            q_sigma: None,
            i_deg: None,
            i_sigma: None,
            rms_arcsec: None,
            chi2_per_dof: None,
            epoch_jd_tdb: None,
            status: super::kinds::FitStatus::Failed,
            error: None,
            e_bary: None,
            e_bary_sigma: None,
            inv_a_bary: None,
            elements: None,
            barycentric: None,
            incoming: None,
            ranging: None,
            n_eff: None,
            distrust_linear: Vec::new(),
            alternatives: Vec::new(),
            poor_fit: Vec::new(),
            night_means: Vec::new(),
            residuals: Vec::new(),
            state: None,
            shown_state: None,
            covariance: None,
            next_night: None,
            origin: None,
            samples: Vec::new(),
        }
    }

    /// A failed result with its reason.
    pub fn failed(tr: &Tracklet, reason: impl Into<String>) -> FitResult {
        let mut r = FitResult::empty(tr);
        r.error = Some(reason.into());
        r
    }

    /// Ranking order: usable fits before poor ones before failures, then by posterior odds.
    pub fn rank_key(&self) -> (u8, f64) {
        let tier = match self.status {
            super::kinds::FitStatus::Ok | super::kinds::FitStatus::Undetermined => 2,
            super::kinds::FitStatus::PoorFit => 1,
            super::kinds::FitStatus::Failed => 0,
        };
        (tier, self.log10_odds.unwrap_or(f64::NEG_INFINITY))
    }

    /// Record a posterior: P, its error, the score, the odds and the evidence.
    pub fn set_posterior(
        &mut self,
        p: &Posterior,
        from: super::kinds::ProbabilitySource,
        model: &str,
    ) {
        let finite = |x: f64| x.is_finite().then_some(x);
        self.p_hyperbolic = Some(p.p());
        self.p_hyperbolic_error = Some(p.p_error()).filter(|e| e.is_finite());
        self.z_hyperbolic = finite(p.z());
        self.log10_odds = Some(p.log10_odds()).filter(|x| !x.is_nan());
        self.z_is_bound = p.ln_odds.is_infinite();
        self.prior = Some(model.to_string());
        let l10k = p.ln_bayes / std::f64::consts::LN_10;
        self.log10_bayes_factor = finite(l10k);
        self.bayes_factor = super::unresolved::bayes_factor_of(l10k);
        // A class with no weight on the trial orbits (±∞) was decided by the positions, not the model
        // (`unresolved` bounds it); undefined evidence (NaN) leaves the model to decide.
        self.prior_dominated = l10k.is_nan() || l10k.abs() < 0.5;
        self.n_eff = p.n_eff;
        self.probability_from = from;
    }
}

/// Sort results by rank, best first.
pub fn rank(results: &mut [FitResult]) {
    results.sort_by(|a, b| {
        let (ta, za) = a.rank_key();
        let (tb, zb) = b.rank_key();
        tb.cmp(&ta)
            .then(zb.total_cmp(&za))
            .then(a.object.cmp(&b.object))
    });
}

/// Orbits kept per sampled fit for ephemerides: enough for 99 % regions, small enough that ten
/// thousand candidates stay within a couple of hundred megabytes.
pub const KEPT_SAMPLES: usize = 200;

/// Systematic resampling to `n` equally weighted orbits: unbiased, tails included (keeping only the
/// heaviest would shrink the uncertainty region).
pub fn resample(
    samples: Vec<([f64; 6], f64, f64)>,
    n: usize,
    seed: u64,
) -> Vec<([f64; 6], f64, f64)> {
    let total: f64 = samples.iter().map(|s| s.2).sum();
    if samples.len() <= n || total <= 0.0 {
        return samples;
    }
    let mut rng = super::ranging::SplitMix::new(seed);
    let step = total / n as f64;
    let mut u = rng.uniform() * step;
    let mut acc = 0.0;
    let mut out = Vec::with_capacity(n);
    for s in &samples {
        acc += s.2;
        while u < acc && out.len() < n {
            out.push((s.0, s.1, 1.0 / n as f64));
            u += step;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use crate::fitting::kinds::FitStatus;

    fn with(e: f64, data: [f64; 2], posterior_95: [f64; 2]) -> super::FitResult {
        let mut r = crate::testutil::record("u", 0.1, 2);
        (r.e, r.e_data_interval, r.e_interval_95) = (Some(e), Some(data), Some(posterior_95));
        r.mark_undetermined();
        r
    }

    #[test]
    fn a_fit_is_undetermined_where_the_model_narrowed_e_or_moved_it_outside_the_positions_range() {
        // The positions allow 0.2–2.1, the posterior 0.14–0.54: the model narrowed e fourfold.
        assert_eq!(
            with(0.22, [0.2, 2.1], [0.14, 0.54]).status,
            FitStatus::Undetermined
        );
        // As wide as each other, e inside: the data set e.
        assert_eq!(with(0.3, [0.2, 0.5], [0.18, 0.48]).status, FitStatus::Ok);
        // As wide, but e sits on the model's spike below the positions' range.
        assert_eq!(
            with(1.004, [1.18, 1.90], [0.99, 1.70]).status,
            FitStatus::Undetermined
        );
        // A poor fit stays poor; a fit without the positions' range (a linear answer) stays ok.
        let mut poor = crate::testutil::record("p", 0.1, 2);
        poor.status = FitStatus::PoorFit;
        (poor.e, poor.e_data_interval, poor.e_interval_95) =
            (Some(0.2), Some([0.2, 2.1]), Some([0.14, 0.54]));
        poor.mark_undetermined();
        assert_eq!(poor.status, FitStatus::PoorFit);
        let mut linear = crate::testutil::record("l", 0.1, 3);
        linear.e = Some(0.2);
        linear.mark_undetermined();
        assert_eq!(linear.status, FitStatus::Ok);
    }

    #[test]
    fn a_fit_is_undetermined_where_another_solution_fits_nearly_alike_outside_its_interval() {
        let other = |e: f64, delta_chi2: f64| super::Alternative {
            delta_chi2,
            e,
            q_au: 1.1,
            i_deg: 63.0,
            unbound: true,
            probability: Some(0.03),
        };
        let status = |alternatives: Vec<super::Alternative>| {
            let mut r = crate::testutil::record("a", 0.1, 3);
            (r.e, r.e_interval_95, r.alternatives) = (Some(18.5), Some([17.4, 19.6]), alternatives);
            r.mark_undetermined();
            r.status
        };
        // The true solution of a strongly hyperbolic arc, listed at Δχ² +5.4: e is open between them.
        assert_eq!(status(vec![other(2.4, 5.4)]), FitStatus::Undetermined);
        // Also where it fits better (the model chose the valley).
        assert_eq!(status(vec![other(2.4, -2.0)]), FitStatus::Undetermined);
        // Listed for its share but fitting worse than Δχ² 9, or inside the interval: still ok.
        assert_eq!(status(vec![other(2.4, 9.7)]), FitStatus::Ok);
        assert_eq!(status(vec![other(18.0, 1.0)]), FitStatus::Ok);
        assert_eq!(status(Vec::new()), FitStatus::Ok);
    }
}
