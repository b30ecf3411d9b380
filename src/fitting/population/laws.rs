//! The one-dimensional laws the population model is built of: a distribution in internal units (with
//! the division by e or sin i of the volume element built in) and a power law in absolute magnitude.

use super::model::Dist;
use std::f64::consts::{LN_10, PI};

/// A distribution in internal units (radians for angles) with the division by e or sin i built in.
#[derive(Debug, Clone)]
pub(super) struct Pdf {
    dist: Dist,
    /// File unit → internal unit (π/180 for degrees, 1 otherwise).
    unit: f64,
    /// Normalisation of the file-unit density.
    norm: f64,
}

impl Pdf {
    pub(super) fn new(dist: &Dist, unit: f64) -> Pdf {
        let norm = match dist {
            Dist::Uniform { min, max } => 1.0 / (max - min),
            Dist::Rayleigh { sigma, max } => {
                1.0 / (sigma * sigma * (1.0 - (-max * max / (2.0 * sigma * sigma)).exp()))
            }
            Dist::Histogram { weights, .. } => 1.0 / weights.iter().sum::<f64>(),
            Dist::Isotropic => 0.5,
        };
        Pdf {
            dist: dist.clone(),
            unit,
            norm,
        }
    }

    /// Density at x (internal units), per internal unit.
    pub(super) fn pdf(&self, x: f64) -> f64 {
        let xf = x / self.unit;
        let v = match &self.dist {
            Dist::Uniform { min, max } => {
                if xf >= *min && xf <= *max {
                    self.norm
                } else {
                    0.0
                }
            }
            Dist::Rayleigh { sigma, max } => {
                if (0.0..=*max).contains(&xf) {
                    self.norm * xf * (-xf * xf / (2.0 * sigma * sigma)).exp()
                } else {
                    0.0
                }
            }
            Dist::Histogram { edges, weights } => {
                if xf < edges[0] || xf >= edges[edges.len() - 1] {
                    0.0
                } else {
                    let k = edges.partition_point(|e| *e <= xf).saturating_sub(1);
                    self.norm * weights[k] / (edges[k + 1] - edges[k])
                }
            }
            Dist::Isotropic => {
                return if (0.0..=PI).contains(&x) {
                    0.5 * x.sin()
                } else {
                    0.0
                };
            }
        };
        v / self.unit
    }

    /// p(x)/s(x), where s is x itself (eccentricity) or sin x (inclination): finite at zero.
    pub(super) fn reduced(&self, x: f64, sine: bool) -> f64 {
        let xf = x / self.unit;
        let s = if sine { x.sin() } else { x };
        match &self.dist {
            Dist::Rayleigh { sigma, max } => {
                if !(0.0..=*max).contains(&xf) {
                    return 0.0;
                }
                // norm · xf · exp / unit / s, with xf / s → 1/unit as x → 0 for either s.
                let ratio = if x < 1e-8 { 1.0 / self.unit } else { xf / s };
                self.norm * ratio * (-xf * xf / (2.0 * sigma * sigma)).exp() / self.unit
            }
            Dist::Isotropic => {
                if (0.0..=PI).contains(&x) {
                    0.5
                } else {
                    0.0
                }
            }
            _ => {
                if s <= 0.0 {
                    0.0
                } else {
                    self.pdf(x) / s
                }
            }
        }
    }

    /// Midpoint grid over the support (internal units) with weights p(x) dx, for normalisations.
    pub(super) fn grid(&self, n: usize) -> Vec<(f64, f64)> {
        let (lo, hi) = match &self.dist {
            Dist::Uniform { min, max } => (*min, *max),
            Dist::Rayleigh { max, .. } => (0.0, *max),
            Dist::Histogram { edges, .. } => (edges[0], edges[edges.len() - 1]),
            Dist::Isotropic => (0.0, 180.0),
        };
        let (lo, hi) = (lo * self.unit, hi * self.unit);
        let dx = (hi - lo) / n as f64;
        (0..n)
            .map(|k| {
                let x = lo + dx * (k as f64 + 0.5);
                (x, self.pdf(x) * dx)
            })
            .collect()
    }
}

/// ln of dN/dH at H for a power law with the magnitude blur folded in.
#[derive(Debug, Clone, Copy)]
pub(super) struct SizeLaw {
    ln_c: f64,
    k: f64,
    h_ref: f64,
}

impl SizeLaw {
    pub(super) fn new(count: f64, h_ref: f64, slope: f64, mag_sigma: f64) -> SizeLaw {
        let k = slope * LN_10;
        SizeLaw {
            ln_c: (count * k).ln() + 0.5 * (k * mag_sigma).powi(2),
            k,
            h_ref,
        }
    }
    pub(super) fn ln_dn_dh(&self, h: f64) -> f64 {
        self.ln_c + self.k * (h - self.h_ref)
    }
}
