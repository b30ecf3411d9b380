"""Reference vectors for the origin sheet, independent of the Rust code:

- galactic.csv: galactic longitude/latitude and heliocentric (U, V, W) of ICRS directions and velocities
  from astropy's Galactic frame, and the galactocentric state of a body at the Sun from astropy's
  Galactocentric frame with the tool's default solar parameters;
- galactic_orbits.csv: orbit envelopes (r_peri, r_apo, z_max, e) from galpy in MWPotential2014 for
  disc-, thick-disc- and halo-like velocities, started from astropy's galactocentric states;
- flights.csv: barycentric 1/a of invented near-parabolic and hyperbolic orbits carried backwards with
  scipy DOP853 through the Sun, planets and Moon of DE421 (jplephem) until 250 au or the start of DE421;
- membership.csv: relative thin disc / thick disc / halo membership computed by hand from the velocity
  ellipsoids and local fractions of the population model file, for chosen velocities and for velocities
  drawn from the thin-disc and halo ellipsoids.
"""
import os
import tomllib

import numpy as np
from scipy.integrate import solve_ivp

import scipy.special

# galpy 1.10.1 imports scipy.special.lpmn (removed from scipy 1.15 on) for a potential not used here;
# a stand-in keeps the pinned scipy of the other scripts.
if not hasattr(scipy.special, "lpmn"):
    def _lpmn_unused(*_args, **_kwargs):
        raise NotImplementedError("lpmn is not used by these reference vectors")
    scipy.special.lpmn = _lpmn_unused

import astropy.units as u
from astropy.coordinates import (CartesianDifferential, CartesianRepresentation, Galactic,
                                 Galactocentric, ICRS)
from galpy.orbit import Orbit
from galpy.potential import MWPotential2014

from common import AU_KM, DATA, GM_SUN, write_csv
from synth import RATIOS, body, kepler_state

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(DATA, "origin")
R0, Z0, VC = 8.0, 0.0208, 220.0
GYR = 3.0


def model():
    with open(os.path.join(ROOT, "src", "fitting", "population", "default.toml"), "rb") as fh:
        return tomllib.load(fh)["interstellar"]


def write(name, header, rows):
    os.makedirs(OUT, exist_ok=True)
    write_csv(os.path.join("origin", name), header, rows)


def galactocentric_frame(solar):
    return Galactocentric(galcen_distance=np.hypot(R0, Z0) * u.kpc, z_sun=Z0 * u.kpc, roll=0 * u.deg,
                          galcen_coord=ICRS(*galactic_origin_icrs()),
                          galcen_v_sun=CartesianDifferential([solar[0], solar[1] + VC, solar[2]] * u.km / u.s))


def galactic_origin_icrs():
    g = Galactic(l=0 * u.deg, b=0 * u.deg).transform_to(ICRS())
    return g.ra, g.dec


def at_sun(v_icrs):
    """A body at the solar system barycentre moving with an ICRS velocity (km/s)."""
    rep = CartesianRepresentation([0.0, 0.0, 0.0] * u.kpc,
                                  differentials=CartesianDifferential(list(v_icrs) * u.km / u.s))
    return ICRS(rep)


def galactic_rows(solar, frame):
    rng = np.random.default_rng(15)
    rows = []
    for k in range(12):
        ra, dec = rng.uniform(0, 360), np.degrees(np.arcsin(rng.uniform(-1, 1)))
        speed = [5.0, 26.0, 60.0, 140.0][k % 4]
        d = np.array([np.cos(np.radians(dec)) * np.cos(np.radians(ra)),
                      np.cos(np.radians(dec)) * np.sin(np.radians(ra)), np.sin(np.radians(dec))])
        v = -speed * d  # arriving from (ra, dec)
        g = ICRS(ra=ra * u.deg, dec=dec * u.deg).transform_to(Galactic())
        gv = at_sun(v).transform_to(Galactic()).velocity.d_xyz.to(u.km / u.s).value
        gc = at_sun(v).transform_to(frame)
        p = gc.cartesian.xyz.to(u.kpc).value
        w = gc.velocity.d_xyz.to(u.km / u.s).value
        rows.append([ra, dec, *v, g.l.deg, g.b.deg, *gv, *p, *w])
    return rows


def envelope(state):
    """galpy orbit of a galactocentric Cartesian state (kpc, km/s) in MWPotential2014 for GYR."""
    x, y, z, vx, vy, vz = state
    r = np.hypot(x, y)
    vr = (x * vx + y * vy) / r
    vt = (x * vy - y * vx) / r
    o = Orbit([r / R0, vr / VC, vt / VC, z / R0, vz / VC, np.arctan2(y, x)], ro=R0, vo=VC)
    t_unit = R0 * 3.0856775814913673e16 / VC / (1e9 * 365.25 * 86400.0)
    ts = np.linspace(0.0, GYR / t_unit, 300001)
    o.integrate(ts, MWPotential2014, method="dop853_c")
    return [o.rperi(use_physical=False) * R0, o.rap(use_physical=False) * R0,
            o.zmax(use_physical=False) * R0, o.e()]


