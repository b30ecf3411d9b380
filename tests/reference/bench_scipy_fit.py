"""A straightforward Python two-body least-squares fit of the benchmark tracklet (scipy least_squares,
method 'lm'), for a speed comparison with the tool's differential correction on the same data and the
same starting state. Observer positions come from DE421 + ERFA, propagation from a plain
universal-variable Kepler solver in numpy, light time iterated.

Run through benches/compare_python.sh, which passes the starting state and prints the ratio.
"""
import json
import sys
import time

import numpy as np
from scipy.optimize import least_squares

from common import C_AU_D, GM_SUN, body_bary, de421, site_gcrs_au, utc_scales
from synth import demo_sites

MU = GM_SUN


def stumpff(z):
    if z > 1e-6:
        s = np.sqrt(z)
        return (1 - np.cos(s)) / z, (s - np.sin(s)) / s ** 3
    if z < -1e-6:
        s = np.sqrt(-z)
        return (np.cosh(s) - 1) / -z, (np.sinh(s) - s) / s ** 3
    return 0.5 - z / 24, 1 / 6 - z / 120


def kepler(r0, v0, dt):
    rm = np.linalg.norm(r0)
    vr = r0 @ v0 / rm
    alpha = 2 / rm - v0 @ v0 / MU
    x = np.sqrt(MU) * abs(alpha) * dt if alpha > 0 else np.sqrt(MU) * dt / rm
    for _ in range(50):
        z = alpha * x * x
        c, s = stumpff(z)
        f = rm * vr / np.sqrt(MU) * x * x * c + (1 - alpha * rm) * x ** 3 * s + rm * x - np.sqrt(MU) * dt
        fp = rm * vr / np.sqrt(MU) * x * (1 - z * s) + (1 - alpha * rm) * x * x * c + rm
        dx = f / fp
        x -= dx
        if abs(dx) < 1e-13:
            break
    z = alpha * x * x
    c, s = stumpff(z)
    f = 1 - x * x / rm * c
    g = dt - x ** 3 / np.sqrt(MU) * s
    return f * r0 + g * v0


def main():
    start = np.array(json.loads(sys.argv[1]))
    epoch = float(sys.argv[2])
    path = sys.argv[3]
    sites = demo_sites()
    k = de421()
    lines = [l for l in open(path) if not l.startswith("#")][1:]
    obs = []
    for l in lines:
        f = l.strip().split("|")
        stn, t, ra, dec = f[2], f[3], float(f[4]), float(f[5])
        y, mo, d = int(t[0:4]), int(t[5:7]), int(t[8:10])
        h, mi, s = int(t[11:13]), int(t[14:16]), float(t[17:23])
        tt, tdb, ut1 = utc_scales(y, mo, d, h, mi, s)
        jd = tdb[0] + tdb[1]
        pe, _ = body_bary(k, 399, jd)
        ps, _ = body_bary(k, 10, jd)
        R = pe + site_gcrs_au(*sites[stn], tt, ut1) - ps
        obs.append((jd, R, np.radians(ra), np.radians(dec), 0.2 / 206264.806))

    def residuals(x):
        out = []
        for jd, R, ra, dec, sig in obs:
            tau = 0.0
            for _ in range(3):
                rho = kepler(x[:3], x[3:], jd - tau - epoch) - R
                tau = np.linalg.norm(rho) / C_AU_D
            cra = np.arctan2(rho[1], rho[0])
            cdec = np.arcsin(rho[2] / np.linalg.norm(rho))
            dra = (ra - cra + np.pi) % (2 * np.pi) - np.pi
            out += [dra * np.cos(dec) / sig, (dec - cdec) / sig]
        return np.array(out)

    runs = 20
    t0 = time.perf_counter()
    for _ in range(runs):
        sol = least_squares(residuals, start, method="lm", xtol=1e-12, ftol=1e-12)
    per = (time.perf_counter() - t0) / runs
    print(json.dumps({"seconds_per_fit": per, "chi2": float(sol.fun @ sol.fun), "nfev": int(sol.nfev)}))


if __name__ == "__main__":
    main()
