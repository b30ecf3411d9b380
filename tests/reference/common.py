"""Shared helpers for the reference scripts: DE421 through jplephem, time scales through pyerfa.

Everything here is independent of the Rust code: it is the outside yardstick the tests compare against.
"""
import csv
import os

import erfa
import numpy as np
from jplephem.spk import SPK

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.environ.get("REFERENCE_OUT", os.path.join(HERE, "data"))
AU_KM = 149597870.700
C_AU_D = 299792.458 * 86400.0 / AU_KM
GM_SUN = 0.01720209895 ** 2  # AU^3/d^2, Gaussian constant (same system the tool uses)


def de421():
    import skyfield_data
    path = os.path.join(os.path.dirname(skyfield_data.__file__), "data", "de421.bsp")
    return SPK.open(path)


def body_bary(kernel, body, jd1, jd2=0.0):
    """Barycentric position (AU) and velocity (AU/d) of a DE421 body at TDB jd1+jd2."""
    chains = {
        10: [(0, 10)],
        399: [(0, 3), (3, 399)],
        4: [(0, 4)],
        5: [(0, 5)],
        6: [(0, 6)],
        299: [(0, 2), (2, 299)],
    }
    p = np.zeros(3)
    v = np.zeros(3)
    for a, b in chains[body]:
        pp, vv = kernel[a, b].compute_and_differentiate(jd1, jd2)
        p += pp
        v += vv
    return p / AU_KM, v / AU_KM


def utc_scales(y, mo, d, h, mi, s):
    """UTC calendar → (tt1, tt2), (tdb1, tdb2), (ut1_1, ut1_2) with UT1 = UTC, all through ERFA."""
    u1, u2 = erfa.dtf2d("UTC", y, mo, d, h, mi, s)
    a1, a2 = erfa.utctai(u1, u2)
    t1, t2 = erfa.taitt(a1, a2)
    ut_frac = (u2 + 0.5) % 1.0 if u1 % 1.0 == 0.0 else ((u1 + u2 + 0.5) % 1.0)
    dtr = erfa.dtdb(t1, t2, ut_frac, 0.0, 0.0, 0.0)
    b1, b2 = erfa.tttdb(t1, t2, dtr)
    return (t1, t2), (b1, b2), (u1, u2)


def site_gcrs_au(lon_deg, lat_deg, alt_m, tt, ut1):
    """Geocentric GCRS position of a WGS84 site (AU), polar motion zero, via ERFA gd2gc and c2t06a."""
    itrs = erfa.gd2gc(1, np.radians(lon_deg), np.radians(lat_deg), alt_m)
    rc2t = erfa.c2t06a(tt[0], tt[1], ut1[0], ut1[1], 0.0, 0.0)
    return rc2t.T @ itrs / 1000.0 / AU_KM


def write_csv(name, header, rows):
    os.makedirs(DATA, exist_ok=True)
    with open(os.path.join(DATA, name), "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(header)
        for r in rows:
            w.writerow([f"{x:.17g}" if isinstance(x, float) else x for x in r])
