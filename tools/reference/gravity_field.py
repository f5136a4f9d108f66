"""EGM2008 (degree and order 70) accelerations at 1000 random Earth-fixed points from 200 km
to 40,000 km altitude, written independently of arcwise from the textbook potential

  U = GM/r sum_{n=2..70} sum_{m=0..n} (R/r)^n Pbar_nm(sin phi) (C_nm cos m lam + S_nm sin m lam)

with fully normalized associated Legendre functions from scipy
(scipy.special.assoc_legendre_p_all, norm=True, converted to the geodesy normalization
sqrt((2 - delta_m0)(2n + 1)(n - m)!/(n + m)!) without the Condon-Shortley phase), and the
acceleration as the gradient in spherical coordinates (r, phi, lam). Degrees 0 and 1 left
out, as arcwise's field force does (the central term is the two-body force).
Reads propagator/data/egm2008_deg70.gfc itself; writes
ROOT/tests/data/reference/gravity_egm2008_deg70.json."""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy.special import assoc_legendre_p_all

N = 70


def read_gfc(path):
    gm = radius = None
    c = np.zeros((N + 1, N + 1))
    s = np.zeros((N + 1, N + 1))
    head = True
    for line in Path(path).read_text().splitlines():
        f = line.split()
        if not f:
            continue
        if head:
            if f[0] == "earth_gravity_constant":
                gm = float(f[1]) * 1e-9
            elif f[0] == "radius":
                radius = float(f[1]) * 1e-3
            elif f[0] == "end_of_head":
                head = False
            continue
        n, m = int(f[1]), int(f[2])
        if n <= N:
            c[n, m], s[n, m] = float(f[3]), float(f[4])
    return gm, radius, c, s


def acceleration(r, gm, re, c, s):
    x, y, z = r
    rn = np.sqrt(x * x + y * y + z * z)
    sphi, cphi = z / rn, np.hypot(x, y) / rn
    lam = np.arctan2(y, x)
    p, dp = assoc_legendre_p_all(N, N, sphi, norm=True, diff_n=1)
    n = np.arange(N + 1)[:, None]
    m = np.arange(N + 1)[None, :]
    fac = np.sqrt(2.0 * np.where(m == 0, 1.0, 2.0)) * (-1.0) ** m
    pbar = fac * p[:, : N + 1]
    dpbar = fac * dp[:, : N + 1]
    cm, sm = np.cos(m * lam), np.sin(m * lam)
    trig = c * cm + s * sm
    dtrig = m * (-c * sm + s * cm)
    q = (re / rn) ** n
    keep = (n >= 2) & (m <= n)
    du_dr = -gm / rn**2 * np.sum(np.where(keep, (n + 1) * q * pbar * trig, 0.0))
    du_dphi = gm / rn * np.sum(np.where(keep, q * cphi * dpbar * trig, 0.0))
    du_dlam = gm / rn * np.sum(np.where(keep, q * pbar * dtrig, 0.0))
    rhat = np.array([cphi * np.cos(lam), cphi * np.sin(lam), sphi])
    phihat = np.array([-sphi * np.cos(lam), -sphi * np.sin(lam), cphi])
    lamhat = np.array([-np.sin(lam), np.cos(lam), 0.0])
    return du_dr * rhat + du_dphi / rn * phihat + du_dlam / (rn * cphi) * lamhat


def main(root: Path):
    gm, re, c, s = read_gfc(Path(__file__).resolve().parents[2] / "propagator" / "data" / "egm2008_deg70.gfc")
    rng = np.random.default_rng(70)
    points = []
    for _ in range(1000):
        d = rng.normal(size=3)
        d /= np.linalg.norm(d)
        r = d * (re + rng.uniform(200.0, 40000.0))
        a = acceleration(r, gm, re, c, s)
        points.append({"r_km": [float(v) for v in r], "a_km_s2": [float(v) for v in a]})
    out = {"source": f"scipy {scipy.__version__} assoc_legendre_p_all, numpy {np.__version__}; "
                     "see tools/reference/gravity_field.py",
           "points": points}
    path = root / "tests" / "data" / "reference" / "gravity_egm2008_deg70.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
