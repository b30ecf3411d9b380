//! Phase-space number density of real objects at a trial orbit, per unit absolute magnitude, under the
//! population model: the one prior behind every P(unbound).
//!
//! Bound populations are distributions p(a, e, i) with uniform node, perihelion and mean anomaly, so
//! f = dN/dH · p(a) p(e) p(i) / (8π³ · ½ μ^{3/2} √a · e · sin i), the denominator being the volume
//! element d³r d³v in Delaunay-like variables; comet-like populations are perihelion-passage rates over
//! (q, 1/a, i), where d³r d³v = ½ μ² e sin i dq d(1/a) di dΩ dω dT_p. The interstellar population keeps
//! its density far from the Sun along every hyperbola: f = n(H) · g(v∞,in), with g the velocity
//! distribution at infinity (Gaussian ellipsoids in Galactic U, V, W).

use super::laws::{Pdf, SizeLaw};
use super::model::{
    Dist, ElementPopulation, InterstellarPopulation, ModelFile, PerihelionPopulation,
};
use crate::physics::constants::{AU_PER_DAY_TO_KM_S, DEG, MU_BARY_OVER_SUN, MU_SUN};
use crate::physics::frames::{equatorial_to_ecliptic, equatorial_to_galactic};
use crate::physics::{M3, S6, V3};
use std::f64::consts::PI;

const MU_BARY: f64 = MU_SUN * MU_BARY_OVER_SUN;

#[derive(Debug, Clone)]
struct ElementPop {
    size: SizeLaw,
    a: Pdf,
    e: Pdf,
    i: Pdf,
    q_min: f64,
    q_max: f64,
    /// 1 / (fraction of p(a) p(e) inside the q limits · 8π³ · ½ μ^{3/2}).
    scale: f64,
    /// Heliocentric 1/a where the population has objects.
    inv_a_range: (f64, f64),
}

impl ElementPop {
    fn new(p: &ElementPopulation, mag_sigma: f64) -> ElementPop {
        let a = Pdf::new(&p.a_au, 1.0);
        let e = Pdf::new(&p.e, 1.0);
        let i = Pdf::new(&p.i_deg, DEG);
        let q_min = p.q_min_au.unwrap_or(0.0);
        let q_max = p.q_max_au.unwrap_or(f64::INFINITY);
        let (ga, ge) = (a.grid(400), e.grid(400));
        let inside: f64 = ga
            .iter()
            .map(|(av, aw)| {
                ge.iter()
                    .filter(|(ev, _)| (q_min..=q_max).contains(&(av * (1.0 - ev))))
                    .map(|(_, ew)| aw * ew)
                    .sum::<f64>()
            })
            .sum();
        let vol = 8.0 * PI.powi(3) * 0.5 * MU_SUN.powf(1.5);
        let mut edges = Vec::new();
        edges_of(&p.a_au, &mut edges);
        let a_lo = edges
            .iter()
            .copied()
            .fold(f64::INFINITY, f64::min)
            .max(1e-6);
        let a_hi = edges.iter().copied().fold(0.0_f64, f64::max);
        ElementPop {
            inv_a_range: (1.0 / a_hi, 1.0 / a_lo),
            size: SizeLaw::new(p.count, p.h_ref, p.size_slope, mag_sigma),
            a,
            e,
            i,
            q_min,
            q_max,
            scale: 1.0 / (inside.max(1e-300) * vol),
        }
    }

    fn ln_density(&self, el: &Shape, h: f64) -> f64 {
        if el.inv_a <= 0.0 {
            return f64::NEG_INFINITY;
        }
        let a = 1.0 / el.inv_a;
        let q = a * (1.0 - el.e);
        if q < self.q_min || q > self.q_max {
            return f64::NEG_INFINITY;
        }
        let p =
            self.a.pdf(a) * self.e.reduced(el.e, false) * self.i.reduced(el.i, true) * self.scale
                / a.sqrt();
        p.ln() + self.size.ln_dn_dh(h)
    }
}

#[derive(Debug, Clone)]
struct PerihelionPop {
    size: SizeLaw,
    q: Pdf,
    inv_a: Pdf,
    i: Pdf,
    /// 1 / (4π² · ½ μ²), per day.
    scale: f64,
    /// Barycentric 1/a where the population has objects.
    inv_a_range: (f64, f64),
}

