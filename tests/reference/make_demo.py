"""The demo night in sample_feeds/: an invented survey network (the demo sites) reporting invented
objects over three nights, generated from orbits of our own with the same independent N-body machinery as
the test set. Files are numbered in the order they would arrive; `interloper demo` replays them.

Run:  python tests/reference/make_demo.py   (writes sample_feeds/demo_night/)
"""
import json
import os

import numpy as np

from synth import ROOT, Trajectory, demo_sites, iso, psv, utc_from_jd

OUT = os.environ.get("DEMO_OUT", os.path.join(ROOT, "sample_feeds", "demo_night"))
RNG = np.random.default_rng(2027)
SITES = demo_sites()
T0 = 2461460.5  # 2027-02-24 0h TDB
# id, q, e, i, node, peri, days from perihelion, nights, per night, sigma, mag, first site (index
# into SITE_ORDER, turning by one each night)
OBJECTS = [
    ("qk0f3ra", 2.10, 0.12, 5.0, 40.0, 60.0, 300.0, [0, 1, 2], 4, 0.15, 19.8, 2),
    ("qk1b7zd", 2.55, 0.08, 11.0, 160.0, 210.0, -200.0, [0, 1, 2], 4, 0.20, 20.4, 0),
    ("qk2m4wc", 2.90, 0.21, 3.0, 300.0, 15.0, 120.0, [0, 1, 2], 4, 0.25, 21.0, 1),
    ("qk3x9ha", 1.95, 0.17, 17.0, 95.0, 330.0, 60.0, [1, 2], 5, 0.15, 19.1, 2),
    ("qk4d2pe", 2.35, 0.05, 7.0, 220.0, 100.0, -50.0, [0, 1, 2], 3, 0.30, 21.3, 0),
    ("qk7c5mg", 0.88, 0.41, 9.0, 15.0, 250.0, 30.0, [0, 1, 2], 4, 0.20, 19.5, 1),
    ("qk8w3bs", 1.02, 0.55, 24.0, 190.0, 80.0, -20.0, [0, 2], 4, 0.25, 20.2, 2),
    ("qk5t8yn", 1.45, 0.93, 71.0, 120.0, 300.0, -35.0, [0, 1, 2], 4, 0.30, 17.9, 1),
    ("qka2e7f", 0.74, 3.1, 48.0, 250.0, 170.0, -14.0, [0, 1, 2], 5, 0.20, 18.6, 2),
    ("qk6j1uv", 0.98, 1.6, 130.0, 70.0, 20.0, 3.0, [2], 5, 0.30, 18.2, 0),
]
SITE_ORDER = ["TV1", "TV3", "TV2", "TV4"]


def night_times(day, code, n):
    lon = SITES[code][0]
    midnight = (24.0 - lon / 15.0) % 24.0
    start = day + (midnight - 1.2) / 24.0
    return [start + k * 22.0 / 1440.0 for k in range(n)]


def visible_geometry(q, e, inc, node, peri, tfp, t):
    """Turn the node and shift the time from perihelion until the object stands far from the Sun (in
    the night sky at local midnight); the best of the tries is kept."""
    best = (-1.0, node, tfp)
    for shift in (0.0, -15.0, -30.0, -60.0, 20.0, 45.0):
        for k in range(12):
            nd = (node + 30.0 * k) % 360.0
            tr = Trajectory(q, e, inc, nd, peri, tfp + shift, t, 0.3, 0.3)
            ra, dec, delta, elong, r, _ = tr.observe(utc_from_jd(t), SITES["TV1"])
            if delta > 0.12 and elong > best[0]:
                best = (elong, nd, tfp + shift)
            if best[0] > 120.0:
                return best[1], best[2]
    return best[1], best[2]


def observe(obj):
    oid, q, e, inc, node, peri, tfp, nights, per, sigma, mag, site0 = obj
    t_mid = T0 + np.mean(nights)
    node, tfp = visible_geometry(q, e, inc, node, peri, tfp, t_mid)
    tr = Trajectory(q, e, inc, node, peri, tfp, t_mid, 4.0, 4.0)
    out = {}
    for j, d in enumerate(nights):
        code = SITE_ORDER[(j + site0) % len(SITE_ORDER)]
        rows = []
        for t in night_times(T0 + d, code, per):
            utc = utc_from_jd(t - 69.184 / 86400.0)
            ra, dec, delta, elong, r, _ = tr.observe(utc, SITES[code])
            cosd = np.cos(np.radians(dec))
            rows.append({"id": oid, "stn": code, "time": iso(utc),
                         "ra": (ra + RNG.normal(0, sigma) / 3600.0 / cosd) % 360.0,
                         "dec": dec + RNG.normal(0, sigma) / 3600.0, "sigma": sigma,
                         "mag": mag + RNG.normal(0, 0.1)})
        out[d] = rows
    return out


def main():
    os.makedirs(OUT, exist_ok=True)
    for f in os.listdir(OUT):
        os.remove(os.path.join(OUT, f))
    files = []  # (arrival day, order key, name, text)
    truth = {}
    for obj in OBJECTS:
        per_night = observe(obj)
        truth[obj[0]] = {"q": obj[1], "e": obj[2], "i": obj[3]}
        for d, rows in per_night.items():
            if obj[0] == "qk1b7zd" and d == 1:
                rows[2]["dec"] += 3.5 / 3600.0  # one wild point
            files.append((d, rows[-1]["time"], f"{obj[0]}_n{d + 1}", psv(rows)))
    # A false linkage: two nights of one main-belt object and a third of another under one id.
    a = observe(("qk9h6tx", 2.40, 0.10, 6.0, 10.0, 40.0, 200.0, [0, 1], 4, 0.2, 20.5, 0))
    b = observe(("qk9h6tx", 2.20, 0.18, 14.0, 280.0, 150.0, -90.0, [2], 4, 0.2, 20.7, 0))
    for d, rows in {**a, **b}.items():
        files.append((d, rows[-1]["time"], f"qk9h6tx_n{d + 1}", psv(rows)))
    files.sort(key=lambda f: (f[0], f[1]))
    for k, (d, _, name, text) in enumerate(files):
        with open(os.path.join(OUT, f"{k + 1:03d}_{name}.psv"), "w") as fh:
            fh.write(text)
    n = len(files)
    with open(os.path.join(OUT, f"{n + 1:03d}_truncated_upload.psv"), "w") as fh:
        fh.write("# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec\nqkx8r1d|CCD|TV1|2027-02-26T0")
    with open(os.path.join(OUT, f"{n + 2:03d}_bad_dates.psv"), "w") as fh:
        fh.write("# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec\n"
                 "qkx9a5n|CCD|TV2|2027-02-30T03:00:00Z|120.5|+10.0|0.2|0.2\n"
                 "qkx9a5n|CCD|TV2|2027-02-26T03:20:00Z|361.0|+10.0|0.2|0.2\n")
    with open(os.path.join(os.path.dirname(OUT), "demo_night_truth.json"), "w") as fh:
        json.dump(truth, fh, indent=1)


if __name__ == "__main__":
    main()
