//! What a fit consumes: observations with their weights, grouped into nights.

use crate::physics::constants::ARCSEC;
use crate::physics::observe::ObserverLocation;
use crate::physics::time::Instant;
use nalgebra::Matrix2;

/// One astrometric position, already resolved to an observer location.
#[derive(Debug, Clone, PartialEq)]
pub struct Observation {
    pub time: Instant,
    /// Right ascension and declination (radians, ICRF astrometric).
    pub ra: f64,
    pub dec: f64,
    /// Uncertainties as given in the file (arcsec; RA already multiplied by cos Dec), and correlation.
    pub sigma_ra_arcsec: Option<f64>,
    pub sigma_dec_arcsec: Option<f64>,
    pub correlation: Option<f64>,
    pub site_code: String,
    pub location: ObserverLocation,
    pub mag: Option<f64>,
    pub band: Option<String>,
    /// Where the observation came from (file and line), for messages.
    pub origin: String,
}

/// Uncertainty used when a position has none (arcsec): typical of unknown or faint astrometry
/// (common practice, no source).
pub const DEFAULT_SIGMA_ARCSEC: f64 = 1.0;
/// Smallest uncertainty accepted (arcsec): no position is trusted beyond this (common practice, no source).
pub const SIGMA_FLOOR_ARCSEC: f64 = 0.1;
/// Observations of one object from one site in one night beyond which their errors are treated as
/// correlated and each σ is inflated by √(N / this) (common practice, value from memory).
pub const NIGHT_INFLATION_START: usize = 4;
/// A gap longer than this (days) starts a new night...
pub const NIGHT_GAP_DAYS: f64 = 0.3;
/// ... and so does a shorter one, above this, when the site changes (stations hours apart in longitude).
pub const NIGHT_GAP_NEW_SITE_DAYS: f64 = 0.125;

/// Observations of one candidate, sorted by time, with their nights.
#[derive(Debug, Clone)]
pub struct Tracklet {
    pub object: String,
    pub source: String,
    pub obs: Vec<Observation>,
    /// Night index of each observation.
    pub night: Vec<usize>,
}

impl Tracklet {
    pub fn new(object: String, source: String, mut obs: Vec<Observation>) -> Tracklet {
        obs.sort_by(|a, b| a.time.tdb.minus(b.time.tdb).total_cmp(&0.0));
        let mut night = Vec::with_capacity(obs.len());
        let mut k = 0;
        for i in 0..obs.len() {
            if i > 0 {
                let gap = obs[i].time.tdb.minus(obs[i - 1].time.tdb);
                let new_site = obs[i].site_code != obs[i - 1].site_code;
                if gap > NIGHT_GAP_DAYS || (new_site && gap > NIGHT_GAP_NEW_SITE_DAYS) {
                    k += 1;
                }
            }
            night.push(k);
        }
        Tracklet {
            object,
            source,
            obs,
            night,
        }
    }

    pub fn n_nights(&self) -> usize {
        self.night.last().map_or(0, |n| n + 1)
    }

    /// Arc length in days.
    pub fn arc_days(&self) -> f64 {
        match (self.obs.first(), self.obs.last()) {
            (Some(a), Some(b)) => b.time.tdb.minus(a.time.tdb),
            _ => 0.0,
        }
    }

    /// Weight matrices: the inverse of each observation's 2×2 covariance in (RA·cos Dec, Dec), radians.
    pub fn covariances(&self, inflate_nights: bool) -> Vec<Matrix2<f64>> {
        let mut count = std::collections::HashMap::new();
        for (o, n) in self.obs.iter().zip(&self.night) {
            *count.entry((o.site_code.as_str(), *n)).or_insert(0usize) += 1;
        }
        self.obs
            .iter()
            .zip(&self.night)
            .map(|(o, n)| {
                let inflate = {
                    let c = count[&(o.site_code.as_str(), *n)];
                    if inflate_nights && c > NIGHT_INFLATION_START {
                        (c as f64 / NIGHT_INFLATION_START as f64).sqrt()
                    } else {
                        1.0
                    }
                };
                let s = |v: Option<f64>| {
                    v.filter(|x| x.is_finite() && *x > 0.0)
                        .unwrap_or(DEFAULT_SIGMA_ARCSEC)
                        .max(SIGMA_FLOOR_ARCSEC)
                        * ARCSEC
                        * inflate
                };
                let (sa, sd) = (s(o.sigma_ra_arcsec), s(o.sigma_dec_arcsec));
                let rho = o.correlation.filter(|c| c.abs() < 0.999).unwrap_or(0.0);
                Matrix2::new(sa * sa, rho * sa * sd, rho * sa * sd, sd * sd)
            })
            .collect()
    }
}
