"""Two-way and one-way ranges with light time, by an independent method: each leg's
light time is the root of |moving(t +- d) - fixed| - c*d = 0 found by scipy's brentq
(bracketing), not by arcwise's fixed-point iteration. Geometry in closed form, the same
on both sides: a site on the WGS-84 ellipsoid turning with the Earth about z at the
IERS mean rate (ERA-only rotation), and objects on circular orbits (LEO 700 km, GEO).
Writes ROOT/tests/data/reference/light_time.json."""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy.optimize import brentq

C = 299792.458  # km/s, exact
OMEGA = 7.292115146706979e-5  # rad/s
A, F = 6378.137, 1 / 298.257223563

SITE = (35.0, 139.5, 0.05)  # invented: lat, lon deg, height km
THETA0 = 1.234  # rad, rotation angle at t = 0

ORBITS = {  # radius km, inclination deg, phase at t = 0 deg, chosen to pass near the site
    "leo": (7078.137, 51.6, 30.0),
    "geo": (42164.0, 0.05, 250.0),
}


def site_itrf():
    lat, lon, h = np.radians(SITE[0]), np.radians(SITE[1]), SITE[2]
    e2 = F * (2 - F)
    n = A / np.sqrt(1 - e2 * np.sin(lat) ** 2)
    return np.array([(n + h) * np.cos(lat) * np.cos(lon), (n + h) * np.cos(lat) * np.sin(lon),
                     (n * (1 - e2) + h) * np.sin(lat)])


def site(t):
    th = THETA0 + OMEGA * t
    c, s = np.cos(th), np.sin(th)
    x, y, z = site_itrf()
    return np.array([c * x - s * y, s * x + c * y, z])


def orbit(name):
    r, inc, ph = ORBITS[name]
    n = np.sqrt(398600.4418 / r ** 3)
    i, p = np.radians(inc), np.radians(ph)

    def pos(t):
        u = p + n * t
        return r * np.array([np.cos(u), np.sin(u) * np.cos(i), np.sin(u) * np.sin(i)])
    return pos


def leg(t, at, moving, later):
    sign = 1.0 if later else -1.0
    f = lambda d: np.linalg.norm(moving(t + sign * d) - at) - C * d  # noqa: E731
    return brentq(f, 0.0, 1.0, xtol=1e-16, rtol=4 * np.finfo(float).eps, maxiter=500)


def two_way(tag_s, tag, obj):
    if tag == "receive":
        b = tag_s - leg(tag_s, site(tag_s), obj, False)
        tr = b - leg(b, obj(b), site, False)
        rc = tag_s
    else:
        b = tag_s + leg(tag_s, site(tag_s), obj, True)
        rc = b + leg(b, obj(b), site, True)
        tr = tag_s
    return 0.5 * C * (rc - tr), tr, b, rc


def main(root: Path):
    cases = []
    for name in ORBITS:
        obj = orbit(name)
        for t in (0.0, 600.0, 3000.0):
            for tag in ("receive", "transmit"):
                rng, tr, b, rc = two_way(t, tag, obj)
                cases.append({"orbit": name, "tag": tag, "tag_s": t, "range_km": rng,
                              "transmit_s": tr, "bounce_s": b, "receive_s": rc})
            d = leg(t, site(t), obj, False)
            cases.append({"orbit": name, "tag": "one_way", "tag_s": t, "range_km": C * d,
                          "transmit_s": t - d, "bounce_s": t - d, "receive_s": t})
    out = {"source": f"scipy {scipy.__version__} brentq on each leg; closed-form site and orbits",
           "site": {"lat_deg": SITE[0], "lon_deg": SITE[1], "h_km": SITE[2], "theta0_rad": THETA0,
                    "omega_rad_s": OMEGA},
           "orbits": {k: {"radius_km": v[0], "inc_deg": v[1], "phase_deg": v[2]} for k, v in ORBITS.items()},
           "cases": cases}
    path = root / "tests" / "data" / "reference" / "light_time.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
