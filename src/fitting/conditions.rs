//! Observing conditions at one site and time: what the telescope can do (its capabilities), the sky
//! computed once per site and time and shared by every candidate (a [`SkySlot`]), and the sky fields of
//! one ephemeris row.

use crate::physics::V3;
use crate::physics::constants::DEG;
use crate::physics::earth::EphemerisError;
use crate::physics::frames::r3;
use crate::physics::observe::{ObserverLocation, ObserverModel, ObserverState};
use crate::physics::sexagesimal::{dec_dms, ra_hms};
use crate::physics::site::{GroundPosition, earth_rotation_angle};
use crate::physics::sky::{Twilight, airmass, illuminated_fraction, moon_geocentric};
use crate::physics::time::Instant;

/// Default faintest V a site reaches in a standard exposure (a mid-sized survey telescope; no source).
pub const DEFAULT_LIMITING_MAG: f64 = 21.5;
/// Default field of view (degrees across).
pub const DEFAULT_FOV_DEG: f64 = 1.0;
/// Default lowest altitude a site points at (degrees).
pub const DEFAULT_SITE_MIN_ALT_DEG: f64 = 20.0;
/// Default one-coordinate astrometric accuracy of one position (arcsec).
pub const DEFAULT_ACCURACY_ARCSEC: f64 = 0.3;
/// Default exposure for the trail length (seconds).
pub const DEFAULT_EXPOSURE_S: f64 = 60.0;
/// A Moon at least this illuminated ...
pub const MOON_CAUTION_ILLUM: f64 = 0.5;
/// ... and closer than this (degrees), while above the horizon, raises a caution.
pub const MOON_CAUTION_SEP_DEG: f64 = 30.0;

/// What one telescope at a site can do.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Capabilities {
    pub min_alt_deg: f64,
    pub limiting_mag: f64,
    pub fov_deg: f64,
    pub accuracy_arcsec: f64,
}

impl Default for Capabilities {
    fn default() -> Self {
        Capabilities {
            min_alt_deg: DEFAULT_SITE_MIN_ALT_DEG,
            limiting_mag: DEFAULT_LIMITING_MAG,
            fov_deg: DEFAULT_FOV_DEG,
            accuracy_arcsec: DEFAULT_ACCURACY_ARCSEC,
        }
    }
}

/// The sky from one site at one instant.
#[derive(Debug, Clone, Copy)]
pub struct SkySlot {
    pub inst: Instant,
    pub observer: ObserverState,
    /// Local (geodetic) zenith, GCRS unit vector.
    pub up: V3,
    /// Unit vectors from the observer to the Sun and to the Moon.
    pub sun_dir: V3,
    pub moon_dir: V3,
    pub sun_alt_deg: f64,
    pub moon_alt_deg: f64,
    pub moon_illum: f64,
}

impl SkySlot {
    pub fn new(
        site: &GroundPosition,
        inst: &Instant,
        model: &ObserverModel,
    ) -> Result<SkySlot, EphemerisError> {
        let observer = model.observer(&ObserverLocation::Ground(*site), inst)?;
        let earth = model.earth(inst.tdb)?;
        let c2i = model.orientation(inst.tdb)?;
        let (lat, lon) = site.geodetic_lat_lon();
        let (sl, cl) = lon.sin_cos();
        let (sp, cp) = lat.sin_cos();
        let up_itrs = V3::new(cp * cl, cp * sl, sp);
        let up = (r3(earth_rotation_angle(inst.ut1)) * c2i).transpose() * up_itrs;
        let site_geo = observer.helio_pos - earth.helio_pos;
        let moon = moon_geocentric(inst.tt) - site_geo;
        let sun = -observer.helio_pos;
        let alt = |d: &V3| d.dot(&up).clamp(-1.0, 1.0).asin() / DEG;
        let (sun_dir, moon_dir) = (sun.normalize(), moon.normalize());
        Ok(SkySlot {
            inst: *inst,
            observer,
            up,
            sun_dir,
            moon_dir,
            sun_alt_deg: alt(&sun_dir),
            moon_alt_deg: alt(&moon_dir),
            moon_illum: illuminated_fraction(&moon, &sun),
        })
    }

    /// Altitude (degrees, geometric) of a unit direction.
    pub fn altitude_deg(&self, dir: &V3) -> f64 {
        dir.dot(&self.up).clamp(-1.0, 1.0).asin() / DEG
    }

    /// Whether the Sun is below the twilight's limit.
    pub fn is_dark(&self, twilight: Twilight) -> bool {
        self.sun_alt_deg < twilight.sun_limit_deg()
    }

    /// Distance from the Moon (degrees) of a unit direction.
    pub fn moon_sep_deg(&self, dir: &V3) -> f64 {
        self.moon_dir.angle(dir) / DEG
    }

    /// A bright Moon above the horizon close to the direction.
    pub fn moon_caution(&self, dir: &V3) -> bool {
        self.moon_alt_deg > 0.0
            && self.moon_illum >= MOON_CAUTION_ILLUM
            && self.moon_sep_deg(dir) < MOON_CAUTION_SEP_DEG
    }
}

/// The sky fields of one ephemeris row (part of the `ephem --json` record).
#[derive(Debug, Clone, serde::Serialize)]
pub struct SkyFields {
    pub ra_hms: String,
    pub dec_dms: String,
    /// Kasten–Young airmass; null at or below the horizon.
    pub airmass: Option<f64>,
    pub moon_sep_deg: f64,
    pub moon_illum: f64,
    pub moon_alt_deg: f64,
    pub limiting_mag: f64,
    /// V at or brighter than the site's limiting magnitude; null when V is unknown.
    pub bright_enough: Option<bool>,
    pub exposure_s: f64,
    /// Sky motion during one exposure (arcsec).
    pub trail_arcsec: f64,
    pub twilight: Twilight,
    pub moon_caution: bool,
}

/// What an ephemeris row is computed against.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RowOptions {
    pub caps: Capabilities,
    pub twilight: Twilight,
    pub exposure_s: f64,
}

impl Default for RowOptions {
    fn default() -> Self {
        RowOptions {
            caps: Capabilities::default(),
            twilight: Twilight::default(),
            exposure_s: DEFAULT_EXPOSURE_S,
        }
    }
}

/// The sky fields for an object in unit direction `dir` at (`ra_deg`, `dec_deg`), altitude `alt_deg`,
/// moving `rate_arcsec_min` on the sky, of magnitude `v_mag`.
pub fn sky_fields(
    slot: &SkySlot,
    dir: &V3,
    radec_deg: (f64, f64),
    alt_deg: f64,
    rate_arcsec_min: f64,
    v_mag: Option<f64>,
    opts: &RowOptions,
) -> SkyFields {
    SkyFields {
        ra_hms: ra_hms(radec_deg.0),
        dec_dms: dec_dms(radec_deg.1),
        airmass: airmass(alt_deg),
        moon_sep_deg: slot.moon_sep_deg(dir),
        moon_illum: slot.moon_illum,
        moon_alt_deg: slot.moon_alt_deg,
        limiting_mag: opts.caps.limiting_mag,
        bright_enough: v_mag.map(|v| v <= opts.caps.limiting_mag),
        exposure_s: opts.exposure_s,
        trail_arcsec: rate_arcsec_min * opts.exposure_s / 60.0,
        twilight: opts.twilight,
        moon_caution: slot.moon_caution(dir),
    }
}
