//! The plan overlay's text: the sites' dark hours, the visits in time order, what was left out.

use crate::feed::sanitize::clean;
use crate::fitting::plan::Plan;

pub fn lines(p: &Plan) -> Vec<String> {
    let mut v = vec![format!(
        "dark = Sun below {}° ({}); {} visit(s), {} left out; cautions defer to each site's own limits",
        p.twilight.sun_limit_deg(),
        p.twilight,
        p.items.len(),
        p.unplanned.len()
    )];
    if p.sites.is_empty() {
        v.push("no known site observed these candidates: nothing to plan".into());
    }
    for n in &p.sites {
        v.push(match (&n.dark_from_utc, &n.dark_to_utc) {
            (Some(a), Some(b)) => format!(
                "{}: dark {} .. {} ({:.1} h), alt ≥ {}°, field {}°",
                clean(&n.site),
                a.get(..16).unwrap_or(a),
                b.get(..16).unwrap_or(b),
                n.dark_hours,
                n.min_alt_deg,
                n.fov_deg
            ),
            _ => format!("{}: no dark sky", clean(&n.site)),
        });
    }
    v.push(
        "start  end    site object       alt° airm moon°  3σ\"    ptg E|ΔP|   P      notes".into(),
    );
    for i in &p.items {
        v.push(format!(
            "{} {} {:<4} {:<12} {:>4.0} {:>4} {:>5.0} {:>6.1} {:>3} {:>6.4} {:>6} {}",
            i.start_utc.get(11..16).unwrap_or(&i.start_utc),
            i.end_utc.get(11..16).unwrap_or(&i.end_utc),
            clean(&i.site),
            clean(&i.object),
            i.alt_deg,
            i.airmass.map_or("-".into(), |x| format!("{x:.2}")),
            i.moon_sep_deg,
            i.region_major_arcsec,
            i.pointings,
            i.expected_change,
            i.p_hyperbolic.map_or("-".into(), |p| format!("{p:.3}")),
            i.cautions
                .iter()
                .map(|c| c.text())
                .collect::<Vec<_>>()
                .join(" ")
        ));
    }
    for l in &p.unplanned {
        v.push(format!(
            "left out: {} — {}",
            clean(&l.object),
            l.reason.text()
        ));
    }
    v
}
