"""A synthetic sky drawn from interloper's population model (src/fitting/population/default.toml).

Every population of the file is drawn with importance weights (each draw stands for an expected number of
real objects), observed by an invented survey network on nights in 2026-2027, and kept when the survey
would detect it. From the detections, class-balanced one-, two- and three-night test sets are written as
ADES PSV with truth, together with the detected expected numbers per population, the interstellar density
that makes the model's prior odds among detections 1:1, and a cross-validated classifier AUC on what one
night gives (the information limit for one-night tracklets).

Independent of the Rust code: two-body motion (own universal-variable solver), DE421 through jplephem,
sites and time scales through ERFA.

Run (inside tests/reference/):  python make_population_sky.py   (writes data/population_sky/)
"""
import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import json  # noqa: E402
import time  # noqa: E402
import tomllib  # noqa: E402

import erfa  # noqa: E402
import numpy as np  # noqa: E402

from common import AU_KM, C_AU_D, DATA, GM_SUN, body_bary, site_gcrs_au, utc_scales  # noqa: E402
from synth import EPS, KERNEL, ROOT, iso, kepler_state, rot, utc_from_jd  # noqa: E402

OUT = os.path.join(DATA, "population_sky")
POP_FILE = os.path.join(ROOT, "src", "fitting", "population", "default.toml")

MU = GM_SUN  # heliocentric, au^3/d^2
MU_B = GM_SUN * 1.0013414  # Sun plus planets, for barycentric conics
KMS = AU_KM / 86400.0  # au/d -> km/s
ECL2EQ = rot(EPS, "x")
EQ2ECL = ECL2EQ.T
OMEGA_E = 2.0 * np.pi * 1.00273781191135448  # Earth rotation, rad/day
P_SID = 2.0 * np.pi / OMEGA_E
TT_MINUS_UTC = 69.184 / 86400.0
DEG = np.pi / 180.0

# The survey: limiting V, altitude, twilight, elongation and trailing limits, noise.
LIMIT_V = 21.5
MIN_ALT = 20.0
SUN_ALT = -15.0
MIN_ELONG = 60.0
MAX_RATE = 10.0  # deg/day; faster objects trail beyond detection
MAG_NOISE = 0.2
REPORT_BAND = "G"
SET_SIZE = 300  # per class and arc type
EXTRA_ONE_NIGHT = 1200  # per class, for a steadier information-limit estimate (not written)

# Invented sites (codes, names and places are ours; none is a real observatory).
SITES = [
    ("Q71", "Greyfell Mesa survey camera", 251.85, 33.80, 2350.0),
    ("Q72", "Tamarind Ridge wide-field station", 292.35, -26.40, 3050.0),
    ("Q73", "Korrin Plateau partner telescope", 74.10, 38.90, 3400.0),
]
# First nights of the survey windows (UTC dates); later nights follow day by day.
DATES = [(2026, 2, 18), (2026, 5, 14), (2026, 8, 9), (2026, 10, 30), (2027, 1, 22), (2027, 4, 17),
         (2027, 7, 13), (2027, 12, 3)]
N_DAYS = 8
# Draw budget per population kind (interstellar: position-velocity proposals).
N_BOUND = {"near-Earth": 3_000_000, "Jupiter-family comets": 1_000_000}
N_BOUND_DEFAULT = 600_000
N_PERIHELION = 1_000_000
N_INTERSTELLAR = 8_000_000
CHUNK = 100_000
LPC_WINDOW_YR = 200.0
LPC_P_UNIFORM = 0.3
LPC_CAUCHY_YR = 3.0
H_MAX = 32.0
H_MARGIN = 0.1  # mag, slack on the brightness bound used to truncate H draws

with open(POP_FILE, "rb") as _fh:
    MODEL = tomllib.load(_fh)
G_SLOPE = MODEL["slope_g"]
BAND_OFFSET = MODEL["band_to_v"][REPORT_BAND]  # V = m + offset


# ----------------------------------------------------------------------------------------- small helpers
def norm(x):
    return np.sqrt(np.einsum("...i,...i->...", x, x))


def dot(a, b):
    return np.einsum("...i,...i->...", a, b)


def bary_vec(code, tdb):
    """Barycentric position (au) and velocity (au/d) of DE421 Sun (10) or Earth (399), vectorised."""
    tdb = np.atleast_1d(np.asarray(tdb, float))
    chain = {10: [(0, 10)], 399: [(0, 3), (3, 399)]}[code]
    p = np.zeros((3, tdb.size))
    v = np.zeros((3, tdb.size))
    for a, b in chain:
        pp, vv = KERNEL[a, b].compute_and_differentiate(tdb)
        p += pp.reshape(3, -1)
        v += vv.reshape(3, -1)
    return p.T / AU_KM, v.T / AU_KM


def draw_dist(spec, n, rng):
    kind = spec["kind"]
    u = rng.random(n)
    if kind == "uniform":
        return spec["min"] + u * (spec["max"] - spec["min"])
    if kind == "rayleigh":
        s, m = spec["sigma"], spec["max"]
        return s * np.sqrt(-2.0 * np.log1p(-u * -np.expm1(-m * m / (2.0 * s * s))))
    if kind == "histogram":
        edges = np.asarray(spec["edges"], float)
        w = np.asarray(spec["weights"], float)
        cdf = np.cumsum(w) / w.sum()
        lo = np.concatenate([[0.0], cdf[:-1]])
        k = np.minimum(np.searchsorted(cdf, u, side="right"), len(w) - 1)
        f = np.clip((u - lo[k]) / np.maximum(cdf[k] - lo[k], 1e-300), 0.0, 1.0)
        return edges[k] + f * (edges[k + 1] - edges[k])
    if kind == "isotropic":
        return np.degrees(np.arccos(1.0 - 2.0 * u))
    raise ValueError(f"unknown distribution kind {kind}")


class SizeLaw:
    """Cumulative number brighter than H: N(<H) = n_ref 10^(slope (H - h_ref))."""

    def __init__(self, n_ref, h_ref, slope):
        self.n_ref, self.h_ref, self.slope = n_ref, h_ref, slope

    def cum(self, h):
        return self.n_ref * 10.0 ** (self.slope * (h - self.h_ref))

    def inv(self, n):
        return self.h_ref + np.log10(n / self.n_ref) / self.slope


# ------------------------------------------------------------------------------------- two-body motion
def stumpff(z):
    c = np.empty_like(z)
    s = np.empty_like(z)
    sm = np.abs(z) < 0.1
    zs = z[sm]
    c[sm] = 1 / 2 - zs / 24 + zs ** 2 / 720 - zs ** 3 / 40320 + zs ** 4 / 3628800 - zs ** 5 / 479001600
    s[sm] = (1 / 6 - zs / 120 + zs ** 2 / 5040 - zs ** 3 / 362880 + zs ** 4 / 39916800
             - zs ** 5 / 6227020800)
    p = z >= 0.1
    w = np.sqrt(z[p])
    c[p] = (1.0 - np.cos(w)) / z[p]
    s[p] = (w - np.sin(w)) / w ** 3
    q = z <= -0.1
    w = np.sqrt(-z[q])
    c[q] = (np.cosh(w) - 1.0) / -z[q]
    s[q] = (np.sinh(w) - w) / w ** 3
    return c, s