impl PerihelionPop {
    fn new(p: &PerihelionPopulation, mag_sigma: f64) -> PerihelionPop {
        let mut edges = Vec::new();
        edges_of(&p.inv_a_per_au, &mut edges);
        let lo = edges.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = edges.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        PerihelionPop {
            inv_a_range: (lo, hi),
            size: SizeLaw::new(
                p.passages_per_year / 365.25,
                p.h_ref,
                p.size_slope,
                mag_sigma,
            ),
            q: Pdf::new(&p.q_au, 1.0),
            inv_a: Pdf::new(&p.inv_a_per_au, 1.0),
            i: Pdf::new(&p.i_deg, DEG),
            scale: 1.0 / (4.0 * PI * PI * 0.5 * MU_BARY * MU_BARY),
        }
    }

    fn ln_density(&self, el: &Shape, h: f64) -> f64 {
        if el.inv_a <= 0.0 || el.e <= 0.0 {
            return f64::NEG_INFINITY;
        }
        let p =
            self.q.pdf(el.q) * self.inv_a.pdf(el.inv_a) * self.i.reduced(el.i, true) * self.scale
                / el.e;
        p.ln() + self.size.ln_dn_dh(h)
    }
}

#[derive(Debug, Clone)]
struct Ellipsoid {
    weight: f64,
    mean: V3,
    inv_sigma: V3,
    norm: f64,
}

#[derive(Debug, Clone)]
struct InterstellarPop {
    size: SizeLaw,
    comps: Vec<Ellipsoid>,
    to_gal: M3,
}

impl InterstellarPop {
    fn new(p: &InterstellarPopulation, mag_sigma: f64) -> InterstellarPop {
        let total: f64 = p.component.iter().map(|c| c.fraction).sum();
        let sun = V3::from(p.solar_motion_km_s);
        // Density per (km/s)³ → per (au/day)³.
        let per_au_day = AU_PER_DAY_TO_KM_S.powi(3);
        let comps = p
            .component
            .iter()
            .map(|c| {
                let s = V3::from(c.sigma_km_s);
                Ellipsoid {
                    weight: c.fraction / total,
                    mean: V3::from(c.mean_km_s) - sun,
                    inv_sigma: s.map(|x| 1.0 / x),
                    norm: per_au_day / ((2.0 * PI).powf(1.5) * s.x * s.y * s.z),
                }
            })
            .collect();
        InterstellarPop {
            size: SizeLaw::new(p.density_per_au3, p.h_ref, p.size_slope, mag_sigma),
            comps,
            to_gal: equatorial_to_galactic(),
        }
    }

    /// ln of the velocity density at infinity for a heliocentric Galactic velocity (km/s), per
    /// (au/day)³.
    fn ln_velocity_density(&self, uvw: &V3) -> f64 {
        let terms = self.comps.iter().map(|c| {
            let d = (uvw - c.mean).component_mul(&c.inv_sigma);
            (c.weight * c.norm).ln() - 0.5 * d.norm_squared()
        });
        log_sum_exp(terms)
    }
}

/// The few orbital quantities the densities need.
#[derive(Debug, Clone, Copy)]
struct Shape {
    inv_a: f64,
    e: f64,
    q: f64,
    /// Inclination to the ecliptic (radians).
    i: f64,
}

fn shape(r: &V3, v: &V3, mu: f64) -> (Shape, V3, V3) {
    let rn = r.norm();
    let h = r.cross(v);
    let evec = ((v.norm_squared() - mu / rn) * r - r.dot(v) * v) / mu;
    let e = evec.norm();
    let hz = h.z;
    let i = (h.x.hypot(h.y)).atan2(hz);
    let s = Shape {
        inv_a: 2.0 / rn - v.norm_squared() / mu,
        e,
        q: h.norm_squared() / (mu * (1.0 + e)),
        i,
    };
    (s, evec, h)
}

/// Incoming asymptotic velocity (same units as v) of an unbound orbit, from its eccentricity and
/// angular-momentum vectors: v∞ (ê/e + √(e² − 1)/e · ĥ × ê).
pub fn incoming_velocity(r: &V3, v: &V3, mu: f64) -> Option<V3> {
    let energy2 = v.norm_squared() - 2.0 * mu / r.norm();
    if energy2 <= 0.0 {
        return None;
    }
    let (s, evec, h) = shape(r, v, mu);
    let ehat = evec / s.e;
    let hhat = h / h.norm();
    let vinf = energy2.sqrt();
    Some(vinf * (ehat / s.e + ((s.e * s.e - 1.0).sqrt() / s.e) * hhat.cross(&ehat)))
}

