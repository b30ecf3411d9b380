"""Synthetic observations of invented orbits, independent of the Rust code: N-body integration with
scipy DOP853 (Sun, planets, Moon from DE421 via jplephem), sites through ERFA, light time iterated on the
integrated trajectory. Used by make_synthetic.py (test set) and make_demo.py (the demo night)."""
import os
import tomllib

import erfa
import numpy as np
from scipy.integrate import solve_ivp

from common import AU_KM, C_AU_D, GM_SUN, body_bary, de421, site_gcrs_au, utc_scales

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
EPS = np.radians(84381.448 / 3600.0)
# Sun/body mass ratios (IAU 2009 system; the values the tool uses, from memory).
RATIOS = {1: 6023597.4, 2: 408523.72, 399: 332946.05, 4: 3098703.6, 5: 1047.348644, 6: 3497.9018,
          7: 22902.98, 8: 19412.26, 301: 27068700.4}
KERNEL = de421()


def demo_sites():
    with open(os.path.join(ROOT, "src", "feed", "demo_sites.toml"), "rb") as fh:
        t = tomllib.load(fh)
    return {s["code"]: (s["longitude_deg"], s["latitude_deg"], s["altitude_m"]) for s in t["site"]}


def body(code, jd):
    if code == 301:
        pe, ve = body_bary(KERNEL, 399, jd)
        pm, vm = KERNEL[3, 301].compute_and_differentiate(jd)
        pb, vb = KERNEL[3, 399].compute_and_differentiate(jd)
        return pe + (pm - pb) / AU_KM, ve + (vm - vb) / AU_KM
    if code in (1, 2, 4, 5, 6, 7, 8):
        p, v = KERNEL[0, code].compute_and_differentiate(jd)
        return p / AU_KM, v / AU_KM
    return body_bary(KERNEL, code, jd)


def rhs(t, y):
    r = y[:3]
    acc = np.zeros(3)
    ps, _ = body(10, t)
    d = ps - r
    acc += GM_SUN * d / np.linalg.norm(d) ** 3
    for code, ratio in RATIOS.items():
        pb, _ = body(code, t)
        d = pb - r
        acc += GM_SUN / ratio * d / np.linalg.norm(d) ** 3
    return np.concatenate([y[3:], acc])


def rot(a, axis):
    c, s = np.cos(a), np.sin(a)
    if axis == "z":
        return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])
    return np.array([[1, 0, 0], [0, c, -s], [0, s, c]])


def kepler_state(q, e, inc, node, peri, dt):
    """Heliocentric equatorial state dt days after perihelion (two-body, for initial conditions only)."""
    m = rot(np.radians(node), "z") @ rot(np.radians(inc), "x") @ rot(np.radians(peri), "z")
    r0 = q * m[:, 0]
    v0 = np.sqrt(GM_SUN * (1 + e) / q) * m[:, 1]
    y = solve_ivp(lambda t, y: np.concatenate([y[3:], -GM_SUN * y[:3] / np.linalg.norm(y[:3]) ** 3]),
                  (0, dt), np.concatenate([r0, v0]), method="DOP853", rtol=1e-13, atol=1e-16).y[:, -1]
    ecl_to_eq = rot(EPS, "x")
    return ecl_to_eq @ y[:3], ecl_to_eq @ y[3:]


def elements(r, v, mu):
    """(q, e, i) in the J2000 ecliptic from an equatorial state."""
    eq_to_ecl = rot(-EPS, "x")
    r, v = eq_to_ecl @ r, eq_to_ecl @ v
    h = np.cross(r, v)
    ev = ((v @ v - mu / np.linalg.norm(r)) * r - (r @ v) * v) / mu
    e = np.linalg.norm(ev)
    q = (h @ h / mu) / (1 + e)
    inc = np.degrees(np.arctan2(np.hypot(h[0], h[1]), h[2]))
    return q, e, inc


class Trajectory:
    """An invented object: heliocentric osculating elements at epoch t0 (TDB JD), integrated in the
    barycentric frame over [t0 - back, t0 + fwd]."""

    def __init__(self, q, e, inc, node, peri, t_from_peri, t0, back, fwd):
        rh, vh = kepler_state(q, e, inc, node, peri, t_from_peri)
        ps, vs = body(10, t0)
        y0 = np.concatenate([rh + ps, vh + vs])
        self.t0 = t0
        self.fwd = solve_ivp(rhs, (t0, t0 + fwd), y0, method="DOP853", rtol=1e-12, atol=1e-15,
                             dense_output=True)
        self.back = solve_ivp(rhs, (t0, t0 - back), y0, method="DOP853", rtol=1e-12, atol=1e-15,
                              dense_output=True)

    def bary(self, t):
        return (self.fwd if t >= self.t0 else self.back).sol(t)

    def helio(self, t):
        y = self.bary(t)
        ps, vs = body(10, t)
        return y[:3] - ps, y[3:] - vs

    def observe(self, utc, site):
        tt, tdb, ut1 = utc_scales(*utc)
        t = tdb[0] + tdb[1]
        pe, _ = body_bary(KERNEL, 399, t)
        obs = pe + site_gcrs_au(*site, tt, ut1)
        tau = 0.0
        for _ in range(6):
            rho = self.bary(t - tau)[:3] - obs
            tau = np.linalg.norm(rho) / C_AU_D
        ra = np.degrees(np.arctan2(rho[1], rho[0])) % 360.0
        dec = np.degrees(np.arcsin(rho[2] / np.linalg.norm(rho)))
        ps, _ = body(10, t)
        sun_dir = ps - obs
        elong = np.degrees(np.arccos(rho @ sun_dir / np.linalg.norm(rho) / np.linalg.norm(sun_dir)))
        r_helio = np.linalg.norm(self.bary(t - tau)[:3] - body(10, t - tau)[0])
        return ra, dec, np.linalg.norm(rho), elong, r_helio, t


def utc_from_jd(jd):
    y, m, d, f = erfa.jd2cal(jd, 0.0)
    s = f * 86400.0
    h = int(s // 3600)
    mi = int((s - 3600 * h) // 60)
    sec = round(s - 3600 * h - 60 * mi, 3)
    if sec >= 60.0:
        sec = 59.999
    return (int(y), int(m), int(d), h, mi, sec)


def iso(u):
    y, m, d, h, mi, s = u
    return f"{y:04d}-{m:02d}-{d:02d}T{h:02d}:{mi:02d}:{s:06.3f}Z"


def psv(rows):
    out = ["# version=2022", "# interloper synthetic feed (invented objects, invented sites)",
           "trkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|astCat|mag|band"]
    for r in rows:
        out.append(f"{r['id']}|CCD|{r['stn']}|{r['time']}|{r['ra']:.7f}|{r['dec']:+.7f}|{r['sigma']:.3f}|"
                   f"{r['sigma']:.3f}|Gaia3|{r['mag']:.2f}|G")
    return "\n".join(out) + "\n"