def kepler(r0, v0, dt, mu):
    """Two-body state after dt days from (r0, v0), any conic, vectorised (universal anomaly chi solved by
    safeguarded Newton inside a bracket: the time equation is monotonic in chi)."""
    r0 = np.atleast_2d(r0)
    v0 = np.atleast_2d(v0)
    n = len(r0)
    dt = np.broadcast_to(np.asarray(dt, float), (n,)).copy()
    smu = np.sqrt(mu)
    rn = norm(r0)
    sig = dot(r0, v0) / smu
    alpha = 2.0 / rn - dot(v0, v0) / mu
    target = smu * dt

    def tof(x):
        z = alpha * x * x
        c, s = stumpff(z)
        f = sig * x * x * c + (1.0 - alpha * rn) * x ** 3 * s + rn * x - target
        fp = x * x * c + sig * x * (1.0 - z * s) + rn * (1.0 - z * c)
        return f, fp

    guess = np.abs(target) / rn
    hyp = alpha < 0
    guess[hyp] = np.minimum(guess[hyp], 1.0 / np.sqrt(-alpha[hyp]))
    guess = np.maximum(guess, 1e-12)
    sgn = np.where(dt >= 0, 1.0, -1.0)
    end = sgn * guess
    todo = dt != 0
    for _ in range(200):
        if not todo.any():
            break
        f, _ = tof(end)
        done = np.where(sgn > 0, f >= 0, f <= 0)
        todo &= ~done
        end = np.where(todo, 2.0 * end, end)
    a = np.where(sgn > 0, 0.0, end)
    b = np.where(sgn > 0, end, 0.0)
    x = 0.5 * (a + b)
    for _ in range(100):
        f, fp = tof(x)
        a = np.where(f < 0, x, a)
        b = np.where(f > 0, x, b)
        xn = x - f / fp
        bad = ~((xn >= a) & (xn <= b))
        xn = np.where(bad, 0.5 * (a + b), xn)
        step = np.abs(xn - x)
        x = xn
        if np.all(step <= 1e-15 * (np.abs(x) + 1e-300)):
            break
    x = np.where(dt == 0, 0.0, x)
    z = alpha * x * x
    c, s = stumpff(z)
    f = 1.0 - x * x * c / rn
    g = dt - x ** 3 * s / smu
    r = f[:, None] * r0 + g[:, None] * v0
    r1 = norm(r)
    fd = smu / (r1 * rn) * x * (z * s - 1.0)
    gd = 1.0 - x * x * c / r1
    v = fd[:, None] * r0 + gd[:, None] * v0
    return r, v


def perifocal(inc, node, peri):
    """Unit vectors to perihelion (P) and 90 deg ahead (Q), equatorial, from ecliptic angles (deg)."""
    i, o, w = np.radians(inc), np.radians(node), np.radians(peri)
    co, so, ci, si, cw, sw = np.cos(o), np.sin(o), np.cos(i), np.sin(i), np.cos(w), np.sin(w)
    p = np.stack([co * cw - so * sw * ci, so * cw + co * sw * ci, sw * si], axis=-1)
    q = np.stack([-co * sw - so * cw * ci, -so * sw + co * cw * ci, cw * si], axis=-1)
    return p @ ECL2EQ.T, q @ ECL2EQ.T


def state_from_perihelion(q, e, inc, node, peri, dt, mu):
    """State dt days after perihelion of the conic (q, e, i, node, peri)."""
    p, qq = perifocal(inc, node, peri)
    r0 = q[:, None] * p
    v0 = np.sqrt(mu * (1.0 + e) / q)[:, None] * qq
    return kepler(r0, v0, dt, mu)


def conic(r, v, mu):
    """(e, 1/a, q, i_ecliptic_deg) of equatorial states."""
    h = np.cross(r, v)
    rn = norm(r)
    ev = np.cross(v, h) / mu - r / rn[:, None]
    e = norm(ev)
    inv_a = 2.0 / rn - dot(v, v) / mu
    q = dot(h, h) / mu / (1.0 + e)
    he = h @ EQ2ECL.T
    inc = np.degrees(np.arctan2(np.hypot(he[:, 0], he[:, 1]), he[:, 2]))
    return e, inv_a, q, inc


def v_inf_in(r, v, mu):
    """Incoming asymptotic velocity of the hyperbola through (r, v): with P = e_vec/e, Q = h_hat x P, the
    velocity at true anomaly nu is sqrt(mu/p) (-sin nu P + (e + cos nu) Q); at nu -> -acos(-1/e) it points
    along (P + sqrt(e^2 - 1) Q)/e with speed sqrt(v^2 - 2 mu/r). NaN for bound states."""
    h = np.cross(r, v)
    rn = norm(r)
    ev = np.cross(v, h) / mu - r / rn[:, None]
    e = norm(ev)
    v2 = dot(v, v) - 2.0 * mu / rn
    with np.errstate(invalid="ignore"):
        vinf = np.sqrt(v2)
        pp = ev / e[:, None]
        qq = np.cross(h / norm(h)[:, None], pp)
        d = (pp + np.sqrt(e * e - 1.0)[:, None] * qq) / e[:, None]
    return vinf[:, None] * d


# ------------------------------------------------------------------------------- interstellar velocities
def icrs_to_galactic():
    m = np.zeros((3, 3))
    for j, (ra, dec) in enumerate([(0.0, 0.0), (np.pi / 2, 0.0), (0.0, np.pi / 2)]):
        lon, lat = erfa.icrs2g(ra, dec)
        m[:, j] = [np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)]
    return m


class VelocityModel:
    """Distribution g of the incoming velocity at infinity relative to the Sun (ICRS, km/s): a Gaussian
    mixture. Proposal q: a mixture of isotropic Gaussians centred on zero; the rejection bound uses
    g(x)/q(v) <= sum_k f_k N_k(x) / (c_k N(v; 0, s_k^2)) with |v|^2 = |x|^2 + 2 mu/r, each term maximised
    over x in closed form."""

    PROPOSAL_S = (45.0, 90.0, 250.0)  # km/s, one per component (must exceed its largest dispersion)

    def __init__(self, ist):
        gal = icrs_to_galactic()
        g2i = gal.T
        sun = np.asarray(ist["solar_motion_km_s"], float)
        comps = ist["component"]
        f = np.array([c["fraction"] for c in comps], float)
        self.f = f / f.sum()
        self.names = [c["name"] for c in comps]
        self.mean = np.array([g2i @ (np.asarray(c["mean_km_s"], float) - sun) for c in comps])
        self.cov = np.array([g2i @ np.diag(np.asarray(c["sigma_km_s"], float) ** 2) @ g2i.T for c in comps])
        self.icov = np.linalg.inv(self.cov)
        self.chol = np.linalg.cholesky(self.cov)
        self.lognorm = -0.5 * np.log(np.linalg.det(2 * np.pi * self.cov))
        assert len(self.PROPOSAL_S) == len(comps)
        self.s = np.asarray(self.PROPOSAL_S, float)
        for k, c in enumerate(comps):
            assert max(c["sigma_km_s"]) < self.s[k]
        # max over x of N_k(x) exp(|x|^2 / 2 s_k^2), times (2 pi s_k^2)^1.5
        self.amp = np.zeros(len(comps))
        for k in range(len(comps)):
            prec = self.icov[k] - np.eye(3) / self.s[k] ** 2
            xs = np.linalg.solve(prec, self.icov[k] @ self.mean[k])
            d = xs - self.mean[k]
            logb = self.lognorm[k] - 0.5 * d @ self.icov[k] @ d + xs @ xs / (2 * self.s[k] ** 2)
            self.amp[k] = np.exp(logb) * (2 * np.pi * self.s[k] ** 2) ** 1.5
        # proposal weights: minimise the bound sum f_k A_k / c_k at r = 1.2 au
        mu_kms = MU_B * KMS ** 2
        a12 = self.f * self.amp * np.exp(mu_kms / (1.2 * self.s ** 2))
        c = np.sqrt(a12)
        self.c = c / c.sum()

    def pdf(self, x):
        out = np.zeros(len(x))
        for k in range(len(self.f)):
            d = x - self.mean[k]
            out += self.f[k] * np.exp(self.lognorm[k] - 0.5 * np.einsum("ni,ij,nj->n", d, self.icov[k], d))
        return out

    def sample(self, n, rng):
        k = rng.choice(len(self.f), size=n, p=self.f)
        z = rng.standard_normal((n, 3))
        return self.mean[k] + np.einsum("nij,nj->ni", self.chol[k], z)

    def q_pdf(self, v):
        v2 = dot(v, v)
        out = np.zeros(len(v))
        for c, s in zip(self.c, self.s):
            out += c * (2 * np.pi * s * s) ** -1.5 * np.exp(-v2 / (2 * s * s))
        return out

    def q_sample(self, n, rng):
        k = rng.choice(len(self.c), size=n, p=self.c)
        return self.s[k][:, None] * rng.standard_normal((n, 3))

    def bound(self, r_au):
        mu_kms = MU_B * KMS ** 2
        return np.sum((self.f / self.c * self.amp)[None, :]
                      * np.exp(mu_kms / (np.asarray(r_au)[:, None] * self.s[None, :] ** 2)), axis=1)

    def propose(self, x_bary_au, rng):
        """One velocity proposal (km/s) per position; returns v, acceptance flag, bound M(r), ratio."""
        n = len(x_bary_au)
        v = self.q_sample(n, rng)
        r = norm(x_bary_au)
        xinf = v_inf_in(x_bary_au, v / KMS, MU_B) * KMS
        g = np.where(np.isfinite(xinf[:, 0]), self.pdf(np.nan_to_num(xinf)), 0.0)
        m = self.bound(r)
        ratio = g / (self.q_pdf(v) * m)
        acc = rng.random(n) < ratio
        return v, acc, m, ratio


