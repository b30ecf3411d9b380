//! The follow-up ephemeris as text: the panel's lines and the request the observer writes out from it
//! (the same lines, so what is sent is what was seen). Cautions defer to the site's own limits.

use super::panes::num;
use super::state::App;
use crate::feed::sanitize::clean;
use crate::fitting::ephemeris::EphemerisPoint;

/// The header, the column names and one row per step.
pub fn lines(app: &App, obj: &str, pts: &[EphemerisPoint]) -> Vec<String> {
    let where_ = app.ephem.window.clone().unwrap_or_else(|| {
        let site = app
            .candidates
            .iter()
            .find(|c| c.fit.object == obj)
            .and_then(|c| c.fit.residuals.last())
            .map_or_else(|| "?".to_string(), |r| clean(&r.site));
        format!("from {site}, the site of its last observation")
    });
    let mut v = vec![
        format!("{} — {where_} (3σ region)", clean(obj)),
        "keys: s next site · d degrees / h m s · X write this request to the state directory"
            .into(),
    ];
    let sexa = app.ephem.sexagesimal;
    v.push(format!(
        "time (UTC)                 {}  \"/min E \"/min N  PA°  alt° airm  elong°  V     3σ\"  (PA°)     moon°  obs",
        if sexa {
            "RA (h m s)     Dec (° ′ ″)  "
        } else {
            "RA°       Dec°     "
        }
    ));
    for p in pts {
        let mut cautions = String::new();
        if p.sun_caution {
            cautions.push_str(" SUN: check your site's solar-avoidance limits");
        }
        if p.sky.moon_caution {
            cautions.push_str(" MOON: bright Moon near; check your site's limits");
        }
        let pos = if sexa {
            format!("{:<14} {:<13}", p.sky.ra_hms, p.sky.dec_dms)
        } else {
            format!(
                "{:>9} {:>+9.4}",
                crate::physics::sexagesimal::ra_deg_text(p.ra_deg, 4),
                p.dec_deg
            )
        };
        v.push(format!(
            "{:<26} {pos} {:>7.2} {:>7.2} {:>4.0} {:>5} {:>4} {:>6.1} {:>5} {:>6}×{:<6} ({:>3}) {:>5.0} {}{}",
            p.time_utc,
            p.ra_rate_arcsec_min,
            p.dec_rate_arcsec_min,
            p.motion_pa_deg,
            num(p.alt_deg, 0),
            num(p.sky.airmass, 2),
            p.elong_deg,
            num(p.v_mag, 1),
            num(p.unc_major_arcsec, 1),
            num(p.unc_minor_arcsec, 1),
            num(p.unc_pa_deg, 0),
            p.sky.moon_sep_deg,
            if p.observable { "yes" } else { "no" },
            cautions
        ));
    }
    v
}
