//! The origin sheet as text for people: the lines the `origin` command prints and the console's
//! origin pane shows, and the braille drawing of a Galactic orbit in the (R, z) plane.

use crate::feed::sanitize::clean;
use crate::fitting::fit::FitResult;
use crate::fitting::origin::{Origin, Plausibility};
use crate::physics::galaxy::Trace;

fn pm(v: Option<f64>, s: Option<f64>, prec: usize) -> String {
    match (v, s) {
        (Some(v), Some(s)) => format!("{v:.prec$} ± {s:.prec$}"),
        (Some(v), None) => format!("{v:.prec$}"),
        _ => "-".into(),
    }
}

fn sci(v: f64, s: f64) -> String {
    format!("{v:+.4e} ± {s:.1e}")
}

/// Heading line of an object's sheet.
pub fn heading(r: &FitResult) -> String {
    format!(
        "{}: P(unbound) {}, {} night(s), arc {:.1} d",
        clean(&r.object),
        r.p_hyperbolic.map_or("-".into(), |p| format!("{p:.4}")),
        r.n_nights,
        r.arc_days
    )
}

/// The sheet's lines (without the drawing).
pub fn sheet_lines(o: &Origin) -> Vec<String> {
    let mut l = vec![
        format!(
            "before the planets  1/a {} au⁻¹  ({:.0} % of {} orbit samples unbound; osculating at the epoch {})",
            sci(o.inv_a_orig_per_au, o.inv_a_orig_sigma),
            100.0 * o.unbound_before_planets,
            o.samples,
            o.inv_a_osc_per_au
                .map_or("-".into(), |v| format!("{v:+.4e}"))
        ),
        format!(
            "after the planets   1/a {} au⁻¹",
            sci(o.inv_a_fut_per_au, o.inv_a_fut_sigma)
        ),
    ];
    if let Some(c) = o.closest_approach {
        l.push(format!(
            "closest planet before the epoch: {:?} at {:.3} au ({:.1} Hill radii){}",
            c.planet,
            c.distance_au,
            c.hill_radii,
            if o.planetary_encounter {
                "  ENCOUNTER: the planet may have changed the orbit"
            } else {
                ""
            }
        ));
    }
    if o.v_inf_orig_km_s.is_none() {
        l.push("no orbit sample arrives from interstellar space: nothing more to say".into());
        return l;
    }
    l.extend(arrival_lines(o));
    l
}

fn ellipse(e: Option<crate::fitting::origin::Ellipse>) -> String {
    e.map_or(String::new(), |e| {
        format!(
            "  (1σ {:.3}° × {:.3}°, PA {:.0}°)",
            e.major_deg, e.minor_deg, e.pa_deg
        )
    })
}

fn arrival_lines(o: &Origin) -> Vec<String> {
    let f = |v: Option<f64>| v.map_or("-".into(), |v| format!("{v:.3}"));
    let uvw = o.uvw_helio_km_s.unwrap_or([f64::NAN; 3]);
    let su = o.uvw_helio_sigma.unwrap_or([f64::NAN; 3]);
    let lsr = o.uvw_lsr_km_s.unwrap_or([f64::NAN; 3]);
    let sm = o.solar_motion_km_s;
    let mut l = vec![
        format!(
            "arrival  v∞ {} km/s{}",
            pm(o.v_inf_orig_km_s, o.v_inf_orig_sigma, 2),
            match o.plausibility {
                Some(Plausibility::TooFastSuspectLinkage) => {
                    "  TOO FAST: hardly any star near the Sun moves so; more likely a false linkage or bad astrometry"
                }
                _ => "  (like stars near the Sun)",
            }
        ),
        format!(
            "radiant  RA {} Dec {}{}",
            f(o.radiant_ra_deg),
            f(o.radiant_dec_deg),
            ellipse(o.radiant_ellipse)
        ),
        format!(
            "         l {} b {}{}",
            f(o.radiant_l_deg),
            f(o.radiant_b_deg),
            ellipse(o.radiant_ellipse_galactic)
        ),
        format!(
            "velocity from the Sun (U, V, W)  {:.2} ± {:.2}, {:.2} ± {:.2}, {:.2} ± {:.2} km/s",
            uvw[0], su[0], uvw[1], su[1], uvw[2], su[2]
        ),
        format!(
            "   from the local standard of rest  {:.2}, {:.2}, {:.2} km/s (|v| {:.2}; solar motion {}, {}, {})",
            lsr[0],
            lsr[1],
            lsr[2],
            o.speed_lsr_km_s.unwrap_or(f64::NAN),
            sm[0],
            sm[1],
            sm[2]
        ),
    ];
    if let Some(m) = o.membership {
        l.push(format!(
            "stars moving so: thin disc {:.1} %, thick disc {:.1} %, halo {:.1} %  (a statement about stars with this velocity, not about where this object formed)",
            100.0 * m.thin_disc,
            100.0 * m.thick_disc,
            100.0 * m.halo
        ));
    }
    if let Some(g) = o.galactic_orbit {
        l.push(format!(
            "Galactic orbit over {} Gyr in {} (R₀ {} kpc, z₀ {} kpc, v_c {} km/s):",
            o.galactic_gyr, o.potential, o.r0_kpc, o.z0_kpc, o.v_circ_km_s
        ));
        l.push(format!(
            "   pericentre {} kpc, apocentre {} kpc, z_max {} kpc, e {}{}",
            pm(Some(g.r_peri_kpc), g.r_peri_kpc_sigma, 2),
            pm(Some(g.r_apo_kpc), g.r_apo_kpc_sigma, 2),
            pm(Some(g.z_max_kpc), g.z_max_kpc_sigma, 3),
            pm(Some(g.ecc), g.ecc_sigma, 3),
            if g.escaping_fraction > 0.0 {
                format!(
                    "; {:.0} % of the samples leave the Galaxy",
                    100.0 * g.escaping_fraction
                )
            } else {
                String::new()
            }
        ));
    }
    l
}

