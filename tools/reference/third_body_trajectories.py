"""GEO and Molniya-type reference trajectories with Sun + Moon + J2, from scipy DOP853.

Uses the same analytic Sun (Meeus, Astronomical Algorithms ch. 25, referred to J2000)
and Moon (Montenbruck & Gill eq. 3.47) series as arcwise, so the comparison checks the
dynamics and the integration, not the ephemeris; the third-body term is written in the
direct form (not Battin's), J2 in closed form.
Writes ROOT/tests/data/reference/third_body_trajectories.json.
"""
import json
import math
import sys
from datetime import datetime, timezone
from pathlib import Path

import numpy as np
import scipy
from scipy.integrate import solve_ivp

MU, RE = 398600.4418, 6378.1363
J2 = -math.sqrt(5.0) * -0.484165371736e-3
MU_SUN, MU_MOON = 1.32712440018e11, 4902.800066
AU = 149597870.7
EPS = math.radians(23.43929111)
AS = math.pi / (180 * 3600)
EPOCH = "2031-05-04T12:00:00.000Z"


def ecl_to_eq(lon, lat, r):
    x, y, z = r * math.cos(lon) * math.cos(lat), r * math.sin(lon) * math.cos(lat), r * math.sin(lat)
    return np.array([x, math.cos(EPS) * y - math.sin(EPS) * z, math.sin(EPS) * y + math.cos(EPS) * z])


def sun(t):
    l0 = 280.46646 + 36000.76983 * t + 0.0003032 * t * t
    m = math.radians(357.52911 + 35999.05029 * t - 0.0001537 * t * t)
    e = 0.016708634 - 0.000042037 * t - 0.0000001267 * t * t
    c = ((1.914602 - 0.004817 * t - 0.000014 * t * t) * math.sin(m)
         + (0.019993 - 0.000101 * t) * math.sin(2 * m) + 0.000289 * math.sin(3 * m))
    lon = math.radians(l0 + c - (1.396971 * t + 0.0003086 * t * t))
    r = 1.000001018 * (1 - e * e) / (1 + e * math.cos(m + math.radians(c))) * AU
    return ecl_to_eq(lon, 0.0, r)


def moon(t):
    d2r = math.radians
    l0 = d2r(218.31617 + 481267.88088 * t - 1.3972 * t)
    l = d2r(134.96292 + 477198.86753 * t)
    lp = d2r(357.52543 + 35999.04944 * t)
    f = d2r(93.27283 + 483202.01873 * t)
    d = d2r(297.85027 + 445267.11135 * t)
    s = math.sin
    lon = l0 + AS * (22640 * s(l) + 769 * s(2 * l) - 4586 * s(l - 2 * d) + 2370 * s(2 * d) - 668 * s(lp)
                     - 412 * s(2 * f) - 212 * s(2 * l - 2 * d) - 206 * s(l + lp - 2 * d) + 192 * s(l + 2 * d)
                     - 165 * s(lp - 2 * d) + 148 * s(l - lp) - 125 * s(d) - 110 * s(l + lp) - 55 * s(2 * f - 2 * d))
    lat = AS * (18520 * s(f + lon - l0 + AS * (412 * s(2 * f) + 541 * s(lp))) - 526 * s(f - 2 * d)
                + 44 * s(l + f - 2 * d) - 31 * s(-l + f - 2 * d) - 25 * s(-2 * l + f) - 23 * s(lp + f - 2 * d)
                + 21 * s(-l + f) + 11 * s(-lp + f - 2 * d))
    c = math.cos
    r = (385000 - 20905 * c(l) - 3699 * c(2 * d - l) - 2956 * c(2 * d) - 570 * c(2 * l) + 246 * c(2 * l - 2 * d)
         - 205 * c(lp - 2 * d) - 171 * c(l + 2 * d) - 152 * c(l + lp - 2 * d))
    return ecl_to_eq(lon, lat, r)


def t0_centuries():
    e = datetime.strptime(EPOCH, "%Y-%m-%dT%H:%M:%S.000Z").replace(tzinfo=timezone.utc)
    j2000 = datetime(2000, 1, 1, 12, 0, 0, tzinfo=timezone.utc)
    # TT labels are uniform: TT(e) = UTC label + 69.184 s (TAI - UTC = 37 s), and
    # J2000.0 is 2000-01-01 12:00 TT; datetime subtracts labels, ignoring leap seconds.
    secs = (e - j2000).total_seconds() + 69.184
    return secs / 86400.0 / 36525.0


def third(r, s, mu):
    d = s - r
    return mu * (d / np.linalg.norm(d) ** 3 - s / np.linalg.norm(s) ** 3)


def rhs_factory(t0):
    def rhs(t, y):
        r = y[:3]
        rn = np.linalg.norm(r)
        a = -MU * r / rn**3
        z2 = (r[2] / rn) ** 2
        k = -1.5 * J2 * MU * RE * RE / rn**5
        a = a + k * np.array([r[0] * (1 - 5 * z2), r[1] * (1 - 5 * z2), r[2] * (3 - 5 * z2)])
        tc = t0 + t / 86400.0 / 36525.0
        a = a + third(r, sun(tc), MU_SUN) + third(r, moon(tc), MU_MOON)
        return np.concatenate([y[3:], a])
    return rhs


def coe2rv(a, e, i, raan, argp, nu):
    p = a * (1 - e * e)
    r = p / (1 + e * math.cos(nu))
    rp = np.array([r * math.cos(nu), r * math.sin(nu), 0.0])
    vp = np.array([-math.sqrt(MU / p) * math.sin(nu), math.sqrt(MU / p) * (e + math.cos(nu)), 0.0])
    def rz(t):
        return np.array([[math.cos(t), -math.sin(t), 0], [math.sin(t), math.cos(t), 0], [0, 0, 1]])
    def rx(t):
        return np.array([[1, 0, 0], [0, math.cos(t), -math.sin(t)], [0, math.sin(t), math.cos(t)]])
    m = rz(raan) @ rx(i) @ rz(argp)
    return np.concatenate([m @ rp, m @ vp])


CASES = [
    ("geo", coe2rv(42164.17, 0.0002, math.radians(0.05), math.radians(80.0), 0.0, math.radians(10.0))),
    ("molniya", coe2rv(26600.0, 0.74, math.radians(63.4), math.radians(40.0), math.radians(270.0), math.radians(5.0))),
]


def main(root: Path):
    t0 = t0_centuries()
    out = {"source": f"scipy {scipy.__version__} solve_ivp DOP853 rtol 1e-13 atol 1e-12; Sun+Moon series+J2",
           "epoch_utc": EPOCH, "t0_centuries_tt": t0, "cases": []}
    times = np.arange(0.0, 3 * 86400.0 + 1.0, 6 * 3600.0)
    for name, x0 in CASES:
        sol = solve_ivp(rhs_factory(t0), (0.0, 3 * 86400.0), x0, method="DOP853", rtol=1e-13, atol=1e-12, t_eval=times)
        assert sol.success, sol.message
        out["cases"].append({"name": name, "x0": [float(v) for v in x0], "t_s": [float(t) for t in sol.t],
                             "states": [[float(v) for v in sol.y[:, k]] for k in range(sol.y.shape[1])]})
    path = root / "tests" / "data" / "reference" / "third_body_trajectories.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