# ------------------------------------------------------------------------------------- the survey nights
def build_nights():
    """Per date j, day d, site s: site local midnight (UTC and TDB jd), Earth and Sun, the celestial to
    terrestrial matrix at midnight and the dark interval (Sun below SUN_ALT) around it."""
    nj, nd, ns = len(DATES), N_DAYS, len(SITES)
    utc = np.zeros((nj, nd, ns))
    for j, (y, m, d) in enumerate(DATES):
        base = sum(erfa.cal2jd(y, m, d))
        for s, site in enumerate(SITES):
            frac = ((-site[2] / 15.0) % 24.0) / 24.0
            utc[j, :, s] = base + np.arange(nd) + frac
    tdb = utc + TT_MINUS_UTC
    flat = tdb.ravel()
    pe, ve = bary_vec(399, flat)
    ps, vs = bary_vec(10, flat)
    rc2t = erfa.c2t06a(flat, 0.0, utc.ravel(), 0.0, 0.0, 0.0)
    lon = np.radians([s[2] for s in SITES])
    lat = np.radians([s[3] for s in SITES])
    up = np.stack([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)], axis=-1)
    grid = np.arange(-0.45, 0.45 + 1e-9, 1.0 / 720.0)
    tg = (flat[:, None] + grid[None, :]).ravel()
    pe_g, _ = bary_vec(399, tg)
    ps_g, _ = bary_vec(10, tg)
    sun = (ps_g - pe_g).reshape(len(flat), len(grid), 3)
    sun /= norm(sun)[..., None]
    sf = np.einsum("nij,ngj->ngi", rc2t, sun)
    th = OMEGA_E * grid
    sx = sf[..., 0] * np.cos(th) + sf[..., 1] * np.sin(th)
    sy = -sf[..., 0] * np.sin(th) + sf[..., 1] * np.cos(th)
    site_idx = np.tile(np.arange(ns), nj * nd)
    upn = up[site_idx]
    salt = np.degrees(np.arcsin(sx * upn[:, 0, None] + sy * upn[:, 1, None] + sf[..., 2] * upn[:, 2, None]))
    d0 = np.ones(len(flat))
    d1 = -np.ones(len(flat))
    for i in range(len(flat)):
        k = int(np.argmin(salt[i]))
        dark = salt[i] < SUN_ALT
        if not dark[k]:
            continue
        a = k
        while a > 0 and dark[a - 1]:
            a -= 1
        b = k
        while b < len(grid) - 1 and dark[b + 1]:
            b += 1
        d0[i], d1[i] = grid[a], grid[b]
    shp = (nj, nd, ns)
    nt = {
        "utc": utc, "tdb": tdb, "eh": (pe - ps).reshape(shp + (3,)), "ev": (ve - vs).reshape(shp + (3,)),
        "sun": ps.reshape(shp + (3,)), "sunv": vs.reshape(shp + (3,)), "rc2t": rc2t.reshape(shp + (3, 3)),
        "d0": d0.reshape(shp), "d1": d1.reshape(shp), "lon": lon, "lat": lat, "up": up,
    }
    nt["tc"] = tdb.mean(axis=2)  # night centre per date and day
    nt["tref"] = nt["tc"][:, 0]  # snapshot epoch per date
    # night-0 window (all sites) and Earth on a grid across it, for the brightness bound
    lo = (tdb[:, 0, :] + nt["d0"][:, 0, :]).min(axis=1) - nt["tref"]
    hi = (tdb[:, 0, :] + nt["d1"][:, 0, :]).max(axis=1) - nt["tref"]
    taus = lo[:, None] + (hi - lo)[:, None] * np.linspace(0.0, 1.0, 33)[None, :]
    pe_w, _ = bary_vec(399, (nt["tref"][:, None] + taus).ravel())
    ps_w, _ = bary_vec(10, (nt["tref"][:, None] + taus).ravel())
    nt["win_tau"] = taus
    nt["win_earth"] = (pe_w - ps_w).reshape(nj, -1, 3)
    pe_r, ve_r = bary_vec(399, nt["tref"])
    ps_r, vs_r = bary_vec(10, nt["tref"])
    nt["earth_ref"], nt["sun_ref"], nt["sunv_ref"] = pe_r, ps_r, vs_r
    return nt


NT = None


def brightest_possible_h(rh, vh, j):
    """Upper bound on H for V <= LIMIT_V anywhere in night 0: V >= H + 5 log10(r Delta) (the phase term
    only dims), with r Delta minimised over a grid spanning all sites' dark hours."""
    taus = NT["win_tau"][j]
    acc = -MU * rh / norm(rh)[:, None] ** 3
    pos = rh[:, None, :] + vh[:, None, :] * taus[..., None] + 0.5 * acc[:, None, :] * taus[..., None] ** 2
    rd = norm(pos) * norm(pos - NT["win_earth"][j])
    return LIMIT_V - 5.0 * np.log10(rd.min(axis=1)) + H_MARGIN


def hg_mag(h, r, delta, cos_phase):
    half = np.arccos(np.clip(cos_phase, -1.0, 1.0)) / 2.0
    t = np.tan(half)
    phi1 = np.exp(-3.33 * t ** 0.63)
    phi2 = np.exp(-1.87 * t ** 1.22)
    return h + 5.0 * np.log10(r * delta) - 2.5 * np.log10((1.0 - G_SLOPE) * phi1 + G_SLOPE * phi2)


def choose_start(az_lon, dec, s, d0, d1, dur, u):
    """Tracklet start (days from site midnight) drawn uniformly over the starts that keep the whole
    tracklet in the dark and above MIN_ALT for an object fixed on the sky; length of that set."""
    lat, lam = NT["lat"][s], NT["lon"][s]
    with np.errstate(invalid="ignore", divide="ignore"):
        c0 = (np.sin(MIN_ALT * DEG) - np.sin(lat) * np.sin(dec)) / (np.cos(lat) * np.cos(dec))
    always = c0 <= -1.0
    never = ~(c0 < 1.0)
    h0 = np.arccos(np.clip(c0, -1.0, 1.0))
    h00 = (lam - az_lon + np.pi) % (2 * np.pi) - np.pi
    starts, lens = [], []
    for k in (-1, 0, 1):
        lo = (-h0 - h00) / OMEGA_E + k * P_SID
        hi = (h0 - h00) / OMEGA_E + k * P_SID
        lo = np.where(always, -np.inf, lo)
        hi = np.where(always, np.inf, hi)
        a = np.maximum(d0, lo)
        b = np.minimum(d1, hi) - dur
        ln = np.where(never | (b < a) | (always & (k != 0)), 0.0, b - a)
        starts.append(a)
        lens.append(ln)
    lens = np.array(lens)
    total = lens.sum(axis=0)
    x = u * total
    st = np.zeros_like(u)
    acc = np.zeros_like(u)
    for a, ln in zip(starts, lens):
        inside = (x >= acc) & (x <= acc + ln) & (ln > 0)
        st = np.where(inside, a + (x - acc), st)
        acc = acc + ln
    return st, total


