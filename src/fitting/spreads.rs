//! Element uncertainties from orbits drawn from the posterior (or from the fit's Gaussian where the
//! elements are nonlinear in the state): one σ per quantity, shown alike in the table, the orbit pane
//! and the JSON, and the orbits kept for ephemerides.

use super::covariance::ElementSigmas;
use super::lsq::LsqFit;
use super::ranging::SplitMix;
use super::result::{FitResult, KEPT_SAMPLES, elements_out, resample};
use super::significance::{MU_BARY, incoming};
use super::stats::ONE_SIGMA_QUANTILES;
use crate::physics::constants::MU_SUN;
use crate::physics::elements::CometaryElements;
use crate::physics::frames::equatorial_to_ecliptic;
use crate::physics::{M6, S6, split_state};

/// Orbits drawn from the fit's Gaussian when the elements are nonlinear in the state.
pub const GAUSSIAN_DRAWS: usize = 200;

/// Weighted spread of an angle (degrees) about its circular mean, so that 359° and 1° are 2° apart.
fn angular_spread(
    els: &[CometaryElements],
    w: &[f64],
    f: impl Fn(&CometaryElements) -> f64,
) -> f64 {
    let (s, c) = els.iter().zip(w).fold((0.0, 0.0), |(s, c), (e, w)| {
        let a = f(e).to_radians();
        (s + w * a.sin(), c + w * a.cos())
    });
    let mean = s.atan2(c);
    let total: f64 = w.iter().sum::<f64>().max(1e-300);
    let var = els
        .iter()
        .zip(w)
        .map(|(e, w)| {
            let d = (f(e).to_radians() - mean + std::f64::consts::PI)
                .rem_euclid(std::f64::consts::TAU)
                - std::f64::consts::PI;
            w * d * d
        })
        .sum::<f64>()
        / total;
    var.sqrt().to_degrees()
}

/// Ecliptic elements of equatorial heliocentric states at `epoch`: heliocentric, or barycentric with
/// the Sun's barycentric state `shift`.
fn elements_of(states: &[S6], epoch: f64, centre: Centre) -> Vec<CometaryElements> {
    let ecl = equatorial_to_ecliptic();
    let (shift, mu) = match centre {
        Centre::Sun => (S6::zeros(), MU_SUN),
        Centre::Barycentre(shift) => (*shift, MU_BARY),
    };
    states
        .iter()
        .map(|x| {
            let (r, v) = split_state(&(x + shift));
            CometaryElements::from_state(&(ecl * r), &(ecl * v), epoch, mu)
        })
        .collect()
}

/// About which centre elements are taken.
#[derive(Clone, Copy)]
enum Centre<'a> {
    Sun,
    /// The barycentre, with the Sun's barycentric state.
    Barycentre(&'a S6),
}

/// The barycentric line of a record from the same orbits as its heliocentric one: the spreads of the
/// samples' barycentric elements, and, where the heliocentric values are those of sample `headline`,
/// that sample's barycentric values and arrival (else the values already there keep their place).
fn barycentric_spreads(
    out: &mut FitResult,
    states: &[S6],
    weights: &[f64],
    epoch: f64,
    shift: &S6,
    headline: Option<usize>,
) {
    let els = elements_of(states, epoch, Centre::Barycentre(shift));
    let sig = element_sigmas(&els, weights);
    out.e_bary_sigma = Some(sig.e);
    let state = match headline.and_then(|k| Some((els.get(k)?, states[k]))) {
        Some((el, x)) => {
            out.e_bary = Some(el.e);
            out.inv_a_bary = Some(el.inv_a);
            out.barycentric = Some(elements_out(el, Some(sig), MU_BARY));
            Some(x)
        }
        None => {
            if let Some(b) = out.barycentric.as_mut() {
                b.sigma = Some(sig);
            }
            out.state.map(S6::from)
        }
    };
    out.incoming = state.and_then(|x| incoming(&(x + shift), MU_BARY, Some(sig.inv_a)));
}

