"""Reference vectors for the physics layer: time scales, Earth rotation, sites, frames (ERFA), Earth's
geocentre and planets (DE421 via jplephem), two-body motion (scipy DOP853) and topocentric RA/Dec.

Run:  python tests/reference/make_physics.py   (writes tests/reference/data/*.csv)
"""
import json
import os

import erfa
import numpy as np
from scipy.integrate import solve_ivp

from common import (AU_KM, C_AU_D, DATA, GM_SUN, body_bary, de421, site_gcrs_au, utc_scales,
                    write_csv)

RNG = np.random.default_rng(20261202)
# Invented test sites (longitude E, geodetic latitude, height m): they stand for no real observatory.
SITES = [(12.34, 47.1, 900.0), (250.7, -33.9, 1500.0), (135.2, 64.5, 50.0)]


def random_utc(n, y0=1990, y1=2050):
    out = []
    for _ in range(n):
        y = int(RNG.integers(y0, y1))
        mo = int(RNG.integers(1, 13))
        d = int(RNG.integers(1, 29))
        h = int(RNG.integers(0, 24))
        mi = int(RNG.integers(0, 60))
        s = float(np.round(RNG.uniform(0, 59.999), 3))
        out.append((y, mo, d, h, mi, s))
    return out


def iso(t):
    y, mo, d, h, mi, s = t
    return f"{y:04d}-{mo:02d}-{d:02d}T{h:02d}:{mi:02d}:{s:06.3f}Z"


def time_and_rotation():
    rows = []
    times = random_utc(60, 1972, 2026) + [(2016, 12, 31, 23, 59, 60.5), (2017, 1, 1, 0, 0, 0.5),
                                          (2000, 1, 1, 12, 0, 0.0), (2026, 6, 1, 3, 0, 0.0)]
    for t in times:
        tt, tdb, ut1 = utc_scales(*t)
        tai = erfa.utctai(*erfa.dtf2d("UTC", *t))
        era = erfa.era00(*ut1)
        gmst = erfa.gmst06(ut1[0], ut1[1], tt[0], tt[1])
        gast = erfa.gst06a(ut1[0], ut1[1], tt[0], tt[1])
        site = [site_gcrs_au(*s, tt, ut1) * AU_KM for s in SITES]
        rows.append([iso(t), tai[0], tai[1], tt[0], tt[1], tdb[0], tdb[1], era, gmst, gast,
                     *site[0], *site[1], *site[2]])
    hdr = ["utc", "tai1", "tai2", "tt1", "tt2", "tdb1", "tdb2", "era", "gmst", "gast"]
    for k in range(3):
        hdr += [f"s{k}x_km", f"s{k}y_km", f"s{k}z_km"]
    write_csv("time_erfa.csv", hdr, rows)

    dat = [[y, m, erfa.dat(y, m, 1, 0.0)] for y in range(1972, 2026) for m in range(1, 13)]
    write_csv("leap_erfa.csv", ["year", "month", "tai_minus_utc"], dat)

    itrs = [[*s, *(erfa.gd2gc(1, np.radians(s[0]), np.radians(s[1]), s[2]) / 1000.0)] for s in SITES]
    write_csv("sites_erfa.csv", ["lon_deg", "lat_deg", "alt_m", "x_km", "y_km", "z_km"], itrs)

    gal = []
    for _ in range(40):
        ra, dec = RNG.uniform(0, 2 * np.pi), np.arcsin(RNG.uniform(-1, 1))
        l, b = erfa.icrs2g(ra, dec)
        gal.append([ra, dec, l, b])
    write_csv("galactic_erfa.csv", ["ra", "dec", "l", "b"], gal)
    with open(os.path.join(DATA, "obliquity_erfa.json"), "w") as fh:
        json.dump({"obl80_j2000_rad": erfa.obl80(2451545.0, 0.0)}, fh)


