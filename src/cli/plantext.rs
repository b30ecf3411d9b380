//! The text form of a plan: one line per site night, one per visit in time order, then what was
//! left out and why, and the standing caution.

use interloper::feed::sanitize::clean;
use interloper::fitting::plan::Plan;

pub fn table(p: &Plan) -> String {
    let mut s = format!(
        "Follow-up plan: dark = Sun below {}° ({} twilight); {} visit(s), {} candidate(s) left out\n",
        p.twilight.sun_limit_deg(),
        p.twilight,
        p.items.len(),
        p.unplanned.len()
    );
    for n in &p.sites {
        match (&n.dark_from_utc, &n.dark_to_utc) {
            (Some(a), Some(b)) => s.push_str(&format!(
                "site {}: dark {a} .. {b} ({:.1} h), altitude ≥ {}°, field {}°, limit V {}\n",
                clean(&n.site),
                n.dark_hours,
                n.min_alt_deg,
                n.fov_deg,
                n.limiting_mag
            )),
            _ => s.push_str(&format!(
                "site {}: no dark sky in this stretch\n",
                clean(&n.site)
            )),
        }
    }
    s.push_str("start (UTC)               end (UTC)                 site object          RA h:m:s     Dec d:m:s     alt°  airm  V     moon° lit   3σ\"      ptg  E|ΔP|   σ(1/a) now → after   P(unb)  #  notes\n");
    for i in &p.items {
        s.push_str(&format!(
            "{:<25} {:<25} {:<4} {:<15} {:>12} {:>12} {:>5.1} {:>5} {:>5} {:>5.0} {:>4.2} {:>8.1} {:>4} {:>7.4} {:>9.2e} → {:<9.2e} {:>6} {:>2}  {}\n",
            i.start_utc,
            i.end_utc,
            clean(&i.site),
            clean(&i.object),
            i.ra_hms,
            i.dec_dms,
            i.alt_deg,
            i.airmass.map_or("-".into(), |x| format!("{x:.2}")),
            i.v_mag.map_or("-".into(), |v| format!("{v:.1}")),
            i.moon_sep_deg,
            i.moon_illum,
            i.region_major_arcsec,
            i.pointings,
            i.expected_change,
            i.inv_a_sigma_now,
            i.inv_a_sigma_after,
            i.p_hyperbolic.map_or("-".into(), |p| if (0.001..=0.999).contains(&p) {
                format!("{p:.3}")
            } else {
                format!("{p:.0e}")
            }),
            i.priority,
            i.cautions.iter().map(|c| c.text()).collect::<Vec<_>>().join(" ")
        ));
    }
    if !p.unplanned.is_empty() {
        s.push_str("left out:\n");
        for l in &p.unplanned {
            s.push_str(&format!("  {:<15} {}\n", clean(&l.object), l.reason.text()));
        }
    }
    if p.items.iter().any(|i| i.region_exceeds_fov) {
        s.push_str(
            "ptg > 1: the 3σ region is larger than the field; that many pointings tile it.\n",
        );
    }
    if p.items.iter().any(|i| !i.cautions.is_empty()) {
        s.push_str(
            "CAUTION: SUN = within 45° of the Sun, LOW = within 10° of the altitude limit, MOON = a bright \
             Moon within 30°. The plan defers to each site's own limits and procedures.\n",
        );
    }
    s
}
