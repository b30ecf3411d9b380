"""Distant bodies for the fit: invented orbits beyond Jupiter observed on three nights from the demo
sites (a noisy PSV file for the command line, and the noiseless positions with the truth in the synthetic
set's format, from which the tests draw their own noise), built with make_synthetic.py's machinery (scipy
DOP853 on JPL DE421, ERFA site vectors, light time).

Run:  python tests/reference/make_distant.py   (writes tests/reference/data/distant/)
"""
import json
import os

import numpy as np

import make_synthetic as ms
from common import DATA
from synth import psv

OUT = os.path.join(DATA, "distant")
# name, q, e, i, node, peri, days from perihelion at t0
ORBITS = [
    ("centaur", 8.0, 0.30, 20.0, 200.0, 60.0, 300.0),
]


def main():
    os.makedirs(OUT, exist_ok=True)
    truths = []
    for orbit in ORBITS:
        ms.RNG = np.random.default_rng(11)
        rows, truth = ms.build_case(orbit[0], orbit, 3)
        fname = f"{truth['object']}.psv"
        with open(os.path.join(OUT, fname), "w") as fh:
            fh.write(psv(rows))
        truth["file"] = fname
        truths.append(truth)
    with open(os.path.join(OUT, "truth.json"), "w") as fh:
        json.dump(truths, fh, indent=1)


if __name__ == "__main__":
    main()
