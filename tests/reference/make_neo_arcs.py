"""Near-Earth three-night arcs for the global-search tests: invented orbits (q 0.6-1.3 au, e 0.1-0.75,
i 0-40 deg, random angles and perihelion times; 3-5 positions a night, four night spacings) observed
exactly as make_synthetic.py observes its set (scipy DOP853 on JPL DE421, ERFA sites, light time),
noiseless positions only; the tests add noise. Two arcs whose geometry trapped an earlier search in a
wrong minimum are listed explicitly (they are regression cases).

Run:  python tests/reference/make_neo_arcs.py   (writes tests/reference/data/neo_arcs/truth.json)
"""
import json
import os

import numpy as np

import make_synthetic
from common import DATA
from make_synthetic import NIGHT_PLANS, PER_NIGHT, build_case

OUT = os.path.join(DATA, "neo_arcs")
COUNT = 400
# Night plans (days after the first night).
PLANS = {"p013": [0, 1, 3], "p025": [0, 2, 5], "p012": [0, 1, 2], "p048": [0, 4, 8]}
# name, plan, positions a night, (q, e, i, node, peri, days from perihelion); the node is turned away
# from the Sun as make_synthetic.py does for its own set.
TRAPPED = [
    ("neo291", "p048", 3, (0.998402374710976, 0.5823862499178155, 24.683641999131577, 221.84334521918703,
                           75.78227246871229, -55.33321990477384)),
    ("neo273", "p013", 3, (0.9132768409083709, 0.6070316066687255, 6.894995208872179, 155.28278912639541,
                           267.056096030804, 22.895393978978177)),
]


def case(name, plan, per_night, elements):
    NIGHT_PLANS[plan] = PLANS[plan]
    PER_NIGHT["n"] = per_night
    _, truth = build_case(name, (name,) + tuple(elements), plan)
    PER_NIGHT.clear()
    truth.pop("future")
    truth["elements_at_perihelion"] = list(elements)
    return truth


def visible(truth):
    return min(c["elong"] for c in truth["clean"]) >= 60.0 and min(c["delta"] for c in truth["clean"]) >= 0.02


def main():
    os.makedirs(OUT, exist_ok=True)
    truths = [case(*t) for t in TRAPPED]
    # The random set keeps its drawn node (turning it costs an integration per try); arcs too close
    # to the Sun or the Earth are dropped instead.
    turn = make_synthetic.choose_node
    make_synthetic.choose_node = lambda name, q, e, inc, node, peri, tfp, t0: node
    rng = np.random.default_rng(20261202)
    for k in range(COUNT):
        elements = (rng.uniform(0.6, 1.3), rng.uniform(0.1, 0.75), rng.uniform(0.0, 40.0),
                    rng.uniform(0.0, 360.0), rng.uniform(0.0, 360.0), rng.uniform(-150.0, 150.0))
        plan = list(PLANS)[int(rng.integers(len(PLANS)))]
        truth = case(f"neo{k:03d}r", plan, int(rng.integers(3, 6)), elements)
        if visible(truth):
            truths.append(truth)
    make_synthetic.choose_node = turn
    with open(os.path.join(OUT, "truth.json"), "w") as fh:
        json.dump(truths, fh, indent=1)


if __name__ == "__main__":
    main()