/// Weighted spreads of every element (angles about their circular means).
fn element_sigmas(els: &[CometaryElements], weights: &[f64]) -> ElementSigmas {
    let spread = |f: &dyn Fn(&CometaryElements) -> f64| {
        let v: Vec<f64> = els.iter().map(f).collect();
        super::sampling::weighted_spread(&v, weights).1
    };
    ElementSigmas {
        q: spread(&|e| e.q),
        e: spread(&|e| e.e),
        i: spread(&|e| e.i),
        node: angular_spread(els, weights, |e| e.node),
        peri: angular_spread(els, weights, |e| e.peri),
        tp: spread(&|e| e.tp),
        inv_a: spread(&|e| e.inv_a),
    }
}

/// Element uncertainties from weighted samples (which follow the real, curved distribution), and
/// the orbits kept for ephemerides. One σ per quantity: the samples' spreads stand in the table, the
/// orbit pane and the JSON alike. With `solution`, the spreads, intervals and values are those of the
/// states it marks (the answer's own solution: another, listed apart with its share, would widen σ
/// by the distance between them, a valley of 0.04 % forty times); the kept orbits are drawn from all.
pub fn sample_spreads(
    out: &mut FitResult,
    (states, weights, solution): (&[S6], &[f64], Option<&[bool]>),
    (epoch, shift): (f64, &S6),
    seed: u64,
    headline: Headline,
) {
    let (all_states, all_weights) = (states, weights);
    let own: (Vec<S6>, Vec<f64>) = match solution {
        Some(mask)
            if mask.len() == states.len()
                && mask.iter().zip(weights).any(|(m, w)| *m && *w > 0.0) =>
        {
            states
                .iter()
                .zip(weights)
                .zip(mask)
                .filter(|(_, m)| **m)
                .map(|((s, w), _)| (*s, *w))
                .unzip()
        }
        _ => (states.to_vec(), weights.to_vec()),
    };
    let (states, weights) = &weighty(&own.0, &own.1);
    let els = elements_of(states, epoch, Centre::Sun);
    let sig = element_sigmas(&els, weights);
    out.e_sigma = Some(sig.e);
    out.q_sigma = Some(sig.q);
    out.i_sigma = Some(sig.i);
    // The values beside those σ: one sampled orbit near the posterior's middle (one consistent set
    // of elements), not the least-squares minimum, which the posterior may not favour.
    let e_values: Vec<f64> = els.iter().map(|el| el.e).collect();
    out.set_e_intervals(&e_values, weights);
    let best = headline_index(&els, weights, headline);
    match best.and_then(|k| Some((els.get(k)?, states.get(k)?))) {
        Some((el, x)) => {
            out.shown_state = Some([x[0], x[1], x[2], x[3], x[4], x[5]]);
            out.e = Some(el.e);
            out.q_au = Some(el.q);
            out.i_deg = Some(el.i);
            out.elements = Some(elements_out(el, Some(sig), MU_SUN));
        }
        None => {
            if let Some(el) = out.elements.as_mut() {
                el.sigma = Some(sig);
            }
        }
    }
    barycentric_spreads(out, states, weights, epoch, shift, best);
    out.samples = resample(
        all_states
            .iter()
            .zip(all_weights)
            .map(|(s, w)| ([s[0], s[1], s[2], s[3], s[4], s[5]], epoch, *w))
            .collect(),
        KEPT_SAMPLES,
        seed,
    );
}

/// Which sampled orbit stands for the answer (its e, q, i and elements in the table, the panes and the
/// JSON). Not the most probable sample: where the posterior has two modes of like height (a
/// near-parabolic spike and a hyperbolic hump) that one jumps between them on the last bits of the data.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Headline {
    /// The orbit nearest the median e: orbits along one valley (range-profile nodes, posterior draws
    /// about one minimum), where e, q and i move together.
    MedianE,
    /// The orbit nearest the medians of e, q and i together, each in units of half its central 68 %:
    /// orbits spread over a plane of ranging cells, where the orbit at the median e can sit at an end
    /// of q's range.
    Central,
}

