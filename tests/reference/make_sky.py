"""Reference vectors for the sky conditions of an ephemeris row: the Moon's topocentric direction and
illuminated fraction (DE421 through jplephem, sites and time scales through ERFA), airmass by the
Kasten-Young airmass formula evaluated here, and sexagesimal strings from ERFA's own formatting.

Run:  python tests/reference/make_sky.py   (writes tests/reference/data/sky/*.csv)
"""
import os

import erfa
import numpy as np

from common import AU_KM, DATA, de421, site_gcrs_au, utc_scales, write_csv

RNG = np.random.default_rng(1414)
# Invented test sites (longitude E, geodetic latitude, height m): they stand for no real observatory.
SITES = [(17.5, 41.2, 1200.0), (289.3, -27.6, 2400.0), (145.8, -35.0, 300.0), (212.4, 58.9, 80.0)]


def moon_and_sun_geocentric(kernel, tdb):
    """Geocentric Moon and Sun (AU, ICRF) at TDB (geometric, no light time)."""
    moon = kernel[3, 301].compute(*tdb) - kernel[3, 399].compute(*tdb)
    earth = kernel[0, 3].compute(*tdb) + kernel[3, 399].compute(*tdb)
    sun = kernel[0, 10].compute(*tdb) - earth
    return moon / AU_KM, sun / AU_KM


def unit(v):
    return v / np.linalg.norm(v)


def moon_rows():
    kernel = de421()
    rows = []
    for k in range(120):
        y = int(RNG.integers(2024, 2032))
        mo = int(RNG.integers(1, 13))
        d = int(RNG.integers(1, 29))
        h = int(RNG.integers(0, 24))
        mi = int(RNG.integers(0, 60))
        site = SITES[k % len(SITES)]
        tt, tdb, ut1 = utc_scales(y, mo, d, h, mi, 0.0)
        moon, sun = moon_and_sun_geocentric(kernel, tdb)
        s = site_gcrs_au(*site, tt, ut1)
        m_topo, s_topo = moon - s, sun - s
        to_sun, to_obs = s_topo - m_topo, -m_topo
        cos_i = np.dot(unit(to_sun), unit(to_obs))
        illum = 0.5 * (1.0 + cos_i)
        # A test direction anywhere on the sky, and its distance from the Moon.
        ra = float(RNG.uniform(0.0, 360.0))
        dec = float(np.degrees(np.arcsin(RNG.uniform(-1.0, 1.0))))
        target = erfa.s2c(np.radians(ra), np.radians(dec))
        sep = float(np.degrees(np.arccos(np.clip(np.dot(target, unit(m_topo)), -1.0, 1.0))))
        mra, mdec = erfa.c2s(m_topo)
        rows.append([f"{y:04d}-{mo:02d}-{d:02d}T{h:02d}:{mi:02d}:00Z", *site, ra, dec,
                     float(np.degrees(erfa.anp(mra))), float(np.degrees(mdec)), sep, float(illum)])
    write_csv("sky/moon_de421.csv",
              ["utc", "lon_deg", "lat_deg", "alt_m", "ra_deg", "dec_deg", "moon_ra_deg",
               "moon_dec_deg", "moon_sep_deg", "moon_illum"], rows)


def kasten_young(h_deg):
    return 1.0 / (np.sin(np.radians(h_deg)) + 0.50572 * (h_deg + 6.07995) ** -1.6364)


def airmass_rows():
    alts = [0.5, 2.0, 5.0, 10.0, 15.0, 20.0, 30.0, 45.0, 60.0, 75.0, 89.0, 90.0]
    write_csv("sky/airmass_kasten_young.csv", ["alt_deg", "airmass"],
              [[a, float(kasten_young(a))] for a in alts])


def sexagesimal_rows():
    rows = []
    for _ in range(200):
        ra = float(RNG.uniform(0.0, 360.0))
        dec = float(RNG.uniform(-89.9, 89.9))
        s, (h, m, sec, frac) = erfa.a2tf(3, np.radians(ra))
        ra_text = f"{h:02d}:{m:02d}:{sec:02d}.{frac:03d}"
        s, (d, am, asec, afrac) = erfa.a2af(2, np.radians(dec))
        dec_text = f"{s.decode() if isinstance(s, bytes) else s}{d:02d}:{am:02d}:{asec:02d}.{afrac:02d}"
        rows.append([ra, dec, ra_text, dec_text])
    write_csv("sky/sexagesimal_erfa.csv", ["ra_deg", "dec_deg", "ra_hms", "dec_dms"], rows)


if __name__ == "__main__":
    os.makedirs(os.path.join(DATA, "sky"), exist_ok=True)
    moon_rows()
    airmass_rows()
    sexagesimal_rows()
