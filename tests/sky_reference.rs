//! Sky conditions against outside references (tests/reference/make_sky.py): the Moon's topocentric
//! direction, its distance from a pointing and its illuminated fraction against DE421 with ERFA site
//! vectors; airmass against the Kasten–Young airmass formula evaluated in the script; sexagesimal text
//! against ERFA's formatting, and read back.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

mod util;

use interloper::fitting::conditions::SkySlot;
use interloper::physics::constants::DEG;
use interloper::physics::frames::unit_from_radec;
use interloper::physics::observe::ObserverModel;
use interloper::physics::sexagesimal::{dec_dms, parse_dec_dms, parse_ra_hms, ra_hms};
use interloper::physics::site::GroundPosition;
use interloper::physics::sky::airmass;
use interloper::physics::time::parse_utc;
use util::{f, read_csv};

#[test]
fn moon_distance_and_illumination_match_de421() {
    let model = ObserverModel::new();
    let rows = read_csv("sky/moon_de421.csv");
    assert!(rows.len() >= 100);
    let (mut worst_dir, mut worst_sep, mut worst_illum) = (0.0_f64, 0.0_f64, 0.0_f64);
    for r in &rows {
        let site = GroundPosition::Geodetic {
            lon_deg: f(r, "lon_deg"),
            lat_deg: f(r, "lat_deg"),
            alt_m: f(r, "alt_m"),
        };
        let inst = parse_utc(&r["utc"]).unwrap();
        let slot = SkySlot::new(&site, &inst, &model).unwrap();
        let target = unit_from_radec(f(r, "ra_deg") * DEG, f(r, "dec_deg") * DEG);
        let moon_ref = unit_from_radec(f(r, "moon_ra_deg") * DEG, f(r, "moon_dec_deg") * DEG);
        worst_dir = worst_dir.max(slot.moon_dir.angle(&moon_ref) / DEG);
        worst_sep = worst_sep.max((slot.moon_sep_deg(&target) - f(r, "moon_sep_deg")).abs());
        worst_illum = worst_illum.max((slot.moon_illum - f(r, "moon_illum")).abs());
    }
    eprintln!(
        "Moon vs DE421 over {} rows: direction {worst_dir:.4}°, separation {worst_sep:.4}°, \
         illuminated fraction {worst_illum:.5}",
        rows.len()
    );
    assert!(worst_dir < 0.05, "Moon direction off by {worst_dir}°");
    assert!(worst_sep < 0.05, "separation off by {worst_sep}°");
    assert!(
        worst_illum < 0.01,
        "illuminated fraction off by {worst_illum}"
    );
}

#[test]
fn airmass_matches_the_formula_evaluated_outside() {
    let rows = read_csv("sky/airmass_kasten_young.csv");
    assert!(rows.len() >= 5);
    for r in &rows {
        let want = f(r, "airmass");
        let got = airmass(f(r, "alt_deg")).unwrap();
        assert!(
            (got - want).abs() < 1e-9 * want,
            "{}: {got} vs {want}",
            r["alt_deg"]
        );
    }
}

#[test]
fn sexagesimal_text_matches_erfa_and_reads_back() {
    let rows = read_csv("sky/sexagesimal_erfa.csv");
    assert!(rows.len() >= 100);
    for r in &rows {
        let (ra, dec) = (f(r, "ra_deg"), f(r, "dec_deg"));
        assert_eq!(ra_hms(ra), r["ra_hms"], "RA {ra}");
        assert_eq!(dec_dms(dec), r["dec_dms"], "Dec {dec}");
        // Read back to within half the last printed unit (0.0005 s of time, 0.005″).
        let ra_back = parse_ra_hms(&ra_hms(ra)).unwrap();
        let dec_back = parse_dec_dms(&dec_dms(dec)).unwrap();
        assert!(
            (ra_back - ra).abs() * 3600.0 / 15.0 <= 0.0005 + 1e-9,
            "{ra} → {ra_back}"
        );
        assert!(
            (dec_back - dec).abs() * 3600.0 <= 0.005 + 1e-9,
            "{dec} → {dec_back}"
        );
        // Text → angle → text is the identity.
        assert_eq!(ra_hms(parse_ra_hms(&r["ra_hms"]).unwrap()), r["ra_hms"]);
        assert_eq!(dec_dms(parse_dec_dms(&r["dec_dms"]).unwrap()), r["dec_dms"]);
    }
}