/// The index of the orbit that stands for the answer, among the orbits that, heaviest first, carry
/// HEADLINE_MASS of the weight (a light orbit far out in another element can sit at the median e too;
/// the lightest are left out by their share of the total, not of the heaviest orbit's weight, because
/// split cells and quadrature nodes differ in size).
fn headline_index(els: &[CometaryElements], weights: &[f64], how: Headline) -> Option<usize> {
    let finite = |k: usize| {
        let el = &els[k];
        weights[k] > 0.0 && el.e.is_finite() && el.q.is_finite() && el.i.is_finite()
    };
    let mut order: Vec<usize> = (0..els.len()).filter(|&k| finite(k)).collect();
    order.sort_by(|&a, &b| weights[b].total_cmp(&weights[a]).then(a.cmp(&b)));
    let total: f64 = order.iter().map(|&k| weights[k]).sum();
    let mut carried = 0.0;
    let heavy: Vec<usize> = order
        .into_iter()
        .take_while(|&k| {
            let before = carried;
            carried += weights[k];
            before < HEADLINE_MASS * total
        })
        .collect();
    let scaled = |f: fn(&CometaryElements) -> f64| {
        let v: Vec<f64> = els.iter().map(f).collect();
        let hw: Vec<f64> = (0..els.len())
            .map(|k| if finite(k) { weights[k] } else { 0.0 })
            .collect();
        let [lo, mid, hi] = super::stats::weighted_quantiles(
            &v,
            &hw,
            [ONE_SIGMA_QUANTILES[0], 0.5, ONE_SIGMA_QUANTILES[1]],
        );
        let (mid, half) = (mid?, (hi? - lo?) / 2.0);
        // An element every orbit shares does not tell them apart.
        Some((v, mid, if half > 0.0 { half } else { f64::INFINITY }))
    };
    let axes: Vec<(Vec<f64>, f64, f64)> = match how {
        Headline::MedianE => vec![scaled(|el| el.e)?],
        Headline::Central => vec![scaled(|el| el.e)?, scaled(|el| el.q)?, scaled(|el| el.i)?],
    };
    let distance = |k: usize| -> f64 {
        axes.iter()
            .map(|(v, mid, half)| ((v[k] - mid) / half).powi(2))
            .sum()
    };
    heavy
        .into_iter()
        .min_by(|&a, &b| distance(a).total_cmp(&distance(b)).then(a.cmp(&b)))
}

/// The orbit shown is chosen among the heaviest orbits that together carry this share of the weight.
const HEADLINE_MASS: f64 = 0.99;

/// The lightest states carrying together less than this share of the weight are left out of the
/// spreads: a range profile hands over every quadrature node, most of them deep in the tails. (A tail
/// orbit far out in e still weighs in σ out of proportion to its weight: at this share the σ of the
/// 300 two-night bench files moved by 2.4e-7 at most, at 1e-9 by 1.6e-4.)
const NEGLIGIBLE_WEIGHT: f64 = 1e-12;

/// The states and weights that matter (the weights scaled back to their former total).
fn weighty(states: &[S6], weights: &[f64]) -> (Vec<S6>, Vec<f64>) {
    let total: f64 = weights.iter().sum();
    if !(total.is_finite() && total > 0.0) {
        return (states.to_vec(), weights.to_vec());
    }
    let mut order: Vec<usize> = (0..weights.len()).collect();
    order.sort_by(|&a, &b| weights[a].total_cmp(&weights[b]));
    let mut keep = vec![true; weights.len()];
    let mut dropped = 0.0;
    for k in order {
        if dropped + weights[k] > NEGLIGIBLE_WEIGHT * total {
            break;
        }
        dropped += weights[k];
        keep[k] = false;
    }
    let scale = if total - dropped > 0.0 {
        total / (total - dropped)
    } else {
        1.0
    };
    (0..weights.len())
        .filter(|&k| keep[k])
        .map(|k| (states[k], weights[k] * scale))
        .unzip()
}

