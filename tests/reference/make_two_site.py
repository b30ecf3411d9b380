"""Two sites hours apart on one date: invented orbits of the synthetic set observed four times from TV1
and, 5.7 hours after its last position, four times from TV4 (two nights by the feed's rule, an arc of
0.34 days: `<name>_2s`), and four times from TV2 and, 2.3 hours later, four times from TV1 (one night
from two sites, 0.2 days: `<name>_1n2s`), built with make_synthetic.py's machinery (scipy DOP853 on JPL
DE421, ERFA site vectors, light time). Noiseless positions with the truth in the synthetic set's format;
the tests draw their own noise.

Run:  python tests/reference/make_two_site.py   (writes tests/reference/data/two_site/truth.json)
"""
import json
import os

import numpy as np

import make_synthetic as ms
from common import DATA

OUT = os.path.join(DATA, "two_site")
NAMES = ["near_earth", "mainbelt", "hyp_strong"]


def main():
    os.makedirs(OUT, exist_ok=True)
    ms.NIGHT_PLANS["two_site"] = [0, 0]
    orbits = {o[0]: o for o in ms.ORBITS}
    truths = []
    for sites, suffix, nights in [(["TV1", "TV4"], "2s", 2), (["TV2", "TV1"], "1n2s", 1)]:
        ms.SITE_ORDER = sites
        for name in NAMES:
            ms.RNG = np.random.default_rng(5)
            _, truth = ms.build_case(name, orbits[name], "two_site")
            truth["object"] = f"{name}_{suffix}"
            truth["nights"] = nights
            truth.pop("future")
            truths.append(truth)
    with open(os.path.join(OUT, "truth.json"), "w") as fh:
        json.dump(truths, fh, indent=1)


if __name__ == "__main__":
    main()
