"""Synthetic test set for the fit: invented orbits observed at 1, 2, 3 and 10 nights from the demo sites,
noisy PSV files plus noiseless positions and truth (osculating elements at the fit epoch, future positions).

Run:  python tests/reference/make_synthetic.py   (writes tests/reference/data/synthetic/)
"""
import json
import os

import numpy as np

from common import DATA, GM_SUN
from synth import Trajectory, demo_sites, elements, iso, psv, utc_from_jd

SIGMA = 0.2  # arcsec, per coordinate
RNG = np.random.default_rng(7)
OUT = os.path.join(DATA, "synthetic")
MU_BARY = GM_SUN * 1.0013414

# name, q, e, i, node, peri, days from perihelion at t0
ORBITS = [
    ("hyp_strong", 1.10, 2.4, 63.0, 140.0, 250.0, -18.0),
    ("hyp_weak", 1.90, 1.08, 38.0, 55.0, 120.0, -25.0),
    ("mainbelt", 2.30, 0.15, 8.0, 80.0, 30.0, 150.0),
    ("near_earth", 0.95, 0.38, 14.0, 230.0, 290.0, 40.0),
    ("comet_like", 1.60, 0.70, 95.0, 300.0, 10.0, -40.0),
    ("near_parabolic_bound", 2.40, 0.9985, 121.0, 20.0, 200.0, -60.0),
]
NIGHT_PLANS = {1: [0], 2: [0, 1], 3: [0, 1, 3], 10: [0, 1, 2, 4, 6, 8, 11, 14, 17, 21]}
SITES = demo_sites()
SITE_ORDER = ["TV1", "TV3", "TV2", "TV4"]
T_START = 2461370.5  # 2026-11-26 0h TDB
PER_NIGHT = {}


def night_times(day, code, n=4, spacing_min=25.0):
    n = PER_NIGHT.get("n", n)
    lon = SITES[code][0]
    local_midnight_utc = (24.0 - lon / 15.0) % 24.0
    start = day + (local_midnight_utc - 1.0) / 24.0
    return [start + k * spacing_min / 1440.0 for k in range(n)]


def choose_node(name, q, e, inc, node, peri, tfp, t0):
    """Turn the node until the object is well away from the Sun as seen from Earth at t0."""
    for k in range(24):
        nd = (node + 15.0 * k) % 360.0
        tr = Trajectory(q, e, inc, nd, peri, tfp, t0, 0.5, 0.5)
        ra, dec, delta, elong, r, _ = tr.observe(utc_from_jd(t0), SITES["TV1"])
        if elong > 100.0 and delta > 0.15:
            return nd
    return node


def build_case(name, orbit, nights, plan_offset=0):
    _, q, e, inc, node, peri, tfp = orbit
    plan = NIGHT_PLANS[nights]
    times = []
    for j, d in enumerate(plan):
        code = SITE_ORDER[(j + plan_offset) % len(SITE_ORDER)]
        for t in night_times(T_START + d, code):
            times.append((t, code))
    t_first, t_last = times[0][0], times[-1][0]
    t0 = t_first + (t_last - t_first) / 2.0
    node = choose_node(name, q, e, inc, node, peri, tfp, t0)
    tr = Trajectory(q, e, inc, node, peri, tfp, t0, t0 - t_first + 2.0, t_last - t0 + 12.0)
    rows, clean = [], []
    for t, code in times:
        utc = utc_from_jd(t - 69.184 / 86400.0)  # TDB ≈ TT = UTC + 69.184 s in 2026
        ra, dec, delta, elong, r, tdb = tr.observe(utc, SITES[code])
        clean.append({"time": iso(utc), "stn": code, "ra": ra, "dec": dec, "delta": delta, "elong": elong})
        cosd = np.cos(np.radians(dec))
        nra = ra + RNG.normal(0, SIGMA) / 3600.0 / cosd
        ndec = dec + RNG.normal(0, SIGMA) / 3600.0
        rows.append({"id": f"{name}_{nights}n", "stn": code, "time": iso(utc), "ra": nra % 360.0, "dec": ndec,
                     "sigma": SIGMA, "mag": 20.0})
    # truth at the fit epoch: the mid-arc TDB of the positions as the tool reads them
    tdbs = [tr.observe(utc_from_jd(t - 69.184 / 86400.0), SITES[c])[5] for t, c in (times[0], times[-1])]
    epoch = tdbs[0] + (tdbs[1] - tdbs[0]) / 2.0
    rh, vh = tr.helio(epoch)
    qh, eh, ih = elements(rh, vh, GM_SUN)
    yb = tr.bary(epoch)
    _, eb, _ = elements(yb[:3], yb[3:], MU_BARY)
    last_code = times[-1][1]
    future = []
    for dd in range(1, 11):
        t = t_last + dd
        utc = utc_from_jd(t - 69.184 / 86400.0)
        ra, dec, delta, elong, r, _ = tr.observe(utc, SITES[last_code])
        future.append({"time": iso(utc), "stn": last_code, "ra": ra, "dec": dec})
    truth = {"object": f"{name}_{nights}n", "orbit": name, "nights": nights, "epoch_tdb": epoch,
             "q": qh, "e": eh, "i": ih, "e_bary": eb, "sigma_arcsec": SIGMA,
             "state_helio": list(rh) + list(vh), "clean": clean, "future": future}
    return rows, truth