/// Where the elements curve within the fit's 1σ (the linear σ of e can be several times too small at a
/// low-e estimate), their σ come from orbits drawn from the fit's Gaussian N(x, C): the values stay
/// the least-squares ones, only the spreads (and the orbits kept for ephemerides) change.
pub fn gaussian_spreads(out: &mut FitResult, fit: &LsqFit, cov: &M6, shift: &S6, seed: u64) {
    let Some(chol) = cov.cholesky() else {
        return;
    };
    let (state, epoch) = (fit.state, fit.epoch.value());
    let l = chol.l();
    let mut rng = SplitMix::new(seed ^ 0x005e_ed0f_6a55);
    let states: Vec<S6> = (0..GAUSSIAN_DRAWS)
        .map(|_| state + l * S6::from_fn(|_, _| rng.normal()))
        .collect();
    let weights = vec![1.0 / GAUSSIAN_DRAWS as f64; GAUSSIAN_DRAWS];
    let els = elements_of(&states, epoch, Centre::Sun);
    let sig = element_sigmas(&els, &weights);
    out.e_sigma = Some(sig.e);
    out.set_e_intervals(&els.iter().map(|el| el.e).collect::<Vec<_>>(), &weights);
    out.q_sigma = Some(sig.q);
    out.i_sigma = Some(sig.i);
    if let Some(el) = out.elements.as_mut() {
        el.sigma = Some(sig);
    }
    barycentric_spreads(out, &states, &weights, epoch, shift, None);
    out.samples = resample(
        states
            .iter()
            .zip(&weights)
            .map(|(s, w)| ([s[0], s[1], s[2], s[3], s[4], s[5]], epoch, *w))
            .collect(),
        KEPT_SAMPLES,
        seed,
    );
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fitting::input::Tracklet;

    /// A state at perihelion (1 au, in the ecliptic) with eccentricity `e`: v² = μ(1 + e)/q.
    fn at_perihelion(e: f64) -> S6 {
        S6::new(1.0, 0.0, 0.0, 0.0, (MU_SUN * (1.0 + e)).sqrt(), 0.0)
    }

    #[test]
    fn only_states_of_negligible_joint_weight_are_left_out_of_the_spreads() {
        let states: Vec<S6> = [0.1, 0.2, 0.3, 0.4, 0.5]
            .iter()
            .map(|e| at_perihelion(*e))
            .collect();
        // Two tail states of 4e-13 each (8e-13 together, under 1e-12 of the total) and one of 5e-13
        // that would take the dropped share over it.
        let weights = [0.5, 4e-13, 0.5, 4e-13, 5e-13];
        let (kept, w) = weighty(&states, &weights);
        assert_eq!(kept, vec![states[0], states[2], states[4]]);
        let total: f64 = weights.iter().sum();
        assert!((w.iter().sum::<f64>() - total).abs() < 1e-15, "{w:?}");
        // Nothing negligible: everything stays, unscaled; weights without a finite positive total
        // are left as they came.
        let (kept, w) = weighty(&states[..2], &[0.5, 0.5]);
        assert_eq!((kept.len(), w), (2, vec![0.5, 0.5]));
        let (kept, _) = weighty(&states[..2], &[f64::NAN, 0.5]);
        assert_eq!(kept.len(), 2);
    }

    #[test]
    fn the_headline_orbit_is_the_sample_at_the_median_e_not_the_heaviest_one() {
        // Two modes: one heavy sample far out (e 3) and a near-parabolic clump that holds most of the
        // weight between its samples. The weighted median (cumulative 0.2, 0.4, 0.6 at 1.006) lies in
        // the clump; the heaviest sample does not.
        let es = [3.0, 1.004, 1.005, 1.006];
        let weights = [0.4, 0.2, 0.2, 0.2];
        let states: Vec<S6> = es.iter().map(|e| at_perihelion(*e)).collect();
        let mut out = FitResult::empty(&Tracklet::new("x".into(), "x".into(), Vec::new()));
        sample_spreads(
            &mut out,
            (&states, &weights, None),
            (0.0, &S6::zeros()),
            1,
            Headline::MedianE,
        );
        let e = out.e.unwrap();
        assert!((e - 1.006).abs() < 1e-9, "{e}");
        // Its other elements are that same orbit's (q 1 au at perihelion).
        assert!((out.q_au.unwrap() - 1.0).abs() < 1e-9);
    }

    #[test]
    fn a_solution_of_its_own_has_its_own_sigma_while_the_kept_orbits_span_every_solution() {
        // A clump at e 0.10–0.12 holding 96 % of the weight and a far solution at e 0.9 holding 4 %
        // (normalised over both, as a profile hands them over). Over both, σ_e is about 0.16; over
        // the clump alone, the clump's own spread (0.0082 for three equal weights 0.01 apart).
        let es = [0.10, 0.11, 0.12, 0.9];
        let weights = [0.32, 0.32, 0.32, 0.04];
        let states: Vec<S6> = es.iter().map(|e| at_perihelion(*e)).collect();
        let blank = || FitResult::empty(&Tracklet::new("x".into(), "x".into(), Vec::new()));
        let mut whole = blank();
        sample_spreads(
            &mut whole,
            (&states, &weights, None),
            (0.0, &S6::zeros()),
            1,
            Headline::MedianE,
        );
        assert!(
            (whole.e_sigma.unwrap() - 0.155).abs() < 1e-3,
            "{:?}",
            whole.e_sigma
        );
        let mut own = blank();
        let mask = [true, true, true, false];
        sample_spreads(
            &mut own,
            (&states, &weights, Some(&mask)),
            (0.0, &S6::zeros()),
            1,
            Headline::MedianE,
        );
        let clump = (2.0f64 / 3.0).sqrt() * 0.01;
        assert!(
            (own.e_sigma.unwrap() - clump).abs() < 1e-9,
            "{:?}",
            own.e_sigma
        );
        let [lo, hi] = own.e_interval_95.unwrap();
        assert!(lo >= 0.1 - 1e-9 && hi <= 0.12 + 1e-9, "{lo} {hi}");
        assert!((own.e.unwrap() - 0.11).abs() < 1e-9);
        // A mask that marks nothing of weight is no solution: the spreads are the whole set's.
        let mut none = blank();
        sample_spreads(
            &mut none,
            (&states, &[0.0, 0.0, 0.0, 1.0], Some(&mask)),
            (0.0, &S6::zeros()),
            1,
            Headline::MedianE,
        );
        assert_eq!(none.e, Some(states_e(&states[3])));
    }

    fn states_e(x: &S6) -> f64 {
        elements_of(&[*x], 0.0, Centre::Sun)[0].e
    }

    #[test]
    fn the_central_headline_sits_near_the_medians_of_e_q_and_i_not_at_an_end_of_q() {
        // Orbits on a plane: e and q vary independently. Orbit 0 has the median e exactly but q at
        // the top of its range; orbit 4 is near both medians.
        let (es, qs) = (
            [0.30, 0.10, 0.20, 0.40, 0.32, 0.50, 0.05],
            [3.00, 2.00, 2.40, 2.60, 2.50, 2.20, 2.45],
        );
        let els: Vec<CometaryElements> = es
            .iter()
            .zip(qs)
            .map(|(&e, q)| CometaryElements {
                q,
                e,
                i: 5.0,
                node: 0.0,
                peri: 0.0,
                tp: 0.0,
                inv_a: (1.0 - e) / q,
                epoch: 0.0,
            })
            .collect();
        let w = vec![1.0; els.len()];
        assert_eq!(headline_index(&els, &w, Headline::MedianE), Some(0));
        assert_eq!(headline_index(&els, &w, Headline::Central), Some(4));
        // An orbit among the lightest 1 % of the weight is never the headline, nor one without
        // finite elements.
        let mut light = w.clone();
        light[4] = 1e-3;
        assert_ne!(headline_index(&els, &light, Headline::Central), Some(4));
        let mut broken = els.clone();
        broken[2].q = f64::NAN;
        assert_ne!(headline_index(&broken, &w, Headline::Central), Some(2));
        assert_eq!(headline_index(&els, &[0.0; 7], Headline::Central), None);
    }
}