/// The density at one trial orbit: its class and ln f (f per au³ per (au/day)³ per magnitude;
/// −∞ where no population has any object).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Density {
    pub unbound: bool,
    pub ln_f: f64,
}

/// ln Σ exp(xᵢ), safe for very negative terms (−∞ for an empty or all −∞ sum).
pub fn log_sum_exp(terms: impl Iterator<Item = f64> + Clone) -> f64 {
    let top = terms.clone().fold(f64::NEG_INFINITY, f64::max);
    if top == f64::NEG_INFINITY {
        return top;
    }
    top + terms.map(|t| (t - top).exp()).sum::<f64>().ln()
}

/// A validated, ready-to-evaluate population model.
#[derive(Debug, Clone)]
pub struct PopulationModel {
    /// Where the model came from (a file path or the built-in name), for output.
    pub source: String,
    pub file: ModelFile,
    elements: Vec<ElementPop>,
    perihelion: Vec<PerihelionPop>,
    interstellar: InterstellarPop,
    ecl: M3,
}

impl PopulationModel {
    pub fn new(source: impl Into<String>, file: ModelFile) -> PopulationModel {
        let s = file.mag_sigma;
        PopulationModel {
            source: source.into(),
            elements: file.bound.iter().map(|p| ElementPop::new(p, s)).collect(),
            perihelion: file
                .perihelion
                .iter()
                .map(|p| PerihelionPop::new(p, s))
                .collect(),
            interstellar: InterstellarPop::new(&file.interstellar, s),
            ecl: equatorial_to_ecliptic(),
            file,
        }
    }

    /// The compiled-in model.
    pub fn builtin() -> PopulationModel {
        PopulationModel::new(super::model::DEFAULT_NAME, ModelFile::builtin())
    }

    /// The same model with the interstellar density multiplied by `factor` (sensitivity checks).
    pub fn with_interstellar_scaled(&self, factor: f64) -> PopulationModel {
        let mut f = self.file.clone();
        f.interstellar.density_per_au3 *= factor;
        PopulationModel::new(format!("{} (interstellar x{factor})", self.source), f)
    }

    /// V offset of a band (0 for an unknown band).
    pub fn band_offset(&self, band: Option<&str>) -> f64 {
        band.and_then(|b| self.file.band_to_v.get(b))
            .copied()
            .unwrap_or(0.0)
    }

    /// Absolute magnitude of a trial orbit from the mean V, its heliocentric position and the
    /// observer's heliocentric position (H–G phase law with the model's G).
    pub fn absolute_magnitude(&self, v_mag: f64, r_helio: &V3, observer: &V3) -> f64 {
        let topo = r_helio - observer;
        let (r, d, big_r) = (r_helio.norm(), topo.norm(), observer.norm());
        let beta = ((r * r + d * d - big_r * big_r) / (2.0 * r * d))
            .clamp(-1.0, 1.0)
            .acos();
        let t = (beta / 2.0).tan();
        let g = self.file.slope_g;
        let phase = (1.0 - g) * (-3.33 * t.powf(0.63)).exp() + g * (-1.87 * t.powf(1.22)).exp();
        v_mag - 5.0 * (r * d).log10() + 2.5 * phase.max(1e-30).log10()
    }

