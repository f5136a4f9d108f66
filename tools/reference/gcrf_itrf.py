"""GCRF -> ITRF rotation matrices by pyerfa (ERFA, the open SOFA equivalent), IAU 2006/2000A
CIO-based chain, at 200 random UTC epochs 1990-2025, with Earth-orientation data from the
IERS finals2000A.all in astropy-iers-data (Bulletin A columns).

The EOP values are interpolated linearly between daily values at 0h UTC, in UT1 - TAI,
xp, yp, dX, dY, with the fraction of the day counted in TAI (a leap-second day lasts
86401 s): written here independently of arcwise. The chain (IERS Conventions 2010 ch. 5):
X, Y, s = xys06a(TT); X += dX, Y += dY; Q = c2ixys(X, Y, s); ERA = era00(UT1);
W = pom00(xp, yp, sp00(TT)); M = c2tcio(Q, ERA, W), so r_ITRF = M r_GCRF.
Writes ROOT/tests/data/reference/gcrf_itrf_erfa.json."""
import json
import sys
from pathlib import Path

import astropy_iers_data
import erfa
import numpy as np
from astropy_iers_data import IERS_A_FILE

AS2R = np.pi / (180 * 3600)


def eop_rows():
    rows = {}
    for line in Path(IERS_A_FILE).read_text().splitlines():
        if not line[58:68].strip() or not line[18:27].strip():
            continue
        mjd = int(float(line[7:15]))
        dx = float(line[97:106]) if line[97:106].strip() else 0.0
        dy = float(line[116:125]) if line[116:125].strip() else 0.0
        rows[mjd] = (float(line[18:27]), float(line[37:46]), float(line[58:68]), dx, dy)
    return rows


def tai_of_mjd(mjd):
    """TAI two-part JD of 0h UTC on day mjd."""
    return erfa.utctai(2400000.5, float(mjd))


def gcrf_to_itrf(rows, tai1, tai2):
    """The GCRF -> ITRF matrix at the two-part TAI Julian date, EOP from `rows`."""
    u1, u2 = erfa.taiutc(tai1, tai2)
    tt1, tt2 = erfa.taitt(tai1, tai2)
    mjd = int(np.floor((u1 - 2400000.5) + u2))
    a1, a2 = tai_of_mjd(mjd)
    b1, b2 = tai_of_mjd(mjd + 1)
    f = ((tai1 - a1) + (tai2 - a2)) / ((b1 - a1) + (b2 - a2))
    va, vb = rows[mjd], rows[mjd + 1]
    dat_a = erfa.dat(*erfa.jd2cal(2400000.5, float(mjd))[:3], 0.0)
    dat_b = erfa.dat(*erfa.jd2cal(2400000.5, float(mjd + 1))[:3], 0.0)
    ut1_tai = (va[2] - dat_a) + f * ((vb[2] - dat_b) - (va[2] - dat_a))
    xp, yp, dx, dy = (va[i] + f * (vb[i] - va[i]) for i in (0, 1, 3, 4))
    ut11, ut12 = erfa.taiut1(tai1, tai2, ut1_tai)
    x, y, s06 = erfa.xys06a(tt1, tt2)
    x += dx * 1e-3 * AS2R
    y += dy * 1e-3 * AS2R
    q = erfa.c2ixys(x, y, s06)
    era = erfa.era00(ut11, ut12)
    w = erfa.pom00(xp * AS2R, yp * AS2R, erfa.sp00(tt1, tt2))
    return erfa.c2tcio(q, era, w)


def main(root: Path):
    rows = eop_rows()
    rng = np.random.default_rng(20261202)
    lo = erfa.dtf2d("UTC", 1990, 1, 1, 0, 0, 0.0)
    hi = erfa.dtf2d("UTC", 2025, 12, 31, 0, 0, 0.0)
    cases = []
    for _ in range(200):
        day = rng.uniform(lo[0] + lo[1], hi[0] + hi[1])
        iy, im, iday, ihmsf = erfa.d2dtf("UTC", 3, day, 0.0)
        h, m, s, frac = (int(v) for v in ihmsf)
        sec = s + frac / 1000.0
        utc = f"{iy:04d}-{im:02d}-{iday:02d}T{h:02d}:{m:02d}:{s:02d}.{frac:03d}Z"
        u1, u2 = erfa.dtf2d("UTC", iy, im, iday, h, m, sec)
        tai1, tai2 = erfa.utctai(u1, u2)
        mat = gcrf_to_itrf(rows, tai1, tai2)
        cases.append({"utc": utc, "gcrf_to_itrf": [[float(v) for v in r] for r in mat]})
    out = {"source": f"pyerfa {erfa.__version__}, EOP from astropy-iers-data "
                     f"{astropy_iers_data.__version__} finals2000A.all; see tools/reference/gcrf_itrf.py",
           "cases": cases}
    path = root / "tests" / "data" / "reference" / "gcrf_itrf_erfa.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