def observe_night(rh, vh, tref, j, d, h, dur, u, keys):
    """Detection on night d of date j. Returns (ok, site, start from site midnight, ok ignoring rate)."""
    n = len(rh)
    tc = NT["tc"][j, d]
    r1, v1 = kepler(rh, vh, tc - tref, MU)
    a1 = -MU * r1 / norm(r1)[:, None] ** 3
    best = np.full(n, np.inf)
    site = np.full(n, -1)
    start = np.zeros(n)
    any_nr = np.zeros(n, bool)
    for s in range(len(SITES)):
        t0 = NT["tdb"][j, d, s] - tc
        rs = r1 + v1 * t0[:, None] + 0.5 * a1 * t0[:, None] ** 2
        vs = v1 + a1 * t0[:, None]
        as_ = -MU * rs / norm(rs)[:, None] ** 3
        eh, ev = NT["eh"][j, d, s], NT["ev"][j, d, s]
        ea = -MU * eh / norm(eh)[:, None] ** 3
        rc = NT["rc2t"][j, d, s]
        d0, d1 = NT["d0"][j, d, s], NT["d1"][j, d, s]

        def at(tau):
            tt = tau[:, None]
            o = rs + vs * tt + 0.5 * as_ * tt * tt
            e = eh + ev * tt + 0.5 * ea * tt * tt
            return o, vs + as_ * tt, e, ev + ea * tt

        def frozen_dir(tau):
            o, _, e, _ = at(tau)
            g = o - e
            uf = np.einsum("nij,nj->ni", rc, g / norm(g)[:, None])
            return np.arctan2(uf[:, 1], uf[:, 0]), np.arcsin(np.clip(uf[:, 2], -1, 1))

        tm = np.zeros(n)
        for _ in range(2):
            lon_f, dec_f = frozen_dir(tm)
            st, total = choose_start(lon_f, dec_f, s, d0, d1, dur, u)
            tm = np.where(total > 0, st + 0.5 * dur, tm)
        ok = total > 0
        upv = NT["up"][s]
        for tau in (st, st + 0.5 * dur, st + dur):
            o, _, e, _ = at(tau)
            g = o - e
            uf = np.einsum("nij,nj->ni", rc, g / norm(g)[:, None])
            th = OMEGA_E * tau
            x = uf[:, 0] * np.cos(th) + uf[:, 1] * np.sin(th)
            y = -uf[:, 0] * np.sin(th) + uf[:, 1] * np.cos(th)
            ok &= x * upv[0] + y * upv[1] + uf[:, 2] * upv[2] >= np.sin(MIN_ALT * DEG)
        o, ov, e, evv = at(st + 0.5 * dur)
        g = o - e
        dl = norm(g)
        r = norm(o)
        elong = np.degrees(np.arccos(np.clip(dot(g, -e) / (dl * norm(e)), -1, 1)))
        mag = hg_mag(h, r, dl, dot(-g, -o) / (dl * r))
        ok &= (elong >= MIN_ELONG) & (mag <= LIMIT_V)
        ug = g / dl[:, None]
        vr = ov - evv
        perp = vr - dot(vr, ug)[:, None] * ug
        rate = np.degrees(norm(perp) / dl)
        any_nr |= ok
        ok &= rate <= MAX_RATE
        take = ok & (keys[:, s] < best)
        best = np.where(take, keys[:, s], best)
        site = np.where(take, s, site)
        start = np.where(take, st, start)
    return site >= 0, site, start, any_nr


# ------------------------------------------------------------------------------------- the populations
def plan_draws(n, rng):
    """Per draw: date, night offsets of the four night slots (0: first night of every arc; 1: second
    night of the two-night arc; 2, 3: second and third of the three-night arc), tracklet settings."""
    j = rng.integers(0, len(DATES), n)
    gap2 = rng.integers(1, 4, n)
    span3 = rng.integers(3, 8, n)
    g31 = 1 + np.floor(rng.random(n) * (span3 - 1)).astype(int)
    days = np.stack([np.zeros(n, int), gap2, g31, span3], axis=1)
    nobs = rng.integers(3, 6, (n, 4))
    dur = rng.uniform(0.5, 1.5, (n, 4)) / 24.0
    u = rng.random((n, 4))
    keys = rng.random((n, 4, len(SITES)))
    return {"j": j, "days": days, "nobs": nobs, "dur": dur, "u": u, "keys": keys,
            "u_thin": rng.random(n), "sigma": np.round(rng.uniform(0.1, 0.3, n), 3)}


def survey(rh, vh, h, plan):
    """Detection for the three arc types; the chosen site and start per slot."""
    n = len(rh)
    tref = NT["tref"][plan["j"]]
    site = np.full((n, 4), -1)
    start = np.zeros((n, 4))
    ok = np.zeros((n, 4), bool)
    ok0, s0, st0, nr0 = observe_night(rh, vh, tref, plan["j"], plan["days"][:, 0], h, plan["dur"][:, 0],
                                      plan["u"][:, 0], plan["keys"][:, 0])
    ok[:, 0], site[:, 0], start[:, 0] = ok0, s0, st0
    for slot in (1, 2, 3):
        idx = np.nonzero(ok0)[0]
        if slot == 3:
            idx = idx[ok[idx, 2]]
        if len(idx) == 0:
            continue
        res = observe_night(rh[idx], vh[idx], tref[idx], plan["j"][idx], plan["days"][idx, slot], h[idx],
                            plan["dur"][idx, slot], plan["u"][idx, slot], plan["keys"][idx, slot])
        ok[idx, slot], site[idx, slot], start[idx, slot] = res[0], res[1], res[2]
    det = np.stack([ok[:, 0], ok[:, 0] & ok[:, 1], ok[:, 0] & ok[:, 2] & ok[:, 3]], axis=1)
    return det, site, start, nr0