    /// Density at a heliocentric ICRF state (AU, AU/day), given the Sun's barycentric state (for the
    /// class and the barycentric populations) and the absolute magnitude the trial orbit implies.
    pub fn density(&self, x_helio: &S6, sun_bary: &S6, h: f64) -> Density {
        let r = V3::new(x_helio[0], x_helio[1], x_helio[2]);
        let v = V3::new(x_helio[3], x_helio[4], x_helio[5]);
        let rb = r + V3::new(sun_bary[0], sun_bary[1], sun_bary[2]);
        let vb = v + V3::new(sun_bary[3], sun_bary[4], sun_bary[5]);
        let unbound = vb.norm_squared() > 2.0 * MU_BARY / rb.norm();
        if unbound {
            let Some(vin) = incoming_velocity(&rb, &vb, MU_BARY) else {
                return Density {
                    unbound,
                    ln_f: f64::NEG_INFINITY,
                };
            };
            let uvw = self.interstellar.to_gal * vin * AU_PER_DAY_TO_KM_S;
            let ln_f =
                self.interstellar.size.ln_dn_dh(h) + self.interstellar.ln_velocity_density(&uvw);
            return Density { unbound, ln_f };
        }
        // Each family's orbital elements only where its 1/a range could hold the state.
        let inv_a_h = 2.0 / r.norm() - v.norm_squared() / MU_SUN;
        let inv_a_b = 2.0 / rb.norm() - vb.norm_squared() / MU_BARY;
        let in_range = |(lo, hi): (f64, f64), x: f64| x >= lo && x <= hi;
        let se = (self
            .elements
            .iter()
            .any(|p| in_range(p.inv_a_range, inv_a_h)))
        .then(|| shape(&(self.ecl * r), &(self.ecl * v), MU_SUN).0);
        let sb = (self
            .perihelion
            .iter()
            .any(|p| in_range(p.inv_a_range, inv_a_b)))
        .then(|| shape(&(self.ecl * rb), &(self.ecl * vb), MU_BARY).0);
        // Each term once (log_sum_exp reads its terms twice), and only the families whose 1/a range
        // holds the state: outside it a family's density is zero.
        let terms = self
            .elements
            .iter()
            .filter(|p| in_range(p.inv_a_range, inv_a_h))
            .filter_map(|p| se.map(|se| p.ln_density(&se, h)))
            .chain(
                self.perihelion
                    .iter()
                    .filter(|p| in_range(p.inv_a_range, inv_a_b))
                    .filter_map(|p| sb.map(|sb| p.ln_density(&sb, h))),
            );
        let mut buf = [f64::NEG_INFINITY; 16];
        let mut n = 0;
        let mut rest = Vec::new();
        for t in terms {
            if n < buf.len() {
                buf[n] = t;
                n += 1;
            } else {
                rest.push(t);
            }
        }
        Density {
            unbound,
            ln_f: log_sum_exp(buf[..n].iter().chain(&rest).copied()),
        }
    }

    /// Barycentric 1/a values where some bound population's density jumps or peaks (its histogram
    /// edges), so integrators can place nodes on both sides.
    pub fn inverse_a_breaks(&self) -> Vec<f64> {
        let mut out = vec![0.0];
        for p in &self.file.perihelion {
            edges_of(&p.inv_a_per_au, &mut out);
        }
        // The element populations only where they begin and end: their inner steps are mild and
        // heliocentric, so nodes placed on them in barycentric 1/a would buy little.
        for p in &self.file.bound {
            let mut a = Vec::new();
            edges_of(&p.a_au, &mut a);
            let lo = a.iter().copied().fold(f64::INFINITY, f64::min);
            let hi = a.iter().copied().fold(0.0_f64, f64::max);
            if lo > 0.0 && hi.is_finite() {
                out.extend([1.0 / hi, 1.0 / lo]);
            }
        }
        out.sort_by(f64::total_cmp);
        out.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * b.abs().max(1e-300));
        out
    }
}

impl PopulationModel {
    /// Ranges of barycentric 1/a (per au) where some bound population has objects, padded for the
    /// heliocentric–barycentric difference of the asteroid populations.
    pub fn bound_support(&self) -> Vec<(f64, f64)> {
        let mut out = Vec::new();
        for p in &self.file.bound {
            let mut e = Vec::new();
            edges_of(&p.a_au, &mut e);
            let (lo, hi) = e
                .iter()
                .fold((f64::INFINITY, 0.0_f64), |(l, h), x| (l.min(*x), h.max(*x)));
            if lo > 0.0 && hi.is_finite() {
                out.push((1.0 / hi - 0.01, 1.0 / lo + 0.01));
            }
        }
        for p in &self.file.perihelion {
            let mut e = Vec::new();
            edges_of(&p.inv_a_per_au, &mut e);
            let (lo, hi) = e
                .iter()
                .fold((f64::INFINITY, 0.0_f64), |(l, h), x| (l.min(*x), h.max(*x)));
            out.push((lo - 1e-6, hi + 1e-6));
        }
        out
    }
}

fn edges_of(d: &Dist, out: &mut Vec<f64>) {
    match d {
        Dist::Uniform { min, max } => out.extend([*min, *max]),
        Dist::Histogram { edges, .. } => out.extend(edges.iter().copied()),
        Dist::Rayleigh { max, .. } => out.push(*max),
        Dist::Isotropic => {}
    }
}
