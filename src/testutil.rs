//! Helpers for unit tests only.

use crate::fitting::fit::FitResult;
use crate::fitting::kinds::FitStatus;

/// A usable fit record of `object` with P(unbound) `p` over `nights` nights and nothing else filled
/// in: enough for the code that reads a record's summary (alerts, marks, explanations).
pub fn record(object: &str, p: f64, nights: usize) -> FitResult {
    let sites = crate::feed::sites::SiteTable::builtin();
    let text =
        format!("trkSub|stn|obsTime|ra|dec\n{object}|TV1|2027-02-26T03:00:00Z|120.5|10.25\n");
    let t = crate::feed::tracklets::read_bytes(
        "t.psv",
        text.as_bytes(),
        &sites,
        &crate::feed::tracklets::Limits::default(),
    )
    .tracklets
    .remove(0);
    let mut r = FitResult::failed(&t, "made for the test");
    r.error = None;
    r.status = FitStatus::Ok;
    r.p_hyperbolic = Some(p);
    r.n_nights = nights;
    r
}

/// One position at `t` (RA and Dec in degrees) from the geocentre, as site TV1 with no stated errors,
/// magnitude or band: the arcs that unit tests build by hand.
pub fn observation(
    t: crate::physics::time::Instant,
    ra_deg: f64,
    dec_deg: f64,
) -> crate::fitting::input::Observation {
    crate::fitting::input::Observation {
        time: t,
        ra: ra_deg.to_radians(),
        dec: dec_deg.to_radians(),
        sigma_ra_arcsec: None,
        sigma_dec_arcsec: None,
        correlation: None,
        site_code: "TV1".into(),
        location: crate::physics::observe::ObserverLocation::Geocentric { pos_km: [0.0; 3] },
        mag: None,
        band: None,
        origin: "test".into(),
    }
}