def earth():
    k = de421()
    rows = []
    for jd in np.arange(2447892.5, 2469807.5, 37.3):  # 1990-01-01 .. 2050-01-01
        pe, ve = body_bary(k, 399, jd)
        ps, vs = body_bary(k, 10, jd)
        rows.append([jd, *pe, *ve, *(pe - ps), *(ve - vs)])
    write_csv("earth_de421.csv", ["tdb", "bx", "by", "bz", "bvx", "bvy", "bvz",
                                  "hx", "hy", "hz", "hvx", "hvy", "hvz"], rows)


def twobody():
    cases = [("ellipse", 2.0, 0.3), ("near_parabolic_bound", 0.5, 0.99997),
             ("near_parabolic_unbound", 0.5, 1.00001), ("hyperbolic_1_2", 0.8, 1.2),
             ("hyperbolic_6", 1.4, 6.0)]
    out = []
    for name, q, e in cases:
        inc, node, peri = np.radians([40.0, 110.0, 35.0])
        def rot(a, axis):
            c, s = np.cos(a), np.sin(a)
            return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]]) if axis == "z" else \
                np.array([[1, 0, 0], [0, c, -s], [0, s, c]])
        m = rot(node, "z") @ rot(inc, "x") @ rot(peri, "z")
        r0 = q * m[:, 0]
        v0 = np.sqrt(GM_SUN * (1 + e) / q) * m[:, 1]
        # start 20 days before perihelion so the start state is generic
        def f(t, y):
            r = y[:3]
            return np.concatenate([y[3:], -GM_SUN * r / np.linalg.norm(r) ** 3])
        pre = solve_ivp(f, (0, -20.0), np.concatenate([r0, v0]), method="DOP853", rtol=1e-13, atol=1e-16)
        y0 = pre.y[:, -1]
        for dt in (-1000.0, -100.0, -10.0, 10.0, 100.0, 1000.0):
            a = solve_ivp(f, (0, dt), y0, method="DOP853", rtol=1e-12, atol=1e-16).y[:, -1]
            b = solve_ivp(f, (0, dt), y0, method="DOP853", rtol=1e-13, atol=1e-17).y[:, -1]
            conv = float(np.linalg.norm(a[:3] - b[:3]) / np.linalg.norm(b[:3]))
            out.append({"case": name, "q": q, "e": e, "dt": dt, "x0": list(y0), "x": list(b),
                        "relative_convergence": conv})
    with open(os.path.join(DATA, "twobody_dop853.json"), "w") as fh:
        json.dump(out, fh, indent=1)


def observe():
    k = de421()
    rows = []
    bodies = [299, 4, 5, 6]
    times = random_utc(64, 1995, 2045)
    for n, t in enumerate(times):
        tt, tdb, ut1 = utc_scales(*t)
        body = bodies[n % len(bodies)]
        si = n % len(SITES)
        tdb_jd = tdb[0] + tdb[1]
        pe, ve = body_bary(k, 399, tdb_jd)
        ps, vs = body_bary(k, 10, tdb_jd)
        site = site_gcrs_au(*SITES[si], tt, ut1)
        obs_b = pe + site
        tau = 0.0
        for _ in range(6):
            pb, _ = body_bary(k, body, tdb_jd - tau)
            rho = pb - obs_b
            tau = np.linalg.norm(rho) / C_AU_D
        ra = np.arctan2(rho[1], rho[0]) % (2 * np.pi)
        dec = np.arcsin(rho[2] / np.linalg.norm(rho))
        pp, vp = body_bary(k, body, tdb_jd)
        rows.append([iso(t), body, si, *(pp - ps), *(vp - vs), *(obs_b - ps), *vs, ra, dec,
                     np.linalg.norm(rho)])
    write_csv("observe_de421.csv", ["utc", "body", "site", "px", "py", "pz", "pvx", "pvy", "pvz",
                                    "ox", "oy", "oz", "svx", "svy", "svz", "ra", "dec", "delta"], rows)


if __name__ == "__main__":
    time_and_rotation()
    earth()
    twobody()
    observe()
    print("reference vectors written to", DATA)