def main():
    os.makedirs(OUT, exist_ok=True)
    truths = []
    for orbit in ORBITS:
        for nights in (1, 2, 3, 10):
            rows, truth = build_case(orbit[0], orbit, nights)
            fname = f"{truth['object']}.psv"
            with open(os.path.join(OUT, fname), "w") as fh:
                fh.write(psv(rows))
            truth["file"] = fname
            truths.append(truth)
    # An outlier: one 3-night main-belt position moved by 4 arcsec.
    rows, truth = build_case("mainbelt", ORBITS[2], 3, plan_offset=1)
    for r in rows:
        r["id"] = "outlier_3n"
    rows[5]["dec"] += 4.0 / 3600.0
    with open(os.path.join(OUT, "outlier_3n.psv"), "w") as fh:
        fh.write(psv(rows))
    truth.update({"object": "outlier_3n", "file": "outlier_3n.psv", "outlier_index": 5})
    truths.append(truth)
    # A false linkage: two nights of one object and a third night of another under one id.
    rows_a, _ = build_case("mainbelt", ORBITS[2], 3)
    rows_b, _ = build_case("near_earth", ORBITS[3], 3)
    linked = rows_a[:8] + rows_b[8:]
    for r in linked:
        r["id"] = "false_link_3n"
    with open(os.path.join(OUT, "false_link_3n.psv"), "w") as fh:
        fh.write(psv(linked))
    truths.append({"object": "false_link_3n", "file": "false_link_3n.psv", "orbit": "false_linkage", "nights": 3})
    # The benchmark case: three nights of five positions of a main-belt orbit.
    PER_NIGHT["n"] = 5
    rows, truth = build_case("mainbelt", ORBITS[2], 3, plan_offset=2)
    for r in rows:
        r["id"] = "bench_3n15"
    with open(os.path.join(OUT, "bench_3n15.psv"), "w") as fh:
        fh.write(psv(rows))
    truth.update({"object": "bench_3n15", "file": "bench_3n15.psv"})
    truths.append(truth)
    PER_NIGHT.clear()
    with open(os.path.join(OUT, "truth.json"), "w") as fh:
        json.dump(truths, fh, indent=1)
    consecutive_nights()


def consecutive_nights():
    """The strongly hyperbolic orbit on three consecutive dates (from three sites: 1.6 days, the last two
    nights 6 h apart), kept apart from the main set (whose tests take every arc): its valley along the
    distance is lopsided within a few sigma."""
    out = os.path.join(DATA, "consecutive")
    os.makedirs(out, exist_ok=True)
    NIGHT_PLANS["3c"] = [0, 1, 2]
    rows, truth = build_case("hyp_strong", ORBITS[0], "3c")
    for r in rows:
        r["id"] = "hyp_strong_3c"
    with open(os.path.join(out, "hyp_strong_3c.psv"), "w") as fh:
        fh.write(psv(rows))
    truth.update({"object": "hyp_strong_3c", "file": "hyp_strong_3c.psv", "nights": 3})
    with open(os.path.join(out, "truth.json"), "w") as fh:
        json.dump([truth], fh, indent=1)


if __name__ == "__main__":
    main()