def orbit_rows(solar, frame):
    # Heliocentric (U, V, W), km/s: disc-like, thick-disc-like and halo-like.
    cases = [("thin_a", [-20.0, -10.0, 5.0]), ("thin_b", [35.0, -25.0, -12.0]),
             ("thick_a", [-60.0, -70.0, 45.0]), ("thick_b", [80.0, -40.0, -60.0]),
             ("halo_a", [150.0, -230.0, 90.0]), ("halo_b", [-120.0, -300.0, -110.0])]
    gal_to_icrs = np.array([Galactic(l=l * u.deg, b=b * u.deg).transform_to(ICRS()).cartesian.xyz.value
                            for l, b in ((0, 0), (90, 0), (0, 90))]).T
    rows = []
    for name, uvw in cases:
        v_icrs = gal_to_icrs @ np.array(uvw)
        gc = at_sun(v_icrs).transform_to(frame)
        st = list(gc.cartesian.xyz.to(u.kpc).value) + list(gc.velocity.d_xyz.to(u.km / u.s).value)
        rows.append([name, *uvw, *st, *envelope(st)])
    return rows


# ---- original 1/a through the planets (DE421) ----
DE421_START = 2414864.5
MU_TOT = GM_SUN * (1.0 + sum(1.0 / r for r in RATIOS.values()))


def bary_state(r_h, v_h, jd):
    ps, vs = body(10, jd)
    return np.concatenate([r_h + ps, v_h + vs])


def rhs(t, y):
    r = y[:3]
    ps, _ = body(10, t)
    d = ps - r
    acc = GM_SUN * d / np.linalg.norm(d) ** 3
    for code, ratio in RATIOS.items():
        pb, _ = body(code, t)
        d = pb - r
        acc = acc + GM_SUN / ratio * d / np.linalg.norm(d) ** 3
    return np.concatenate([y[3:], acc])


def fly_back(y0, jd0, r_stop=250.0):
    ev = lambda t, y: np.linalg.norm(y[:3]) - r_stop
    ev.terminal = True
    sol = solve_ivp(rhs, (jd0, DE421_START + 1.0), y0, method="DOP853", rtol=1e-11, atol=1e-14, events=ev)
    y = sol.y[:, -1]
    r = np.linalg.norm(y[:3])
    return 2.0 / r - y[3:] @ y[3:] / MU_TOT, r, sol.t[-1]


def flight_rows():
    # (name, q au, e, i, node, peri deg, days from perihelion, epoch TDB JD)
    cases = [("near_parabolic", 1.6, 1.0003, 40.0, 120.0, 60.0, -60.0, 2459000.5),
             ("slow_hyperbola", 2.2, 1.04, 110.0, 30.0, 200.0, 40.0, 2459500.5),
             ("fast_hyperbola", 0.6, 2.5, 60.0, 250.0, 300.0, -20.0, 2459800.5),
             ("very_fast", 1.2, 5.0, 15.0, 10.0, 90.0, 30.0, 2460100.5)]
    rows = []
    for name, q, e, inc, node, peri, dt, jd in cases:
        r_h, v_h = kepler_state(q, e, inc, node, peri, dt)
        inv_a, r_end, t_end = fly_back(bary_state(r_h, v_h, jd), jd)
        rows.append([name, jd, *r_h, *v_h, inv_a, r_end, t_end])
    return rows


# ---- membership by hand ----
def hand_membership(uvw_lsr, comps):
    ln = []
    for c in comps:
        m, s = np.array(c["mean_km_s"]), np.array(c["sigma_km_s"])
        ln.append(np.log(c["fraction"]) - np.sum(np.log(s)) - 0.5 * np.sum(((uvw_lsr - m) / s) ** 2))
    ln = np.array(ln)
    w = np.exp(ln - ln.max())
    return w / w.sum()


def membership_rows(comps):
    by = {c["name"]: c for c in comps}
    comps = [by["thin disc"], by["thick disc"], by["halo"]]
    rows = [["chosen", *v, *hand_membership(np.array(v), comps)]
            for v in ([5.0, -10.0, 3.0], [-70.0, -60.0, 40.0], [120.0, -250.0, -80.0], [0.0, -100.0, 0.0])]
    rng = np.random.default_rng(1515)
    for label, c in (("thin_draw", comps[0]), ("halo_draw", comps[2])):
        for _ in range(50):
            v = np.array(c["mean_km_s"]) + np.array(c["sigma_km_s"]) * rng.standard_normal(3)
            rows.append([label, *v, *hand_membership(v, comps)])
    return rows


def main():
    inter = model()
    solar = inter["solar_motion_km_s"]
    frame = galactocentric_frame(solar)
    write("galactic.csv", ["ra_deg", "dec_deg", "vx_km_s", "vy_km_s", "vz_km_s", "l_deg", "b_deg",
                           "u_km_s", "v_km_s", "w_km_s", "gc_x_kpc", "gc_y_kpc", "gc_z_kpc",
                           "gc_vx_km_s", "gc_vy_km_s", "gc_vz_km_s"], galactic_rows(solar, frame))
    write("galactic_orbits.csv", ["case", "u_km_s", "v_km_s", "w_km_s", "x_kpc", "y_kpc", "z_kpc",
                                  "vx_km_s", "vy_km_s", "vz_km_s", "r_peri_kpc", "r_apo_kpc",
                                  "z_max_kpc", "ecc"], orbit_rows(solar, frame))
    write("membership.csv", ["case", "u_lsr_km_s", "v_lsr_km_s", "w_lsr_km_s", "thin_disc",
                             "thick_disc", "halo"], membership_rows(inter["component"]))
    write("flights.csv", ["case", "epoch_tdb", "x_au", "y_au", "z_au", "vx_au_d", "vy_au_d", "vz_au_d",
                          "inv_a_bary_end", "r_end_au", "t_end_tdb"], flight_rows())


if __name__ == "__main__":
    main()