/// A braille drawing of a Galactic orbit in (R, z): `cols` × `rows` characters, R across the range
/// the orbit covers, z symmetric about the plane; the Sun's place is marked ⊙.
pub fn rz_drawing(path: &Trace, sun: (f64, f64), cols: usize, rows: usize) -> Vec<String> {
    let (cols, rows) = (cols.max(4), rows.max(2));
    let r_hi = path.iter().map(|p| p.0).fold(sun.0, f64::max);
    let r_lo = path.iter().map(|p| p.0).fold(sun.0, f64::min);
    let pad = 0.05 * (r_hi - r_lo).max(0.1);
    let (r_lo, r_hi) = ((r_lo - pad).max(0.0), r_hi + pad);
    let z_max = path.iter().map(|p| p.1.abs()).fold(0.05, f64::max) * 1.1;
    let (w, h) = (cols * 2, rows * 4);
    let mut dots = vec![vec![false; w]; h];
    let cell = |r: f64, z: f64| {
        let x = ((r - r_lo) / (r_hi - r_lo) * (w - 1) as f64).round();
        let y = ((1.0 - (z + z_max) / (2.0 * z_max)) * (h - 1) as f64).round();
        (
            x.clamp(0.0, (w - 1) as f64) as usize,
            y.clamp(0.0, (h - 1) as f64) as usize,
        )
    };
    for &(r, z) in path {
        let (x, y) = cell(r, z);
        dots[y][x] = true;
    }
    const BITS: [[u32; 2]; 4] = [[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]];
    let (sx, sy) = cell(sun.0, sun.1);
    let mut out = vec![format!("z +{z_max:.2} kpc")];
    for row in 0..rows {
        let mut line = String::with_capacity(cols * 3);
        for col in 0..cols {
            if sx / 2 == col && sy / 4 == row {
                line.push('⊙');
                continue;
            }
            let mut code = 0x2800;
            for (dy, bits) in BITS.iter().enumerate() {
                for (dx, bit) in bits.iter().enumerate() {
                    if dots[row * 4 + dy][col * 2 + dx] {
                        code |= bit;
                    }
                }
            }
            line.push(char::from_u32(code).unwrap_or(' '));
        }
        out.push(line);
    }
    out.push(format!(
        "z -{z_max:.2} kpc; R from {r_lo:.1} to {r_hi:.1} kpc; ⊙ the Sun"
    ));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_flat_circle_draws_one_row_of_dots_at_the_sun() {
        let path: Trace = (0..100).map(|_| (8.0, 0.0)).collect();
        let d = rz_drawing(&path, (8.0, 0.0), 20, 5);
        assert_eq!(d.len(), 7);
        let drawn: Vec<usize> = d[1..6]
            .iter()
            .enumerate()
            .filter(|(_, l)| l.chars().any(|c| c != '\u{2800}'))
            .map(|(k, _)| k)
            .collect();
        assert_eq!(drawn, vec![2]);
        assert!(d[3].contains('⊙'));
    }
}