class Tally:
    def __init__(self, name, kind):
        self.name, self.kind = name, kind
        self.w = np.zeros(3)
        self.w2 = np.zeros(3)
        self.w_norate = 0.0
        self.n = 0
        self.records = []

    def add(self, w, det, nr0):
        y = w[:, None] * det
        self.w += y.sum(axis=0)
        self.w2 += (y * y).sum(axis=0)
        self.w_norate += (w * nr0).sum()

    def rel_err(self):
        var = np.maximum(self.w2 - self.w ** 2 / self.n, 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.sqrt(var) / self.w


def finish_chunk(tally, rh, vh, h, w, plan):
    det, site, start, nr0 = survey(rh, vh, h, plan)
    tally.add(w, det, nr0)
    keep = np.nonzero(det[:, 0])[0]
    rec = {"draw": keep, "w": w[keep], "h": h[keep], "rh": rh[keep], "vh": vh[keep],
           "det": det[keep], "site": site[keep], "start": start[keep]}
    for k in ("j", "days", "nobs", "dur", "u_thin", "sigma"):
        rec[k] = plan[k][keep]
    tally.records.append(rec)


def truncated_h(law, h_min, h_hi, rng):
    """H from the size law restricted to [h_min, h_hi]; returns H and N(<h_hi) - N(<h_min)."""
    lo = law.cum(h_min)
    span = law.cum(h_hi) - lo
    return law.inv(lo + rng.random(len(h_hi)) * span), span


def draw_bound(pop, seed):
    rng = np.random.default_rng(seed)
    law = SizeLaw(pop["count"], pop["h_ref"], pop["size_slope"])
    h_min = pop["h_ref"] - 13.0
    t = Tally(pop["name"], "bound")
    n_all = t.n = N_BOUND.get(pop["name"], N_BOUND_DEFAULT)
    qmin, qmax = pop.get("q_min_au", 0.0), pop.get("q_max_au", np.inf)
    for base in range(0, n_all, CHUNK):
        n = min(CHUNK, n_all - base)
        a = np.empty(0)
        e = np.empty(0)
        while len(a) < n:  # the q limits are hard cuts on the drawn (a, e)
            aa = draw_dist(pop["a_au"], n, rng)
            ee = draw_dist(pop["e"], n, rng)
            qq = aa * (1 - ee)
            good = (qq >= qmin) & (qq <= qmax)
            a, e = np.concatenate([a, aa[good]]), np.concatenate([e, ee[good]])
        a, e = a[:n], e[:n]
        inc = draw_dist(pop["i_deg"], n, rng)
        node, peri, mean_anom = rng.uniform(0, 360, (3, n))
        plan = plan_draws(n, rng)
        dt = np.radians(mean_anom) / np.sqrt(MU / a ** 3)
        rh, vh = state_from_perihelion(a * (1 - e), e, inc, node, peri, dt, MU)
        h_hi = np.minimum(brightest_possible_h(rh, vh, plan["j"]), H_MAX)
        live = h_hi > h_min
        h = np.full(n, np.nan)
        h[live], span = truncated_h(law, h_min, h_hi[live], rng)
        w = np.zeros(n)
        w[live] = span / n_all
        idx = np.nonzero(live)[0]
        sub = {k: v[idx] for k, v in plan.items()}
        finish_chunk(t, rh[idx], vh[idx], h[idx], w[idx], sub)
        t.records[-1]["draw"] = base + idx[t.records[-1]["draw"]]
    return t


def draw_perihelion(pop, seed):
    rng = np.random.default_rng(seed)
    law = SizeLaw(pop["passages_per_year"], pop["h_ref"], pop["size_slope"])
    h_min = pop["h_ref"] - 13.0
    t = Tally(pop["name"], "bound")
    t.n = N_PERIHELION
    window = LPC_WINDOW_YR * 365.25
    for base in range(0, N_PERIHELION, CHUNK):
        n = min(CHUNK, N_PERIHELION - base)
        q = draw_dist(pop["q_au"], n, rng)
        inv_a = draw_dist(pop["inv_a_per_au"], n, rng)
        inc = draw_dist(pop["i_deg"], n, rng)
        node, peri = rng.uniform(0, 360, (2, n))
        # time since perihelion at the snapshot: uniform in the model; proposed from a mixture of a
        # uniform and a truncated Cauchy law around perihelion, with the weight correcting for it
        wide = rng.random(n) < LPC_P_UNIFORM
        u = rng.random(n)
        sc = LPC_CAUCHY_YR * 365.25
        dt = np.where(wide, window * (2 * u - 1), sc * np.tan((2 * u - 1) * np.arctan(window / sc)))
        prop = (LPC_P_UNIFORM / (2 * window)
                + (1 - LPC_P_UNIFORM) / (2 * sc * np.arctan(window / sc) * (1 + (dt / sc) ** 2)))
        plan = plan_draws(n, rng)
        e = 1.0 - q * inv_a
        with np.errstate(divide="ignore"):
            period = 2 * np.pi / np.sqrt(MU_B * inv_a ** 3)
        j = plan["j"]
        # a periodic orbit is counted by its nearest passage only
        live = (np.abs(dt) <= 0.5 * period) & (q > 0)
        rb, vb = state_from_perihelion(q[live], e[live], inc[live], node[live], peri[live], dt[live], MU_B)
        rh = rb - NT["sun_ref"][j[live]]
        vh = vb - NT["sunv_ref"][j[live]]
        idx = np.nonzero(live)[0]
        sub = {k: v[idx] for k, v in plan.items()}
        h_hi = np.minimum(brightest_possible_h(rh, vh, sub["j"]), H_MAX)
        ok = h_hi > h_min
        h = np.full(len(idx), np.nan)
        h[ok], span = truncated_h(law, h_min, h_hi[ok], rng)
        w = np.zeros(len(idx))
        w[ok] = span / 365.25 / (N_PERIHELION * prop[idx][ok])
        sel = np.nonzero(ok)[0]
        sub2 = {k: v[sel] for k, v in sub.items()}
        finish_chunk(t, rh[sel], vh[sel], h[sel], w[sel], sub2)
        t.records[-1]["draw"] = base + idx[sel[t.records[-1]["draw"]]]
    return t


class PositionProposal:
    """Barycentric positions for interstellar draws: a mixture of a geocentric density falling as
    rho^-2.5 (rho < RHO_MAX) and a barycentric one falling as r^-4 (R_IN < r < R_OUT), roughly the shape
    (r Delta)^-2.5 of the detectable number, so that the weights stay even."""

    RHO_MAX, R_IN, R_OUT, P_GEO = 1.5, 0.75, 60.0, 0.6

    def sample(self, earth, rng):
        n = len(earth)
        geo = rng.random(n) < self.P_GEO
        d = rng.standard_normal((n, 3))
        d /= norm(d)[:, None]
        u = rng.random(n)
        rho = self.RHO_MAX * u * u
        r = 1.0 / (1.0 / self.R_IN - u * (1.0 / self.R_IN - 1.0 / self.R_OUT))
        return np.where(geo[:, None], earth + rho[:, None] * d, r[:, None] * d)

    def pdf(self, x, earth):
        rho = norm(x - earth)
        r = norm(x)
        pg = np.where(rho < self.RHO_MAX, 1.0 / (8 * np.pi * np.sqrt(self.RHO_MAX) * rho ** 2.5), 0.0)
        ph = np.where((r > self.R_IN) & (r < self.R_OUT),
                      1.0 / (4 * np.pi * (1.0 / self.R_IN - 1.0 / self.R_OUT) * r ** 4), 0.0)
        return self.P_GEO * pg + (1 - self.P_GEO) * ph


def draw_interstellar(ist, vel, seed):
    """Interstellar objects present at the snapshot. Each proposal is a barycentric position x from
    PositionProposal and one velocity v from the VelocityModel proposal q; it is accepted with probability
    g(v_inf_in(x, v)) / (M(r) q(v)) <= 1, so that the target phase-space density n(H) g(v_inf_in) is
    sampled exactly up to the known factor M(r) / p(x). H is then drawn from the size law below the
    brightest-possible bound of the night, and an accepted draw stands for
    (n(<H_hi) - n(<H_min)) M(r) / (p(x) N_proposals) objects (an unbiased estimate)."""
    rng = np.random.default_rng(seed)
    law = SizeLaw(ist["density_per_au3"], ist["h_ref"], ist["size_slope"])
    h_min = ist["h_ref"] - 17.0
    t = Tally(ist["name"], "unbound")
    t.n = N_INTERSTELLAR
    pp = PositionProposal()
    max_ratio = 0.0
    n_acc = 0
    for base in range(0, N_INTERSTELLAR, CHUNK):
        n = min(CHUNK, N_INTERSTELLAR - base)
        plan = plan_draws(n, rng)
        j = plan["j"]
        earth = NT["earth_ref"][j]
        x = pp.sample(earth, rng)
        px = pp.pdf(x, earth)
        v, acc, m, ratio = vel.propose(x, rng)
        max_ratio = max(max_ratio, float(ratio.max()))
        acc &= norm(x) > pp.R_IN
        n_acc += int(acc.sum())
        idx = np.nonzero(acc)[0]
        sub = {k: vv[idx] for k, vv in plan.items()}
        rh = x[idx] - NT["sun_ref"][j[idx]]
        vh = v[idx] / KMS - NT["sunv_ref"][j[idx]]
        h_hi = np.minimum(brightest_possible_h(rh, vh, sub["j"]), H_MAX)
        ok = h_hi > h_min
        h = np.full(len(idx), np.nan)
        h[ok], span = truncated_h(law, h_min, h_hi[ok], rng)
        w = np.zeros(len(idx))
        w[ok] = span * m[idx][ok] / px[idx][ok] / N_INTERSTELLAR
        sel = np.nonzero(ok)[0]
        sub2 = {k: vv[sel] for k, vv in sub.items()}
        finish_chunk(t, rh[sel], vh[sel], h[sel], w[sel], sub2)
        t.records[-1]["draw"] = base + idx[sel[t.records[-1]["draw"]]]
    t.max_ratio = max_ratio
    t.n_accepted = n_acc
    return t


def merged(t):
    out = {}
    for k in t.records[0]:
        out[k] = np.concatenate([r[k] for r in t.records])
    return out


# ------------------------------------------------------------------------------------------------ checks
def run_checks(vel):
    rng = np.random.default_rng(99)
    out = {}
    # 1. our conic propagator against the DOP853 two-body integration of synth.py
    worst = 0.0
    for q, e, inc, node, peri, dt in [(2.3, 0.15, 8.0, 80.0, 30.0, 150.0), (1.6, 0.9985, 121.0, 20.0, 200.0, -60.0),
                                      (1.1, 2.4, 63.0, 140.0, 250.0, -18.0), (0.95, 0.38, 14.0, 230.0, 290.0, 400.0)]:
        ref_r, ref_v = kepler_state(q, e, inc, node, peri, dt)
        r, v = state_from_perihelion(np.array([q]), np.array([e]), np.array([inc]), np.array([node]),
                                     np.array([peri]), np.array([dt]), MU)
        worst = max(worst, float(norm(r[0] - ref_r)))
    out["kepler_vs_dop853_max_pos_diff_au"] = worst
    # 2. incoming asymptote against a long backward propagation
    xs = vel.sample(200, rng)
    pos = rng.standard_normal((200, 3))
    pos *= rng.uniform(0.8, 3.0, 200)[:, None] / norm(pos)[:, None]
    vv = xs / KMS
    # states at pos whose velocity gives a hyperbola; use the proposal as a generic set of velocities
    speed = np.sqrt(dot(vv, vv) + 2 * MU_B / norm(pos))
    vstate = vv / norm(vv)[:, None] * speed[:, None]
    vin = v_inf_in(pos, vstate, MU_B)
    errs = {}
    for far in (1e3, 1e4, 1e5):
        tback = -far / norm(vin)
        rb, vb = kepler(pos, vstate, tback, MU_B)
        # atan2 of the cross and dot products: well conditioned at small angles, where arccos of a
        # cosine near 1 turns the last bit of a CPU's product into a visible change of the angle.
        ang = np.degrees(np.arctan2(norm(np.cross(vb, vin)), dot(vb, vin)))
        errs[f"{far:.0e}_au"] = {"max_angle_deg": float(ang.max()),
                                 "max_speed_rel": float(np.max(np.abs(norm(vb) / norm(vin) - 1)))}
    out["v_inf_in_vs_backward_propagation"] = errs
    # 3. gravitational focusing: mean density in the unit ball over the far density
    n = 2_000_000
    d = rng.standard_normal((n, 3))
    d /= norm(d)[:, None]
    x = d * (rng.random(n) ** (1 / 3))[:, None]
    v = vel.q_sample(n, rng)
    xinf = v_inf_in(x, v / KMS, MU_B) * KMS
    ratio = np.where(np.isfinite(xinf[:, 0]), vel.pdf(np.nan_to_num(xinf)), 0.0) / vel.q_pdf(v)
    est, est_err = ratio.mean(), ratio.std() / np.sqrt(n)
    r2 = rng.random(n) ** (1 / 3)
    xg = vel.sample(n, rng)
    vinf2 = dot(xg, xg) / KMS ** 2
    foc = np.sqrt(1 + 2 * MU_B / (r2 * vinf2))
    out["focusing_unit_ball"] = {"density_ratio_sampled": float(est), "err": float(est_err),
                                 "expected_mean_sqrt_1_plus_2mu_over_r_vinf2": float(foc.mean()),
                                 "err_expected": float(foc.std() / np.sqrt(n))}
    # 4. the rejection sampler itself in the working shell R_IN..3 au: acceptance times bound
    n = 2_000_000
    d = rng.standard_normal((n, 3))
    d /= norm(d)[:, None]
    r3 = (PositionProposal.R_IN ** 3 + rng.random(n) * (27 - PositionProposal.R_IN ** 3)) ** (1 / 3)
    x = d * r3[:, None]
    v, acc, m, ratio = vel.propose(x, rng)
    y = acc * m
    r4 = (PositionProposal.R_IN ** 3 + rng.random(n) * (27 - PositionProposal.R_IN ** 3)) ** (1 / 3)
    xg = vel.sample(n, rng)
    vi2 = dot(xg, xg) / KMS ** 2
    foc = np.sqrt(1 + 2 * MU_B / (r4 * vi2))
    out["focusing_shell_rejection"] = {"shell_au": [PositionProposal.R_IN, 3.0], "acceptance": float(acc.mean()),
                                       "density_ratio_sampled": float(y.mean()),
                                       "err": float(y.std() / np.sqrt(n)), "expected": float(foc.mean()),
                                       "err_expected": float(foc.std() / np.sqrt(n)),
                                       "max_acceptance_ratio": float(ratio.max())}
    # 5. far from the Sun the accepted velocities must follow g itself
    n = 2_000_000
    d = rng.standard_normal((n, 3))
    d /= norm(d)[:, None]
    x = d * 1e5
    v, acc, m, _ = vel.propose(x, rng)
    va = v[acc]
    ref = vel.sample(len(va), rng)
    out["far_field_velocity"] = {"accepted": int(acc.sum()), "density_ratio": float((acc * m).mean()),
                                 "err": float((acc * m).std() / np.sqrt(n)),
                                 "mean_km_s": np.round(va.mean(axis=0), 2).tolist(),
                                 "mean_model_km_s": np.round(sum(f * mm for f, mm in zip(vel.f, vel.mean)), 2).tolist(),
                                 "std_km_s": np.round(va.std(axis=0), 2).tolist(),
                                 "std_direct_draw_km_s": np.round(ref.std(axis=0), 2).tolist()}
    return out


# ----------------------------------------------------------------------------------------- observations
def observe_objects(objs, rng):
    """Exact astrometry: heliocentric two-body from the snapshot, DE421 Earth and Sun, ERFA site, light
    time iterated. objs: list of dicts with rh, vh, tref, nights [(j, d, site, start, nobs, dur)], sigma."""
    rows = []
    meta = []
    for o in objs:
        times = []
        for (j, d, s, st, nobs, dur) in o["nights"]:
            t_utc = NT["utc"][j, d, s] + st
            for k in range(nobs):
                times.append((t_utc + k * dur / (nobs - 1), s))
        times.sort()
        cal, tdb, obs = [], [], []
        for t_utc, s in times:
            u = utc_from_jd(t_utc)
            tt, tb, ut1 = utc_scales(*u)
            t = tb[0] + tb[1]
            pe, _ = body_bary(KERNEL, 399, t)
            code, _, lon, lat, alt = SITES[s]
            obs.append(pe + site_gcrs_au(lon, lat, alt, tt, ut1))
            cal.append((u, code))
            tdb.append(t)
        tdb = np.array(tdb)
        obs = np.array(obs)
        nn = len(tdb)
        tau = np.zeros(nn)
        for _ in range(4):
            te = tdb - tau
            r, _ = kepler(np.repeat(o["rh"][None], nn, 0), np.repeat(o["vh"][None], nn, 0), te - o["tref"], MU)
            ps, _ = bary_vec(10, te)
            rho = r + ps - obs
            tau = norm(rho) / C_AU_D
        ra = np.degrees(np.arctan2(rho[:, 1], rho[:, 0])) % 360.0
        dec = np.degrees(np.arcsin(rho[:, 2] / norm(rho)))
        delta = norm(rho)
        sun_obj = -r
        earth_obj = obs - (r + ps)
        cosph = dot(sun_obj, earth_obj) / (norm(sun_obj) * norm(earth_obj))
        vmag = hg_mag(o["h"], norm(r), delta, cosph)
        sig = o["sigma"]
        nra = (ra + rng.normal(0, sig, nn) / 3600.0 / np.cos(np.radians(dec))) % 360.0
        ndec = dec + rng.normal(0, sig, nn) / 3600.0
        mag = vmag - BAND_OFFSET + rng.normal(0, MAG_NOISE, nn)
        for k in range(nn):
            rows.append({"id": o["id"], "stn": cal[k][1], "time": iso(cal[k][0]), "ra": nra[k], "dec": ndec[k],
                         "sigma": sig, "mag": mag[k]})
        meta.append({"tdb": tdb, "ra": nra, "dec": ndec, "mag": mag, "vtrue": vmag, "obs": obs, "rho": rho})
    return rows, meta


def psv_text(rows):
    out = ["# version=2022", "# interloper population-model sky (invented objects, invented sites)",
           "trkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|astCat|mag|band"]
    for r in rows:
        out.append(f"{r['id']}|CCD|{r['stn']}|{r['time']}|{r['ra']:.7f}|{r['dec']:+.7f}|{r['sigma']:.3f}|"
                   f"{r['sigma']:.3f}|Gaia3|{r['mag']:.2f}|{REPORT_BAND}")
    return "\n".join(out) + "\n"


def one_night_features(meta):
    """What one night gives: attributable (position, rates), ecliptic latitude, position relative to
    opposition, elongation, mean magnitude."""
    feats = []
    for m in meta:
        t = m["tdb"] - m["tdb"].mean()
        dec0 = np.radians(m["dec"].mean())
        ra_c = np.degrees(np.unwrap(np.radians(m["ra"])))
        x = (ra_c - ra_c.mean()) * np.cos(dec0)
        y = m["dec"] - m["dec"].mean()
        rx = np.polyfit(t, x, 1)[0]
        ry = np.polyfit(t, y, 1)[0]
        ra0, de0 = np.radians(ra_c.mean()), dec0
        u = np.array([np.cos(de0) * np.cos(ra0), np.cos(de0) * np.sin(ra0), np.sin(de0)])
        ue = EQ2ECL @ u
        lam, beta = np.arctan2(ue[1], ue[0]), np.arcsin(ue[2])
        pe, _ = body_bary(KERNEL, 399, m["tdb"].mean())
        ps, _ = body_bary(KERNEL, 10, m["tdb"].mean())
        sdir = EQ2ECL @ ((ps - pe) / norm(ps - pe))
        lam_sun = np.arctan2(sdir[1], sdir[0])
        dl = (lam - lam_sun) % (2 * np.pi) - np.pi  # longitude from opposition, in [-pi, pi)
        elong = np.degrees(np.arccos(np.clip(ue @ sdir, -1, 1)))
        # rates in ecliptic axes: east along the ecliptic and towards the ecliptic north pole
        e_ra = np.array([-np.sin(ra0), np.cos(ra0), 0.0])
        e_de = np.array([-np.sin(de0) * np.cos(ra0), -np.sin(de0) * np.sin(ra0), np.cos(de0)])
        mv = EQ2ECL @ (rx * e_ra + ry * e_de)
        e_lam = np.array([-np.sin(lam), np.cos(lam), 0.0])
        e_beta = np.array([-np.sin(beta) * np.cos(lam), -np.sin(beta) * np.sin(lam), np.cos(beta)])
        feats.append([np.cos(ra0), np.sin(ra0), np.degrees(de0), rx, ry, np.degrees(beta), np.degrees(dl),
                      elong, m["mag"].mean(), np.hypot(rx, ry), mv @ e_lam, mv @ e_beta])
    return np.array(feats)


def info_limit(x, y):
    from sklearn.ensemble import GradientBoostingClassifier
    from sklearn.linear_model import LogisticRegression
    from sklearn.model_selection import StratifiedKFold, cross_val_predict
    from sklearn.neighbors import KNeighborsClassifier
    from sklearn.metrics import roc_auc_score
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import PolynomialFeatures, StandardScaler
    cv = StratifiedKFold(n_splits=5, shuffle=True, random_state=5)
    models = {
        "gradient_boosting": GradientBoostingClassifier(n_estimators=300, max_depth=3, learning_rate=0.05,
                                                        subsample=0.8, random_state=3),
        "knn_25": make_pipeline(StandardScaler(), KNeighborsClassifier(n_neighbors=25)),
        "logistic_quadratic": make_pipeline(StandardScaler(), PolynomialFeatures(2), StandardScaler(),
                                            LogisticRegression(C=1.0, max_iter=5000)),
    }
    out = {}
    for name, model in models.items():
        p = cross_val_predict(model, x, y, cv=cv, method="predict_proba")[:, 1]
        out[name] = round(float(roc_auc_score(y, p)), 4)
    return out


# ---------------------------------------------------------------------------------------------- the run
def main():
    global NT
    t_start = time.time()
    os.makedirs(OUT, exist_ok=True)
    NT = build_nights()
    vel = VelocityModel(MODEL["interstellar"])
    checks = run_checks(vel)
    print("checks", json.dumps(checks), flush=True)

    tallies = []
    for k, pop in enumerate(MODEL["bound"]):
        tallies.append(draw_bound(pop, 1000 + k))
        print(pop["name"], tallies[-1].w, tallies[-1].rel_err(), f"{time.time() - t_start:.0f}s", flush=True)
    for k, pop in enumerate(MODEL.get("perihelion", [])):
        tallies.append(draw_perihelion(pop, 2000 + k))
        print(pop["name"], tallies[-1].w, tallies[-1].rel_err(), f"{time.time() - t_start:.0f}s", flush=True)
    ist = draw_interstellar(MODEL["interstellar"], vel, 3000)
    print("interstellar", ist.w, ist.rel_err(), ist.n_accepted, ist.max_ratio, f"{time.time() - t_start:.0f}s",
          flush=True)

    bound = [t for t in tallies]
    w_b = sum(t.w for t in bound)
    var_b = sum((t.rel_err() * t.w) ** 2 for t in bound)
    rel_b = np.sqrt(var_b) / w_b
    rel_u = ist.rel_err()
    dens = MODEL["interstellar"]["density_per_au3"] * w_b / ist.w
    rel_d = np.sqrt(rel_b ** 2 + rel_u ** 2)

    sel_rng = np.random.default_rng(4242)
    obs_rng = np.random.default_rng(777)
    recs = {t.name: merged(t) for t in bound}
    recs_u = merged(ist)

    def thinned(rec, arc, third):
        m = rec["det"][:, arc] & (rec["draw"] % 3 == third)
        idx = np.nonzero(m)[0]
        if len(idx) == 0:
            return idx
        wmax = rec["w"][idx].max()
        return idx[rec["u_thin"][idx] < rec["w"][idx] / wmax]

    def make_obj(rec, i, name, unbound, arc):
        slots = {0: [0], 1: [0, 1], 2: [0, 2, 3]}[arc]
        j = int(rec["j"][i])
        nights = [(j, int(rec["days"][i, s]), int(rec["site"][i, s]), float(rec["start"][i, s]),
                   int(rec["nobs"][i, s]), float(rec["dur"][i, s])) for s in slots]
        return {"rh": rec["rh"][i], "vh": rec["vh"][i], "tref": float(NT["tref"][j]), "nights": nights,
                "sigma": float(rec["sigma"][i]), "h": float(rec["h"][i]), "population": name,
                "unbound": unbound, "j": j}

    def choose(rec, arc, third, c, label):
        """c detected draws of one population: exact thinning to equal weights when that leaves enough,
        otherwise weighted sampling without replacement (approximate; noted in the truth file)."""
        pool = thinned(rec, arc, third)
        if c <= len(pool):
            return sel_rng.choice(pool, size=c, replace=False), len(pool), "thinned"
        det = np.nonzero(rec["det"][:, arc] & (rec["draw"] % 3 == third))[0]
        if c > len(det):
            raise RuntimeError(f"{label}: only {len(det)} detections for {c} (arc {arc + 1})")
        p = rec["w"][det] / rec["w"][det].sum()
        return sel_rng.choice(det, size=c, replace=False, p=p), len(pool), "weighted"

    def pick(arc, third, n_each):
        objs = []
        w_arc = np.array([t.w[arc] for t in bound])
        counts = sel_rng.multinomial(n_each, w_arc / w_arc.sum())
        pools = {}
        for t, c in zip(bound, counts):
            chosen, size, how = choose(recs[t.name], arc, third, c, t.name)
            pools[t.name] = {"thinned_pool": size, "selection": how}
            for i in chosen:
                objs.append(make_obj(recs[t.name], i, t.name, False, arc))
        chosen, size, how = choose(recs_u, arc, third, n_each, ist.name)
        pools[ist.name] = {"thinned_pool": size, "selection": how}
        for i in chosen:
            objs.append(make_obj(recs_u, i, ist.name, True, arc))
        order = sel_rng.permutation(len(objs))
        return [objs[i] for i in order], dict(zip([t.name for t in bound], counts.tolist())), pools

    truth = {"model_file": "src/fitting/population/default.toml", "limiting_v": LIMIT_V, "report_band": REPORT_BAND,
             "band_to_v_offset": BAND_OFFSET, "survey": {
                 "min_altitude_deg": MIN_ALT, "sun_altitude_max_deg": SUN_ALT, "min_elongation_deg": MIN_ELONG,
                 "max_rate_deg_per_day": MAX_RATE, "mag_noise": MAG_NOISE, "astrometric_sigma_arcsec": [0.1, 0.3],
                 "first_nights_utc": [f"{y:04d}-{m:02d}-{d:02d}" for y, m, d in DATES]},
             "sites": [{"code": c, "lon": lon, "lat": lat, "alt_m": alt} for c, _, lon, lat, alt in SITES],
             "notes": "e_bary, inv_a_bary (1/au, negative when unbound), q (au) and i (deg, ecliptic J2000) are "
                      "barycentric osculating values at epoch_tdb (the snapshot at which the object was drawn); "
                      "H is the true absolute magnitude; weights are expected numbers of real objects detected "
                      "in one survey snapshot (averaged over the first nights listed).",
             "checks": checks, "arcs": {}}
    for arc, label in enumerate(["one_night", "two_night", "three_night"]):
        objs, counts, pools = pick(arc, arc, SET_SIZE)
        for k, o in enumerate(objs):
            o["id"] = f"s{arc + 1}n{k + 1:04d}"
        rows, meta = observe_objects(objs, obs_rng)
        n_over = int(sum((m["vtrue"] > LIMIT_V + 0.05).sum() for m in meta))
        with open(os.path.join(OUT, f"{label}.psv"), "w") as fh:
            fh.write(psv_text(rows))
        items = []
        for o in objs:
            rb = o["rh"] + NT["sun_ref"][o["j"]]
            vb = o["vh"] + NT["sunv_ref"][o["j"]]
            e, inv_a, q, inc = conic(rb[None], vb[None], MU_B)
            vinf = float(np.sqrt(-inv_a[0] * MU_B) * KMS) if o["unbound"] else None
            items.append({"id": o["id"], "unbound": o["unbound"], "population": o["population"],
                          "e_bary": round(float(e[0]), 9), "inv_a_bary": round(float(inv_a[0]), 9),
                          "q": round(float(q[0]), 7), "i": round(float(inc[0]), 5), "H": round(o["h"], 3),
                          "v_inf_km_s": None if vinf is None else round(vinf, 4),
                          "epoch_tdb": round(o["tref"], 6)})
        # Monte Carlo estimates (errors 0.3–2 %) are written to four figures: a sixth figure flips with
        # the last bits of the CPU's arithmetic where one sampled orbit sits at the magnitude limit.
        w_pop = {t.name: {"expected_detected": float(f"{t.w[arc]:.4g}"),
                          "rel_mc_error": float(f"{t.rel_err()[arc]:.3g}")} for t in bound}
        w_pop[ist.name] = {"expected_detected": float(f"{ist.w[arc]:.4g}"),
                           "rel_mc_error": float(f"{rel_u[arc]:.3g}")}
        entry = {"objects": items, "density_for_balance_per_au3": float(f"{dens[arc]:.6g}"),
                 "density_rel_mc_error": float(f"{rel_d[arc]:.3g}"),
                 "detected_weight_per_population": w_pop,
                 "W_bound_detected": float(f"{w_b[arc]:.4g}"), "W_bound_rel_mc_error": float(f"{rel_b[arc]:.3g}"),
                 "W_unbound_detected": float(f"{ist.w[arc]:.4g}"),
                 "bound_counts_in_set": counts, "selection": pools,
                 "observations_fainter_than_limit_by_0.05_exact": n_over}
        if arc == 0:
            feats = one_night_features(meta)
            y = np.array([o["unbound"] for o in objs], int)
            entry["info_limit_auc_by_model"] = info_limit(feats, y)
            # a larger, independent one-night sample (not written) for a steadier estimate
            extra = []
            for third in (1, 2):
                more, _, _ = pick(0, third, EXTRA_ONE_NIGHT // 2)
                extra += more
            for k, o in enumerate(extra):
                o["id"] = f"x{k:05d}"
            _, meta_x = observe_objects(extra, obs_rng)
            fx = np.concatenate([feats, one_night_features(meta_x)])
            yx = np.concatenate([y, np.array([o["unbound"] for o in extra], int)])
            entry["info_limit_auc_by_model_large"] = info_limit(fx, yx)
            entry["info_limit_large_sample_size"] = int(len(yx))
            truth["info_limit_auc_one_night"] = entry["info_limit_auc_by_model"]["gradient_boosting"]
            truth["info_limit_auc_one_night_large_sample"] = entry["info_limit_auc_by_model_large"]["gradient_boosting"]
            truth["rate_cut_effect_one_night"] = {t.name: float(f"{t.w[0] / t.w_norate:.4g}") for t in bound + [ist]}
        truth["arcs"][label] = entry
        print(label, "density", dens[arc], "rel", rel_d[arc], counts, pools, f"{time.time() - t_start:.0f}s",
              flush=True)
    truth["draws"] = {t.name: t.n for t in bound + [ist]}
    truth["interstellar_accepted_proposals"] = ist.n_accepted
    with open(os.path.join(OUT, "truth.json"), "w") as fh:
        json.dump(truth, fh, indent=1)
        fh.write("\n")
    lines = ["# Invented survey sites of the population-model test sky (tests/reference/make_population_sky.py).",
             "# None is a real observatory."]
    for code, name, lon, lat, alt in SITES:
        lines += ["", "[[site]]", f'code = "{code}"', f'name = "{name}"', f"longitude_deg = {lon:.2f}",
                  f"latitude_deg = {lat:.2f}", f"altitude_m = {alt:.1f}"]
    with open(os.path.join(OUT, "sites.toml"), "w") as fh:
        fh.write("\n".join(lines) + "\n")
    print(f"done in {time.time() - t_start:.0f}s")


if __name__ == "__main__":
    main()
